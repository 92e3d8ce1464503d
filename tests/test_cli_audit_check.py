"""Tests for `catmap audit-check` and the audit feedback (catmap.jobs.audit) on a store built
in a temporary project: the verdicts, the raise, the re-queue, the audit log, `status`, the
check at the end of `catmap review`, and onboarding keeping the raise."""

from __future__ import annotations

import json
from decimal import Decimal
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from click.testing import CliRunner, Result

from catmap.cli import main
from catmap.cli import review as review_command
from catmap.decide.audit import audits_needed, raised_threshold
from catmap.jobs._calibration import FeedShift
from catmap.jobs.audit import feed_acceptance, raised_floor
from catmap.jobs.onboard import OnboardSummary, keep_audit_raise
from catmap.records import Alternative, Attributes, Mapping, Product
from catmap.review.session import ReviewSession
from catmap.store import MappedRow, Store, store_path

FEED = "hollin-market"
THRESHOLD = 0.8


def _row(index: int, confidence: float, status: str, method: str = "model") -> MappedRow:
    product = Product(
        product_id=f"h{index:04d}",
        title=f"Tarrow garden chair {index}",
        brand="Tarrow",
        category_path=("Garden", "Chairs"),
        price=Decimal("49.00"),
        currency="EUR",
    )
    reasons = {"audit": ("audit_sample",), "queued": ("low_confidence",)}.get(status, ())
    return MappedRow(
        product=product,
        mapping=Mapping("4100", confidence, method, (Alternative("4101", 0.1),)),
        attributes=Attributes(brand="Tarrow", brand_confidence=0.9),
        status=status,
        group_key="Garden > Chairs",
        priority=0.5 if reasons else 0.0,
        reasons=reasons,
    )


def build_project(
    folder: Path, *, band_wrong: int, band_audits: int = 20, top_audits: int = 80
) -> Path:
    """A project whose feed auto-accepted 400 mappings at 0.8 and audited 100 of them.

    Audits: ``band_audits`` at confidence 0.85 (``band_wrong`` of them wrong), ``top_audits``
    at 0.97, all right. Also 300 accepted mappings not audited (half in each band), a rule mapping
    and 20 queued ones.
    """
    rows = []
    index = 0
    for count, confidence, status in (
        (band_audits, 0.85, "audit"),
        (top_audits, 0.97, "audit"),
        (150, 0.85, "accepted"),
        (150, 0.97, "accepted"),
        (20, 0.4, "queued"),
    ):
        for _ in range(count):
            rows.append(_row(index, confidence, status))
            index += 1
    rows.append(_row(index, 1.0, "accepted", method="rule"))
    with Store.open(store_path(folder)) as store:
        store.add_feed(FEED, source_path=f"{FEED}.csv")
        run = store.start_run("onboard", feed=FEED, params={"max_error": 0.02, "delta": 0.05})
        store.save_mapped(FEED, run, rows)
        store.finish_run(
            run,
            summary={"read": len(rows), "kept": len(rows), "rejected": 0,
                     "threshold": THRESHOLD, "max_error": 0.02, "delta": 0.05},
        )  # fmt: skip
        audits = [i for i in store.items(feed=FEED) if i.reason == "audit_sample"]
        low = [i for i in audits if store.mapping(FEED, i.product_id).mapping.confidence < 0.9]
        for item in low[:band_wrong]:
            store.decide(item.id, "auditor", "choose", node_id="4101")
        for item in [i for i in audits if i not in low[:band_wrong]]:
            store.decide(item.id, "auditor", "accept")
    return folder


def _run(*args: str) -> Result:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def _check(project: Path, *more: str) -> dict[str, Any]:
    result = _run("audit-check", "--project", str(project), "--json", *more)
    assert result.exit_code == 0, result.output
    (feed,) = json.loads(result.stdout)["feeds"]
    return dict(feed)


def _statuses(project: Path) -> dict[str, int]:
    with Store.open(store_path(project)) as store:
        counts: dict[str, int] = {}
        for _product, stored in store.mappings(FEED):
            counts[stored.status] = counts.get(stored.status, 0) + 1
    return counts


def test_over_target_raises_the_threshold_and_requeues(tmp_path: Path) -> None:
    project = build_project(tmp_path / "p", band_wrong=8)
    before = _statuses(project)

    dry = _check(project, "--dry-run")
    assert dry["verdict"] == "over_target" and not dry["applied"]
    # 8 wrong of 100 audited against 2%: scipy.stats.binomtest(8, 100, 0.02,
    # alternative="greater").pvalue ≈ 0.0010, far below 5%.
    assert dry["p_value"] < 0.05 and dry["lower_bound"] > 0.02
    assert dry["would_requeue"] == 150  # the unaudited accepted mappings at 0.85
    assert _statuses(project) == before  # a dry run changes nothing

    done = _check(project)
    assert done["verdict"] == "over_target" and done["applied"]
    # The audited mappings above 0.85 are all right: the lowest grid step above 0.85.
    conf = np.r_[np.full(20, 0.85), np.full(80, 0.97)]
    wrong = np.r_[np.ones(8, dtype=bool), np.zeros(92, dtype=bool)]
    assert done["new_threshold"] == raised_threshold(conf, wrong, THRESHOLD, 0.02)
    assert 0.85 < done["new_threshold"] <= 0.97
    assert done["requeued"] == 150
    after = _statuses(project)
    assert after["queued"] == before["queued"] + 150
    assert after["accepted"] == before["accepted"] - 150

    with Store.open(store_path(project)) as store:
        again = [i for i in store.items(feed=FEED) if "audit_over_target" in i.reasons]
        # One item per product, each open and carrying the reason, the band's audited error
        # as its priority.
        assert len(again) == len({i.product_id for i in again}) == 150
        assert all(i.state == "open" and i.reason == "audit_over_target" for i in again)
        assert {round(i.priority, 6) for i in again} == {round(8 / 20, 6)}
        # The rule mapping (the team's own decision) stays accepted.
        assert store.mapping(FEED, f"h{400 + 20:04d}").status == "accepted"
        actions = [e.action for e in store.audit_log(FEED)]
        assert "requeue" in actions and "threshold_raised" in actions
        raised = next(e for e in store.audit_log(FEED) if e.action == "threshold_raised")
        assert raised.detail["from"] == THRESHOLD
        assert raised.detail["to"] == done["new_threshold"]
        requeue = next(e for e in store.audit_log(FEED) if e.action == "requeue")
        assert len(requeue.detail["product_ids"]) == 150
        assert "audit over target" in requeue.detail["why"]
        acceptance = feed_acceptance(store, FEED)
        assert acceptance is not None and acceptance.kind == "audit-check"
        assert acceptance.threshold == done["new_threshold"]
        assert raised_floor(store, FEED) == (True, done["new_threshold"])

    # Checked again: the audits above the new threshold are within target; nothing moves.
    second = _check(project)
    assert second["verdict"] == "within_target" and second["requeued"] == 0
    assert _statuses(project) == after

    text = " ".join(_run("status", "--project", str(project)).stdout.split())
    assert (
        f"{FEED}: audit check at threshold {done['new_threshold']:.3f}: 0 wrong of 80 audited "
        "(0.0%; target 2.0%): within target" in text
    )
    facts = json.loads(_run("status", "--project", str(project), "--json").stdout)
    (feed,) = facts["feeds"]
    assert feed["threshold"] == done["new_threshold"]
    assert feed["audit_check"]["verdict"] == "within_target"
    assert feed["open_by_reason"]["audit_over_target"] == 150


def test_over_target_without_confidence_asks_for_more_audits(tmp_path: Path) -> None:
    # 1 wrong of 12 audited: 8.3% is over 2%, but scipy.stats.binomtest(1, 12, 0.02,
    # alternative="greater").pvalue = 1 - 0.98**12 ≈ 0.215 is not below 5%.
    project = build_project(tmp_path / "p", band_wrong=1, band_audits=12, top_audits=0)
    before = _statuses(project)
    facts = _check(project)
    assert facts["verdict"] == "over_target_unsure" and not facts["applied"]
    assert (facts["audited"], facts["wrong"]) == (12, 1)
    assert facts["more_audits"] == audits_needed(1, 12, 0.02, 0.05)
    assert _statuses(project) == before
    result = _run("audit-check", "--project", str(project))
    assert "more audits at this error would settle it" in " ".join(result.stdout.split())


def test_within_target_changes_nothing(tmp_path: Path) -> None:
    project = build_project(tmp_path / "p", band_wrong=1)
    before = _statuses(project)
    facts = _check(project)
    assert facts["verdict"] == "within_target" and facts["requeued"] == 0
    assert _statuses(project) == before


def test_review_session_end_runs_the_check(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    project = build_project(tmp_path / "p", band_wrong=8)
    shown: list[ReviewSession] = []
    monkeypatch.setattr(review_command, "run_screen", shown.append)
    monkeypatch.setattr(review_command, "_has_terminal", lambda: True)
    result = _run("review", "--project", str(project), "--reviewer", "ana")
    assert result.exit_code == 0, result.output
    assert len(shown) == 1
    text = " ".join(result.stdout.split())
    assert f"{FEED}: audit check at threshold 0.800: 8 wrong of 100 audited" in text
    assert "150 accepted mappings back in the review queue" in text
    with Store.open(store_path(project)) as store:
        raised = [e for e in store.audit_log(FEED) if e.action == "threshold_raised"]
        assert len(raised) == 1 and raised[0].actor == "ana"


def test_onboarding_keeps_the_raise() -> None:
    shift = FeedShift(100, 0.0, 0.0, 0.9, 0.9, "as calibrated", 0.8, False, ())
    summary = OnboardSummary(feed=FEED, path="f.csv", run_id=1, accounting={}, threshold=0.8)
    assert keep_audit_raise(shift, False, None, summary) is shift
    kept = keep_audit_raise(shift, True, 0.9, summary)
    assert kept.threshold == 0.9 and summary.threshold == 0.9
    assert "audit raised its threshold: kept at 0.900" in summary.statement
    # A calibration threshold already stricter than the raise stays.
    strict = FeedShift(100, 0.0, 0.0, 0.9, 0.9, "tightened", 0.95, False, ())
    assert keep_audit_raise(strict, True, 0.9, summary).threshold == 0.95
    # A raise to "accept nothing" stays so.
    assert keep_audit_raise(shift, True, None, summary).threshold is None


def test_unknown_feed_and_no_store(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["audit-check", "--project", str(tmp_path / "none")])
    assert result.exit_code == 5 and "no project store here" in result.stderr
    project = build_project(tmp_path / "p", band_wrong=0)
    result = CliRunner().invoke(main, ["audit-check", "--project", str(project), "--feed", "x"])
    assert result.exit_code == 5
