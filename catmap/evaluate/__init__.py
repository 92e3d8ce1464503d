"""Evaluation of mappings and attributes against gold labels: metrics, report data, HTML report.

:mod:`catmap.evaluate.metrics` holds the pure metric functions; :mod:`catmap.evaluate.run`
maps a labelled feed and gathers every figure into one report dictionary.
"""

from __future__ import annotations

from catmap.evaluate.metrics import (
    PRF,
    CalibrationBins,
    HierarchicalScores,
    LabelScores,
    NodeScores,
    RiskCoverage,
    accuracy,
    brand_scores,
    calibration_bins,
    confusion_table,
    expected_calibration_error,
    f1_scores,
    group_accuracy,
    hierarchical_scores,
    label_accuracy,
    per_node_scores,
    risk_coverage,
    top_confusions,
)
from catmap.evaluate.tree import parent_map

__all__ = [
    "PRF",
    "CalibrationBins",
    "HierarchicalScores",
    "LabelScores",
    "NodeScores",
    "RiskCoverage",
    "accuracy",
    "brand_scores",
    "calibration_bins",
    "confusion_table",
    "expected_calibration_error",
    "f1_scores",
    "group_accuracy",
    "hierarchical_scores",
    "label_accuracy",
    "parent_map",
    "per_node_scores",
    "risk_coverage",
    "top_confusions",
]
