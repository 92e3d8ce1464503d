"""Tests for `catmap inspect`: what the feed is, the suggested mapping, the saved profile."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main

FEED = (
    "id;title;price;brand;material\n"
    "A-1;Corvane trail boot;89,90;Corvane;leather\n"
    "A-2;Quillo mug;12,50;Quillo;stoneware\n"
    "A-3;Ledger refill;3,20;Tamsel;paper\n"
)


@pytest.fixture()
def feed(tmp_path: Path) -> Path:
    path = tmp_path / "shop-b.csv"
    path.write_text(FEED, encoding="utf-8")
    return path


def _run(*args: str) -> object:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_inspect_shows_feed_and_saves_profile(feed: Path, tmp_path: Path) -> None:
    project = tmp_path / "project"
    result = _run("inspect", str(feed), "--project", str(project))
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    text = result.stdout  # type: ignore[attr-defined]
    assert "delimited" in text
    assert "utf-8" in text
    assert "';'" in text
    assert "Profile saved to" in text
    assert "material" in text  # an extra column
    saved = project / "profiles" / "shop-b.toml"
    assert saved.exists()

    again = _run("inspect", str(feed), "--project", str(project))
    assert again.exit_code == 0  # type: ignore[attr-defined]
    assert "Using the saved profile" in again.stdout  # type: ignore[attr-defined]


def test_inspect_json(feed: Path, tmp_path: Path) -> None:
    result = _run("inspect", str(feed), "--project", str(tmp_path), "--json")
    assert result.exit_code == 0  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert facts["format"] == "delimited"
    assert facts["delimiter"] == ";"
    assert facts["columns"] == ["id", "title", "price", "brand", "material"]
    mapping = {row["field"]: row["column"] for row in facts["mapping"]}
    assert mapping["product_id"] == "id"
    assert mapping["title"] == "title"
    assert facts["missing_required"] == []
    assert "material" in facts["extras"]
    assert facts["profile_status"] == "saved"
    assert Path(facts["profile"]).exists()

    second = json.loads(_run("inspect", str(feed), "--project", str(tmp_path), "--json").stdout)  # type: ignore[attr-defined]
    assert second["profile_status"] == "existing"
    fresh = json.loads(
        _run("inspect", str(feed), "--project", str(tmp_path), "--json", "--fresh").stdout  # type: ignore[attr-defined]
    )
    assert fresh["profile_status"] == "saved"


def test_inspect_project_from_environment(
    feed: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("CATMAP_PROJECT", str(tmp_path / "env-project"))
    result = _run("inspect", str(feed), "--json")
    assert result.exit_code == 0  # type: ignore[attr-defined]
    assert (tmp_path / "env-project" / "profiles" / "shop-b.toml").exists()


def test_inspect_missing_file_is_a_usage_error(tmp_path: Path) -> None:
    result = _run("inspect", str(tmp_path / "nope.csv"))
    assert result.exit_code == 2  # type: ignore[attr-defined]


def test_inspect_unreadable_feed_exits_3(tmp_path: Path) -> None:
    binary = tmp_path / "blob.csv"
    binary.write_bytes(bytes(range(256)) * 8)
    result = _run("inspect", str(binary), "--project", str(tmp_path))
    assert result.exit_code == 3  # type: ignore[attr-defined]
    assert result.stderr.startswith("catmap: error:")  # type: ignore[attr-defined]


def test_help_text() -> None:
    result = _run("inspect", "--help")
    assert result.exit_code == 0  # type: ignore[attr-defined]
    assert "profile" in result.stdout  # type: ignore[attr-defined]


ITALIAN_FEED = "EAN,nome,prezzo,disponibilita,sesso\n" + "".join(
    f'KX{4100 + i}B,Giacca uomo nera con cappuccio {i},"49,90 €",'
    f"{'disponibile' if i % 2 else 'boh'},{'uomo' if i % 2 else 'donna'}\n"
    for i in range(12)
)


def test_inspect_shows_evidence_against_preview_and_language(tmp_path: Path) -> None:
    feed = tmp_path / "negozio.csv"
    feed.write_text(ITALIAN_FEED, encoding="utf-8")
    result = _run("inspect", str(feed), "--project", str(tmp_path / "p"), "--json")
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    rows = {row["field"]: row for row in facts["mapping"]}
    assert rows["product_id"]["column"] == "EAN"
    assert rows["gtin"]["column"] is None
    assert any("valid GTIN check digits" in text for text in rows["gtin"]["against"])
    preview = facts["preview"]
    assert [item["product_id"] for item in preview] == ["KX4100B", "KX4101B", "KX4102B",
                                                        "KX4103B", "KX4104B"]  # fmt: skip
    assert preview[0]["availability"] == "unknown"
    assert "availability_unrecognised" in preview[0]["flags"]
    assert preview[1]["availability"] == "available"
    assert facts["language"]["language"] == "it"
    # The shared tree has Italian terms: no language warning.
    assert not any("Italian" in warning for warning in facts["warnings"])

    # Dutch and Portuguese titles: the shared tree has terms in both, so no warning either.
    dutch = tmp_path / "winkel.csv"
    dutch.write_text(
        ITALIAN_FEED.replace("Giacca uomo nera con cappuccio", "Jas heren zwart met capuchon"),
        encoding="utf-8",
    )
    portuguese = tmp_path / "loja.csv"
    portuguese.write_text(
        ITALIAN_FEED.replace("Giacca uomo nera con cappuccio", "Casaco homem preto com capuz"),
        encoding="utf-8",
    )
    for path, code, name in ((dutch, "nl", "Dutch"), (portuguese, "pt", "Portuguese")):
        result = _run("inspect", str(path), "--project", str(tmp_path / "p"), "--json")
        facts = json.loads(result.stdout)  # type: ignore[attr-defined]
        assert facts["language"]["language"] == code
        assert not any(name in warning for warning in facts["warnings"])

    # The language guess knows seven languages, all of them now in the shared tree: a project
    # whose own tree has no Dutch terms shows the warning for the same Dutch titles.
    own = tmp_path / "own"
    tree = Path(__file__).parent / "data" / "own-tree" / "without-dutch.txt"
    init = CliRunner().invoke(main, ["init", str(own), "--tree", str(tree)])
    assert init.exit_code == 0, init.output
    result = _run("inspect", str(dutch), "--project", str(own), "--json")
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert facts["language"]["language"] == "nl"
    assert "Dutch" in facts["warnings"][0]
    assert "(it has English, French, German, Spanish, Italian)" in facts["warnings"][0]

    text = _run("inspect", str(dutch), "--project", str(own)).stdout  # type: ignore[attr-defined]
    assert "against" in text  # the table header (narrow terminals wrap it)
    assert "normalised" in text
    assert "Warning:" in text


def test_inspect_warns_by_the_languages_of_the_projects_own_tree(tmp_path: Path) -> None:
    own = Path(__file__).parent / "data" / "own-tree"
    project = tmp_path / "p"
    init = CliRunner().invoke(main, ["init", str(project), "--tree", str(own / "english-only.txt")])
    assert init.exit_code == 0, init.output
    feed = own / "gartenladen.csv"
    facts = json.loads(
        CliRunner().invoke(main, ["inspect", str(feed), "--project", str(project), "--json"]).stdout
    )
    assert facts["language"]["language"] == "de"
    assert "(it has English)" in facts["warnings"][0]
    out = tmp_path / "out"
    normalised = CliRunner().invoke(
        main, ["normalise", str(feed), "--out", str(out), "--project", str(project), "--json"]
    )
    assert "(it has English)" in json.loads(normalised.stdout)["warnings"][0]


def test_inspect_names_other_readings_of_a_short_double_byte_feed(tmp_path: Path) -> None:
    # Two Japanese titles of kanji only, in EUC-JP: GB 18030 reads the same bytes as
    # frequent Chinese characters, so the detection is a guess and inspect says so.
    path = tmp_path / "short.csv"
    path.write_bytes("id,title,price\n1,緑茶,480\n2,木製 箸,900\n".encode("euc_jp"))
    project = tmp_path / "project"
    first = json.loads(_run("inspect", str(path), "--project", str(project), "--json").stdout)  # type: ignore[attr-defined]
    assert first["encoding_source"] == "detected"
    assert first["encoding_alternatives"] == ["gb18030"]
    again = _run("inspect", str(path), "--project", str(project))
    text = again.stdout  # type: ignore[attr-defined]
    assert "kept in the feed's profile" in text
    assert "gb18030 reads them too" in text
    given = json.loads(
        _run(
            "inspect", str(path), "--project", str(project), "--json", "--encoding", "euc_jp"
        ).stdout  # type: ignore[attr-defined]
    )
    assert (given["encoding_source"], given["encoding_alternatives"]) == ("given", [])


def test_inspect_names_no_other_reading_of_a_longer_chinese_feed(tmp_path: Path) -> None:
    path = tmp_path / "zh.csv"
    titles = ["衬衫", "鞋子", "手表", "连衣裙", "运动鞋 男", "不锈钢 保温杯"]
    rows = "".join(f"{i},{title},10\n" for i, title in enumerate(titles))
    path.write_bytes(("id,title,price\n" + rows).encode("gb18030"))
    facts = json.loads(_run("inspect", str(path), "--project", str(tmp_path), "--json").stdout)  # type: ignore[attr-defined]
    assert (facts["encoding"], facts["encoding_alternatives"]) == ("gb18030", [])


def test_normalise_warns_when_a_short_feeds_encoding_is_a_guess(tmp_path: Path) -> None:
    path = tmp_path / "short.csv"
    path.write_bytes("id,title,price\n1,緑茶,480\n2,木製 箸,900\n".encode("euc_jp"))
    args = ["normalise", str(path), "--out", str(tmp_path / "out"), "--project", str(tmp_path)]
    facts = json.loads(_run(*args, "--json").stdout)  # type: ignore[attr-defined]
    assert len(facts["warnings"]) == 1
    assert "read as euc_jis_2004" in facts["warnings"][0]
    assert "gb18030 reads them as well" in facts["warnings"][0]
    utf8 = tmp_path / "short-utf8.csv"
    utf8.write_text("id,title,price\n1,緑茶,480\n2,木製 箸,900\n", encoding="utf-8")
    args[1] = str(utf8)
    assert json.loads(_run(*args, "--json").stdout)["warnings"] == []  # type: ignore[attr-defined]
