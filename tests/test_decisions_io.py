"""Tests of catmap.jobs.decisions: export the queue to CSV, fill it, import it back."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from test_onboard import SmallWorld, new_project, options, small_world

from catmap.errors import InputError
from catmap.jobs.decisions import DECISION_COLUMNS, export_decisions, import_decisions
from catmap.jobs.onboard import OnboardOptions, onboard_feed
from catmap.review.sample import RED_WINE, SAMPLE_FEED, T_SHIRTS, build_sample_store
from catmap.store import Store, store_path
from catmap.tree.taxonomy import load_default_tree


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> SmallWorld:
    return small_world(tmp_path_factory)


@pytest.fixture()
def project(world: SmallWorld, tmp_path: Path) -> Path:
    folder = new_project(world, tmp_path / "project")
    opts = OnboardOptions(max_error=options().max_error, validation_feed=world.paths.reference)
    onboard_feed(world.paths.feeds["ferravelle"], project=folder, tree=world.tree, options=opts)
    return folder


def _read(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def _write(path: Path, rows: list[dict[str, str]]) -> None:
    with path.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
        writer.writeheader()
        writer.writerows(rows)


def _other_leaf(world: SmallWorld, node: str) -> str:
    return next(leaf.id for leaf in world.tree.leaves() if leaf.id != node)


def test_export_lists_every_open_item(world: SmallWorld, project: Path, tmp_path: Path) -> None:
    with Store.open(store_path(project)) as store:
        counts = export_decisions(store, tmp_path / "queue.csv", tree=world.tree)
        open_items = store.queue_summary().open
    rows = _read(tmp_path / "queue.csv")
    assert tuple(rows[0]) == DECISION_COLUMNS
    assert counts.open == open_items == len(rows)
    assert counts.done == 0
    for row in rows:
        assert row["state"] == "open"
        assert row["suggested_path"] == world.tree.path_text(row["suggested_node"])
        assert all(row[c] == "" for c in ("reviewer_node", "action", "who", "age", "note"))


def test_round_trip_with_a_bad_row(world: SmallWorld, project: Path, tmp_path: Path) -> None:
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)
    assert len(rows) >= 5
    accept, choose, bad_node, attributes, no_fit = rows[:5]
    accept["action"] = "accept"
    choose["reviewer_node"] = _other_leaf(world, choose["suggested_node"])
    choose["note"] = "=not a formula"
    bad_node["reviewer_node"] = "999999"
    attributes["action"] = "fix_attributes"
    attributes["who"] = "unisex"
    attributes["age"] = "adult"
    no_fit["action"] = "no_fit"
    _write(sheet, rows)

    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="sheet-reviewer")
        assert result.applied == 4
        assert result.by_action == {"accept": 1, "choose": 1, "fix_attributes": 1, "no_fit": 1}
        assert result.empty == len(rows) - 5
        assert [(b.line, b.item_id) for b in result.bad] == [(4, bad_node["item_id"])]
        assert "not in the category tree" in result.bad[0].reason

        chosen = store.mapping("ferravelle", choose["product_id"])
        assert chosen.mapping.node_id == choose["reviewer_node"]
        assert chosen.status == "reviewed"
        fixed = store.mapping("ferravelle", attributes["product_id"])
        assert (fixed.attributes.who, fixed.attributes.age) == ("unisex", "adult")
        assert store.mapping("ferravelle", no_fit["product_id"]).mapping.node_id == ""
        assert store.item(int(bad_node["item_id"])).state == "open"
        decisions = {d.item_id: d for d in store.decisions()}
        assert decisions[int(choose["item_id"])].note == "=not a formula"
        assert {d.reviewer for d in decisions.values()} == {"sheet-reviewer"}
        actions = [entry.action for entry in store.audit_log()]
        assert actions.count("decision") == 4
        assert "decisions_import" in actions

    assert result.rejects_file == tmp_path / "queue.rejects.csv"
    rejected = _read(result.rejects_file)
    assert [(r["line"], r["item_id"], r["reviewer_node"]) for r in rejected] == [
        ("4", bad_node["item_id"], "999999")
    ]

    # Importing the same sheet again: the decided rows are now bad ("already decided"), the bad
    # row stays bad, nothing is applied twice.
    with Store.open(store_path(project)) as store:
        again = import_decisions(store, sheet, tree=world.tree, reviewer="sheet-reviewer")
        assert again.applied == 0
        assert len(again.bad) == 5
        assert sum("already decided" in b.reason for b in again.bad) == 4
        assert len(store.decisions()) == 4

    # The decided items are exported with what was decided.
    with Store.open(store_path(project)) as store:
        counts = export_decisions(store, tmp_path / "after.csv", tree=world.tree)
    after = {r["item_id"]: r for r in _read(tmp_path / "after.csv")}
    assert counts.done == 4
    assert after[choose["item_id"]]["decided_action"] == "choose"
    assert after[choose["item_id"]]["decided_node"] == choose["reviewer_node"]


@pytest.mark.parametrize(
    ("change", "reason"),
    [
        ({"action": "shout"}, "action 'shout' is not one of"),
        ({"action": "choose"}, "needs a reviewer_node"),
        ({"who": "everyone"}, "who 'everyone' is not one of"),
        ({"age": "ancient"}, "age 'ancient' is not one of"),
        ({"item_id": "12x", "action": "accept"}, "is not a number"),
        ({"item_id": "999999", "action": "accept"}, "no review item 999999"),
    ],
)
def test_bad_rows_are_reported_with_their_reason(
    world: SmallWorld, project: Path, tmp_path: Path, change: dict[str, str], reason: str
) -> None:
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)[:2]
    rows[0].update(change)
    rows[1]["action"] = "accept"
    _write(sheet, rows)
    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="r")
    assert result.applied == 1
    assert len(result.bad) == 1
    assert result.bad[0].line == 2
    assert reason in result.bad[0].reason


def test_a_file_without_item_ids_is_refused(
    world: SmallWorld, project: Path, tmp_path: Path
) -> None:
    sheet = tmp_path / "other.csv"
    sheet.write_text("product,node\nA,1011\n", encoding="utf-8")
    with Store.open(store_path(project)) as store, pytest.raises(InputError, match="item_id"):
        import_decisions(store, sheet, tree=world.tree, reviewer="r")


def test_import_moves_the_restriction_flag_and_who_age_with_the_node(tmp_path: Path) -> None:
    # The sample store lives on the shared tree version 1; expected values come from that tree
    # (tree.restriction, and an empty tree.who / tree.ages meaning "does not apply").
    tree = load_default_tree(1)
    assert tree.restriction(RED_WINE) == "alcohol" and tree.restriction(T_SHIRTS) is None
    sheet = tmp_path / "queue.csv"
    with build_sample_store(tmp_path / "store.sqlite") as store:
        export_decisions(store, sheet, tree=tree)
        rows = {r["product_id"]: r for r in _read(sheet)}
        rows["WN-001"]["reviewer_node"] = T_SHIRTS  # a wine put on T-shirts loses the flag
        rows["TS-001"]["reviewer_node"] = RED_WINE  # a T-shirt put on wine gets it
        rows["TS-001"]["who"] = "female"  # gender does not apply on wine
        rows["HD-002"]["reviewer_node"] = T_SHIRTS
        rows["HD-002"]["age"] = "kids"  # kept: age applies on T-shirts
        _write(sheet, list(rows.values()))
        result = import_decisions(store, sheet, tree=tree, reviewer="sheet-reviewer")
        assert (result.applied, result.bad) == (3, [])

        wine = store.mapping(SAMPLE_FEED, "WN-001").attributes
        assert wine.restriction == ""
        assert wine.who in tree.who(T_SHIRTS) and wine.age in tree.ages(T_SHIRTS)
        tee = store.mapping(SAMPLE_FEED, "TS-001").attributes
        assert (tee.restriction, tee.who, tee.age) == (
            "alcohol",
            "not_applicable",
            "not_applicable",
        )
        assert store.mapping(SAMPLE_FEED, "HD-002").attributes.age == "kids"


@pytest.mark.parametrize(
    ("item_id", "reason"),
    [
        ("²", "is not a number"),  # a digit to str.isdigit(), not to int()
        ("12345678901234567890", "too long to be a review item"),
    ],
)
def test_an_item_id_that_is_no_id_is_a_bad_row(
    world: SmallWorld, project: Path, tmp_path: Path, item_id: str, reason: str
) -> None:
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)[:1]
    rows[0].update({"item_id": item_id, "action": "accept"})
    _write(sheet, rows)
    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="r")
    assert result.bad_count == 1 and reason in result.bad[0].reason


def test_a_semicolon_file_with_a_byte_order_mark_is_read(
    world: SmallWorld, project: Path, tmp_path: Path
) -> None:
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)[:2]
    for row in rows:
        row["action"] = "accept"
    # What a spreadsheet saves as "CSV" where the decimal mark is a comma: ';' and a BOM.
    with sheet.open("w", encoding="utf-8-sig", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS), delimiter=";")
        writer.writeheader()
        writer.writerows(rows)
    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="r")
    assert (result.applied, result.bad_count) == (2, 0)


def test_a_cp1252_file_is_a_clear_error_or_read_with_its_encoding(
    world: SmallWorld, project: Path, tmp_path: Path
) -> None:
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)[:2]
    rows[0].update({"action": "accept", "note": "déjà vu"})
    with sheet.open("w", encoding="cp1252", newline="", errors="replace") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
        writer.writeheader()
        writer.writerows(rows)
    with Store.open(store_path(project)) as store:
        with pytest.raises(InputError, match=r"queue.csv:2: .*not UTF-8 text.*--encoding"):
            import_decisions(store, sheet, tree=world.tree, reviewer="r")
        assert store.decisions() == []
        result = import_decisions(store, sheet, tree=world.tree, reviewer="r", encoding="cp1252")
        assert result.applied == 1
        assert store.decisions()[0].note == "déjà vu"


def test_bad_rows_are_streamed_to_the_rejects_file_and_counted(
    world: SmallWorld, project: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import catmap.jobs.decisions as decisions

    monkeypatch.setattr(decisions, "SHOWN_BAD_ROWS", 3)
    sheet = tmp_path / "queue.csv"
    with sheet.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
        writer.writeheader()
        for number in range(50):
            writer.writerow({**dict.fromkeys(DECISION_COLUMNS, ""),
                             "item_id": f"x{number}", "action": "accept"})
    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="r")
    assert result.bad_count == 50 and len(result.bad) == 3
    assert result.rejects_file is not None
    assert len(_read(result.rejects_file)) == 50


def test_a_reviewer_node_may_be_given_by_its_path(
    world: SmallWorld, project: Path, tmp_path: Path
) -> None:
    # A specialist copies a path from suggested_path more readily than an id.
    sheet = tmp_path / "queue.csv"
    with Store.open(store_path(project)) as store:
        export_decisions(store, sheet, tree=world.tree)
    rows = _read(sheet)[:3]
    by_path, same_path, wrong_path = rows
    other = _other_leaf(world, by_path["suggested_node"])
    by_path["reviewer_node"] = "  " + world.tree.path_text(other).upper() + " "
    same_path["reviewer_node"] = same_path["suggested_path"]
    same_path["action"] = "accept"
    wrong_path["reviewer_node"] = world.tree.path_text(other) + " > Nowhere"
    _write(sheet, rows)
    with Store.open(store_path(project)) as store:
        result = import_decisions(store, sheet, tree=world.tree, reviewer="sheet")
        assert result.by_action == {"choose": 1, "accept": 1}
        assert store.mapping("ferravelle", by_path["product_id"]).mapping.node_id == other
        kept = store.mapping("ferravelle", same_path["product_id"])
        assert kept.mapping.node_id == same_path["suggested_node"]
        assert kept.status == "reviewed"
    assert [b.line for b in result.bad] == [4]
    assert "no node named 'nowhere'" in result.bad[0].reason
