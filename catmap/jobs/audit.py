"""Feed each feed's audit back into its threshold (the facts ``catmap audit-check`` prints).

For each feed, the reviewed audit samples of the part its current threshold accepts are judged
against the feed's target (:func:`catmap.decide.audit.check_audit`): within target, over target
but not yet with confidence (how many more audits would tell), or over target with confidence.
In the last case the feed's threshold is raised and the auto-accepted mappings below the new
threshold go back to the review queue, one item per product with the reason
``audit_over_target`` (:meth:`catmap.store.Store.requeue_accepted`); the raise is recorded as an
``audit-check`` run and in the audit log (action ``threshold_raised``). Later onboarding runs of
the feed keep at least the raised threshold (:func:`raised_floor`).

The check runs on its own (``catmap audit-check``), at the end of every review session
(``catmap review``, ``catmap decisions import``) and, without changing anything, inside
``catmap status``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from catmap.decide.audit import AuditCheck, check_audit
from catmap.decide.threshold import DEFAULT_DELTA, DEFAULT_MAX_ERROR
from catmap.errors import StoreError
from catmap.project import NO_STORE_HINT
from catmap.store import Store, store_path

__all__ = [
    "AUDIT_CHECK_RUN",
    "FeedAcceptance",
    "audit_check_project",
    "check_feed_audit",
    "feed_acceptance",
    "raised_floor",
]

# The kind of the run a raise is recorded as.
AUDIT_CHECK_RUN = "audit-check"
REQUEUE_REASON = "audit_over_target"


@dataclass(frozen=True, slots=True)
class FeedAcceptance:
    """The threshold a feed accepts at now, and its target.

    Attributes:
        threshold: accept mappings with confidence ≥ this (None: accept nothing).
        max_error: the error rate allowed among the feed's auto-accepted mappings.
        delta: allowed probability that the statement fails.
        run_id: the run that set it (an onboarding or an audit check).
        kind: that run's kind.
    """

    threshold: float | None
    max_error: float
    delta: float
    run_id: int
    kind: str


def feed_acceptance(store: Store, feed: str) -> FeedAcceptance | None:
    """Return the feed's threshold now: that of its latest onboarding or audit-check raise.

    Args:
        store: the project store.
        feed: the feed's name.

    Returns:
        The acceptance, or None when no finished run of the feed set a threshold.
    """
    for run in reversed(store.runs(feed)):
        if run.kind not in ("onboard", AUDIT_CHECK_RUN) or not run.finished_at:
            continue
        # The summary has the threshold the run used (after the feed check); its parameters
        # the calibrated one (a run that stopped before its summary).
        recorded = run.summary if "threshold" in run.summary else run.params
        if "threshold" not in recorded:
            continue
        threshold = recorded["threshold"]
        return FeedAcceptance(
            None if threshold is None else float(threshold),
            float(run.summary.get("max_error", run.params.get("max_error", DEFAULT_MAX_ERROR))),
            float(run.summary.get("delta", run.params.get("delta", DEFAULT_DELTA))),
            run.id,
            run.kind,
        )
    return None


def raised_floor(store: Store, feed: str) -> tuple[bool, float | None]:
    """Return whether the feed's threshold was ever raised by its audit, and the latest raise.

    Args:
        store: the project store.
        feed: the feed's name (an unknown feed was never raised).

    Returns:
        ``(False, None)`` when never raised, else ``(True, threshold)`` (None: accept nothing).
    """
    if feed not in {record.name for record in store.feeds()}:
        return False, None
    for run in reversed(store.runs(feed)):
        if run.kind == AUDIT_CHECK_RUN and run.finished_at and "threshold" in run.summary:
            value = run.summary["threshold"]
            return True, None if value is None else float(value)
    return False, None


def check_feed_audit(
    store: Store, feed: str, *, apply: bool = True, actor: str = "catmap"
) -> dict[str, Any]:
    """Judge one feed's reviewed audit sample; raise its threshold when it must.

    Only the audit samples the current threshold still accepts count (after a raise, those
    below it have done their work). With ``apply``, an over-target verdict raises the threshold
    and re-queues the accepted mappings below it, in one recorded ``audit-check`` run.

    Args:
        store: the project store.
        feed: the feed's name.
        apply: act on an over-target verdict (False: only say what would happen).
        actor: who asked (for the audit log).

    Returns:
        JSON-ready facts: the verdict and its numbers, the thresholds, the products re-queued.
    """
    acceptance = feed_acceptance(store, feed)
    if acceptance is None:
        return {
            "feed": feed,
            "verdict": "not_onboarded",
            "text": "no accept threshold recorded for this feed (run `catmap onboard` on it)",
        }
    outcomes = store.audit_outcomes(feed)
    confidences = np.array([c for _p, c, _w in outcomes], dtype=float)
    wrong = np.array([w for _p, _c, w in outcomes], dtype=bool)
    if acceptance.threshold is not None:
        # The reviewer's verdict counts for the part the threshold still accepts.
        keep = confidences >= acceptance.threshold
        confidences, wrong = confidences[keep], wrong[keep]
    check = check_audit(
        confidences,
        wrong,
        threshold=acceptance.threshold,
        max_error=acceptance.max_error,
        delta=acceptance.delta,
    )
    facts = _facts(feed, check)
    facts["requeued"] = 0
    facts["applied"] = False
    if not check.raises:
        return facts
    if not apply:
        facts["would_requeue"] = store.count_accepted_below(feed, check.new_threshold)
        return facts
    facts.update(_raise(store, feed, check, acceptance, actor))
    return facts


def _raise(
    store: Store, feed: str, check: AuditCheck, acceptance: FeedAcceptance, actor: str
) -> dict[str, Any]:
    """Record the raise as a run, re-queue the mappings below it, log it."""
    new = check.new_threshold
    run_id = store.start_run(
        AUDIT_CHECK_RUN,
        feed=feed,
        params={"max_error": check.max_error, "delta": check.delta, "from_run": acceptance.run_id},
    )
    before = "accept nothing" if new is None else f"{new:.3f}"
    why = (
        f"audit over target: {check.wrong} wrong of {check.audited} audited "
        f"({check.rate:.1%}, target {check.max_error:.1%}); threshold "
        f"{check.threshold:.3f} -> {before}"
    )
    requeued = store.requeue_accepted(
        feed,
        below=new,
        reason=REQUEUE_REASON,
        priority=check.band_error,
        why=why,
        actor=actor,
        run_id=run_id,
    )
    summary = {
        **_facts(feed, check),
        "threshold": new,
        "raised_from": check.threshold,
        "max_error": check.max_error,
        "delta": check.delta,
        "requeued": len(requeued),
    }
    store.record_event(
        "threshold_raised",
        actor,
        feed=feed,
        detail={
            "run_id": run_id,
            "from": check.threshold,
            "to": new,
            "audited": check.audited,
            "wrong": check.wrong,
            "p_value": check.p_value,
            "requeued": len(requeued),
        },
    )
    store.finish_run(run_id, summary=summary)
    return {"requeued": len(requeued), "applied": True, "run_id": run_id}


def _facts(feed: str, check: AuditCheck) -> dict[str, Any]:
    return {
        "feed": feed,
        "verdict": check.verdict,
        "text": check.describe(),
        "audited": check.audited,
        "wrong": check.wrong,
        "rate": check.rate,
        "lower_bound": check.lower_bound,
        "p_value": check.p_value,
        "max_error": check.max_error,
        "delta": check.delta,
        "threshold": check.threshold,
        "new_threshold": check.new_threshold,
        "more_audits": check.more_audits,
        "audited_above": check.audited_above,
        "wrong_above": check.wrong_above,
        "band_error": check.band_error,
        "audits_to_certify": check.audits_to_certify,
    }


def audit_check_project(
    project: str | Path,
    feed: str | None = None,
    *,
    apply: bool = True,
    actor: str = "catmap",
) -> dict[str, Any]:
    """Run the audit check on one feed or every feed of a project.

    Args:
        project: the project folder.
        feed: only this feed (its name); default: every feed.
        apply: raise thresholds and re-queue when the audit says so (False: report only).
        actor: who asked (for the audit log).

    Returns:
        ``{"store": path, "feeds": [facts per feed]}``.

    Raises:
        StoreError: the project has no store yet, or no such feed.
    """
    path = store_path(project)
    if not path.exists():
        raise StoreError("no project store here", path=path, hint=NO_STORE_HINT)
    with Store.open(path) as store:
        names = [store.feed(feed).name] if feed else [record.name for record in store.feeds()]
        feeds = [check_feed_audit(store, name, apply=apply, actor=actor) for name in names]
    return {"store": str(path), "feeds": feeds}
