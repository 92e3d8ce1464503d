"""Tests of catmap.decide.audit: the over-target test, its bounds, and the raised threshold.

The exact binomial test and the one-sided Clopper-Pearson bound are checked against
scipy.stats.binomtest (its p-value and its ``proportion_ci(method="exact")``).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import binomtest

from catmap.decide.audit import (
    MIN_AUDITED_ABOVE,
    audits_needed,
    check_audit,
    error_lower_bound,
    more_audits_to_certify,
    over_target_p_value,
    raised_threshold,
)
from catmap.decide.threshold import GRID_STEPS, min_accepted_for

CASES = [(1, 5), (3, 40), (4, 60), (6, 100), (12, 100), (0, 30), (30, 30), (2, 148)]


@pytest.mark.parametrize(("wrong", "audited"), CASES)
@pytest.mark.parametrize("target", [0.02, 0.05])
def test_p_value_is_scipy_s_one_sided_exact_binomial_test(
    wrong: int, audited: int, target: float
) -> None:
    # Source: scipy.stats.binomtest(k, n, p, alternative="greater").pvalue.
    expected = binomtest(wrong, audited, target, alternative="greater").pvalue
    assert over_target_p_value(wrong, audited, target) == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(("wrong", "audited"), [c for c in CASES if c[0] > 0])
def test_lower_bound_is_scipy_s_one_sided_exact_interval(wrong: int, audited: int) -> None:
    # Source: scipy.stats.binomtest(...).proportion_ci(0.95, method="exact") with
    # alternative="greater" is the one-sided Clopper-Pearson interval [low, 1].
    ci = binomtest(wrong, audited, 0.5, alternative="greater").proportion_ci(
        confidence_level=0.95, method="exact"
    )
    assert error_lower_bound(wrong, audited, 0.95) == pytest.approx(ci.low, rel=1e-7)
    assert ci.high == 1.0


def test_over_target_test_and_lower_bound_agree() -> None:
    # The duality of test and interval: p ≤ δ exactly when the (1 − δ) lower bound is above ε.
    for audited in range(1, 120, 7):
        for wrong in range(0, audited + 1, 3):
            for target in (0.02, 0.05, 0.1):
                over = over_target_p_value(wrong, audited, target) <= 0.05
                assert over == (error_lower_bound(wrong, audited, 0.95) > target)


def test_audits_needed_is_the_fewest_that_settle_it() -> None:
    wrong, audited, target, delta = 1, 10, 0.02, 0.05
    more = audits_needed(wrong, audited, target, delta)
    assert more is not None and more > 0
    rate = wrong / audited

    def settled(total: int) -> bool:
        k = math.floor(total * rate + 1e-9)
        return k > 0 and binomtest(k, total, target, alternative="greater").pvalue <= delta

    assert settled(audited + more)
    assert not any(settled(total) for total in range(audited, audited + more))


def test_audits_needed_is_none_within_target_and_zero_once_settled() -> None:
    assert audits_needed(1, 100, 0.02, 0.05) is None
    assert audits_needed(12, 100, 0.02, 0.05) == 0


def test_audits_to_certify_from_nothing_is_learn_then_test_s_minimum() -> None:
    # With none wrong, (1 − ε)^n ≤ δ first holds at n = ⌈log δ / log(1 − ε)⌉.
    n = more_audits_to_certify(0, 0, 0.02, 0.05)
    assert n == min_accepted_for(0.02, 0.05)
    assert 0.98**n <= 0.05 < 0.98 ** (n - 1)
    # Audits already there count; a wrong one asks for more.
    assert more_audits_to_certify(0, 100, 0.02, 0.05) == n - 100
    assert more_audits_to_certify(1, 100, 0.02, 0.05) > n - 100


def _brute_force_threshold(
    conf: np.ndarray, wrong: np.ndarray, current: float, target: float
) -> float | None:
    """The rule of the module docstring, written as a plain loop."""
    candidates = sorted({current, *(t for t in np.linspace(0, 1, GRID_STEPS + 1) if t >= current)})
    for t in candidates:
        above = conf >= t
        if above.sum() >= MIN_AUDITED_ABOVE and wrong[above].sum() <= target * above.sum():
            return float(t)
    return None


@pytest.mark.parametrize("seed", range(8))
def test_raised_threshold_follows_its_rule(seed: int) -> None:
    rng = np.random.default_rng(seed)
    conf = rng.uniform(0.8, 1.0, 120)
    wrong = rng.uniform(size=120) < np.where(conf < 0.9, 0.25, 0.01)
    got = raised_threshold(conf, wrong, 0.8, 0.02)
    assert got == _brute_force_threshold(conf, wrong, 0.8, 0.02)
    if got is not None:
        assert got >= 0.8
        above = conf >= got
        assert wrong[above].mean() <= 0.02


def test_raised_threshold_accepts_nothing_when_the_top_is_wrong() -> None:
    conf = np.array([0.95, 0.96, 0.97, 0.98, 0.99])
    assert raised_threshold(conf, np.ones(5, dtype=bool), 0.9, 0.02) is None


def test_check_verdicts() -> None:
    none = check_audit([], [], threshold=0.8, max_error=0.02, delta=0.05)
    assert none.verdict == "no_audits" and not none.raises

    right = check_audit([0.9] * 50, [False] * 50, threshold=0.8, max_error=0.02, delta=0.05)
    assert right.verdict == "within_target"

    unsure = check_audit(
        [0.9] * 10, [True] + [False] * 9, threshold=0.8, max_error=0.02, delta=0.05
    )
    assert unsure.verdict == "over_target_unsure" and not unsure.raises
    assert unsure.more_audits == audits_needed(1, 10, 0.02, 0.05)
    assert "not with 95% confidence" in unsure.describe()

    conf = np.r_[np.full(20, 0.8205), np.full(80, 0.97)]
    wrong = np.r_[np.ones(8, dtype=bool), np.zeros(92, dtype=bool)]
    over = check_audit(conf, wrong, threshold=0.8, max_error=0.02, delta=0.05)
    assert over.verdict == "over_target" and over.raises
    assert over.p_value <= 0.05 and over.lower_bound > 0.02
    # The lowest grid step above the wrong band: 0.821 keeps the 80 right ones only.
    assert over.new_threshold == pytest.approx(0.821)
    assert (over.audited_above, over.wrong_above) == (80, 0)
    assert over.band_error == pytest.approx(8 / 20)
    assert over.audits_to_certify == min_accepted_for(0.02, 0.05) - 80
    assert "threshold raised to 0.821" in over.describe()


def test_bad_input_is_refused() -> None:
    with pytest.raises(ValueError, match="same length"):
        check_audit([0.9], [], threshold=0.8, max_error=0.02, delta=0.05)
    with pytest.raises(ValueError, match="strictly between"):
        check_audit([], [], threshold=0.8, max_error=0.0, delta=0.05)
    with pytest.raises(ValueError, match="wrong ≤ audited"):
        over_target_p_value(3, 2, 0.02)
