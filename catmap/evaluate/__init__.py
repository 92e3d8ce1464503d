"""The evaluate stage: a labelled feed in, figures on how well mapping and attributes did out.

Input: a feed whose products carry gold nodes and attributes, a trained model and the tree.
Output: one report dictionary (accuracy, hierarchical and per-node scores, calibration,
risk / coverage, attribute scores, top confusions) and an HTML page of it.

- :mod:`~catmap.evaluate.metrics`: the pure metric functions.
- :mod:`~catmap.evaluate.run`: map the labelled feed and gather every figure into the report.
- :mod:`~catmap.evaluate.report_html`: the report as one self-contained HTML page.
- :mod:`~catmap.evaluate.tree`: the parent map the hierarchical scores walk.
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
