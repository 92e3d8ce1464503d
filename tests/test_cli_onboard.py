"""Tests for `catmap onboard`: summary, --json, idempotent re-run, no model."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner, Result
from test_onboard import TEST_MAX_ERROR, SmallWorld, new_project

from catmap.attributes import RESTRICTION_CAUTION
from catmap.cli import main
from catmap.errors import EXIT_MODEL
from catmap.store import Store, store_path

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


def onboard(world: SmallWorld, project: Path, feed: str, *more: str) -> Result:
    """Run `catmap onboard` on a demo feed of the small world."""
    return CliRunner().invoke(
        main,
        [
            "onboard",
            str(world.paths.feeds[feed]),
            "--project",
            str(project),
            "--max-error",
            str(TEST_MAX_ERROR),
            "--validation",
            str(world.paths.reference),
            *more,
        ],
        catch_exceptions=False,
    )


def _facts(result: Result) -> dict[str, Any]:
    assert result.exit_code == 0, result.output
    facts: dict[str, Any] = json.loads(result.stdout)
    return facts


def test_onboard_prints_the_summary(
    world: SmallWorld, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import catmap.cli._render as render

    # stderr is no terminal here: progress comes as lines (each update, for the test).
    monkeypatch.setattr(render, "PIPED_PROGRESS_SECONDS", 0.0)
    project = new_project(world, tmp_path / "p")
    result = onboard(world, project, "ferravelle")
    assert result.exit_code == 0, result.output
    assert "catmap: onboarding ferravelle.csv: saving, " in result.stderr
    # rich wraps long lines at the terminal width: compare with whitespace collapsed.
    text = " ".join(result.stdout.split())
    assert text.startswith("ferravelle (")
    with Store.open(store_path(project)) as store:
        status = store.feed_status("ferravelle")
    assert f"read {status.read:,} = kept {status.kept:,} + rejected {status.rejected:,}" in text
    assert "rejects: duplicate_id" in text
    assert f"auto-accepted {status.accepted + status.audit:,} of {status.products:,}" in text
    assert "accept threshold" in text
    assert "with 95% confidence their error rate is at most 10.0%" in text
    assert "By department" in text
    assert f"store: {store_path(project)}" in text


def test_onboard_json_matches_the_store_and_reruns_idempotently(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    first = _facts(onboard(world, project, "quorvane", "--json"))
    accounting = first["accounting"]
    assert accounting["read"] == accounting["kept"] + accounting["rejected"]
    assert first["mapped"] == accounting["kept"]
    with Store.open(store_path(project)) as store:
        status = store.feed_status("quorvane")
        items = store.queue_summary("quorvane").total
    assert status.products == first["mapped"]
    assert status.accepted + status.audit == first["accepted"] + first["audit"]
    assert status.queued == first["queued"]

    second = _facts(onboard(world, project, "quorvane", "--json"))
    for key in ("mapped", "accepted", "queued", "audit", "threshold"):
        assert second[key] == first[key]
    with Store.open(store_path(project)) as store:
        assert store.queue_summary("quorvane").total == items
        assert sum(1 for _ in store.mappings("quorvane")) == first["mapped"]


def test_audit_share_zero_still_audits_a_few(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    facts = _facts(onboard(world, project, "tallimbra", "--audit-share", "0", "--json"))
    accepted = facts["accepted"] + facts["audit"]
    # The planner audits at least 5 accepted products however small the share (decide.py).
    assert facts["audit"] == min(5, accepted)


def test_onboard_without_a_model_says_train_first(world: SmallWorld, tmp_path: Path) -> None:
    result = onboard(world, tmp_path / "empty", "ferravelle")
    assert result.exit_code == EXIT_MODEL
    assert "no trained model here" in result.stderr
    assert "run `catmap train` first" in result.stderr


def test_onboard_has_help() -> None:
    result = CliRunner().invoke(main, ["onboard", "--help"])
    assert result.exit_code == 0
    for option in ("--max-error", "--confidence", "--audit-share", "--rules", "--project",
                   "--json", "--validation"):
        assert option in result.stdout


def test_onboarding_waits_for_a_pending_remap(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "ferravelle").exit_code == 0
    # A remap of the store waiting to be finalised (as `catmap remap` leaves it).
    with Store.open(store_path(project)) as store, store._transaction() as conn:
        conn.execute(
            "INSERT INTO remaps (from_version, to_version, state, started_at) "
            "VALUES ('1', '2', 'pending', '2026-01-01T00:00:00Z')"
        )
    result = onboard(world, project, "quorvane")
    assert result.exit_code == EXIT_MODEL == 4
    text = " ".join(result.output.split())
    assert "cannot onboard while remap 1 (tree 1 -> 2) is pending" in text
    assert "run `catmap remap-finalise` to keep it or `catmap remap-rollback`" in text
    with Store.open(store_path(project)) as store:
        assert [f.name for f in store.feeds()] == ["ferravelle"]


def test_a_feed_in_a_language_the_tree_lacks_has_no_capped_product_accepted(
    tmp_path: Path,
) -> None:
    # A tree of one's own in English only, clean English labels: every held-out product is
    # right, so the calibration data alone accepts any score (threshold 0.000, below the cap).
    own = Path(__file__).parent / "data" / "own-tree"
    words = {
        "111": "carrot seeds", "112": "tulip bulbs", "121": "digging spade",
        "122": "pruning shears", "123": "watering can", "131": "solar lantern",
        "211": "leather thimble", "212": "sewing thread", "221": "paint brush",
        "222": "acrylic paint",
    }  # fmt: skip
    labelled = tmp_path / "labelled.csv"
    labelled.write_text(
        "sku,title,price,gold_node\n"
        + "".join(
            f"L{i},{('Tarrow', 'Quillmere')[i % 2]} {words[node]} "
            f"{('small', 'large', 'green')[i % 3]},{3 + i % 40}.99,{node}\n"
            for i in range(4000)
            for node in [sorted(words)[i % 10]]
        ),
        encoding="utf-8",
    )
    def run(*args: str) -> Result:
        return CliRunner().invoke(main, list(args), catch_exceptions=False)

    project = tmp_path / "p"
    init = ["init", str(project), "--tree", str(own / "english-only.txt")]
    assert run(*init, "--labelled", str(labelled)).exit_code == 0
    assert run("train", "--project", str(project)).exit_code == 0
    # A feed of one shop: three quarters of its titles German, a quarter English.
    feed = tmp_path / "mixed.csv"
    german = ["Tulpenzwiebeln für den Garten", "Gießkanne aus Metall grün", "Fingerhut aus Leder"]
    feed.write_text(
        "artikel;titel;preis\n"
        + "".join(
            f"G{i:03d};{'Tarrow tulip bulbs small' if i % 4 == 0 else german[i % 3]} {i};4.99\n"
            for i in range(300)
        ),
        encoding="utf-8",
    )
    result = run("onboard", str(feed), "--project", str(project), "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["feed_check"]["uncovered_language"]
    assert facts["threshold"] > 0.5
    assert "raised to 0.501" in facts["statement"]
    with Store.open(store_path(project)) as store:
        status = {m.product_id: m.status for _, m in store.mappings("mixed")}
    german_ids = [f"G{i:03d}" for i in range(300) if i % 4]
    assert {status[pid] for pid in german_ids} == {"queued"}  # none auto-accepted
    assert "accepted" in {status[f"G{i:03d}"] for i in range(0, 300, 4)}


@pytest.mark.parametrize("as_json", [False, True])
def test_a_feed_cut_short_shows_what_was_saved_then_the_error(
    world: SmallWorld, tmp_path: Path, as_json: bool
) -> None:
    whole = world.paths.feeds["quorvane"].read_bytes()
    cut = tmp_path / "quorvane_cut.xml"
    cut.write_bytes(whole[: len(whole) // 2])
    project = new_project(world, tmp_path / "p")
    args = ["onboard", str(cut), "--project", str(project), "--max-error", str(TEST_MAX_ERROR),
            "--validation", str(world.paths.reference)]  # fmt: skip
    result = CliRunner().invoke(main, args + (["--json"] if as_json else []))
    assert result.exit_code == 3, result.output
    assert "catmap: error: " in result.stderr and "the XML is broken" in result.stderr
    with Store.open(store_path(project)) as store:
        summary = store.runs("quorvane_cut")[0].summary
    assert summary["kept"] > 0
    if as_json:
        facts = json.loads(result.stdout)
        assert (facts["accounting"]["read"], facts["accounting"]["kept"]) == (
            summary["read"],
            summary["kept"],
        )
        assert facts["stopped_early"] == summary["stopped_early"]
    else:
        text = " ".join(result.stdout.split())
        assert f"read {summary['read']:,} = kept {summary['kept']:,}" in text
        assert "reading stopped early: " in text


def test_the_restriction_flags_come_with_the_caution(world: SmallWorld, tmp_path: Path) -> None:
    feed = tmp_path / "kestrow.csv"
    rows = ["product_id,title,brand,retailer_category,price"]
    rows += [f"K{i},Vodka 70cl 40% vol no {i},Ardel,Drinks,19.90" for i in range(6)]
    rows += [f"K{i + 6},Linen shirt no {i},Ardel,Shirts,29.90" for i in range(6)]
    feed.write_text("\n".join(rows) + "\n", encoding="utf-8")
    project = new_project(world, tmp_path / "p")
    args = ["onboard", str(feed), "--project", str(project), "--max-error", str(TEST_MAX_ERROR)]
    args += ["--validation", str(world.paths.reference)]
    facts = _facts(CliRunner().invoke(main, [*args, "--json"], catch_exceptions=False))
    assert facts["restricted"].get("alcohol", 0) >= 6
    assert facts["caution"] == RESTRICTION_CAUTION
    result = CliRunner().invoke(main, args, catch_exceptions=False)
    assert result.exit_code == 0, result.output
    text = " ".join(result.stdout.split())
    caution = " ".join(RESTRICTION_CAUTION.split())
    assert text.index("restriction flags: alcohol") < text.index(f"Note: {caution}")
