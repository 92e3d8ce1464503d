"""Model files users can trust: a folder with a JSON manifest and NumPy arrays, never pickle.

Layout of a model folder (``<project>/models/current/`` by default)::

    manifest.json        format version, versions, tree fingerprint, data fingerprint, metrics,
                         temperatures, keyword weight, feature weights, settings
    classes.npy          class node ids (unicode array)
    vocab-<block>.npy    a vectorizer's terms, UTF-8 bytes joined by NUL; idf-<block>.npy its idf
    *.npz                sparse weight matrices (scipy's own format, loaded with allow_pickle=False)
    *.npy                intercepts, group ids, class columns

Vectorizers are rebuilt on load by setting ``vocabulary_`` and ``idf_``.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from catmap._atomic import atomic_open, write_text_atomic
from catmap.classify._tfidf import LoadedTfidf
from catmap.classify.features import ProductFeaturizer
from catmap.classify.keywords import KeywordMapper, keyword_vectorizer_settings
from catmap.classify.model import CategoryModel
from catmap.errors import ModelError, ModelNotTrained, ModelTreeMismatch
from catmap.tree.taxonomy import CategoryTree

if TYPE_CHECKING:
    from sklearn.feature_extraction.text import TfidfVectorizer

__all__ = [
    "FORMAT_VERSION",
    "check_model_tree",
    "file_fingerprint",
    "load_model",
    "read_manifest",
    "save_model",
]

# 2: keywords blend inside each department (keyword_blend_temperature); 1 is not read.
FORMAT_VERSION = 2
MANIFEST = "manifest.json"
# Which title words labelled products used (see CategoryModel.product_words_); optional.
PRODUCT_WORDS = "product-words.npy"
# What folders written before these settings were saved used.
_EARLIER_NGRAM_RANGES: dict[str, tuple[int, int]] = {"title_chars": (3, 5)}
_EARLIER_KEYWORD_NGRAM_RANGE = (3, 5)
_EARLIER_DEPARTMENT_FLOOR = 1e-3


def file_fingerprint(path: str | Path | None) -> str:
    """Return the SHA-256 of a file's bytes ("" when there is no file)."""
    if path is None or not Path(path).is_file():
        return ""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def training_feed(manifest: dict[str, Any], feed: str | Path) -> Path | None:
    """Which of the model's training feeds ``feed`` is: the same file, or one of the same
    content (a copy elsewhere); None when it is none of them (or the manifest predates the
    list)."""
    feeds = [item for item in manifest.get("training_feeds") or () if isinstance(item, dict)]
    if not feeds:
        return None
    resolved = Path(feed).resolve()
    for item in feeds:
        if Path(item.get("path", "")) == resolved:
            return resolved
    # Only a file of a training feed's size can hold its content: a feed of another size is not
    # read through (evaluating or calibrating on a large feed reads it once, not twice).
    size = resolved.stat().st_size if resolved.is_file() else -1
    alike = [item for item in feeds if item.get("bytes", size) == size]
    content = file_fingerprint(feed) if alike else ""
    return next(
        (Path(item["path"]) for item in alike if content and item.get("fingerprint") == content),
        None,
    )


def _catmap_version() -> str:
    try:
        from importlib.metadata import version

        return version("catmap")
    except Exception:  # noqa: BLE001 - a source checkout without metadata
        return "unknown"


def _save_array(path: Path, array: np.ndarray[Any, Any]) -> None:
    """Save one array atomically (a killed run never leaves a truncated file)."""
    with atomic_open(path, "wb") as handle:
        np.save(handle, array, allow_pickle=False)


def _save_sparse(path: Path, matrix: Any) -> None:
    """Save one sparse matrix atomically."""
    with atomic_open(path, "wb") as handle:
        sp.save_npz(handle, matrix)


def _optional_array(path: Path) -> np.ndarray[Any, Any] | None:
    """An array a model may lack (saved by an older catmap): None when absent or unreadable."""
    try:
        return np.load(path, allow_pickle=False) if path.exists() else None
    except (OSError, ValueError, EOFError):
        return None


def _sklearn_version() -> str:
    import sklearn

    return str(sklearn.__version__)


def _save_vocabulary(folder: Path, name: str, vectorizer: TfidfVectorizer) -> None:
    terms = sorted(vectorizer.vocabulary_, key=vectorizer.vocabulary_.__getitem__)
    # Terms never contain NUL (text is cleaned), so NUL-joined UTF-8 is compact and exact.
    joined = "\0".join(terms).encode("utf-8")
    _save_array(folder / f"vocab-{name}.npy", np.frombuffer(joined, dtype=np.uint8))
    _save_array(folder / f"idf-{name}.npy", np.asarray(vectorizer.idf_, dtype=np.float64))


def _load_vocabulary(folder: Path, name: str, settings: dict[str, Any]) -> LoadedTfidf:
    """A fitted vectorizer from its settings and the folder's arrays (no scikit-learn import)."""
    raw = np.load(folder / f"vocab-{name}.npy", allow_pickle=False).tobytes().decode("utf-8")
    terms = raw.split("\0") if raw else []
    vocabulary = dict(zip(terms, range(len(terms)), strict=True))
    idf = np.load(folder / f"idf-{name}.npy", allow_pickle=False)
    return LoadedTfidf(settings, vocabulary, idf)


def save_model(
    model: CategoryModel, folder: str | Path, *, extra: dict[str, Any] | None = None
) -> Path:
    """Write a trained model to a folder (created; files in it are replaced).

    Args:
        model: a trained model.
        folder: the model folder.
        extra: more manifest facts (training data fingerprint, timings, consensus weight...).

    Returns:
        The manifest path.

    Raises:
        ModelNotTrained: the model is not trained.
    """
    model._check()
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    # Arrays are replaced one by one: drop the old manifest first, so that a run killed half-way
    # leaves a folder that says "not trained" instead of old settings over new arrays.
    (out / MANIFEST).unlink(missing_ok=True)
    for block, vectorizer in model.featurizer_.vectorizers_.items():
        _save_vocabulary(out, block, vectorizer)
    _save_vocabulary(out, "keywords", model.keywords_.vectorizer_)
    _save_sparse(out / "keyword-documents.npz", model.keywords_.documents_)
    _save_array(out / "keyword-classes.npy", model.keywords_.classes_)
    _save_array(out / "classes.npy", model.classes_)
    _save_array(out / "groups.npy", model.groups_)
    _save_array(out / "linear-classes.npy", model.linear_classes_)
    _save_array(out / "class-group.npy", model.class_group_)
    _save_sparse(out / "group-coef.npz", model.group_coef_.tocsr())
    _save_array(out / "group-intercept.npy", model.group_intercept_)
    _save_sparse(out / "class-coef.npz", model.class_coef_.tocsr())
    _save_array(out / "class-intercept.npy", model.class_intercept_)
    product_words = getattr(model, "product_words_", None)
    if product_words is not None:
        _save_array(out / PRODUCT_WORDS, product_words)
    else:
        (out / PRODUCT_WORDS).unlink(missing_ok=True)
    manifest: dict[str, Any] = {
        "format": "catmap-model",
        "format_version": FORMAT_VERSION,
        "catmap_version": _catmap_version(),
        "sklearn_version": _sklearn_version(),
        "tree_version": model.tree.version,
        "tree_fingerprint": file_fingerprint(model.tree.path),
        "tree_file": str(model.tree.path or ""),
        "settings": {
            "classifier": model.classifier,
            "C": model.C,
            "hierarchical": model.hierarchical,
            "min_df": model.min_df,
            "max_features": model.max_features,
            "prune_below": model.prune_below,
            "keyword_prune_below": model.keyword_prune_below,
            "department_floor": model.department_floor,
            "max_per_class": model.max_per_class,
            "path_noise": model.path_noise,
            "tree_examples": model.tree_examples,
            "department_sample": model.department_sample,
            "random_state": model.random_state,
        },
        "feature_weights": {
            block: float((model.feature_weights or {}).get(block, 1.0))
            for block in model.featurizer_.vectorizers_
        },
        "feature_blocks": list(model.featurizer_.vectorizers_),
        "feature_ngram_ranges": {
            block: list(vectorizer.ngram_range)
            for block, vectorizer in model.featurizer_.vectorizers_.items()
        },
        "temperatures": [float(t) for t in model.temperatures_],
        "blend_temperature": float(model.blend_temperature_),
        "keyword_weight": float(model.keyword_weight_),
        "keyword_blend_temperature": float(model.keyword_blend_temperature_),
        "keyword_temperature": float(model.keywords_.temperature),
        "keyword_path_weight": float(model.keywords_.path_weight),
        "keyword_ngram_range": list(model.keywords_.vectorizer_.ngram_range),
        "metrics": model.metrics_,
        "class_ids": model.classes_.tolist(),
        **(extra or {}),
    }
    manifest_path = out / MANIFEST
    # The manifest last: a half-written folder never loads.
    write_text_atomic(manifest_path, json.dumps(manifest, indent=2, ensure_ascii=False) + "\n")
    return manifest_path


def read_manifest(folder: str | Path) -> dict[str, Any]:
    """Read a model folder's manifest.

    Raises:
        ModelNotTrained: no manifest in the folder.
        ModelError: the manifest is not a catmap model manifest.
    """
    path = Path(folder) / MANIFEST
    if not path.is_file():
        raise ModelNotTrained("no trained model here", path=folder, hint="run `catmap train` first")
    try:
        manifest: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as error:
        raise ModelError(f"the model manifest cannot be read: {error}", path=path) from None
    if manifest.get("format") != "catmap-model":
        raise ModelError("this is not a catmap model manifest", path=path)
    if manifest.get("format_version") != FORMAT_VERSION:
        raise ModelError(
            f"model format version {manifest.get('format_version')} is not supported "
            f"(this catmap reads version {FORMAT_VERSION})",
            path=path,
            hint="run `catmap train` again",
        )
    return manifest


def check_model_tree(manifest: dict[str, Any], tree: CategoryTree, where: Path) -> None:
    """Refuse a model trained on another tree, naming both trees (version, file, fingerprint).

    Args:
        manifest: the model's manifest.
        tree: the tree in use.
        where: the manifest file, named in the error.

    Raises:
        ModelTreeMismatch: another version, or the same version from a different file content.
    """
    trained_version = str(manifest.get("tree_version"))
    trained_print = str(manifest.get("tree_fingerprint") or "")
    current_print = file_fingerprint(tree.path)
    same_version = trained_version == str(tree.version)
    if same_version and (not trained_print or not current_print or trained_print == current_print):
        return
    trained_file = manifest.get("tree_file") or "its tree file"
    raise ModelTreeMismatch(
        f"the model was trained on tree version {trained_version} ({trained_file}, fingerprint "
        f"{trained_print[:12] or 'unknown'}); the tree in use is version {tree.version} "
        f"({tree.path or 'in memory'}, fingerprint {current_print[:12] or 'unknown'})",
        path=where,
        hint="use the model's tree (--tree-file FILE or --tree-version N), or train a model "
        "on this tree with `catmap train`",
    )


def load_model(folder: str | Path, tree: CategoryTree) -> tuple[CategoryModel, dict[str, Any]]:
    """Load a model folder for a tree.

    Args:
        folder: the model folder.
        tree: the tree the model will map to; its version must be the model's.

    Returns:
        The model and its manifest.

    Raises:
        ModelNotTrained: no model in the folder.
        ModelTreeMismatch: the model was trained for another tree version.
        ModelError: a damaged model folder.
    """
    src = Path(folder)
    manifest = read_manifest(src)
    check_model_tree(manifest, tree, src / MANIFEST)
    settings = manifest["settings"]
    try:
        model = CategoryModel(
            tree=tree,
            classifier=settings["classifier"],
            C=settings["C"],
            hierarchical=settings["hierarchical"],
            feature_weights=manifest["feature_weights"],
            min_df=settings["min_df"],
            max_features=settings["max_features"],
            prune_below=settings["prune_below"],
            keyword_prune_below=settings.get("keyword_prune_below", 0.0),  # older folders: none
            department_floor=settings.get("department_floor", _EARLIER_DEPARTMENT_FLOOR),
            keyword_weight=manifest["keyword_weight"],
            max_per_class=settings.get("max_per_class"),
            path_noise=settings.get("path_noise", 0.0),
            tree_examples=settings.get("tree_examples", False),  # older folders: none
            department_sample=settings.get("department_sample"),
            random_state=settings["random_state"],
        )
        featurizer = ProductFeaturizer(
            weights=manifest["feature_weights"],
            min_df=settings["min_df"],
            max_features=settings["max_features"],
        )
        ranges = {**_EARLIER_NGRAM_RANGES, **manifest.get("feature_ngram_ranges", {})}
        featurizer.vectorizers_ = {
            block: _load_vocabulary(
                src,
                block,
                ProductFeaturizer.vectorizer_settings(block, ngram_range=ranges.get(block)),
            )
            for block in manifest["feature_blocks"]
        }
        featurizer.n_features_ = sum(len(v.vocabulary_) for v in featurizer.vectorizers_.values())
        model.featurizer_ = featurizer
        low, high = manifest.get("keyword_ngram_range", _EARLIER_KEYWORD_NGRAM_RANGE)
        keywords = KeywordMapper(
            tree=tree,
            temperature=manifest["keyword_temperature"],
            path_weight=manifest["keyword_path_weight"],
            ngram_range=(int(low), int(high)),
        )
        keywords.vectorizer_ = _load_vocabulary(
            src, "keywords", keyword_vectorizer_settings(keywords.ngram_range)
        )
        keywords.documents_ = sp.load_npz(src / "keyword-documents.npz").tocsr()
        keywords.classes_ = np.load(src / "keyword-classes.npy", allow_pickle=False)
        model.keywords_ = keywords
        model.classes_ = np.load(src / "classes.npy", allow_pickle=False)
        model.groups_ = np.load(src / "groups.npy", allow_pickle=False)
        model.linear_classes_ = np.load(src / "linear-classes.npy", allow_pickle=False)
        model.class_group_ = np.load(src / "class-group.npy", allow_pickle=False)
        model.group_coef_ = sp.load_npz(src / "group-coef.npz").tocsr()
        model.group_intercept_ = np.load(src / "group-intercept.npy", allow_pickle=False)
        model.class_coef_ = sp.load_npz(src / "class-coef.npz").tocsr()
        model.class_intercept_ = np.load(src / "class-intercept.npy", allow_pickle=False)
        model.temperatures_ = (
            float(manifest["temperatures"][0]),
            float(manifest["temperatures"][1]),
        )
        model.blend_temperature_ = float(manifest["blend_temperature"])
        model.keyword_weight_ = float(manifest["keyword_weight"])
        model.keyword_blend_temperature_ = float(manifest["keyword_blend_temperature"])
        model.metrics_ = dict(manifest.get("metrics", {}))
        model.product_words_ = _optional_array(src / PRODUCT_WORDS)
    except (KeyError, OSError, TypeError, ValueError) as error:
        raise ModelError(
            f"the model folder is damaged or incomplete: {error}",
            path=src,
            hint="run `catmap train` again",
        ) from None
    unknown = [c for c in model.classes_.tolist() if c not in tree]
    if unknown:
        raise ModelTreeMismatch(
            f"the model knows node {unknown[0]}, which tree version {tree.version} "
            f"({tree.path or 'in memory'}) lacks: it was trained on another tree",
            path=src / MANIFEST,
            hint="use the model's tree (--tree-file FILE), or train a model on this tree with "
            "`catmap train`",
        )
    return model, manifest
