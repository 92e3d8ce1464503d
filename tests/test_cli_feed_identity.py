"""A feed's identity: its name (``--feed``, or the file name without dates and run counters),
one folder per name, and a profile bound to the feed's format and columns."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from catmap.cli import main
from catmap.feeds.fieldmap import load_profile

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "own-project"

ROW = "1,Red wool scarf,12.50 EUR,Velmora,Accessories > Scarves\n"
CSV = "id,title,price,brand,category\n" + ROW
RENAMED = "id,title,prix,marque,category\n" + ROW
XML = (
    '<?xml version="1.0"?>\n<products><product><id>1</id><title>Red wool scarf</title>'
    "<price>12.50 EUR</price></product><product><id>2</id><title>Blue shirt</title>"
    "<price>3 EUR</price></product></products>\n"
)


def run(*args: str | Path) -> Result:
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.mark.parametrize(
    "command",
    [["inspect"], ["normalize"], ["map"], ["evaluate"], ["onboard"], ["brands", "candidates"]],
)
def test_every_command_that_takes_a_feed_takes_its_name(command: list[str]) -> None:
    result = run(*command, "--help")
    assert result.exit_code == 0
    assert "--feed NAME" in result.stdout


def test_a_dated_daily_file_keeps_its_profile(tmp_path: Path) -> None:
    project = tmp_path / "p"
    first = tmp_path / "shop-a_2026-11-30.csv"
    first.write_text(CSV, encoding="utf-8")
    assert run("inspect", first, "--project", project).exit_code == 0
    assert (project / "profiles" / "shop-a.toml").is_file()
    second = tmp_path / "shop-a_2026-12-01.csv"
    second.write_text(CSV, encoding="utf-8")
    facts = json.loads(run("inspect", second, "--project", project, "--json").stdout)
    assert facts["profile_status"] == "existing"
    assert facts["profile"] == str(project / "profiles" / "shop-a.toml")
    named = json.loads(
        run("inspect", second, "--project", project, "--feed", "north", "--json").stdout
    )
    assert named["profile"] == str(project / "profiles" / "north.toml")
    assert named["profile_status"] == "saved"


def test_another_formats_profile_is_refused_not_applied(tmp_path: Path) -> None:
    project = tmp_path / "p"
    (tmp_path / "shop.csv").write_text(CSV, encoding="utf-8")
    (tmp_path / "shop.xml").write_text(XML, encoding="utf-8")
    assert run("inspect", tmp_path / "shop.csv", "--project", project).exit_code == 0
    saved = (project / "profiles" / "shop.toml").read_text(encoding="utf-8")
    result = run("normalize", tmp_path / "shop.xml", "--out", tmp_path / "o", "--project", project)
    assert result.exit_code == 3
    assert "made for a delimited text feed; this file is XML" in result.stderr
    assert "--feed NAME" in result.stderr
    assert "Traceback" not in result.output
    shown = run("inspect", tmp_path / "shop.xml", "--project", project, "--json")
    assert shown.exit_code == 0, shown.output
    facts = json.loads(shown.stdout)
    assert facts["profile_status"] == "mismatch"
    assert facts["format"] == "xml"
    assert {row["field"] for row in facts["mapping"]} >= {"product_id", "title"}
    # The suggestion is shown, never written over the other feed's profile.
    assert (project / "profiles" / "shop.toml").read_text(encoding="utf-8") == saved
    own = run("normalize", tmp_path / "shop.xml", "--out", tmp_path / "o", "--project", project,
              "--feed", "shop-xml")  # fmt: skip
    assert own.exit_code == 0, own.output


def test_renamed_columns_are_named(tmp_path: Path) -> None:
    project = tmp_path / "p"
    feed = tmp_path / "shop.csv"
    feed.write_text(CSV, encoding="utf-8")
    assert run("inspect", feed, "--project", project).exit_code == 0
    feed.write_text(RENAMED, encoding="utf-8")
    result = run("normalize", feed, "--out", tmp_path / "o", "--project", project)
    assert result.exit_code == 3
    assert "price ('price')" in result.stderr
    assert "brand ('brand')" in result.stderr
    assert "new columns: prix, marque" in result.stderr
    assert "--fresh" in result.stderr
    shown = run("inspect", feed, "--project", project)
    assert shown.exit_code == 0
    assert "does not fit this file" in " ".join(shown.stdout.split())
    fresh = run("inspect", feed, "--project", project, "--fresh")
    assert fresh.exit_code == 0
    assert run("normalize", feed, "--out", tmp_path / "o", "--project", project).exit_code == 0


def test_a_bomless_utf16_xml_profile_reads_back(tmp_path: Path) -> None:
    project = tmp_path / "p"
    feed = tmp_path / "shop.xml"
    feed.write_bytes(XML.encode("utf-16-le"))
    for _ in range(2):
        result = run("normalize", feed, "--out", tmp_path / "o", "--project", project)
        assert result.exit_code == 0, result.output
    profile = load_profile(project / "profiles" / "shop.toml")
    assert profile.encoding == "utf-16-le"
    assert profile.format == "xml"


@pytest.mark.parametrize("codec", ["rot13", "base64", "no-such-codec"])
def test_a_profile_with_a_codec_that_is_not_a_text_encoding_is_refused(
    tmp_path: Path, codec: str
) -> None:
    project = tmp_path / "p"
    feed = tmp_path / "shop.csv"
    feed.write_text(CSV, encoding="utf-8")
    assert run("inspect", feed, "--project", project).exit_code == 0
    path = project / "profiles" / "shop.toml"
    text = path.read_text(encoding="utf-8").replace('encoding = "utf-8"', f'encoding = "{codec}"')
    path.write_text(text, encoding="utf-8")
    result = run("normalize", feed, "--out", tmp_path / "o", "--project", project)
    assert result.exit_code == 3
    assert "is not a text encoding" in result.stderr
    assert f"{path}:" in result.stderr  # the profile and its line


def test_a_file_of_the_same_name_from_another_folder_is_refused(tmp_path: Path) -> None:
    project = tmp_path / "p"
    labelled = EXAMPLE / "labelled.csv"
    started = run("init", project, "--tree", EXAMPLE / "tree.txt", "--labelled", labelled)
    assert started.exit_code == 0
    assert run("train", "--project", project).exit_code == 0
    feed = EXAMPLE / "new-shop_2026-11-30.csv"
    assert run("onboard", feed, "--project", project).exit_code == 0
    elsewhere = tmp_path / "other-retailer" / "new-shop.csv"
    elsewhere.parent.mkdir()
    shutil.copy(feed, elsewhere)
    refused = run("onboard", elsewhere, "--project", project)
    assert refused.exit_code == 3
    assert "a feed named 'new-shop' was onboarded from the folder" in refused.stderr
    assert "--feed NAME" in refused.stderr
    own = run("onboard", elsewhere, "--project", project, "--feed", "other-shop")
    assert own.exit_code == 0, own.output
    status = json.loads(run("status", "--project", project, "--json").stdout)
    assert sorted(f["feed"] for f in status["feeds"]) == ["new-shop", "other-shop"]
    # The same retailer's next daily file, from the first folder: the same feed.
    again = run("onboard", feed, "--project", project)
    assert again.exit_code == 0, again.output


def test_a_utf16_csv_profile_never_reaches_an_xml_file_of_the_same_name(tmp_path: Path) -> None:
    # The case that ended in a traceback: the CSV's encoding imposed on the XML reader.
    project = tmp_path / "p"
    (tmp_path / "shop.csv").write_bytes(CSV.encode("utf-16-le"))
    (tmp_path / "shop.xml").write_text(XML, encoding="utf-8")
    assert run("inspect", tmp_path / "shop.csv", "--project", project).exit_code == 0
    assert load_profile(project / "profiles" / "shop.toml").encoding == "utf-16-le"
    result = run("normalize", tmp_path / "shop.xml", "--out", tmp_path / "o", "--project", project)
    assert result.exit_code == 3
    assert "this file is XML" in result.stderr
    assert "Traceback" not in result.output
