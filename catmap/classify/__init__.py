"""Map products onto the category tree: features, linear model, calibration, back-off, rules.

The public names are re-exported here; see each module for details.
"""

from __future__ import annotations

from catmap.classify.backoff import BackoffResult, NodeIndex, backoff, backoff_rows
from catmap.classify.calibration import expected_calibration_error, fit_temperature, softmax
from catmap.classify.consensus import PathConsensus, path_consensus
from catmap.classify.features import ProductFeaturizer, ProductTexts, product_texts
from catmap.classify.keywords import KeywordMapper
from catmap.classify.model import CategoryModel
from catmap.classify.rules import Rule, RuleMatch, RuleSet, load_rules, parse_rules
from catmap.classify.storage import load_model, read_manifest, save_model

__all__ = [
    "BackoffResult",
    "CategoryModel",
    "KeywordMapper",
    "NodeIndex",
    "PathConsensus",
    "ProductFeaturizer",
    "ProductTexts",
    "Rule",
    "RuleMatch",
    "RuleSet",
    "backoff",
    "backoff_rows",
    "expected_calibration_error",
    "fit_temperature",
    "load_model",
    "load_rules",
    "parse_rules",
    "path_consensus",
    "product_texts",
    "read_manifest",
    "save_model",
    "softmax",
]
