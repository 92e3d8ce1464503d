"""When to auto-accept a mapping: a confidence threshold with a stated error rate, and audits.

:func:`choose_threshold` picks the lowest confidence threshold such that, with probability at
least ``1 - delta`` over the calibration data, the error rate among the mappings it accepts is
at most ``max_error``. It follows Learn-then-Test (Angelopoulos, Bates, Candès, Jordan & Lei,
2021, "Learn then Test: Calibrating Predictive Algorithms to Achieve Risk Control"):

- one null hypothesis per candidate threshold ``t``: "the error among products with
  confidence ≥ t is above ``max_error``";
- each tested with the exact binomial tail p-value ``P(Binomial(n, max_error) ≤ k)``, where
  ``n`` calibration items are accepted at ``t`` and ``k`` of them are wrong;
- fixed-sequence testing: thresholds from high to low, keep lowering while ``p ≤ delta``,
  stop at the first that fails. No multiplicity correction is needed because the order is
  fixed in advance, and the family-wise error stays at ``delta``.

The candidate grid starts where enough items are accepted for a rejection to be possible at
all (``n ≥ log(delta) / log(1 - max_error)``, about 148 items for 2% and 5%); above that every
p-value exceeds ``delta`` and the sequence would stop before it began. This uses only the
confidences, never whether they were right.

Why not "auto-accept when the conformal prediction set holds a single class"? Split conformal
prediction guarantees *marginal coverage of the set*: over all products, the true node is in
the set with probability ≥ 1 − α. It says nothing about the error among the products whose
set happens to be a singleton: those can be wrong far more often than α (the coverage can be
made up by the large sets elsewhere), and α is not a bound on the error of the accepted part.
Here the quantity bounded is exactly that error.

:func:`estimate_error` gives the observed error of an audit sample with its exact
(Clopper-Pearson) interval, and :func:`audit_sample_rate` the share of auto-accepted products
to audit. No I/O here.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

DEFAULT_MAX_ERROR = 0.02
DEFAULT_DELTA = 0.05
DEFAULT_AUDIT_RATE = 0.02
DEFAULT_AUDIT_MINIMUM = 5
# Candidate thresholds: a fixed grid (data-independent, so the test order is fixed in advance).
GRID_STEPS = 1000


@dataclass(frozen=True, slots=True)
class ThresholdChoice:
    """The auto-accept threshold chosen for a stated error rate.

    Attributes:
        threshold: accept mappings with confidence ≥ this; None means accept nothing.
        coverage: share of calibration items accepted at the threshold (0 when none).
        observed_error: error among the accepted calibration items (0 when none).
        n_calibration: calibration items used.
        n_accepted: calibration items accepted at the threshold.
        errors: wrong ones among them.
        p_value: the binomial p-value at the threshold (None when nothing passed).
        max_error: the error rate asked for.
        delta: the allowed probability that the guarantee fails.
        statement: the guarantee in plain English.
    """

    threshold: float | None
    coverage: float
    observed_error: float
    n_calibration: int
    n_accepted: int
    errors: int
    p_value: float | None
    max_error: float
    delta: float
    statement: str

    @property
    def accepts_any(self) -> bool:
        """True when some threshold passed."""
        return self.threshold is not None


@dataclass(frozen=True, slots=True)
class ErrorEstimate:
    """An observed error rate with its exact (Clopper-Pearson) confidence interval."""

    errors: int
    total: int
    rate: float
    low: float
    high: float
    confidence: float

    def describe(self) -> str:
        """One line: '3 wrong of 120 audited: 2.5% (95% interval 0.5%-7.1%)'."""
        return (
            f"{self.errors} wrong of {self.total} audited: {self.rate:.1%} "
            f"({self.confidence:.0%} interval {self.low:.1%}-{self.high:.1%})"
        )


def min_accepted_for(max_error: float, delta: float) -> int:
    """Return the fewest accepted items with which zero errors can reject the null.

    ``(1 - max_error) ** n ≤ delta`` ⇔ ``n ≥ log(delta) / log(1 - max_error)``.
    """
    return math.ceil(math.log(delta) / math.log1p(-max_error))


def choose_threshold(
    confidences: Sequence[float] | np.ndarray,
    correct: Sequence[bool] | np.ndarray,
    *,
    max_error: float = DEFAULT_MAX_ERROR,
    delta: float = DEFAULT_DELTA,
) -> ThresholdChoice:
    """Choose the lowest confidence threshold whose accepted part errs at most ``max_error``.

    With probability at least ``1 - delta`` over the calibration data (drawn like the data the
    threshold is used on), the error among mappings with confidence ≥ the threshold is at most
    ``max_error`` (Learn-then-Test with fixed-sequence testing; see the module docstring).

    Args:
        confidences: calibrated confidences of held-out mappings, in [0, 1].
        correct: whether each of those mappings was right.
        max_error: the error rate allowed among auto-accepted mappings.
        delta: the allowed probability that the guarantee fails.

    Returns:
        The choice; ``threshold`` is None (accept nothing) when no threshold passes.

    Raises:
        ValueError: lengths differ, or a parameter is outside (0, 1).
    """
    from scipy.stats import binom

    conf = np.asarray(confidences, dtype=float)
    right = np.asarray(correct, dtype=bool)
    if conf.shape != right.shape or conf.ndim != 1:
        raise ValueError("confidences and correct must be 1-D and of the same length")
    if not 0.0 < max_error < 1.0 or not 0.0 < delta < 1.0:
        raise ValueError("max_error and delta must lie strictly between 0 and 1")
    if conf.size and (np.isnan(conf).any() or conf.min() < 0.0 or conf.max() > 1.0):
        raise ValueError("confidences must lie in [0, 1]")
    total = int(conf.size)

    order = np.argsort(-conf, kind="stable")
    sorted_conf = conf[order]
    wrong_cumulative = np.cumsum(~right[order])
    n_min = min_accepted_for(max_error, delta)

    grid = np.linspace(1.0, 0.0, GRID_STEPS + 1)
    # Items with confidence ≥ t are the first n of the descending order.
    accepted = np.searchsorted(-sorted_conf, -grid, side="right")
    # The grid starts where a rejection is possible at all (uses the confidences only).
    grid, accepted = grid[accepted >= n_min], accepted[accepted >= n_min]
    best: tuple[float, int, int, float] | None = None
    if accepted.size:
        errors = wrong_cumulative[accepted - 1]
        p_values = binom.cdf(errors, accepted, max_error)
        failed = np.flatnonzero(p_values > delta)
        # Fixed-sequence testing: the first failure ends the sequence.
        passed = int(failed[0]) if failed.size else int(grid.size)
        if passed:
            last = passed - 1
            best = (
                float(grid[last]),
                int(accepted[last]),
                int(errors[last]),
                float(p_values[last]),
            )

    if best is None:
        statement = (
            f"No threshold keeps the error of auto-accepted mappings at or below {max_error:.1%} "
            f"with {1 - delta:.0%} confidence on {total} calibration items: accept nothing "
            "automatically and review everything (or add calibration data)."
        )
        return ThresholdChoice(None, 0.0, 0.0, total, 0, 0, None, max_error, delta, statement)

    threshold, n, k, p_value = best
    coverage = n / total
    statement = (
        f"Auto-accept mappings with confidence ≥ {threshold:.3f}: with {1 - delta:.0%} "
        f"confidence their error rate is at most {max_error:.1%}. On {total} calibration items "
        f"this accepts {coverage:.1%} ({n}), of which {k} were wrong ({k / n:.2%})."
    )
    return ThresholdChoice(
        threshold, coverage, k / n, total, n, k, p_value, max_error, delta, statement
    )


def estimate_error(
    audited_correct: int, audited_total: int, confidence: float = 0.95
) -> ErrorEstimate:
    """Return the observed error of an audit sample and its Clopper-Pearson interval.

    Args:
        audited_correct: audited mappings that were right.
        audited_total: mappings audited.
        confidence: the interval's confidence level.

    Returns:
        The estimate; with nothing audited the rate is 0 and the interval [0, 1].

    Raises:
        ValueError: counts out of range or confidence outside (0, 1).
    """
    from scipy.stats import beta

    if audited_total < 0 or not 0 <= audited_correct <= audited_total:
        raise ValueError("need 0 ≤ audited_correct ≤ audited_total")
    if not 0.0 < confidence < 1.0:
        raise ValueError("confidence must lie strictly between 0 and 1")
    n = audited_total
    k = n - audited_correct
    if n == 0:
        return ErrorEstimate(0, 0, 0.0, 0.0, 1.0, confidence)
    alpha = 1.0 - confidence
    low = 0.0 if k == 0 else float(beta.ppf(alpha / 2, k, n - k + 1))
    high = 1.0 if k == n else float(beta.ppf(1 - alpha / 2, k + 1, n - k))
    return ErrorEstimate(k, n, k / n, low, high, confidence)


def audit_sample_rate(
    n_accepted: int,
    *,
    rate: float = DEFAULT_AUDIT_RATE,
    minimum: int = DEFAULT_AUDIT_MINIMUM,
) -> float:
    """Return the share of auto-accepted mappings to audit.

    ``rate`` of them, but at least ``minimum`` items (all of them when fewer): a handful of
    audits per new feed is the least that says anything about its real error (common
    practice, no source).

    Args:
        n_accepted: auto-accepted mappings of the feed.
        rate: the usual share.
        minimum: the fewest items to audit.

    Returns:
        A share in [0, 1].
    """
    if n_accepted <= 0:
        return 0.0
    return min(1.0, max(rate, minimum / n_accepted))
