"""The classify stage: normalised products in, a category tree node with a confidence out.

Input: :class:`~catmap.records.Product` records, a :class:`~catmap.tree.CategoryTree` and, for
training, products with known nodes. Output: a trained :class:`CategoryModel` (saved and loaded
by :mod:`~catmap.classify.storage`) and, per product, the node it maps to with a calibrated
confidence (backed off to a parent node when a leaf is too uncertain).

- :mod:`~catmap.classify.features`: product texts → TF-IDF features.
- :mod:`~catmap.classify.model`: the linear model and its temperature calibration.
- :mod:`~catmap.classify.training`: train a model from labelled products.
- :mod:`~catmap.classify.mapping`: map a feed's products, with rules and keywords first.
- :mod:`~catmap.classify.calibration`, :mod:`~catmap.classify.backoff`: confidence and
  back-off to a parent node.
- :mod:`~catmap.classify.rules`, :mod:`~catmap.classify.keywords`,
  :mod:`~catmap.classify.consensus`: the retailer's own rules, keyword matches, path consensus.
- :mod:`~catmap.classify.storage`: save and load a model (no pickle).
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
