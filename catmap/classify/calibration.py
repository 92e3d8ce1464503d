"""Calibrated confidence: softmax with a temperature, fitting it, and measuring calibration.

Temperature scaling (Guo et al., "On Calibration of Modern Neural Networks", ICML 2017) divides
the scores by one number T fitted on held-out data to minimise the negative log-likelihood; it
changes no ranking, only how sure the probabilities sound. The expected calibration error (ECE)
uses equal-width confidence bins (15 by default, as in that paper).
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["ECE_BINS", "expected_calibration_error", "fit_temperature", "softmax"]

ECE_BINS = 15
_FLOOR = 1e-12
# exp(±600) is finite and normal in float64 (about 1e±260), and a row sum of them stays finite.
_EXP_SAFE = 600.0

FloatArray = np.ndarray[Any, np.dtype[np.floating[Any]]]


def softmax(scores: FloatArray, temperature: float = 1.0, *, in_place: bool = False) -> FloatArray:
    """Return row-wise softmax(scores / temperature), computed stably.

    ``-inf`` scores get probability 0. With ``in_place``, a float64 array of scores is
    overwritten with the result (no copies: the same arithmetic, in the same order).
    """
    if in_place and isinstance(scores, np.ndarray) and scores.dtype == np.float64:
        scaled = scores
        scaled /= temperature
    else:
        scaled = np.asarray(scores, dtype=np.float64) / temperature
    if not (scaled.size and -_EXP_SAFE < scaled.min() and scaled.max() < _EXP_SAFE):
        # Subtracting each row's largest score keeps exp finite; when every score is already
        # within ±_EXP_SAFE (no -inf either), the shift changes nothing but the rounding.
        scaled -= scaled.max(axis=1, keepdims=True)
    np.exp(scaled, out=scaled)
    scaled /= scaled.sum(axis=1, keepdims=True)
    return scaled


def _nll(scores: FloatArray, labels: np.ndarray[Any, Any], temperature: float) -> float:
    probabilities = softmax(scores, temperature)
    picked = probabilities[np.arange(len(labels)), labels]
    return float(-np.log(np.maximum(picked, _FLOOR)).mean())


def fit_temperature(
    scores: FloatArray, labels: np.ndarray[Any, Any], *, bounds: tuple[float, float] = (0.01, 100.0)
) -> float:
    """Fit the temperature that minimises the negative log-likelihood of held-out labels.

    Args:
        scores: (n, k) scores (logits) of held-out examples.
        labels: (n,) column index of each example's true class.
        bounds: the search range for T.

    Returns:
        The temperature T (> 0).

    Raises:
        ValueError: empty data, or shapes that do not match.
    """
    scores = np.asarray(scores, dtype=np.float64)
    labels = np.asarray(labels)
    if scores.ndim != 2 or len(scores) == 0 or len(labels) != len(scores):
        raise ValueError("scores must be (n, k) with one label per row, n > 0")
    # Searched on log T: the likelihood is smooth and unimodal in it for one shared temperature.
    from scipy.optimize import minimize_scalar

    result = minimize_scalar(
        lambda log_t: _nll(scores, labels, float(np.exp(log_t))),
        bounds=(np.log(bounds[0]), np.log(bounds[1])),
        method="bounded",
        options={"xatol": 1e-3},
    )
    return float(np.exp(result.x))


def expected_calibration_error(
    confidences: FloatArray, correct: np.ndarray[Any, Any], *, bins: int = ECE_BINS
) -> float:
    """Return the expected calibration error over equal-width confidence bins.

    ECE = Σ_b (n_b / n) · |accuracy_b − mean confidence_b| (Guo et al. 2017, eq. 3).

    Args:
        confidences: the probability given to each prediction, in [0, 1].
        correct: whether each prediction was right.
        bins: number of equal-width bins over [0, 1].

    Returns:
        The ECE in [0, 1] (0 for no data).
    """
    confidences = np.asarray(confidences, dtype=np.float64)
    correct = np.asarray(correct, dtype=np.float64)
    if len(confidences) == 0:
        return 0.0
    # Bins are (lo, hi]; a confidence of exactly 0 goes to the first bin.
    which = np.clip(np.ceil(confidences * bins).astype(np.int64) - 1, 0, bins - 1)
    total = 0.0
    for b in range(bins):
        mask = which == b
        count = int(mask.sum())
        if count:
            total += count * abs(correct[mask].mean() - confidences[mask].mean())
    return total / len(confidences)
