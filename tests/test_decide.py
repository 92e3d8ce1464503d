"""Tests of the accept threshold for a stated error rate, and of the audit error estimate."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import binom, binomtest

from catmap.decide.threshold import (
    audit_sample_rate,
    choose_threshold,
    estimate_error,
    feed_error_target,
    min_accepted_for,
)

MAX_ERROR = 0.02
DELTA = 0.05


def _simulate(
    rng: np.random.Generator, n: int, overconfidence: float = 1.3, scale: float = 1.0
) -> tuple[np.ndarray, np.ndarray]:
    """Confidences ~ Beta(12, 1); a mapping is right with probability scale × conf ** power.

    With a power above 1 the scores are overconfident (the true error is above 1 − conf), as an
    uncalibrated model would be; the true error of any accepted part is known by construction.
    """
    confidences = rng.beta(12.0, 1.0, size=n)
    correct = rng.random(n) < scale * confidences**overconfidence
    return confidences, correct


def test_error_of_accepted_part_is_controlled_over_repetitions() -> None:
    # Learn-then-Test (Angelopoulos, Bates, Candès, Jordan & Lei, 2021): with probability
    # ≥ 1 − delta over the calibration data, the error among accepted items is ≤ max_error.
    # Simulated scores where the truth is known: fresh calibration and fresh test data per
    # repetition; the test data's error stands in for the true error (200k items).
    rng = np.random.default_rng(0)
    repetitions = 300
    exceeded = 0
    accepted_any = 0
    for _ in range(repetitions):
        conf, right = _simulate(rng, 3000)
        choice = choose_threshold(conf, right, max_error=MAX_ERROR, delta=DELTA)
        if choice.threshold is None:
            continue
        accepted_any += 1
        test_conf, test_right = _simulate(rng, 200_000)
        taken = test_conf >= choice.threshold
        if taken.any() and 1.0 - test_right[taken].mean() > MAX_ERROR:
            exceeded += 1
    # The method is not vacuous here: it finds a threshold in most repetitions.
    assert accepted_any >= repetitions // 2
    # Monte-Carlo margin: three binomial standard deviations of the observed share.
    margin = 3 * math.sqrt(DELTA * (1 - DELTA) / repetitions)
    assert exceeded / repetitions <= DELTA + margin


def test_a_naive_threshold_on_the_same_data_would_fail_the_rate() -> None:
    # Why a guarantee is needed at all: the lowest threshold whose *observed* calibration error
    # is ≤ max_error exceeds it on fresh data in a large share of repetitions.
    rng = np.random.default_rng(0)
    repetitions = 100
    exceeded = 0
    for _ in range(repetitions):
        conf, right = _simulate(rng, 3000)
        order = np.argsort(-conf)
        running = np.cumsum(~right[order]) / np.arange(1, conf.size + 1)
        ok = np.flatnonzero(running <= MAX_ERROR)
        threshold = conf[order][ok[-1]]
        test_conf, test_right = _simulate(rng, 200_000)
        taken = test_conf >= threshold
        exceeded += int(1.0 - test_right[taken].mean() > MAX_ERROR)
    assert exceeded / repetitions > DELTA


def test_conformal_singleton_is_not_an_error_bound() -> None:
    # "Auto-accept when the conformal prediction set is a single class" gives marginal coverage
    # of the *set* (true class in the set with probability ≥ 1 − α over all items); it says
    # nothing about the error among singletons. Worked example by hand: 100 items, α = 0.1.
    # 80 singletons of which 10 wrong, 20 two-class sets all covering: coverage 90/100 = 0.9
    # meets 1 − α, yet the accepted singletons err at 10/80 = 12.5% > α.
    singletons, singleton_wrong, large_sets = 80, 10, 20
    coverage = (singletons - singleton_wrong + large_sets) / (singletons + large_sets)
    assert coverage >= 0.9
    assert singleton_wrong / singletons > 0.1
    # choose_threshold bounds exactly the error of the accepted part instead.
    conf = np.r_[np.full(singletons, 0.95), np.full(large_sets, 0.5)]
    right = np.r_[np.arange(singletons) >= singleton_wrong, np.ones(large_sets, dtype=bool)]
    assert choose_threshold(conf, right, max_error=0.1, delta=0.05).threshold is None


def test_no_threshold_passes_accepts_nothing() -> None:
    rng = np.random.default_rng(0)
    conf, right = _simulate(rng, 2000, scale=0.7)  # 30% wrong even at the top
    choice = choose_threshold(conf, right, max_error=MAX_ERROR, delta=DELTA)
    assert choice.threshold is None and not choice.accepts_any
    assert choice.coverage == 0.0 and choice.n_calibration == 2000
    assert "accept nothing" in choice.statement


def test_too_few_calibration_items_accepts_nothing() -> None:
    # All right, but fewer than log(0.05)/log(0.98) ≈ 148.3 items: zero errors cannot prove 2%.
    assert min_accepted_for(0.02, 0.05) == 149
    choice = choose_threshold(np.full(148, 0.99), np.ones(148, dtype=bool))
    assert choice.threshold is None


def test_choice_reports_its_figures() -> None:
    # 300 items at confidence 0.99 (1 wrong), 300 at 0.6 (150 wrong).
    conf = np.r_[np.full(300, 0.99), np.full(300, 0.6)]
    right = np.r_[np.arange(300) > 0, np.arange(300) % 2 == 0]
    choice = choose_threshold(conf, right)
    assert choice.threshold is not None and 0.6 < choice.threshold <= 0.99
    assert (choice.n_accepted, choice.errors, choice.coverage) == (300, 1, 0.5)
    assert choice.observed_error == pytest.approx(1 / 300)
    # scipy.stats.binom tail by hand: P(X ≤ 1), X ~ Binomial(300, 0.02).
    by_hand = 0.98**300 + 300 * 0.02 * 0.98**299
    assert choice.p_value == pytest.approx(by_hand)
    assert "with 95% confidence their error rate is at most 2.0%" in choice.statement


def test_bad_arguments() -> None:
    with pytest.raises(ValueError, match="same length"):
        choose_threshold([0.5, 0.6], [True])
    with pytest.raises(ValueError, match="strictly between"):
        choose_threshold([0.5], [True], max_error=0.0)
    with pytest.raises(ValueError, match=r"\[0, 1\]"):
        choose_threshold([1.5], [True])


@pytest.mark.parametrize("accepted", [3, 10, 49, 50, 120, 2000, 16_000])
def test_feed_error_target_is_the_rate_at_which_a_feed_exceeds_by_chance_delta(
    accepted: int,
) -> None:
    target = float(feed_error_target(accepted, MAX_ERROR, DELTA))
    over = math.floor(MAX_ERROR * accepted)  # more wrong ones than this exceed 2%
    # scipy.stats.binom: at the target, a feed of that many accepted products has more than
    # 2% of them wrong with probability delta; at a slightly higher rate, more often.
    assert binom.sf(over, accepted, target) == pytest.approx(DELTA, rel=1e-6)
    assert binom.sf(over, accepted, target * 1.01) > DELTA
    assert 0.0 < target < MAX_ERROR


def test_feed_error_target_edges() -> None:
    # Nothing accepted: nothing can be wrong, the rate is held to max_error as without a feed.
    assert float(feed_error_target(0, MAX_ERROR, DELTA)) == MAX_ERROR
    # One product: wrong with probability p, so p = delta = 5% would do; capped at 2%.
    assert float(feed_error_target(1, MAX_ERROR, DELTA)) == MAX_ERROR
    # Under 50 accepted products 2% allows no error: 1 - (1 - delta) ** (1 / m).
    assert float(feed_error_target(30, MAX_ERROR, DELTA)) == pytest.approx(1 - 0.95 ** (1 / 30))
    # A large feed's own sampling hardly matters; the target rises towards max_error.
    targets = feed_error_target([500, 2000, 16_000, 1_000_000], MAX_ERROR, DELTA)
    assert np.all(np.diff(targets) > 0) and targets[-1] > 0.0197


def _calibrated(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Scores 1 − Beta(1, 40) (2.4% wrong on average); right with the probability they say."""
    confidences = 1.0 - rng.beta(1.0, 40.0, size=n)
    return confidences, rng.random(n) < confidences


def test_a_feeds_own_share_of_wrong_accepted_mappings_is_controlled() -> None:
    # Fresh calibration data (3,000 items) and a fresh feed (2,500) per repetition. With the
    # feed's scores, at most delta of such feeds exceed 2% with probability 1 - delta over the
    # calibration data, so a feed exceeds it in at most 2 · delta of the repetitions. The
    # threshold for the population's rate alone bounds the rate, not the feed's own share:
    # a feed of 2,500 products goes over by chance far more often.
    rng = np.random.default_rng(0)
    repetitions = 200
    over_feed = over_rate = found = 0
    for _ in range(repetitions):
        conf, right = _calibrated(rng, 3000)
        feed, feed_right = _calibrated(rng, 2500)
        for feed_scores in (feed, None):
            choice = choose_threshold(conf, right, feed_scores=feed_scores)
            if choice.threshold is None:
                continue
            taken = feed >= choice.threshold
            exceeded = bool(taken.any()) and 1.0 - feed_right[taken].mean() > MAX_ERROR
            if feed_scores is None:
                over_rate += exceeded
                continue
            found += 1
            over_feed += exceeded
            assert choice.feed_products == 2500 and choice.feed_accepted == int(taken.sum())
            assert choice.target is not None and choice.target < MAX_ERROR
    assert found >= repetitions * 0.7  # not vacuous
    margin = 3 * math.sqrt(2 * DELTA * (1 - 2 * DELTA) / repetitions)
    assert over_feed / repetitions <= 2 * DELTA + margin
    assert over_rate / repetitions > DELTA
    assert over_feed < over_rate


def test_the_tests_start_where_the_confidences_say_they_can_pass() -> None:
    # 2,000 items at 0.99 with a few wrong among the very top: starting where zero errors
    # could pass (the top 149) would end the sequence at once; the confidences predict about
    # 20 errors among the 2,000, where the test passes, so the sequence starts there.
    conf = np.r_[np.linspace(0.999, 0.99, 2000), np.full(1000, 0.5)]
    right = np.r_[np.arange(2000) % 500 != 3, np.zeros(1000, dtype=bool)]
    choice = choose_threshold(conf, right)
    assert choice.threshold is not None and choice.threshold < 0.995
    assert (choice.n_accepted, choice.errors) == (2000, 4)


@pytest.mark.parametrize(("correct", "total"), [(0, 10), (3, 10), (10, 10), (97, 120), (1, 1)])
@pytest.mark.parametrize("confidence", [0.9, 0.95])
def test_clopper_pearson_matches_scipy(correct: int, total: int, confidence: float) -> None:
    estimate = estimate_error(correct, total, confidence=confidence)
    wrong = total - correct
    # reference: scipy.stats.binomtest(...).proportion_ci(method="exact") (Clopper-Pearson)
    reference = binomtest(wrong, total).proportion_ci(confidence_level=confidence, method="exact")
    assert estimate.rate == pytest.approx(wrong / total)
    assert estimate.low == pytest.approx(reference.low, abs=1e-9)
    assert estimate.high == pytest.approx(reference.high, abs=1e-9)


def test_estimate_error_edges() -> None:
    empty = estimate_error(0, 0)
    assert (empty.rate, empty.low, empty.high) == (0.0, 0.0, 1.0)
    assert "2 wrong of 50 audited" in estimate_error(48, 50).describe()
    with pytest.raises(ValueError):
        estimate_error(5, 3)


def test_audit_sample_rate() -> None:
    assert audit_sample_rate(10_000) == 0.02
    assert audit_sample_rate(100) == 0.05  # at least five items
    assert audit_sample_rate(3) == 1.0
    assert audit_sample_rate(0) == 0.0
