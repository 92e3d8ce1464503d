"""Feeding the audit back: is a feed's audited error over its target, and where to raise.

Pure functions, no I/O. The audit sample of a feed (:func:`catmap.decide.queue.audit_sample`)
is a seeded uniform draw from the mappings the feed's threshold ``t0`` auto-accepted, so the
reviewed part of it measures the real error of the accepted part on *this* feed, whatever the
calibration data said (:func:`check_audit`).

**Over target with confidence.** With ``k`` wrong of ``n`` audited and a target ``ε``, the
one-sided exact binomial test of "the error is at most ε" has the p-value
``P(Binomial(n, ε) ≥ k)``; the error is *over target with confidence* ``1 - δ`` when that
p-value is at most ``δ``. This is the same as the one-sided Clopper-Pearson lower bound
``Beta(δ; k, n - k + 1)`` lying above ``ε`` (:func:`error_lower_bound`). The observed error
may be over target without that confidence: then nothing is raised, and
:func:`audits_needed` says how many more audits, at the error seen so far, would settle it.

**The raised threshold** (:func:`raised_threshold`). The calibration data certified every
candidate threshold down to ``t0`` (Learn-then-Test,
:func:`catmap.decide.threshold.choose_threshold`), so the new threshold is never below ``t0``:
raising only removes mappings from the accepted part, and the calibration evidence keeps
backing what stays. The audit is the feed's own evidence, and it has just shown that the
calibration data is not exchangeable with this feed at ``t0``; pooling the two would let
thousands of calibration items outvote the feed's few audits, so they are not pooled. Instead
the audit decides how far to raise: the audited mappings with confidence ≥ ``t`` are a uniform
sample of the accepted mappings with confidence ≥ ``t`` (a uniform sample stays uniform on any
part chosen by the confidence alone), so their wrong share is an unbiased estimate of the error
of the part a threshold ``t`` keeps. The new threshold is the lowest candidate ``t ≥ t0`` (on
the same fixed grid as the calibration) at which that estimate is within the target and at
least :data:`MIN_AUDITED_ABOVE` audited mappings remain above it; none: accept nothing
automatically. That is an estimate, not a guarantee: the guarantee on the feed's own evidence
needs ``n ≥ log δ / log(1 − ε)`` audited above the threshold with none wrong (148 for 2% at
95%), and the result says how many more (:attr:`AuditCheck.audits_to_certify`), so the audit
can go on where it matters.

The mappings between ``t0`` and the new threshold go back to the review queue; their priority
is the audited error of that band (:attr:`AuditCheck.band_error`), a measured chance of being
wrong rather than the model's overconfident one.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from catmap.decide.threshold import GRID_STEPS, min_accepted_for

# Fewest audited mappings above a raised threshold for their wrong share to stand for the part
# it keeps: below this one lucky audit would set the threshold. (Our choice.)
MIN_AUDITED_ABOVE = 5
# The most audits :func:`audits_needed` looks ahead for.
AUDIT_LOOKAHEAD = 100_000

VERDICTS = ("no_audits", "within_target", "over_target_unsure", "over_target")


@dataclass(frozen=True, slots=True)
class AuditCheck:
    """What a feed's reviewed audit sample says about its threshold.

    Attributes:
        verdict: ``no_audits``, ``within_target``, ``over_target_unsure`` (observed error over
            the target, but not with confidence) or ``over_target`` (over with confidence: raise).
        audited: audit samples reviewed.
        wrong: those a reviewer moved to another node (or to no node).
        rate: ``wrong / audited`` (0 with no audits).
        lower_bound: one-sided Clopper-Pearson lower bound of the error at ``1 - delta``.
        p_value: the exact binomial p-value of "the error is at most ``max_error``".
        max_error: the feed's target.
        delta: allowed probability of a wrong "over target".
        threshold: the feed's threshold now (None: accepts nothing).
        new_threshold: the raised threshold (``over_target`` only; None: accept nothing).
        more_audits: audits still needed to tell, at the error seen (``over_target_unsure``;
            None when even :data:`AUDIT_LOOKAHEAD` more would not).
        audited_above: audited mappings with confidence ≥ the new threshold.
        wrong_above: wrong ones among them.
        band_error: audited wrong share between the old and the new threshold.
        audits_to_certify: further audits above the new threshold, all right, that would show
            with ``1 - delta`` confidence that its error is within target
            (:func:`more_audits_to_certify`).
    """

    verdict: str
    audited: int
    wrong: int
    rate: float
    lower_bound: float
    p_value: float
    max_error: float
    delta: float
    threshold: float | None
    new_threshold: float | None = None
    more_audits: int | None = None
    audited_above: int = 0
    wrong_above: int = 0
    band_error: float = 0.0
    audits_to_certify: int = 0

    @property
    def raises(self) -> bool:
        """True when the threshold must be raised."""
        return self.verdict == "over_target"

    def describe(self) -> str:
        """The verdict in one sentence."""
        seen = (
            f"{self.wrong} wrong of {self.audited} audited ({self.rate:.1%}; target "
            f"{self.max_error:.1%})"
        )
        if self.verdict == "no_audits":
            return "no audit sample reviewed yet"
        if self.verdict == "within_target":
            return f"{seen}: within target"
        confident = f"{1 - self.delta:.0%}"
        if self.verdict == "over_target_unsure":
            more = (
                f"about {self.more_audits:,} more audits at this error would settle it"
                if self.more_audits is not None
                else "more audits are needed to settle it"
            )
            return f"{seen}: over target, but not with {confident} confidence; {more}"
        after = (
            "accept nothing automatically"
            if self.new_threshold is None
            else f"threshold raised to {self.new_threshold:.3f}"
        )
        return (
            f"{seen}: over target with {confident} confidence (lower bound "
            f"{self.lower_bound:.1%}); {after}"
        )


def over_target_p_value(wrong: int, audited: int, max_error: float) -> float:
    """Return ``P(Binomial(audited, max_error) ≥ wrong)``: the one-sided exact binomial p-value.

    Small when ``wrong`` errors in ``audited`` would be unlikely if the error were at most
    ``max_error``.

    Args:
        wrong: wrong mappings found.
        audited: mappings audited.
        max_error: the target error rate, in (0, 1).

    Returns:
        The p-value (1 with nothing audited).

    Raises:
        ValueError: counts out of range or target outside (0, 1).
    """
    from scipy.stats import binom

    _check_counts(wrong, audited, max_error)
    if audited == 0 or wrong == 0:
        return 1.0
    return float(binom.sf(wrong - 1, audited, max_error))


def error_lower_bound(wrong: int, audited: int, confidence: float) -> float:
    """Return the one-sided Clopper-Pearson lower bound of an error rate.

    ``Beta(1 - confidence; wrong, audited - wrong + 1)``, 0 when nothing was wrong.

    Args:
        wrong: wrong mappings found.
        audited: mappings audited.
        confidence: the bound's confidence, in (0, 1).

    Raises:
        ValueError: counts out of range or confidence outside (0, 1).
    """
    from scipy.stats import beta

    _check_counts(wrong, audited, confidence)
    if wrong == 0:
        return 0.0
    return float(beta.ppf(1.0 - confidence, wrong, audited - wrong + 1))


def audits_needed(
    wrong: int, audited: int, max_error: float, delta: float, lookahead: int = AUDIT_LOOKAHEAD
) -> int | None:
    """Return how many more audits, at the error seen so far, would put it over target with
    confidence.

    The error is taken to stay at ``wrong / audited``; with ``N`` audited that makes
    ``floor(N × rate)`` wrong (rounded down: never fewer audits than needed). The answer is the
    smallest ``N - audited`` for which :func:`over_target_p_value` is at most ``delta``.

    Args:
        wrong: wrong mappings found so far.
        audited: mappings audited so far.
        max_error: the target.
        delta: the allowed probability of a wrong "over target".
        lookahead: look this many audits ahead at most.

    Returns:
        The number of further audits (0: already settled), or None when the observed error is
        not over the target or ``lookahead`` more would not settle it.
    """
    from scipy.stats import binom

    _check_counts(wrong, audited, max_error)
    if audited == 0 or wrong / audited <= max_error:
        return None
    rate = wrong / audited
    totals = np.arange(audited, audited + lookahead + 1)
    wrongs = np.floor(totals * rate + 1e-9)
    p_values = binom.sf(wrongs - 1, totals, max_error)
    settled = np.flatnonzero((p_values <= delta) & (wrongs > 0))
    return int(totals[settled[0]] - audited) if settled.size else None


def raised_threshold(
    confidences: Sequence[float] | np.ndarray,
    wrong: Sequence[bool] | np.ndarray,
    current: float,
    max_error: float,
    *,
    min_above: int = MIN_AUDITED_ABOVE,
) -> float | None:
    """Return the lowest grid threshold ≥ ``current`` at which the audited error is in target.

    See the module docstring for why this is sound. Candidates are the calibration's fixed
    grid (``GRID_STEPS`` steps on [0, 1]) at or above ``current``; the audited mappings with
    confidence ≥ a candidate must number at least ``min_above`` with a wrong share at most
    ``max_error``.

    Args:
        confidences: the confidence each audited mapping had when it was auto-accepted.
        wrong: whether the reviewer found it wrong.
        current: the feed's threshold now.
        max_error: the target.
        min_above: fewest audited mappings above the new threshold.

    Returns:
        The new threshold, or None when no candidate qualifies (accept nothing).

    Raises:
        ValueError: lengths differ.
    """
    conf = np.asarray(confidences, dtype=float)
    bad = np.asarray(wrong, dtype=bool)
    if conf.shape != bad.shape or conf.ndim != 1:
        raise ValueError("confidences and wrong must be 1-D and of the same length")
    grid = np.linspace(0.0, 1.0, GRID_STEPS + 1)
    # The current threshold itself is a candidate even off the grid; ascending order.
    candidates = np.unique(np.concatenate([[current], grid[grid >= current]]))
    order = np.argsort(conf, kind="stable")
    sorted_conf, sorted_bad = conf[order], bad[order]
    # Wrong ones among the audited with confidence ≥ each candidate, via suffix sums.
    wrong_suffix = np.concatenate([np.cumsum(sorted_bad[::-1])[::-1], [0]])
    first = np.searchsorted(sorted_conf, candidates, side="left")
    above = conf.size - first
    wrong_above = wrong_suffix[first]
    ok = (above >= min_above) & (wrong_above <= max_error * above)
    found = np.flatnonzero(ok)
    return float(candidates[found[0]]) if found.size else None


def check_audit(
    confidences: Sequence[float] | np.ndarray,
    wrong: Sequence[bool] | np.ndarray,
    *,
    threshold: float | None,
    max_error: float,
    delta: float,
) -> AuditCheck:
    """Judge a feed's reviewed audit sample against its target, and raise when it must.

    Args:
        confidences: the confidence each reviewed audit sample had when it was auto-accepted.
        wrong: whether the reviewer found it wrong.
        threshold: the feed's threshold now (None: it accepts nothing; nothing to raise).
        max_error: the feed's target.
        delta: allowed probability of a wrong "over target".

    Returns:
        The verdict, with the new threshold when it is raised.

    Raises:
        ValueError: lengths differ, or a parameter is outside (0, 1).
    """
    if not 0.0 < max_error < 1.0 or not 0.0 < delta < 1.0:
        raise ValueError("max_error and delta must lie strictly between 0 and 1")
    conf = np.asarray(confidences, dtype=float)
    bad = np.asarray(wrong, dtype=bool)
    if conf.shape != bad.shape or conf.ndim != 1:
        raise ValueError("confidences and wrong must be 1-D and of the same length")
    n, k = int(conf.size), int(bad.sum())
    p_value = over_target_p_value(k, n, max_error)
    seen = AuditCheck(
        "no_audits",
        audited=n,
        wrong=k,
        rate=k / n if n else 0.0,
        lower_bound=error_lower_bound(k, n, 1.0 - delta),
        p_value=p_value,
        max_error=max_error,
        delta=delta,
        threshold=threshold,
    )
    if n == 0:
        return seen
    if k <= max_error * n:
        return replace(seen, verdict="within_target")
    if p_value > delta or threshold is None:
        return replace(
            seen, verdict="over_target_unsure", more_audits=audits_needed(k, n, max_error, delta)
        )
    new = raised_threshold(conf, bad, threshold, max_error)
    keep = conf >= new if new is not None else np.zeros(n, dtype=bool)
    band = ~keep & (conf >= threshold)
    above, wrong_above = int(keep.sum()), int(bad[keep].sum())
    return replace(
        seen,
        verdict="over_target",
        new_threshold=new,
        audited_above=above,
        wrong_above=wrong_above,
        band_error=float(bad[band].mean()) if band.any() else k / n,
        audits_to_certify=more_audits_to_certify(wrong_above, above, max_error, delta),
    )


def more_audits_to_certify(
    wrong: int, audited: int, max_error: float, delta: float, lookahead: int = AUDIT_LOOKAHEAD
) -> int:
    """Return how many more audits, all right, would show the error within target with confidence.

    The smallest ``N ≥ audited`` with ``P(Binomial(N, max_error) ≤ wrong) ≤ delta`` (the
    Learn-then-Test p-value of :func:`catmap.decide.threshold.choose_threshold`), minus
    ``audited``; with nothing wrong that is ``log δ / log(1 − ε)`` in all.

    Args:
        wrong: wrong mappings among those audited.
        audited: mappings audited.
        max_error: the target.
        delta: the allowed probability that the guarantee fails.
        lookahead: look this many audits ahead at most.

    Returns:
        The number of further audits (``lookahead`` when even that many would not do).
    """
    from scipy.stats import binom

    _check_counts(wrong, audited, max_error)
    start = max(audited, min_accepted_for(max_error, delta))
    totals = np.arange(start, start + lookahead + 1)
    done = np.flatnonzero(binom.cdf(wrong, totals, max_error) <= delta)
    return int(totals[done[0]] - audited) if done.size else lookahead


def _check_counts(wrong: int, audited: int, level: float) -> None:
    if audited < 0 or not 0 <= wrong <= audited:
        raise ValueError("need 0 ≤ wrong ≤ audited")
    if not 0.0 < level < 1.0 or math.isnan(level):
        raise ValueError("the rate or confidence must lie strictly between 0 and 1")
