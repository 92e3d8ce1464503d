"""Review decisions through a spreadsheet: export the queue to CSV, import the filled rows.

:func:`export_decisions` writes one row per review item: the open ones with empty columns for
the reviewer (``reviewer_node``, ``action``, ``brand``, ``who``, ``age``, ``note``), and the
decided ones with what was decided (``decided_*`` columns, for reference only). Cells are made
safe against formula injection.

:func:`import_decisions` applies the filled rows as decisions through the store (each one
audited). A row is bad when its item is unknown or already decided, its node is not in the tree,
its action / who / age is not one catmap knows, or the store refuses it; bad rows are counted,
reported with their line and reason, and written to a rejects CSV. Good rows are applied even
when others are bad. A row that moves a product to another node takes that node's restriction
flag and who / age applicability with it (:mod:`catmap.review.follow`), in the decision's
transaction; the row's own who / age are kept where they apply on that node.
"""

from __future__ import annotations

import csv
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from catmap.attributes import AttributeExtractor
from catmap.errors import InputError, StoreError, UnknownNode
from catmap.feeds.writers import CsvWriter
from catmap.records import AGE_VALUES, WHO_VALUES
from catmap.review.follow import NodeFollower
from catmap.store import DECISION_ACTIONS, NodeAttributes, Store, store_path
from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "DECISION_COLUMNS",
    "INPUT_COLUMNS",
    "BadRow",
    "ExportCounts",
    "ImportResult",
    "export_decisions",
    "export_project_decisions",
    "import_decisions",
    "import_project_decisions",
]

INPUT_COLUMNS = ("reviewer_node", "action", "brand", "who", "age", "note")
DECISION_COLUMNS = (
    "item_id",
    "feed",
    "product_id",
    "reason",
    "state",
    "title",
    "brand_in_feed",
    "retailer_path",
    "suggested_node",
    "suggested_path",
    "confidence",
    "alternatives",
    *INPUT_COLUMNS,
    "decided_action",
    "decided_node",
    "decided_by",
)
# Actions a spreadsheet row may carry; "skip" means nothing in a file: leave the row empty.
IMPORT_ACTIONS = tuple(a for a in DECISION_ACTIONS if a != "skip")
REJECT_COLUMNS = ("line", "item_id", "reason", *INPUT_COLUMNS)
# Bad rows kept in memory to show; all of them are streamed to the rejects file.
SHOWN_BAD_ROWS = 20
# SQLite's INTEGER is 64-bit signed: a longer item id can only be a typing mistake.
_LARGEST_ITEM_ID = 2**63 - 1
# Separators a spreadsheet may save a CSV with (a semicolon where the decimal mark is a comma).
_DELIMITERS = (",", ";", "\t", "|")


def _unquote(value: str) -> str:
    """Undo the formula-injection quote the export added ("'=x" → "=x")."""
    value = value.strip()
    if len(value) > 1 and value[0] == "'" and value[1] in "=+-@\t\r":
        return value[1:]
    return value


@dataclass
class ExportCounts:
    """What :func:`export_decisions` wrote."""

    path: Path
    open: int = 0
    done: int = 0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return {"path": str(self.path), "open": self.open, "done": self.done}


def _export_rows(store: Store, tree: CategoryTree, feed: str | None) -> Iterator[dict[str, str]]:
    decided = {d.item_id: d for d in store.decisions(feed)}
    for item in store.items(feed=feed):
        if item.state == "claimed" or item.withdrawn:
            # Claimed: someone is on it in the review screen right now; the sheet would race
            # them. Withdrawn: a later run settled it, nobody needs to decide it.
            continue
        view = store.review_item(item.id)
        node = view.mapping.node_id
        alternatives = "; ".join(
            f"{a.node_id} {tree.path_text(a.node_id) if a.node_id in tree else ''} "
            f"({a.confidence:.2f})"
            for a in view.mapping.alternatives
        )
        decision = decided.get(item.id)
        yield {
            "item_id": str(item.id),
            "feed": item.feed_name,
            "product_id": item.product_id,
            "reason": item.reason,
            "state": item.state,
            "title": view.title,
            "brand_in_feed": view.brand,
            "retailer_path": view.retailer_path,
            "suggested_node": node,
            "suggested_path": tree.path_text(node) if node and node in tree else "",
            "confidence": f"{view.mapping.confidence:.3f}",
            "alternatives": alternatives,
            **{column: "" for column in INPUT_COLUMNS},
            "decided_action": decision.action if decision else "",
            "decided_node": (decision.to_node or "") if decision else "",
            "decided_by": decision.reviewer if decision else "",
        }


def export_decisions(
    store: Store, out: str | Path, *, tree: CategoryTree, feed: str | None = None
) -> ExportCounts:
    """Write the review queue (open and decided items) to a CSV for reviewers.

    Args:
        store: the open project store.
        out: the CSV file (created or replaced, UTF-8).
        tree: the category tree (for node paths).
        feed: only this feed's items (default: every feed).

    Returns:
        How many open and decided items were written.
    """
    path = Path(out)
    path.parent.mkdir(parents=True, exist_ok=True)
    counts = ExportCounts(path)
    with CsvWriter(path, DECISION_COLUMNS, lambda row: [row[c] for c in DECISION_COLUMNS]) as w:
        for row in _export_rows(store, tree, feed):
            w.write(row)
            if row["state"] == "done":
                counts.done += 1
            else:
                counts.open += 1
    return counts


@dataclass(frozen=True, slots=True)
class BadRow:
    """A row that was not applied, and why."""

    line: int
    item_id: str
    reason: str
    values: dict[str, str]


@dataclass
class ImportResult:
    """What :func:`import_decisions` did."""

    rows: int = 0
    applied: int = 0
    empty: int = 0
    by_action: dict[str, int] = field(default_factory=dict)
    bad: list[BadRow] = field(default_factory=list)
    bad_count: int = 0
    rejects_file: Path | None = None
    # What each feed's audit check said after the import (catmap.jobs.audit).
    audit_checks: list[dict[str, Any]] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values (the first bad rows; all are in the file)."""
        return {
            "rows": self.rows,
            "applied": self.applied,
            "empty": self.empty,
            "bad": self.bad_count,
            "by_action": self.by_action,
            "bad_rows": [
                {"line": b.line, "item_id": b.item_id, "reason": b.reason} for b in self.bad
            ],
            "rejects_file": str(self.rejects_file) if self.rejects_file else None,
            "audit_checks": self.audit_checks,
        }


def _check_row(
    values: dict[str, str], store: Store, tree: CategoryTree
) -> tuple[int, str, str | None, dict[str, str | None]] | str:
    """Return (item id, action, node, corrections) or the reason the row is bad."""
    raw_id = values.get("item_id", "")
    # isdigit() alone also takes superscripts and other scripts' digits, which int() refuses.
    if not (raw_id.isascii() and raw_id.isdigit()):
        return f"item_id '{raw_id}' is not a number"
    item_id = int(raw_id)
    if item_id > _LARGEST_ITEM_ID:
        return f"item_id '{raw_id}' is too long to be a review item"
    try:
        view = store.review_item(item_id)
    except StoreError:
        return f"no review item {item_id} in the store"
    if view.item.withdrawn:
        return f"item {item_id} was withdrawn ({view.item.withdrawn_reason})"
    if view.item.state == "done":
        return f"item {item_id} is already decided"
    node = values.get("reviewer_node", "") or None
    action = values.get("action", "").lower() or None
    if node is not None and node not in tree:
        if ">" not in node:
            return f"node '{node}' is not in the category tree (version {tree.version})"
        # A path of names ("Garden > Tools > Spades"), as the suggested_path column shows
        # them: a specialist copies a path more readily than an id.
        try:
            node = tree.find_path(node).id
        except UnknownNode as error:
            return f"node path '{node}' is not in the category tree (version {tree.version}): " + (
                f"{error.message}; {error.hint}" if error.hint else error.message
            )
    if action is None:
        # A node alone means "this node": accept when it is the suggestion, else choose it.
        if node is not None:
            action = "accept" if node == view.mapping.node_id else "choose"
        else:
            action = "fix_attributes"
    if action not in IMPORT_ACTIONS:
        return f"action '{action}' is not one of {', '.join(IMPORT_ACTIONS)}"
    if action == "choose" and node is None:
        return "action 'choose' needs a reviewer_node"
    if action in ("accept", "no_fit", "fix_attributes") and node is not None:
        if node != view.mapping.node_id:
            return f"action '{action}' with reviewer_node {node}: use 'choose' to change the node"
    who = values.get("who", "").lower() or None
    age = values.get("age", "").lower() or None
    if who is not None and who not in WHO_VALUES:
        return f"who '{who}' is not one of {', '.join(WHO_VALUES)}"
    if age is not None and age not in AGE_VALUES:
        return f"age '{age}' is not one of {', '.join(AGE_VALUES)}"
    brand = values.get("brand", "") or None
    if action == "fix_attributes" and who is None and age is None and brand is None:
        return "nothing to apply"
    return item_id, action, node if action == "choose" else None, {
        "brand": brand,
        "who": who,
        "age": age,
    }


def _reject_cells(bad: BadRow) -> list[str]:
    return [str(bad.line), bad.item_id, bad.reason, *(bad.values.get(c, "") for c in INPUT_COLUMNS)]


def _check_encoding(source: Path, encoding: str) -> None:
    """Refuse a file that is not in ``encoding`` before any row is applied, naming the line.

    Reads the file in blocks (flat memory), so a long file costs one quick extra pass.
    """
    import codecs

    try:
        decoder = codecs.getincrementaldecoder(encoding)()
    except LookupError:
        raise InputError(f"unknown encoding '{encoding}'", path=source) from None
    line = 1
    with source.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            try:
                decoder.decode(block)
            except UnicodeDecodeError as error:
                line += block[: error.start].count(b"\n")
                shown = "UTF-8" if encoding == "utf-8-sig" else encoding
                raise InputError(
                    f"the decisions file is not {shown} text (byte {block[error.start]:#04x})",
                    path=source,
                    line=line,
                    hint="save it as 'CSV UTF-8', or give its encoding, e.g. --encoding cp1252",
                ) from None
            line += block.count(b"\n")
        try:
            decoder.decode(b"", final=True)
        except UnicodeDecodeError:
            shown = "UTF-8" if encoding == "utf-8-sig" else encoding
            raise InputError(
                f"the decisions file ends in the middle of a {shown} character",
                path=source,
                line=line,
                hint="save it again as 'CSV UTF-8'",
            ) from None


def _delimiter(header: str) -> str:
    """The separator of a header line: the candidate it holds most of (a comma when none)."""
    counts = {d: header.count(d) for d in _DELIMITERS}
    best = max(_DELIMITERS, key=lambda d: counts[d])
    return best if counts[best] else ","


def import_decisions(
    store: Store,
    path: str | Path,
    *,
    tree: CategoryTree,
    reviewer: str,
    rejects: str | Path | None = None,
    extractor: AttributeExtractor | None = None,
    encoding: str = "utf-8",
) -> ImportResult:
    """Apply the filled rows of a decisions CSV through the store.

    Rows whose input columns are all empty are skipped (counted as ``empty``). Each other row
    is validated and applied as one audited decision; a bad row is reported and written to the
    rejects CSV (default: ``<file stem>.rejects.csv`` beside the file) with its line and reason,
    as it is met (the first :data:`SHOWN_BAD_ROWS` are also kept in the result).

    The separator is read from the header (comma, semicolon, tab or bar: spreadsheets save a
    semicolon where the decimal mark is a comma); a byte-order mark is ignored.

    Args:
        store: the open project store.
        path: the CSV (as :func:`export_decisions` wrote it, filled in).
        tree: the category tree node ids are checked against.
        reviewer: who the decisions are recorded for.
        rejects: where to write the bad rows.
        extractor: the attribute extractor on ``tree``, used to read who / age again for a
            chosen node (default: one with no brand dictionary).
        encoding: the file's text encoding.

    Returns:
        Counts, and the first bad rows with their line and reason.

    Raises:
        InputError: the file cannot be read, is not in ``encoding``, or lacks the ``item_id``
            column.
    """
    source = Path(path)
    result = ImportResult()
    follower = NodeFollower(tree, extractor=extractor)
    target = Path(rejects) if rejects else source.with_name(f"{source.stem}.rejects.csv")
    writer: CsvWriter | None = None
    # utf-8-sig reads a file with or without the byte-order mark spreadsheets put first.
    encoding = "utf-8-sig" if encoding.lower().replace("_", "-") in ("utf-8", "utf8") else encoding
    try:
        _check_encoding(source, encoding)
        handle = source.open(encoding=encoding, newline="")
    except OSError as error:
        raise InputError(f"cannot read the decisions file: {error.strerror}", path=source) from None

    def reject(bad: BadRow) -> None:
        nonlocal writer
        if writer is None:
            writer = CsvWriter(target, REJECT_COLUMNS, _reject_cells)
        writer.write(bad)
        result.bad_count += 1
        if len(result.bad) < SHOWN_BAD_ROWS:
            result.bad.append(bad)

    try:
        with handle:
            reader = csv.DictReader(handle, delimiter=_delimiter(handle.readline()))
            handle.seek(0)
            reader.fieldnames = [
                name.lstrip("\ufeff").strip() for name in (reader.fieldnames or [])
            ]
            header = reader.fieldnames
            if "item_id" not in header:
                raise InputError(
                    "the decisions file has no 'item_id' column",
                    path=source,
                    line=1,
                    field="item_id",
                    hint=f"columns found: {', '.join(header) or 'none'}; "
                    "start from `catmap decisions export`",
                )
            for raw in reader:
                line = reader.line_num
                values = {k: _unquote(v or "") for k, v in raw.items() if k is not None}
                if not any(values.get(c) for c in INPUT_COLUMNS):
                    result.empty += 1
                    continue
                result.rows += 1
                checked = _check_row(values, store, tree)
                if isinstance(checked, str):
                    reject(BadRow(line, values.get("item_id", ""), checked, values))
                    continue
                item_id, action, node, corrections = checked
                who, age = corrections["who"], corrections["age"]
                follow: NodeAttributes | None = None
                try:
                    if action == "choose" and node is not None:
                        item = store.item(item_id)
                        stored = store.mapping(item.feed_id, item.product_id)
                        if stored.mapping.node_id != node:
                            product = store.product(item.feed_id, item.product_id)
                            follow = follower.node_attributes(product, stored, node)
                            who, age = follower.reviewer_values(node, who, age)
                    store.decide(
                        item_id,
                        reviewer,
                        action,
                        node_id=node,
                        brand=corrections["brand"],
                        who=who,
                        age=age,
                        note=values.get("note", ""),
                        node_attributes=follow,
                    )
                except (StoreError, ValueError) as error:
                    message = error.message if isinstance(error, StoreError) else str(error)
                    reject(BadRow(line, str(item_id), message, values))
                    continue
                result.applied += 1
                result.by_action[action] = result.by_action.get(action, 0) + 1
    except csv.Error as error:
        raise InputError(
            f"the decisions file cannot be read as CSV: {error}",
            path=source,
            line=reader.line_num + 1,
            hint="save it again from the spreadsheet as CSV",
        ) from None
    finally:
        # Every bad row met so far reaches the rejects file, even when the import stops.
        if writer is not None:
            writer.close()
            result.rejects_file = target
    store.record_event(
        "decisions_import",
        reviewer,
        detail={"file": str(source), "applied": result.applied, "bad": result.bad_count},
    )
    return result


def export_project_decisions(
    project: str | Path, out: str | Path, *, feed: str | None = None
) -> ExportCounts:
    """Write a project's review queue to a CSV (see :func:`export_decisions`).

    Node paths are read on the tree version of the store's mappings (refused when the store
    mixes versions).
    """
    from catmap.jobs._project_tree import check_store_tree
    from catmap.jobs._remap_versions import project_store_tree

    with Store.open(store_path(project)) as store:
        tree = project_store_tree(project, store, "export the decisions")
        check_store_tree(store, tree)
        return export_decisions(store, out, tree=tree, feed=feed)


def import_project_decisions(
    project: str | Path,
    path: str | Path,
    *,
    reviewer: str,
    rejects: str | Path | None = None,
    encoding: str = "utf-8",
) -> ImportResult:
    """Apply a filled decisions CSV to a project's store (see :func:`import_decisions`).

    Node ids are checked against the tree version of the store's mappings (refused when the
    store mixes versions), and who / age are read again with the project's brand dictionary.
    """
    from catmap.jobs._project_tree import check_store_tree
    from catmap.jobs._remap_versions import project_store_tree
    from catmap.jobs.audit import check_feed_audit
    from catmap.jobs.onboard import load_extractor

    with Store.open(store_path(project)) as store:
        tree = project_store_tree(project, store, "import decisions")
        check_store_tree(store, tree)
        result = import_decisions(
            store,
            path,
            tree=tree,
            reviewer=reviewer,
            rejects=rejects,
            extractor=load_extractor(project, tree),
            encoding=encoding,
        )
        # The audit samples just decided may put a feed over its target: act on it now.
        result.audit_checks = [
            check_feed_audit(store, record.name, actor=reviewer) for record in store.feeds()
        ]
        return result
