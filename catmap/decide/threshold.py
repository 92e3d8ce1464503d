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
p-value exceeds ``delta`` and the sequence would stop before it began. It starts lower still
when the first thresholds would need fewer errors than the confidences predict: at the first
threshold where the test would pass if the accepted items' errors were as many as their
confidences say (``Σ (1 - confidence)``, rounded up), or, when that happens nowhere, where zero
errors would pass. A first test that needs zero errors among the top items ends the sequence
at the first one of them that is wrong, before it reaches the thresholds that matter. Both
rules use only the confidences, never whether they were right, so the order of the tests is
fixed in advance.

**The error of one feed, not of the population.** That bound is on the error *rate* of the
population the calibration items come from. A feed is a finite sample of it: a feed whose
threshold accepts ``m`` products has ``K`` wrong ones with ``K ~ Binomial(m, p)`` (``p`` the
rate above the threshold), so its own share ``K / m`` exceeds ``max_error`` by chance even when
``p`` does not (at ``p`` = 1.5% and ``m`` = 2,000 it does in 3% of feeds, at 1.9% in a
third). Given the scores of the feed to decide (``feed_scores``), each candidate threshold
``t`` is therefore tested against a lower rate: :func:`feed_error_target` of the number of the
feed's products it accepts, ``m(t)``, the highest ``p`` at which more than ``max_error`` of
``m(t)`` products are wrong with probability at most ``delta``
(``P(Binomial(m, p) > ⌊max_error · m⌋) ≤ delta``). The guarantee is then two-level, as a
tolerance interval's: with probability at least ``1 - delta`` over the calibration data, at
most a share ``delta`` of feeds of that size from the calibration data's population have more
than ``max_error`` of their auto-accepted mappings wrong (so a given feed exceeds it with
probability at most ``2 · delta``). Each ``m(t)`` comes from the feed's scores alone, never from
whether the calibration items were right, so the test order is still fixed in advance. A large
feed's own sampling is small (for 2% and ``delta`` 5% the target is 1.83% at ``m`` = 16,000,
1.56% at 2,000); a small feed needs a stricter threshold, and one that would accept fewer than
``1 / max_error`` products allows not one error.

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
        feed_products: products of the feed the threshold was chosen for (None: chosen for
            the population, without a feed).
        feed_accepted: those the threshold accepts (0 when none or without a feed).
        target: the error rate the calibration data was tested against at the threshold
            (``max_error`` without a feed, :func:`feed_error_target` with one).
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
    feed_products: int | None = None
    feed_accepted: int = 0
    target: float | None = None

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


def feed_error_target(
    accepted: int | Sequence[int] | np.ndarray,
    max_error: float = DEFAULT_MAX_ERROR,
    delta: float = DEFAULT_DELTA,
) -> np.ndarray:
    """Return the highest error rate at which a feed keeps ``max_error`` despite its own sampling.

    For ``m`` accepted products drawn from a population whose error rate is ``p``, the wrong
    ones are ``Binomial(m, p)``; the result is the largest ``p`` with
    ``P(Binomial(m, p) ≥ c) ≤ delta``, ``c = ⌊max_error · m⌋ + 1`` the fewest wrong products
    over ``max_error``. As ``P(Binomial(m, p) ≥ c)`` is the regularised incomplete beta function
    ``I_p(c, m - c + 1)``, that ``p`` is the ``delta`` quantile of ``Beta(c, m - c + 1)`` (the
    Clopper-Pearson lower limit's formula). It rises towards ``max_error`` as ``m`` grows.

    The result never exceeds ``max_error``: a feed of one or two accepted products would
    allow a higher rate (one wrong product of two is over 2% with probability under 5% when
    ``p`` is 2.5%), but the rate itself is held to ``max_error`` as without a feed.

    Args:
        accepted: products the feed accepts (``m``; 0 gives ``max_error``: nothing can err).
        max_error: the error rate allowed among the feed's auto-accepted mappings.
        delta: the allowed share of feeds over ``max_error``.

    Returns:
        One rate per ``accepted`` value (a 0-d array for a single one).
    """
    from scipy.stats import beta

    m = np.asarray(accepted, dtype=np.int64)
    # The fewest wrong products over max_error (guarding 0.02 · 50 = 1.0000000000000002).
    c = np.floor(max_error * m + 1e-9).astype(np.int64) + 1
    target = np.full(m.shape, max_error, dtype=float)
    some = m > 0
    target[some] = beta.ppf(delta, c[some], m[some] - c[some] + 1)
    return np.minimum(target, max_error)


def choose_threshold(
    confidences: Sequence[float] | np.ndarray,
    correct: Sequence[bool] | np.ndarray,
    *,
    max_error: float = DEFAULT_MAX_ERROR,
    delta: float = DEFAULT_DELTA,
    feed_scores: Sequence[float] | np.ndarray | None = None,
) -> ThresholdChoice:
    """Choose the lowest confidence threshold whose accepted part errs at most ``max_error``.

    With probability at least ``1 - delta`` over the calibration data (drawn like the data the
    threshold is used on), the error among mappings with confidence ≥ the threshold is at most
    ``max_error`` (Learn-then-Test with fixed-sequence testing; see the module docstring).
    With ``feed_scores``, the bound is on that feed's own share of wrong auto-accepted
    mappings: at most ``max_error`` in all but a share ``delta`` of such feeds, with
    probability at least ``1 - delta`` over the calibration data (each threshold tested
    against :func:`feed_error_target` of the feed's products it accepts).

    Args:
        confidences: calibrated confidences of held-out mappings, in [0, 1].
        correct: whether each of those mappings was right.
        max_error: the error rate allowed among auto-accepted mappings.
        delta: the allowed probability that the guarantee fails.
        feed_scores: the scores of the feed the threshold is for (compared with it as the
            confidences are); None: a threshold for the population's error rate.

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
    feed: np.ndarray | None = None
    if feed_scores is None:
        targets = np.full(grid.shape, max_error)
        possible = accepted >= n_min
    else:
        feed = np.sort(np.asarray(feed_scores, dtype=float))[::-1]
        feed_accepted = np.searchsorted(-feed, -grid, side="right")
        targets = feed_error_target(feed_accepted, max_error, delta)
        # Zero errors among n items reject p ≥ target when (1 - target) ** n ≤ delta.
        possible = accepted * -np.log1p(-targets) >= -math.log(delta)
    # The grid starts where a rejection is possible at all, and where the test would pass with
    # the errors the confidences predict (see the module docstring); scores only, never labels.
    predicted = (
        np.cumsum(1.0 - sorted_conf)[np.maximum(accepted - 1, 0)] if total else accepted * 0.0
    )
    hopeful = possible & (accepted > 0) & (
        binom.cdf(np.ceil(predicted - 1e-9), accepted, targets) <= delta
    )
    start = np.flatnonzero(hopeful if hopeful.any() else possible)
    if start.size:
        possible[: start[0]] = False
    grid, accepted, targets = grid[possible], accepted[possible], targets[possible]
    best: tuple[float, int, int, float, float] | None = None
    if accepted.size:
        errors = wrong_cumulative[accepted - 1]
        p_values = binom.cdf(errors, accepted, targets)
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
                float(targets[last]),
            )
    feed_products = None if feed is None else int(feed.size)

    if best is None:
        of_what = "of auto-accepted mappings" if feed is None else (
            f"of this feed's auto-accepted mappings (of its {feed_products:,} products)"
        )
        statement = (
            f"No threshold keeps the error {of_what} at or below {max_error:.1%} "
            f"with {1 - delta:.0%} confidence on {total} calibration items: accept nothing "
            "automatically and review everything (or add calibration data)."
        )
        return ThresholdChoice(
            None, 0.0, 0.0, total, 0, 0, None, max_error, delta, statement, feed_products
        )

    threshold, n, k, p_value, target = best
    coverage = n / total
    calibration = (
        f"On {total} calibration items this accepts {coverage:.1%} ({n}), of which {k} were "
        f"wrong ({k / n:.2%})."
    )
    if feed is None:
        statement = (
            f"Auto-accept mappings with confidence ≥ {threshold:.3f}: with {1 - delta:.0%} "
            f"confidence their error rate is at most {max_error:.1%}. {calibration}"
        )
        return ThresholdChoice(
            threshold, coverage, k / n, total, n, k, p_value, max_error, delta, statement,
            None, 0, max_error,
        )  # fmt: skip
    taken = int(np.searchsorted(-feed, -threshold, side="right"))
    statement = (
        f"Auto-accept this feed's mappings with confidence ≥ {threshold:.3f} ({taken:,} of its "
        f"{feed_products:,} products): with {1 - delta:.0%} confidence, at most "
        f"{delta:.0%} of feeds like it have more than {max_error:.1%} of those wrong (the "
        f"error rate above the threshold is at most {target:.2%}). {calibration}"
    )
    return ThresholdChoice(
        threshold, coverage, k / n, total, n, k, p_value, max_error, delta, statement,
        feed_products, taken, target,
    )  # fmt: skip


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
