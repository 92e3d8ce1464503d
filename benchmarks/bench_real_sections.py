"""Benchmark catmap's model on real labelled text: Debian package summaries → archive sections.

Data source: the Debian archive's package index as this machine's package manager holds it
(``apt-cache dumpavail``; run ``apt-get update`` once first when the index is empty). Each
package gives its name, its ``Section`` and the first line of its ``Description``; the
sections with at least :data:`MIN_PER_SECTION` packages are kept, and a seeded stratified
80/20 split (``random_state=0``) makes the train and test sets. Nothing is downloaded here.

A tree file is written for the sections (``benchmarks/_data/debian-sections-tree.txt``):
six groups of our own (level 1), one node per section (level 2) and its leaf (level 3), so
that catmap's department step has groups to learn.

Models, each trained and scored in a fresh process (so that the peak memory is its own):

* catmap: trained through the Python API with ``catmap.classify.training.fit_model`` (what
  ``catmap train`` runs) on the tree above: nine tenths of the training split train it, a
  seeded tenth calibrates it and chooses its structure (department step or flat, by validation
  macro-F1), then the model is trained again on all of the training split, as ``catmap train``
  does by default (``--catmap-option refit=false``: without that step; onboarding calibrates
  on the predictions the tenth got before it trained the model);
* catmap CLI: the same through the command line, as a user runs it: ``catmap train --tree-file``
  on a CSV of the training split (a ``split`` column marks the same tenth ``valid``), then
  ``catmap map --tree-file --backoff-threshold 0 --workers 1`` on a CSV of the test split; both
  commands timed from start-up (interpreter, imports, reading the feed, writing the files);
* TF-IDF (word 1-2) + LogisticRegression;
* word 1-2 + char 2-5 TF-IDF + LinearSVC;
* fastText supervised (``pip install -e '.[bench]'``, the fasttext-wheel package; the row says so
  when it does not import).

Every model reads the same text: the package name and its summary. Printed per model:
accuracy, macro-F1 (``sklearn.metrics.f1_score(average="macro")``), training seconds, peak
resident memory of its process (MB; the CLI row: the larger of its two processes), and products
per second when predicting the test split (in-process on one thread; the CLI row: test products
over the wall time of ``catmap map``). Then catmap and fastText predict the test split again in
one process, in alternate rounds (``--rounds``), with the load average before and after: the
machine may be shared, and alternating puts both under the same load. Last, ``--cold`` new
processes each load both saved models and time their first prediction of the test split (what a
new feed costs: catmap's word caches are empty), catmap first in every other process; printed:
the median, lowest and highest products/s of each, and of catmap / fastText per process.
``--cold-whole N`` does the same with every package of the index as one feed (about 63,000
products, the size of a small retailer's feed): whether catmap's word caches pay off over a
longer first pass (a speed figure only: the training split is in that feed).

Usage:
    python benchmarks/bench_real_sections.py
    python benchmarks/bench_real_sections.py --only catmap,cli,fasttext --rounds 5
    python benchmarks/bench_real_sections.py --only catmap,fasttext --rounds 5 --cold 9
    python benchmarks/bench_real_sections.py --only catmap,fasttext --rounds 0 --cold-whole 5
"""

from __future__ import annotations

import argparse
import json
import multiprocessing
import resource
import subprocess
import sys
import tempfile
import time
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

MIN_PER_SECTION = 20
TEST_SHARE = 0.2
DATA = ROOT / "benchmarks" / "_data"

# Our own groups of the archive's sections (level 1 of the tree); any other section goes to
# "Other software".
GROUPS: dict[str, tuple[str, ...]] = {
    "Programming languages": (
        "cli-mono", "golang", "haskell", "java", "javascript", "lisp", "ocaml", "perl", "php",
        "python", "ruby", "rust", "gnu-r", "interpreters", "introspection",
    ),
    "Libraries": ("libs", "libdevel", "oldlibs", "debug"),
    "Development and system tools": (
        "devel", "vcs", "editors", "text", "shells", "utils", "admin", "kernel", "otherosfs",
        "metapackages", "tasks", "misc",
    ),
    "Desktop and media": (
        "gnome", "kde", "xfce", "x11", "gnustep", "fonts", "graphics", "sound", "video", "games",
    ),
    "Network and servers": (
        "net", "web", "httpd", "mail", "news", "comm", "database", "zope", "hamradio",
    ),
    "Science and documents": (
        "science", "math", "education", "electronics", "embedded", "doc", "tex", "localization",
    ),
}


def read_packages() -> list[tuple[str, str, str]]:
    """(package, section, summary) of every package in the machine's Debian package index."""
    out = subprocess.run(
        ["apt-cache", "dumpavail"], capture_output=True, text=True, check=True
    ).stdout
    seen: dict[str, tuple[str, str, str]] = {}
    for stanza in out.split("\n\n"):
        fields: dict[str, str] = {}
        for line in stanza.splitlines():
            if line[:1] in (" ", "\t") or ":" not in line:
                continue
            key, _, value = line.partition(":")
            fields.setdefault(key, value.strip())
        name, section = fields.get("Package", ""), fields.get("Section", "")
        summary = fields.get("Description", "")
        if name and section and summary and name not in seen:
            seen[name] = (name, section, summary)
    return list(seen.values())


def write_tree(sections: list[str], path: Path) -> dict[str, str]:
    """Write the three-level tree file; return section → leaf id."""
    lines = ["# Debian archive sections, grouped for bench_real_sections.py", "@tree-version 1"]
    group_of = {s: g for g, members in GROUPS.items() for s in members}
    groups = sorted({group_of.get(s.split("/")[-1], "Other software") for s in sections})
    leaf_of: dict[str, str] = {}
    for g, group in enumerate(groups):
        gid = 1000 * (g + 1)
        words = group.lower()
        lines.append(
            f"{gid} | - | {group} | none | - | en: {words} | fr: {words} | de: {words} | "
            f"es: {words}"
        )
        members = [s for s in sections if group_of.get(s.split("/")[-1], "Other software") == group]
        for i, section in enumerate(sorted(members)):
            sid, lid = gid + 2 * i + 1, gid + 2 * i + 2
            word = section.replace("/", " ").replace("-", " ")
            cells = f"en: {word} | fr: {word} | de: {word} | es: {word}"
            lines.append(f"{sid} | {gid} | Section {section} | . | - | {cells}")
            lines.append(f"{lid} | {sid} | {section} packages | . | - | {cells}")
            leaf_of[section] = str(lid)
    path.parent.mkdir(parents=True, exist_ok=True)
    # temp + rename: a run started beside this one never reads a half-written tree
    with tempfile.NamedTemporaryFile("w", dir=path.parent, delete=False, encoding="utf-8") as out:
        out.write("\n".join(lines) + "\n")
    Path(out.name).replace(path)
    return leaf_of


@dataclass(frozen=True)
class Split:
    """The bench's data: the seeded train / test split of the kept packages, and the tree."""

    x_train: list[str]
    x_test: list[str]
    y_train: list[str]
    y_test: list[str]
    tree_file: Path
    summary: str


def build_split() -> Split:
    """Read the package index, write the tree file, make the stratified 80/20 split.

    Texts are the package name and its summary; labels the leaf id of its section. Also what
    ``cv_real_sections.py`` cross-validates on (its training part only).
    """
    from sklearn.model_selection import train_test_split

    packages = read_packages()
    counts = Counter(section for _, section, _ in packages)
    sections = sorted(s for s, c in counts.items() if c >= MIN_PER_SECTION)
    kept = [p for p in packages if counts[p[1]] >= MIN_PER_SECTION]
    tree_file = DATA / "debian-sections-tree.txt"
    leaf_of = write_tree(sections, tree_file)
    texts = [f"{name} {summary}" for name, _, summary in kept]
    labels = [leaf_of[section] for _, section, _ in kept]
    x_train, x_test, y_train, y_test = train_test_split(
        texts, labels, test_size=TEST_SHARE, stratify=labels, random_state=0
    )
    summary = (
        f"Debian archive package index (apt-cache dumpavail): {len(packages):,} packages, "
        f"{len(sections)} sections with >= {MIN_PER_SECTION} packages ({len(kept):,} packages); "
        f"train {len(x_train):,}, test {len(x_test):,} (stratified, random_state=0)"
    )
    return Split(x_train, x_test, y_train, y_test, tree_file, summary)


def _one_thread() -> Any:
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1)


def calibration_rows(n: int) -> list[bool]:
    """Which training rows calibrate catmap (a seeded tenth), for the API and the CLI alike."""
    import numpy as np

    return [bool(v) for v in np.random.default_rng(0).random(n) < 0.1]


def run_model(
    name: str,
    data_file: str,
    tree_file: str,
    options: dict[str, Any] | None = None,
    save_dir: str | None = None,
) -> dict[str, Any]:
    """Train and score one model (in its own process); return its figures.

    Args:
        name: catmap, logreg, svc or fasttext.
        data_file: the split (JSON).
        tree_file: the tree file.
        options: catmap's ``CategoryModel`` settings (ignored by the other models).
        save_dir: catmap and fastText save their trained model here, for the speed rounds.
    """
    from sklearn.metrics import accuracy_score, f1_score

    data = json.loads(Path(data_file).read_text(encoding="utf-8"))
    x_train, y_train = data["x_train"], data["y_train"]
    x_test, y_test = data["x_test"], data["y_test"]
    started = time.perf_counter()
    predict: Any
    note = ""
    if name == "catmap":
        from catmap.classify.features import ProductTexts
        from catmap.tree.taxonomy import load_tree

        tree = load_tree(tree_file)

        def texts(values: list[str]) -> ProductTexts:
            empty = [""] * len(values)
            return ProductTexts(list(values), empty, empty, empty)

        from catmap.classify.training import fit_model, refit_on_all

        options = dict(options or {})
        refit = bool(options.pop("refit", True))  # as `catmap train` (refit=false: --no-refit)
        valid = calibration_rows(len(x_train))
        parts = (
            texts([x for x, v in zip(x_train, valid, strict=True) if not v]),
            [y for y, v in zip(y_train, valid, strict=True) if not v],
            texts([x for x, v in zip(x_train, valid, strict=True) if v]),
            [y for y, v in zip(y_train, valid, strict=True) if v],
        )
        # As `catmap train` does (the same functions): trained on nine tenths of train,
        # calibrated and its structure chosen on the rest, then trained again on all of train
        # (refit=false: `catmap train --no-refit`, without that last step).
        model = fit_model(tree, *parts, options=options)
        note = (
            f"kept the {'department step' if model.hierarchical else 'flat'} structure "
            f"(validation macro-F1 {model.metrics_.get('valid_macro_f1', float('nan')):.3f})"
        )
        if refit:
            model = refit_on_all(model, *parts)
            note += "; then trained again on all of train (refit)"
        model.prepare()
        if save_dir:
            from catmap.classify.storage import save_model

            save_model(model, Path(save_dir) / "catmap-model")

        def predict(values: list[str]) -> list[str]:
            best, _ = model.top_k(texts(values), 1)
            return [str(c) for c in model.classes_[best[:, 0]]]

    elif name in ("logreg", "svc"):
        from sklearn.feature_extraction.text import TfidfVectorizer
        from sklearn.linear_model import LogisticRegression
        from sklearn.pipeline import make_pipeline, make_union
        from sklearn.svm import LinearSVC

        if name == "logreg":
            pipeline = make_pipeline(
                TfidfVectorizer(ngram_range=(1, 2), sublinear_tf=True),
                LogisticRegression(C=10, max_iter=1000),
            )
        else:
            pipeline = make_pipeline(
                make_union(
                    TfidfVectorizer(ngram_range=(1, 2), sublinear_tf=True),
                    TfidfVectorizer(analyzer="char_wb", ngram_range=(2, 5), sublinear_tf=True),
                ),
                LinearSVC(C=0.5),
            )
        pipeline.fit(x_train, y_train)

        def predict(values: list[str]) -> list[str]:
            return [str(v) for v in pipeline.predict(values)]

    else:
        try:
            import fasttext
        except ImportError as error:
            return {
                "name": name,
                "skipped": f"fasttext does not import ({error}); pip install -e '.[bench]'",
            }
        train_file = Path(data_file).with_suffix(".fasttext.txt")
        train_file.write_text(
            "".join(f"__label__{y} {x.lower()}\n" for x, y in zip(x_train, y_train, strict=True)),
            encoding="utf-8",
        )
        ft = fasttext.train_supervised(
            input=str(train_file), wordNgrams=2, epoch=25, lr=0.5, thread=2, seed=0, verbose=0
        )
        if save_dir:
            ft.save_model(str(Path(save_dir) / "fasttext.bin"))

        def predict(values: list[str]) -> list[str]:
            return fasttext_predict(ft, values)

    train_seconds = time.perf_counter() - started
    with _one_thread():
        started = time.perf_counter()
        predicted = predict(x_test)
        per_second = len(x_test) / (time.perf_counter() - started)
    return {
        "name": name,
        "accuracy": float(accuracy_score(y_test, predicted)),
        "macro_f1": float(f1_score(y_test, predicted, average="macro")),
        "train_seconds": train_seconds,
        "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
        "per_second": per_second,
        "note": note,
    }


def fasttext_predict(ft: Any, values: list[str]) -> list[str]:
    """fastText's best label of each text (its C++ predict, one call per text)."""
    # ``ft.f.predict``: the wrapper's ``predict`` builds arrays in a way NumPy 2 refuses.
    found = [ft.f.predict(v.lower(), 1, 0.0, "strict") for v in values]
    return [f[0][1].removeprefix("__label__") if f else "" for f in found]


def run_cli(data_file: str, tree_file: str, work_dir: str) -> dict[str, Any]:
    """Train and map with catmap's command line, each command timed from its start-up.

    The training feed is a CSV (``id,title,gold_node,split``: the same tenth calibrates as in
    the API run); the test split is a feed of its own (``id,title``). ``catmap map`` runs with
    ``--backoff-threshold 0`` (every product gets its best leaf, as the other models answer)
    and ``--workers 1``.
    """
    import csv
    import os

    from sklearn.metrics import accuracy_score, f1_score

    data = json.loads(Path(data_file).read_text(encoding="utf-8"))
    x_train, y_train = data["x_train"], data["y_train"]
    x_test, y_test = data["x_test"], data["y_test"]
    work = Path(work_dir) / "cli"
    work.mkdir(parents=True, exist_ok=True)
    train_feed, test_feed = work / "train.csv", work / "test.csv"
    with train_feed.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(["id", "title", "gold_node", "split"])
        for i, (x, y, v) in enumerate(
            zip(x_train, y_train, calibration_rows(len(x_train)), strict=True)
        ):
            writer.writerow([f"train-{i}", x, y, "valid" if v else "train"])
    with test_feed.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(["id", "title"])
        for i, x in enumerate(x_test):
            writer.writerow([f"test-{i}", x])
    project, model_dir, out_dir = work / "project", work / "model", work / "mapped"
    project.mkdir(exist_ok=True)
    cli = [sys.executable, "-c", "from catmap.cli import main; main()"]
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    common = ["--tree-file", tree_file, "--project", str(project), "--model", str(model_dir)]
    started = time.perf_counter()
    subprocess.run(
        [*cli, "train", str(train_feed), *common], env=env, check=True, capture_output=True
    )
    train_seconds = time.perf_counter() - started
    started = time.perf_counter()
    subprocess.run(
        [*cli, "map", str(test_feed), *common, "--out", str(out_dir), "--backoff-threshold", "0",
         "--workers", "1"],
        env=env, check=True, capture_output=True,
    )
    map_seconds = time.perf_counter() - started
    found = {}
    with (out_dir / "mappings.jsonl").open(encoding="utf-8") as lines:
        for line in lines:
            row = json.loads(line)
            found[row["product_id"]] = row["node_id"]
    predicted = [found.get(f"test-{i}", "") for i in range(len(x_test))]
    return {
        "name": "catmap CLI",
        "accuracy": float(accuracy_score(y_test, predicted)),
        "macro_f1": float(f1_score(y_test, predicted, average="macro")),
        "train_seconds": train_seconds,
        "peak_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024,
        "per_second": len(x_test) / map_seconds,
    }


def _saved_models(
    data_file: str, tree_file: str, save_dir: str, whole: bool = False
) -> tuple[list[str], Any, Any]:
    """The test texts (``whole``: every package, train split first), catmap's saved model
    (prepared) and fastText's, loaded in this process."""
    import fasttext

    from catmap.classify.storage import load_model
    from catmap.tree.taxonomy import load_tree

    data = json.loads(Path(data_file).read_text(encoding="utf-8"))
    x_test = data["x_train"] + data["x_test"] if whole else data["x_test"]
    model, _ = load_model(Path(save_dir) / "catmap-model", load_tree(tree_file))
    model.prepare()
    return x_test, model, fasttext.load_model(str(Path(save_dir) / "fasttext.bin"))


def cold_pass(
    data_file: str, tree_file: str, save_dir: str, catmap_first: bool, whole: bool = False
) -> list[float]:
    """Seconds of catmap's and of fastText's first prediction of the test split in a new process.

    What a new feed costs: catmap's word caches are empty. Loading and preparing the models is
    not timed. One thread; ``catmap_first`` chooses which runs first (alternate it over runs).
    ``whole``: every package of the index, as one feed (speed only: the train split is in it).
    """
    from catmap.classify.features import ProductTexts

    x_test, model, ft = _saved_models(data_file, tree_file, save_dir, whole)
    empty = [""] * len(x_test)
    seconds = {}
    with _one_thread():
        for name in ("catmap", "fasttext") if catmap_first else ("fasttext", "catmap"):
            started = time.perf_counter()
            if name == "catmap":
                model.top_k(ProductTexts(list(x_test), empty, empty, empty), 1)
            else:
                fasttext_predict(ft, x_test)
            seconds[name] = time.perf_counter() - started
    return [seconds["catmap"], seconds["fasttext"]]


def speed_rounds(data_file: str, tree_file: str, save_dir: str, rounds: int) -> dict[str, Any]:
    """Products/s of catmap and fastText in one process, one thread, in alternate rounds.

    Both predict the whole test split each round from their saved models (catmap:
    ``CategoryModel.top_k(texts, 1)``; fastText: its predict per text). Returns each one's
    per-round figures and the load average before and after.
    """
    import os

    from catmap.classify.features import ProductTexts

    x_test, model, ft = _saved_models(data_file, tree_file, save_dir)
    empty = [""] * len(x_test)
    load_before = os.getloadavg()
    figures: dict[str, list[float]] = {"catmap": [], "fasttext": []}
    with _one_thread():
        for _ in range(rounds):
            # A new list each round: catmap keeps the words of the last few lists it cut.
            texts = ProductTexts(list(x_test), empty, empty, empty)
            started = time.perf_counter()
            model.top_k(texts, 1)
            figures["catmap"].append(len(x_test) / (time.perf_counter() - started))
            started = time.perf_counter()
            fasttext_predict(ft, x_test)
            figures["fasttext"].append(len(x_test) / (time.perf_counter() - started))
    return {"rounds": figures, "load": [load_before, os.getloadavg()]}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--only", default="catmap,cli,logreg,svc,fasttext",
        help="comma-separated subset of: catmap, cli, logreg, svc, fasttext",
    )
    parser.add_argument(
        "--rounds", type=int, default=5,
        help="alternate speed rounds of catmap and fastText (default 5; 0: none)",
    )
    parser.add_argument(
        "--cold", type=int, default=7,
        help="new processes that each time catmap's and fastText's first prediction of the test "
        "split (default 7; 0: none)",
    )
    parser.add_argument(
        "--cold-whole", type=int, default=0,
        help="new processes that each time catmap's and fastText's first prediction of every "
        "package of the index as one feed, the size of a small retailer's (speed only; "
        "default 0: none)",
    )
    parser.add_argument(
        "--catmap-option",
        action="append",
        default=[],
        metavar="NAME=JSON",
        help="a CategoryModel setting for catmap, e.g. C=2 or hierarchical=false (repeatable)",
    )
    args = parser.parse_args(argv)

    options = {k: json.loads(v) for k, v in (o.split("=", 1) for o in args.catmap_option)}

    split = build_split()
    x_train, x_test, y_train, y_test = split.x_train, split.x_test, split.y_train, split.y_test
    tree_file = split.tree_file
    print(split.summary, flush=True)
    rows = []
    speed: dict[str, Any] | None = None
    chosen = [n.strip() for n in args.only.split(",") if n.strip()]
    with tempfile.TemporaryDirectory(prefix="catmap-debian-") as tmp:
        data_file = Path(tmp) / "split.json"
        data_file.write_text(
            json.dumps(
                {"x_train": x_train, "y_train": y_train, "x_test": x_test, "y_test": y_test}
            ),
            encoding="utf-8",
        )
        for name in chosen:
            with multiprocessing.get_context("spawn").Pool(1) as pool:
                if name == "cli":
                    row = pool.apply(run_cli, (str(data_file), str(tree_file), tmp))
                else:
                    row = pool.apply(
                        run_model, (name, str(data_file), str(tree_file), options, tmp)
                    )
            rows.append(row)
            print(f"  {row}", file=sys.stderr, flush=True)
        saved = (Path(tmp) / "catmap-model").is_dir() and (Path(tmp) / "fasttext.bin").is_file()
        if args.rounds > 0 and saved:
            with multiprocessing.get_context("spawn").Pool(1) as pool:
                speed = pool.apply(
                    speed_rounds, (str(data_file), str(tree_file), tmp, args.rounds)
                )
        cold: list[list[float]] = []
        for run in range(args.cold if saved else 0):
            with multiprocessing.get_context("spawn").Pool(1) as pool:
                cold.append(
                    pool.apply(
                        cold_pass, (str(data_file), str(tree_file), tmp, run % 2 == 0)
                    )
                )
        whole: list[list[float]] = []
        for run in range(args.cold_whole if saved else 0):
            with multiprocessing.get_context("spawn").Pool(1) as pool:
                whole.append(
                    pool.apply(
                        cold_pass, (str(data_file), str(tree_file), tmp, run % 2 == 0, True)
                    )
                )
    header = (
        f"{'model':<11} {'acc':>6} {'macroF1':>8} {'train s':>8} {'peak MB':>8} "
        f"{'products/s':>11}"
    )
    print(header)
    print("-" * len(header))
    for r in rows:
        if "skipped" in r:
            print(f"{r['name']:<11} skipped: {r['skipped']}")
            continue
        print(
            f"{r['name']:<11} {r['accuracy']:>6.3f} {r['macro_f1']:>8.3f} "
            f"{r['train_seconds']:>8.1f} {r['peak_mb']:>8.0f} {r['per_second']:>11,.0f}"
        )
    for r in rows:
        if r.get("note"):
            print(f"  {r['name']}: {r['note']}")
    if speed is not None:
        cat, ft = speed["rounds"]["catmap"], speed["rounds"]["fasttext"]
        print(
            f"\nalternate speed rounds ({len(cat)}, one process, one thread, test split, "
            f"load average {speed['load'][0][0]:.1f} before, {speed['load'][1][0]:.1f} after on "
            f"{multiprocessing.cpu_count()} cores), products/s:"
        )
        print("  catmap   " + " ".join(f"{v:>8,.0f}" for v in cat)
              + f"   median {sorted(cat)[len(cat) // 2]:,.0f}")
        print("  fasttext " + " ".join(f"{v:>8,.0f}" for v in ft)
              + f"   median {sorted(ft)[len(ft) // 2]:,.0f}")
        ratios = sorted(c / f for c, f in zip(cat, ft, strict=True))
        print(
            f"  catmap / fasttext per round: median {ratios[len(ratios) // 2]:.2f} "
            f"(lowest {ratios[0]:.2f}, highest {ratios[-1]:.2f}); catmap's first round starts "
            "with empty word caches, later rounds reuse them, as a long feed does"
        )
    for passes, n, what in (
        (cold, len(x_test), "the test split"),
        (whole, len(x_train) + len(x_test), "every package of the index as one feed"),
    ):
        if not passes:
            continue
        cat = sorted(n / c for c, _ in passes)
        ft = sorted(n / f for _, f in passes)
        ratios = sorted(f / c for c, f in passes)
        print(
            f"\nfirst prediction of {what} ({n:,} products) in {len(passes)} new processes "
            "(one thread, catmap's word caches empty, models loaded beforehand, which one runs "
            "first alternating), products/s:"
        )
        print(f"  catmap   median {cat[len(cat) // 2]:,.0f} (lowest {cat[0]:,.0f}, highest "
              f"{cat[-1]:,.0f})")
        print(f"  fasttext median {ft[len(ft) // 2]:,.0f} (lowest {ft[0]:,.0f}, highest "
              f"{ft[-1]:,.0f})")
        print(
            f"  catmap / fasttext per process: median {ratios[len(ratios) // 2]:.2f} (lowest "
            f"{ratios[0]:.2f}, highest {ratios[-1]:.2f})"
        )
    print(
        "\nData: the Debian archive's package index (apt-cache dumpavail). catmap: fit_model "
        "via the Python API on the tree file above (calibrated and its structure chosen on a "
        "seeded tenth of train, trained on the rest, then on all of train unless "
        "refit=false); catmap CLI: `catmap train "
        "--tree-file` on a CSV of the train split, then `catmap map --tree-file "
        "--backoff-threshold 0 --workers 1` on a CSV of the test split, each timed from "
        "start-up (train s and products/s include it; peak MB is the larger process); logreg: "
        "TF-IDF word 1-2 + LogisticRegression(C=10); svc: TF-IDF word 1-2 + char_wb 2-5 + "
        "LinearSVC(C=0.5); fasttext: wordNgrams=2, 25 epochs. Text: package name + summary. "
        "products/s in the table: the first prediction of the test split, one thread "
        "(catmap's word caches empty)."
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
