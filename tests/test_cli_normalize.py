"""Tests for `catmap normalise`: outputs, summary, --json, profile errors, fatal feed errors."""

from __future__ import annotations

import io
import json
import zipfile
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from catmap.cli import main
from catmap.feeds.fieldmap import FeedProfile, save_profile

FEED = (
    "id,title,price,brand,material\n"
    'A-1,Corvane trail boot,"89,90 €",Corvane,leather\n'
    "A-2,Quillo mug,12.50,Quillo,stoneware\n"
    "A-1,Corvane trail boot again,89.90,Corvane,leather\n"
    "A-3,,5.00,Quillo,paper\n"
    "A-4,Ledger refill,3.20,Tamsel,paper\n"
)


@pytest.fixture()
def feed(tmp_path: Path) -> Path:
    path = tmp_path / "shop-a.csv"
    path.write_text(FEED, encoding="utf-8")
    return path


def _run(*args: str) -> object:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_normalize_writes_products_rejects_and_accounting(feed: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    result = _run("normalise", str(feed), "--out", str(out), "--project", str(tmp_path / "p"))
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    text = result.stdout  # type: ignore[attr-defined]
    assert "read 5 = kept 3 + rejected 2" in text
    assert "duplicate_id" in text and "missing_title" in text
    assert "A-1 (line 4)" in text
    assert str(out / "products.jsonl") in text.replace("\n", "")
    products = [
        json.loads(line) for line in (out / "products.jsonl").read_text("utf-8").splitlines()
    ]
    assert [p["product_id"] for p in products] == ["A-1", "A-2", "A-4"]
    assert products[0]["price"] == "89.90"
    rejects = [json.loads(line) for line in (out / "rejects.jsonl").read_text("utf-8").splitlines()]
    assert sorted(r["reason"] for r in rejects) == ["duplicate_id", "missing_title"]
    facts = json.loads((out / "accounting.json").read_text("utf-8"))
    assert (facts["read"], facts["kept"], facts["rejected"]) == (5, 3, 2)
    # The suggested profile was saved for the next run.
    assert (tmp_path / "p" / "profiles" / "shop-a.toml").exists()


def test_normalize_json(feed: Path, tmp_path: Path) -> None:
    result = _run(
        "normalise",
        str(feed),
        "--out",
        str(tmp_path / "o"),
        "--project",
        str(tmp_path / "p"),
        "--json",
    )
    assert result.exit_code == 0  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert (facts["read"], facts["kept"], facts["rejected"]) == (5, 3, 2)
    assert facts["by_reason"] == {"duplicate_id": 1, "missing_title": 1}
    assert facts["duplicate_ids"] == {"A-1": [4]}
    assert facts["stopped_early"] is None
    assert facts["outputs"]["products"].endswith("products.jsonl")


@pytest.mark.parametrize(
    ("fmt", "products", "rejects"),
    [("csv", "products.csv", "rejects.csv"), ("parquet", "products.parquet", "rejects.jsonl")],
)
def test_normalize_formats(
    feed: Path, tmp_path: Path, fmt: str, products: str, rejects: str
) -> None:
    out = tmp_path / "o"
    result = _run(
        "normalise", str(feed), "--out", str(out), "--format", fmt, "--project", str(tmp_path)
    )
    assert result.exit_code == 0  # type: ignore[attr-defined]
    frame = (
        pd.read_csv(out / products, dtype=str) if fmt == "csv" else pd.read_parquet(out / products)
    )
    assert frame["product_id"].tolist() == ["A-1", "A-2", "A-4"]
    assert (out / rejects).exists()


def test_profile_without_title_is_a_clear_error(feed: Path, tmp_path: Path) -> None:
    profile_file = tmp_path / "broken.toml"
    save_profile(FeedProfile(columns={"product_id": "id"}), profile_file)
    result = _run(
        "normalise", str(feed), "--out", str(tmp_path / "o"), "--profile", str(profile_file)
    )
    assert result.exit_code == 3  # type: ignore[attr-defined]
    error = result.stderr  # type: ignore[attr-defined]
    assert error.startswith("catmap: error:")
    assert "'title'" in error
    assert "id, title, price, brand, material" in error
    assert str(profile_file) in error


def test_unknown_currency_is_a_usage_error(feed: Path, tmp_path: Path) -> None:
    result = _run("normalise", str(feed), "--out", str(tmp_path / "o"), "--currency", "zorkmid")
    assert result.exit_code == 2  # type: ignore[attr-defined]
    assert "--currency" in result.stderr  # type: ignore[attr-defined]


def test_fatal_feed_error_keeps_good_records_and_exits_3(tmp_path: Path) -> None:
    good = "".join(
        f"<product><id>P{n}</id><title>Item {n}</title></product>\n" for n in range(1, 1001)
    )
    feed = tmp_path / "broken.xml"
    feed.write_text(
        f'<?xml version="1.0" encoding="utf-8"?>\n<catalog>\n{good}'
        "<product><id>P1001</id><title>Item</wrong></product>\n</catalog>\n",
        encoding="utf-8",
    )
    out = tmp_path / "o"
    result = _run("normalise", str(feed), "--out", str(out), "--project", str(tmp_path), "--json")
    assert result.exit_code == 3  # type: ignore[attr-defined]
    assert result.stderr.startswith("catmap: error:")  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert facts["kept"] >= 1000
    assert facts["read"] == facts["kept"] + facts["rejected"]
    assert facts["stopped_early"]
    written = (out / "products.jsonl").read_text("utf-8").splitlines()
    assert len(written) == facts["kept"]
    saved = json.loads((out / "accounting.json").read_text("utf-8"))
    assert saved["stopped_early"] == facts["stopped_early"]


def test_cut_zip_keeps_the_records_before_the_cut_and_exits_3(tmp_path: Path) -> None:
    rows = "".join(f"Z-{n},Lamp number {n} with a shade,{n}.00\n" for n in range(1, 3001))
    packed = io.BytesIO()
    with zipfile.ZipFile(packed, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("shop-z.csv", "id,title,price\n" + rows)
    feed = tmp_path / "shop-z.zip"
    feed.write_bytes(packed.getvalue()[: len(packed.getvalue()) // 2])
    out = tmp_path / "o"
    result = _run("normalise", str(feed), "--out", str(out), "--project", str(tmp_path), "--json")
    assert result.exit_code == 3  # type: ignore[attr-defined]
    error = result.stderr  # type: ignore[attr-defined]
    assert error.startswith(f"catmap: error: {feed}: the zip data is damaged or cut short: ")
    assert "the archive ends inside 'shop-z.csv'" in error and "ask the sender" in error
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert 1000 < facts["kept"] < 3000 and facts["rejected"] == 0
    written = [
        json.loads(line) for line in (out / "products.jsonl").read_text("utf-8").splitlines()
    ]
    assert [p["product_id"] for p in written] == [f"Z-{n}" for n in range(1, facts["kept"] + 1)]


def test_quote_never_closed_is_one_reject_and_the_rows_after_it_are_kept(tmp_path: Path) -> None:
    feed = tmp_path / "shop-q.csv"
    feed.write_text(FEED + 'A-5,"Ledger,2.00,Tamsel,paper\nA-6,Pencil,1.00,Tamsel,wood\n')
    out = tmp_path / "o"
    result = _run("normalise", str(feed), "--out", str(out), "--project", str(tmp_path), "--json")
    assert result.exit_code == 0  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    assert facts["stopped_early"] is None
    rejects = [json.loads(line) for line in (out / "rejects.jsonl").read_text("utf-8").splitlines()]
    broken = [r for r in rejects if r["reason"] == "unparseable_record"]
    assert [(r["line"], r["excerpt"]) for r in broken] == [(7, 'A-5,"Ledger,2.00,Tamsel,paper')]
    assert "never closed" in broken[0]["detail"]
    written = (out / "products.jsonl").read_text("utf-8")
    assert '"product_id":"A-6"' in written


def test_unreadable_feed_exits_3(tmp_path: Path) -> None:
    empty = tmp_path / "empty.csv"
    empty.write_text("", encoding="utf-8")
    result = _run("normalise", str(empty), "--out", str(tmp_path / "o"), "--project", str(tmp_path))
    assert result.exit_code == 3  # type: ignore[attr-defined]
    assert result.stderr.startswith("catmap: error:")  # type: ignore[attr-defined]
    assert len(result.stderr.strip().splitlines()) == 1  # type: ignore[attr-defined]


def test_help_text() -> None:
    result = _run("normalise", "--help")
    assert result.exit_code == 0  # type: ignore[attr-defined]
    assert "read = kept + rejected" in " ".join(result.stdout.split())  # type: ignore[attr-defined]


def test_normalize_counts_flags_and_names_an_uncovered_language(tmp_path: Path) -> None:
    # Dutch titles: the shared tree has Dutch terms, this project's own tree has none.
    project = tmp_path / "p"
    tree = Path(__file__).parent / "data" / "own-tree" / "without-dutch.txt"
    init = CliRunner().invoke(main, ["init", str(project), "--tree", str(tree)])
    assert init.exit_code == 0, init.output
    feed = tmp_path / "winkel.csv"
    feed.write_text(
        "codice,nome,prezzo,disponibilita\n"
        + "".join(
            f"A{i},Jas heren zwart met capuchon {i},{10 + i}.90,"
            f"{'disponibile' if i % 2 else 'boh'}\n"
            for i in range(10)
        ),
        encoding="utf-8",
    )
    out = tmp_path / "o"
    args = ("normalize", str(feed), "--out", str(out), "--project", str(project))
    facts = json.loads(_run(*args, "--json").stdout)  # type: ignore[attr-defined]
    assert facts["by_flag"] == {"availability_unrecognised": 5, "currency_missing": 10}
    assert facts["language"]["language"] == "nl"
    assert "Dutch" in facts["warnings"][0]
    # With the shared tree (a project of its own) the same feed is covered: no warning.
    shared_project = str(tmp_path / "s")
    shared = ("normalize", str(feed), "--out", str(tmp_path / "o2"), "--project", shared_project)
    facts = json.loads(_run(*shared, "--json").stdout)  # type: ignore[attr-defined]
    assert facts["language"]["language"] == "nl"
    assert not any("Dutch" in warning for warning in facts["warnings"])
    saved = json.loads((out / "accounting.json").read_text("utf-8"))
    assert saved["by_flag"] == facts["by_flag"]
    text = _run(*args).stdout  # type: ignore[attr-defined]
    assert "Kept but flagged" in text
    # The missing currency comes with its remedy: the profile line to set.
    assert facts["flag_advice"][0].startswith("currency_missing: 10 prices name no currency")
    assert "default_currency in " + facts["profile"] in facts["flag_advice"][0]
    assert "default_currency in" in " ".join(text.split())
    assert "availability_unrecognised" in text
    assert "Warning:" in text
