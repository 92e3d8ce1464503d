"""Temperature scaling and the expected calibration error."""

from __future__ import annotations

import numpy as np
import pytest

from catmap.classify.calibration import expected_calibration_error, fit_temperature, softmax


def test_ece_of_a_hand_worked_example() -> None:
    # Guo et al. 2017, eq. 3, worked by hand: bin (0.8, 0.867] holds 0.85 ×2 (1 of 2 right),
    # bin (0.933, 1] holds 0.95 ×2 (2 right): (2/4)·|0.5−0.85| + (2/4)·|1−0.95| = 0.2.
    ece = expected_calibration_error(np.array([0.85, 0.85, 0.95, 0.95]), np.array([1, 0, 1, 1]))
    assert ece == pytest.approx(0.2)


def test_temperature_scaling_improves_ece_on_overconfident_scores() -> None:
    rng = np.random.default_rng(0)
    n, k = 4000, 5
    labels = rng.integers(0, k, n)
    logits = rng.normal(0, 1, (n, k))
    logits[np.arange(n), labels] += 1.5
    overconfident = logits * 6.0  # far too sharp
    valid, test = slice(0, 2000), slice(2000, n)

    def ece(scores: np.ndarray, t: float) -> float:
        p = softmax(scores, t)
        return expected_calibration_error(p.max(axis=1), p.argmax(axis=1) == labels[test])

    t = fit_temperature(overconfident[valid], labels[valid])
    assert t > 1.0
    assert ece(overconfident[test], t) < ece(overconfident[test], 1.0) / 3


def test_softmax_rows_sum_to_one() -> None:
    p = softmax(np.array([[1.0, 2.0, 3.0], [1000.0, 0.0, -1000.0]]), 0.5)
    assert np.allclose(p.sum(axis=1), 1.0)
    assert p[1, 0] == pytest.approx(1.0)


def test_softmax_in_place_gives_the_same_bits_and_reuses_the_array() -> None:
    scores = np.random.default_rng(3).normal(size=(20, 6)) * 5
    scores[2, 1] = -np.inf
    expected = softmax(scores.copy(), 0.7)
    own = scores.copy()
    got = softmax(own, 0.7, in_place=True)
    assert got is own and np.array_equal(got, expected)
    # reference: the textbook formula exp(s / T) / sum exp(s / T)
    plain = np.exp(scores / 0.7) / np.exp(scores / 0.7).sum(axis=1, keepdims=True)
    assert np.allclose(got, plain)
    # other dtypes are not overwritten
    single = scores.astype(np.float32)
    softmax(single, 0.7, in_place=True)
    assert np.array_equal(single, scores.astype(np.float32))


@pytest.mark.parametrize(
    "scale",
    [0.5, 50.0, 500.0, 5000.0],  # within the unshifted range, near its edge, and beyond it
)
def test_softmax_matches_scipy_with_or_without_the_row_shift(scale: float) -> None:
    # Reference: scipy.special.softmax (subtracts each row's maximum before exp).
    from scipy.special import softmax as scipy_softmax

    scores = np.random.default_rng(5).normal(size=(200, 57)) * scale
    expected = scipy_softmax(scores / 0.9, axis=1)
    got = softmax(scores, 0.9)
    assert np.all(np.isfinite(got))
    assert np.allclose(got, expected, rtol=1e-12, atol=1e-300)
    with_minus_inf = scores.copy()
    with_minus_inf[:, 3] = -np.inf
    got = softmax(with_minus_inf, 0.9)
    assert np.all(got[:, 3] == 0.0)
    assert np.allclose(got, scipy_softmax(with_minus_inf / 0.9, axis=1), rtol=1e-12, atol=1e-300)
