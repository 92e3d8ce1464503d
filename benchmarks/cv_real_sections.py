"""Cross-validate catmap's model choices on the Debian sections' training split only.

The data of ``bench_real_sections.py`` (its :func:`build_split`); the test split is never read
here. Stratified 5-fold cross-validation of the training split (``random_state=0``): in each
fold, catmap is trained as ``fit_model`` trains it (nine tenths of the fold's training part,
calibrated on the seeded tenth, :func:`calibration_rows`) and scored on the fold's held-out
fifth. Printed per variant: macro-F1 and accuracy, mean and standard deviation over the folds,
and the mean and standard deviation of its per-fold difference from the first variant (paired:
the folds are the same).

A variant is a name and ``CategoryModel`` settings (JSON; ``"refit": true`` trains the chosen
model again on the calibration tenth too, as ``catmap train --refit`` does;
``"title_chars_ngram_range": [3, 4]`` and ``"keyword_ngram_range": [3, 5]`` train with other
character n-gram lengths than catmap's, set in the fold's own process), or ``svc`` (the
bench's word 1-2 + char_wb 2-5 TF-IDF + LinearSVC(C=0.5) baseline, trained on the same nine
tenths).

Usage:
    python benchmarks/cv_real_sections.py --variant 'flat={"hierarchical": false}' \\
        --variant 'c1={"hierarchical": false, "C": 1.0}' --variant svc
"""

from __future__ import annotations

import argparse
import json
import multiprocessing
import statistics
import sys
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

FOLDS = 5


def run_fold(
    name: str, settings: dict[str, Any] | None, fold: int, data: dict[str, Any]
) -> dict[str, Any]:
    """Train one variant on one fold's training part; score it on the fold's held-out part."""
    from bench_real_sections import calibration_rows
    from sklearn.metrics import accuracy_score, f1_score

    x, y = data["x"], data["y"]
    train, held = data["folds"][fold]
    x_fit, y_fit = [x[i] for i in train], [y[i] for i in train]
    x_held, y_held = [x[i] for i in held], [y[i] for i in held]
    valid = calibration_rows(len(x_fit))
    started = time.process_time()
    if settings is None:
        from sklearn.feature_extraction.text import TfidfVectorizer
        from sklearn.pipeline import make_pipeline, make_union
        from sklearn.svm import LinearSVC

        pipeline = make_pipeline(
            make_union(
                TfidfVectorizer(ngram_range=(1, 2), sublinear_tf=True),
                TfidfVectorizer(analyzer="char_wb", ngram_range=(2, 5), sublinear_tf=True),
            ),
            LinearSVC(C=0.5),
        )
        pipeline.fit(
            [t for t, v in zip(x_fit, valid, strict=True) if not v],
            [t for t, v in zip(y_fit, valid, strict=True) if not v],
        )
        predicted = [str(p) for p in pipeline.predict(x_held)]
        note = ""
    else:
        from catmap.classify.features import ProductTexts
        from catmap.classify.training import fit_model, refit_on_all
        from catmap.tree.taxonomy import load_tree

        def texts(values: list[str]) -> ProductTexts:
            empty = [""] * len(values)
            return ProductTexts(list(values), empty, empty, empty)

        options = dict(settings)
        refit = bool(options.pop("refit", False))
        _set_ngram_ranges(
            options.pop("title_chars_ngram_range", None), options.pop("keyword_ngram_range", None)
        )
        parts = (
            texts([t for t, v in zip(x_fit, valid, strict=True) if not v]),
            [t for t, v in zip(y_fit, valid, strict=True) if not v],
            texts([t for t, v in zip(x_fit, valid, strict=True) if v]),
            [t for t, v in zip(y_fit, valid, strict=True) if v],
        )
        model = fit_model(load_tree(data["tree_file"]), *parts, options=options)
        if refit:  # `catmap train --refit`: trained again on the calibration tenth too
            model = refit_on_all(model, *parts)
        best, _ = model.top_k(texts(x_held), 1)
        predicted = [str(c) for c in model.classes_[best[:, 0]]]
        note = "flat" if len(model.groups_) == 1 else "department step"
    return {
        "name": name,
        "fold": fold,
        "macro_f1": float(f1_score(y_held, predicted, average="macro")),
        "accuracy": float(accuracy_score(y_held, predicted)),
        "cpu_seconds": time.process_time() - started,
        "structure": note,
    }


def _set_ngram_ranges(title_chars: list[int] | None, keywords: list[int] | None) -> None:
    """Train this process's models with other character n-gram lengths (each fold runs in a
    process of its own, so nothing else sees the change)."""
    import catmap.classify.features as features
    import catmap.classify.model as model

    if title_chars is not None:
        features.FIELD_BLOCKS = tuple(
            (name, field, {**settings, "ngram_range": (title_chars[0], title_chars[1])})
            if name == "title_chars"
            else (name, field, settings)
            for name, field, settings in features.FIELD_BLOCKS
        )
    if keywords is not None:
        model.MODEL_KEYWORD_NGRAM_RANGE = (keywords[0], keywords[1])


def _run_task(task: tuple[str, dict[str, Any] | None, int, dict[str, Any]]) -> dict[str, Any]:
    return run_fold(*task)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--variant",
        action="append",
        default=[],
        metavar="NAME=JSON|svc",
        help="a variant: NAME=JSON CategoryModel settings, or svc (repeatable; the first is "
        "the reference of the paired differences)",
    )
    parser.add_argument("--workers", type=int, default=1, help="folds trained at once")
    parser.add_argument("--out", help="also write every fold's figures here (JSON Lines)")
    args = parser.parse_args(argv)
    from bench_real_sections import build_split
    from sklearn.model_selection import StratifiedKFold

    variants: list[tuple[str, dict[str, Any] | None]] = []
    for text in args.variant or ['default={"hierarchical": false}']:
        if text == "svc":
            variants.append(("svc", None))
        else:
            name, _, settings = text.partition("=")
            variants.append((name, json.loads(settings)))
    split = build_split()
    print(split.summary, "(cross-validating the training split only)", flush=True)
    folds = [
        (train.tolist(), held.tolist())
        for train, held in StratifiedKFold(FOLDS, shuffle=True, random_state=0).split(
            split.x_train, split.y_train
        )
    ]
    data = {
        "x": split.x_train,
        "y": split.y_train,
        "folds": folds,
        "tree_file": str(split.tree_file),
    }
    tasks = [(name, settings, fold, data) for name, settings in variants for fold in range(FOLDS)]
    results: dict[str, list[dict[str, Any]]] = {name: [] for name, _ in variants}
    # A new process per fold: its n-gram lengths stay in it, and its memory is returned.
    with multiprocessing.get_context("spawn").Pool(args.workers, maxtasksperchild=1) as pool:
        for row in pool.imap_unordered(_run_task, tasks, chunksize=1):
            results[row["name"]].append(row)
            print(f"  {row}", file=sys.stderr, flush=True)
            if args.out:
                with open(args.out, "a", encoding="utf-8") as out:
                    out.write(json.dumps(row) + "\n")
    reference = [r["macro_f1"] for r in sorted(results[variants[0][0]], key=lambda r: r["fold"])]
    header = (
        f"{'variant':<16} {'macroF1':>8} {'std':>6} {'acc':>7} {'std':>6} "
        f"{'dF1':>7} {'std':>6} {'CPU s/fold':>10}  structure"
    )
    print(header)
    print("-" * len(header))
    for name, _ in variants:
        rows = sorted(results[name], key=lambda r: r["fold"])
        f1 = [r["macro_f1"] for r in rows]
        acc = [r["accuracy"] for r in rows]
        diff = [a - b for a, b in zip(f1, reference, strict=True)]
        print(
            f"{name:<16} {statistics.mean(f1):>8.4f} {statistics.stdev(f1):>6.4f} "
            f"{statistics.mean(acc):>7.4f} {statistics.stdev(acc):>6.4f} "
            f"{statistics.mean(diff):>+7.4f} {statistics.stdev(diff):>6.4f} "
            f"{statistics.mean(r['cpu_seconds'] for r in rows):>10.1f}  "
            f"{','.join(sorted({r['structure'] for r in rows}))}"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
