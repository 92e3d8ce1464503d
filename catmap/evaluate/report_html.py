"""The evaluation report as one self-contained HTML file, with its plots embedded as PNG.

Three plots are drawn with matplotlib (the non-interactive Agg backend, so no display is
needed): the reliability diagram, the risk-coverage curve and the accuracy per department. They
are embedded as base64 ``data:`` images, so the file can be mailed or archived alone. Every
piece of text from the data (node names, paths, feed names) is HTML-escaped.
"""

from __future__ import annotations

import base64
import io
import json
from collections.abc import Sequence
from html import escape
from pathlib import Path
from typing import Any

from catmap._atomic import write_text_atomic

__all__ = [
    "department_png",
    "reliability_png",
    "render_report_html",
    "risk_coverage_png",
    "write_report",
]

NODES_SHOWN = 300

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.2em; margin-top: 2em; }
table { border-collapse: collapse; margin: 0.5em 0; font-size: 0.9em; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.6em; text-align: left; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
th { background: #f3f3f3; }
.plots img { max-width: 32em; margin: 0.5em 1em 0.5em 0; border: 1px solid #eee; }
.note { color: #666; font-size: 0.9em; }
"""


def _figure() -> tuple[Any, Any]:
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    # Figure objects (not pyplot) keep no global state between reports.
    figure = Figure(figsize=(5.5, 4.0), dpi=100)
    axes = figure.add_subplot(1, 1, 1)
    return figure, axes


def _png(figure: Any) -> bytes:
    buffer = io.BytesIO()
    figure.tight_layout()
    figure.savefig(buffer, format="png")
    return buffer.getvalue()


def reliability_png(calibration: dict[str, Sequence[float]], ece: float) -> bytes:
    """Draw the reliability diagram: accuracy against mean confidence per bin.

    Args:
        calibration: the report's ``calibration`` section (edges, counts, accuracy, ...).
        ece: the expected calibration error, shown in the title.

    Returns:
        The PNG bytes.
    """
    figure, axes = _figure()
    edges = list(calibration["edges"])
    width = edges[1] - edges[0] if len(edges) > 1 else 1.0
    lefts = edges[:-1]
    counts = list(calibration["counts"])
    accuracy = [a if c else 0.0 for a, c in zip(calibration["accuracy"], counts, strict=True)]
    axes.bar(lefts, accuracy, width=width, align="edge", edgecolor="black", label="accuracy")
    axes.plot([0, 1], [0, 1], linestyle="--", color="grey", label="perfect calibration")
    axes.set_xlim(0, 1)
    axes.set_ylim(0, 1)
    axes.set_xlabel("confidence")
    axes.set_ylabel("share right")
    axes.set_title(f"Reliability ({len(counts)} bins), ECE = {ece:.3f}")
    axes.legend(loc="upper left")
    return _png(figure)


def risk_coverage_png(coverage: Sequence[float], risk: Sequence[float], aurc: float) -> bytes:
    """Draw the risk-coverage curve (answers kept most-confident first).

    Returns:
        The PNG bytes.
    """
    figure, axes = _figure()
    axes.plot(list(coverage), list(risk), color="tab:red")
    axes.set_xlim(0, 1)
    axes.set_ylim(0, max([0.05, *risk]) * 1.05)
    axes.set_xlabel("coverage (share of products answered)")
    axes.set_ylabel("risk (share wrong)")
    axes.set_title(f"Risk-coverage, AURC = {aurc:.4f}")
    axes.grid(alpha=0.3)
    return _png(figure)


def department_png(departments: Sequence[dict[str, Any]]) -> bytes:
    """Draw a horizontal bar chart of leaf accuracy per department.

    Returns:
        The PNG bytes.
    """
    figure, axes = _figure()
    figure.set_size_inches(6.5, max(3.0, 0.3 * len(departments) + 1.0))
    names = [f"{d['name']} ({d['products']})" for d in departments]
    values = [d["accuracy"] for d in departments]
    positions = list(range(len(names)))
    axes.barh(positions, values, color="tab:blue")
    axes.set_yticks(positions)
    axes.set_yticklabels(names, fontsize=8)
    axes.invert_yaxis()
    axes.set_xlim(0, 1)
    axes.set_xlabel("leaf accuracy")
    axes.set_title("Accuracy per department (products)")
    return _png(figure)


def _image(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img alt="{escape(alt)}" src="data:image/png;base64,{data}">'


def _number(value: float, digits: int = 3) -> str:
    return f"{value:.{digits}f}"


def _table(headers: Sequence[str], rows: Sequence[Sequence[Any]], numeric: set[int]) -> str:
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = []
        for k, value in enumerate(row):
            css = ' class="n"' if k in numeric else ""
            cells.append(f"<td{css}>{escape(str(value))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><tr>{head}</tr>{''.join(body)}</table>"


def _confusion_html(title: str, section: dict[str, Any]) -> str:
    table: dict[str, dict[str, int]] = section["confusion"]
    predicted = sorted({p for row in table.values() for p in row})
    rows = [[g, *[table[g].get(p, 0) for p in predicted]] for g in sorted(table)]
    return (
        f"<h3>{escape(title)}: accuracy {_number(section['accuracy'])} "
        f"over {section['products']} products</h3>"
        + _table(["gold \\ extracted", *predicted], rows, set(range(1, len(predicted) + 1)))
    )


def render_report_html(report: dict[str, Any], *, title: str = "catmap evaluation") -> str:
    """Return the whole HTML report for an evaluation report dictionary.

    Args:
        report: what :func:`catmap.evaluate.run.evaluation_report` returned (plus the run's
            facts such as ``feed`` and ``model``, shown when present).
        title: the page title.

    Returns:
        One self-contained HTML document.
    """
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{escape(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{escape(title)}</h1>",
        _facts_html(report),
        *_mapping_html(report),
        *_confusions_html(report["confusions"]),
    ]
    attributes = report.get("attributes")
    if attributes:
        parts.extend(_attributes_html(attributes))
    parts.extend(_nodes_html(report["nodes"]))
    parts.append("</body></html>")
    return "\n".join(parts)


def _facts_html(report: dict[str, Any]) -> str:
    """The run's facts: feed, gold, model, tree version, products evaluated and left out."""
    facts = [(k, report[k]) for k in ("feed", "gold", "model", "tree_version") if report.get(k)]
    if report.get("trained_on"):
        facts.append(("note", report["trained_on"]))
    facts.append(("products evaluated", report["products"]))
    left_out = report.get("left_out") or {}
    for key, value in left_out.items():
        if value:
            facts.append((f"left out: {key.replace('_', ' ')}", value))
    return _table(["", ""], facts, {1})


def _mapping_html(report: dict[str, Any]) -> list[str]:
    """The mapping section: headline metrics, a note on how they count, and the plots."""
    mapping = report["mapping"]
    parts = ["<h2>Mapping</h2>"]
    headline = [
        ("leaf accuracy", _number(mapping["accuracy"])),
        ("macro-F1", _number(mapping["macro_f1"])),
        ("weighted F1", _number(mapping["weighted_f1"])),
        ("hierarchical precision", _number(mapping["hierarchical_precision"])),
        ("hierarchical recall", _number(mapping["hierarchical_recall"])),
        ("hierarchical F1", _number(mapping["hierarchical_f1"])),
        (f"ECE ({mapping['ece_bins']} bins)", _number(mapping["ece"], 4)),
        ("AURC", _number(mapping["aurc"], 4)),
        ("answer at or above the gold leaf", _number(mapping["answered_under_gold"])),
        ("mean confidence", _number(mapping["mean_confidence"])),
    ]
    headline += [(f"method: {m}", n) for m, n in mapping["by_method"].items()]
    parts.append(_table(["metric", "value"], headline, {1}))
    parts.append(
        '<p class="note">Leaf accuracy and F1 compare node ids exactly; hierarchical scores '
        "give partial credit to a near or backed-off answer. ECE and the risk-coverage curve "
        "count an answer as right when the gold leaf lies under the answered node. "
        "ECE: the mean gap between the stated confidence and the share right, over confidence "
        "bins (0 = confidence means what it says). AURC: the mean error rate over all accept "
        "thresholds, products taken most confident first (lower = better ranking).</p>"
    )
    accepted = report.get("at_accept_threshold")
    if accepted is not None:
        parts.append(
            f"<p>At the auto-accept threshold {accepted['threshold']:.3f}: "
            f"{accepted['accepted']:,} products accepted ({accepted['coverage']:.1%}), "
            f"{accepted['wrong']:,} wrong: error rate {accepted['error_rate']:.2%}.</p>"
        )

    plots = []
    if report["products"]:
        plots.append(
            _image(reliability_png(report["calibration"], mapping["ece"]), "reliability diagram")
        )
        curve = report["risk_coverage"]
        plots.append(
            _image(
                risk_coverage_png(curve["coverage"], curve["risk"], mapping["aurc"]),
                "risk-coverage curve",
            )
        )
    if report["departments"]:
        plots.append(_image(department_png(report["departments"]), "accuracy per department"))
    parts.append('<div class="plots">' + "".join(plots) + "</div>")

    return parts


def _confusions_html(confusions: list[dict[str, Any]]) -> list[str]:
    """The most frequent confusions: gold node, the node mapped to instead, and how often."""
    return [
        "<h2>Most frequent confusions</h2>",
        _table(
            ["count", "gold", "gold path", "mapped to", "mapped path"],
            [
                [c["count"], c["true"], c["true_path"], c["predicted"], c["predicted_path"]]
                for c in confusions
            ],
            {0},
        ),
    ]


def _attributes_html(attributes: dict[str, Any]) -> list[str]:
    """The attributes section: brand precision / recall, who and age confusion tables."""
    parts = ["<h2>Attributes</h2>"]
    brand = attributes.get("brand")
    if brand:
        parts.append(
            _table(
                ["brand", "precision", "recall", "F1", "TP", "FP", "FN", "products"],
                [
                    [
                        "",
                        _number(brand["precision"]),
                        _number(brand["recall"]),
                        _number(brand["f1"]),
                        brand["true_positives"],
                        brand["false_positives"],
                        brand["false_negatives"],
                        brand["products"],
                    ]
                ],
                set(range(1, 8)),
            )
        )
    for name in ("who", "age"):
        if attributes.get(name):
            parts.append(_confusion_html(name, attributes[name]))
    return parts


def _nodes_html(node_scores: list[dict[str, Any]]) -> list[str]:
    """The per-node table: the nodes with most errors first."""
    nodes = sorted(
        node_scores, key=lambda n: (-n.get("errors", 0), -n["support"], n["node_id"])
    )
    parts = []
    parts.append(
        f"<h2>Per node (the {min(len(nodes), NODES_SHOWN)} with most errors; "
        "all in metrics.json)</h2>"
    )
    parts.append(
        '<p class="note">errors = missed (its products mapped elsewhere) + wrongly here '
        "(other nodes' products mapped to it).</p>"
    )
    parts.append(
        _table(
            ["node", "path", "errors", "missed", "wrongly here", "precision", "recall", "F1",
             "gold products", "mapped products"],
            [
                [
                    n["node_id"],
                    n["path"],
                    n.get("errors", 0),
                    n.get("missed", 0),
                    n.get("wrongly_here", 0),
                    _number(n["precision"]),
                    _number(n["recall"]),
                    _number(n["f1"]),
                    n["support"],
                    n["predicted"],
                ]
                for n in nodes[:NODES_SHOWN]
            ],
            {2, 3, 4, 5, 6, 7, 8, 9},
        )
    )
    return parts


def write_report(report: dict[str, Any], out_dir: str | Path) -> tuple[Path, Path]:
    """Write ``report.html`` and ``metrics.json`` into a folder (created if needed).

    Returns:
        The two paths (HTML, JSON).
    """
    folder = Path(out_dir)
    folder.mkdir(parents=True, exist_ok=True)
    html_path = folder / "report.html"
    json_path = folder / "metrics.json"
    write_text_atomic(html_path, render_report_html(report))
    write_text_atomic(
        json_path, json.dumps(report, ensure_ascii=False, indent=2, sort_keys=False) + "\n"
    )
    return html_path, json_path
