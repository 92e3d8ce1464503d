"""Tests of catmap.jobs.export: the enriched feed, its rejects and accounting, formula-safe CSV."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pyarrow.parquet as pq
import pytest
from test_onboard import SmallWorld, new_project, options, small_world

from catmap.errors import StoreError
from catmap.jobs.export import EXPORT_COLUMNS, export_feed
from catmap.jobs.onboard import OnboardOptions, onboard_feed
from catmap.store import Store, store_path

# Cells a spreadsheet would run as formulas (OWASP "CSV Injection" examples).
DANGEROUS_TITLES = (
    '=HYPERLINK("http://example.invalid","click") cotton t-shirt',
    "+1+cmd|' /C calc'!A0 saucepan",
    "@SUM(1+1) ankle boots",
    "-2+3 frying pan",
)


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> SmallWorld:
    return small_world(tmp_path_factory)


@pytest.fixture()
def onboarded(world: SmallWorld, tmp_path: Path) -> Path:
    project = new_project(world, tmp_path / "project")
    opts = OnboardOptions(max_error=options().max_error, validation_feed=world.paths.reference)
    onboard_feed(world.paths.feeds["ferravelle"], project=project, tree=world.tree, options=opts)
    return project


def _injection_feed(folder: Path) -> Path:
    rows = [["id", "title", "brand", "category", "price", "currency"]]
    for n, title in enumerate(DANGEROUS_TITLES, 1):
        rows.append([f"=X{n}", title, "@Brandvale", "=Home > Kitchen", "12.50", "EUR"])
    rows.append(["", "a row without id is rejected", "", "", "", ""])
    path = folder / "tricky.csv"
    with path.open("w", encoding="utf-8", newline="") as handle:
        csv.writer(handle).writerows(rows)
    return path


def test_csv_export_has_every_product_rejects_and_accounting(
    world: SmallWorld, onboarded: Path, tmp_path: Path
) -> None:
    with Store.open(store_path(onboarded)) as store:
        result = export_feed(
            store, "ferravelle", tmp_path / "out", tree=world.tree, project=onboarded
        )
        products = sum(1 for _ in store.mappings("ferravelle"))
    with result.products.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert tuple(rows[0]) == EXPORT_COLUMNS
    assert len(rows) == products == result.rows
    assert {row["status"] for row in rows} <= {"accepted", "queued", "reviewed"}
    assert sum(result.by_status.values()) == products
    for row in rows:
        assert row["node_path"] == world.tree.path_text(row["node_id"])
        assert 0.0 <= float(row["confidence"]) <= 1.0
    accounting = json.loads(result.accounting.read_text(encoding="utf-8"))
    assert accounting["read"] == accounting["kept"] + accounting["rejected"]
    assert accounting["kept"] == products
    assert result.rejects is not None
    with result.rejects.open(encoding="utf-8", newline="") as handle:
        rejects = list(csv.DictReader(handle))
    assert len(rejects) == accounting["rejected"]
    assert {r["reason"] for r in rejects} == set(accounting["by_reason"])


def test_jsonl_and_parquet_exports_agree(
    world: SmallWorld, onboarded: Path, tmp_path: Path
) -> None:
    with Store.open(store_path(onboarded)) as store:
        as_jsonl = export_feed(
            store, "ferravelle", tmp_path / "j", tree=world.tree, project=onboarded,
            format="jsonl",
        )
        as_parquet = export_feed(
            store, "ferravelle", tmp_path / "p", tree=world.tree, project=onboarded,
            format="parquet",
        )
    lines = [json.loads(line) for line in as_jsonl.products.read_text("utf-8").splitlines()]
    table = pq.read_table(as_parquet.products).to_pylist()
    assert [r["product_id"] for r in lines] == [r["product_id"] for r in table]
    assert [r["node_id"] for r in lines] == [r["node_id"] for r in table]
    assert as_jsonl.rejects is not None and as_jsonl.rejects.suffix == ".jsonl"


def test_formula_cells_are_neutralised_in_csv(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "project")
    opts = OnboardOptions(max_error=options().max_error, validation_feed=world.paths.reference)
    feed = _injection_feed(tmp_path)
    summary = onboard_feed(feed, project=project, tree=world.tree, options=opts)
    assert summary.mapped == len(DANGEROUS_TITLES)
    with Store.open(store_path(project)) as store:
        result = export_feed(store, "tricky", tmp_path / "out", tree=world.tree, project=project)
    text = result.products.read_text(encoding="utf-8")
    with result.products.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    for row in rows:
        for column, cell in row.items():
            # OWASP CSV Injection: no cell may start with = + - @ (a plain negative number may).
            if cell and cell[0] in "=+-@":
                pytest.fail(f"{column} starts like a formula: {cell!r}")
    titles = {row["title"] for row in rows}
    assert "'" + DANGEROUS_TITLES[0] in titles
    assert "'=X1" in {row["product_id"] for row in rows}
    assert "'@Brandvale" in text
    assert result.rejects is not None


def test_unknown_feed_is_a_store_error(world: SmallWorld, onboarded: Path, tmp_path: Path) -> None:
    with Store.open(store_path(onboarded)) as store, pytest.raises(StoreError, match="no feed"):
        export_feed(store, "nothing-here", tmp_path / "out", tree=world.tree, project=onboarded)


def test_no_fit_restriction_none_and_the_offer_columns(
    world: SmallWorld, onboarded: Path, tmp_path: Path
) -> None:
    with Store.open(store_path(onboarded)) as store:
        item = next(iter(store.items(feed="ferravelle")))
        store.decide(item.id, "r", "no_fit")
        result = export_feed(
            store, "ferravelle", tmp_path / "out", tree=world.tree, project=onboarded
        )
        products = {p.product_id: p for p, _stored in store.mappings("ferravelle")}
    with result.products.open(encoding="utf-8", newline="") as handle:
        rows = {row["product_id"]: row for row in csv.DictReader(handle)}
    no_fit = rows[item.product_id]
    assert (no_fit["node_id"], no_fit["status"], no_fit["confidence"]) == ("", "no_fit", "")
    assert result.by_status["no_fit"] == 1
    # The same word as the review screen for "no restriction", never an empty cell.
    assert all(row["restriction"] for row in rows.values())
    assert "none" in {row["restriction"] for row in rows.values()}
    assert "none" not in result.restricted
    for product_id, row in rows.items():
        product = products[product_id]
        assert (row["availability"], row["url"], row["image_url"]) == (
            product.availability or "", product.url or "", product.image_url or ""
        )
    assert any(row["url"] for row in rows.values())
