"""Per-feed rules a team writes, applied before the model.

A rules file is plain UTF-8 text, one rule per line; ``#`` starts a comment (outside quotes
and slashes); blank lines are ignored::

    # retailer paths we trust
    path contains "Bottines" => 1511
    title matches /\\bespresso\\b/i and brand is "Kavako" => 4058
    title contains "gift card" and not path contains "Toys" => 8723

A condition is ``FIELD OPERATOR VALUE``, optionally preceded by ``not``; conditions are joined by
``and``. Fields: ``title``, ``path`` (the retailer category path, levels joined by " > "),
``brand``, ``description``, ``id``. Operators: ``contains "text"`` and ``is "text"``
(case-insensitive), ``starts with "text"``, ``matches /regex/flags`` (flags: ``i``). Text values
are double-quoted (``\\"`` for a quote). After ``=>`` comes the node id. The full reference,
with an example of each operator: ``docs/rules.md``.

The first matching rule in file order wins; a product also matched by a later rule pointing to
another node is a conflict, reported with both rules' lines.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from catmap.errors import InputError
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree

__all__ = ["FIELDS", "Rule", "RuleMatch", "RuleSet", "load_rules", "parse_rules"]

FIELDS = ("title", "path", "brand", "description", "id")
_HINT = 'rules look like: path contains "Bottines" => 1511 (the syntax: docs/rules.md)'

_TOKEN = re.compile(
    r"""\s*(?:
        (?P<string>"(?:[^"\\]|\\.)*")
      | (?P<regex>/(?:[^/\\]|\\.)*/[a-z]*)
      | (?P<arrow>=>)
      | (?P<word>[A-Za-z_][A-Za-z_]*|\d+)
      | (?P<comment>\#.*)
      | (?P<other>\S)
    )""",
    re.VERBOSE,
)


@dataclass(frozen=True, slots=True)
class Condition:
    """One test of a rule: field, operator, value, maybe negated."""

    field: str
    operator: str
    value: str
    negated: bool
    test: Callable[[str], bool]

    def __call__(self, values: dict[str, str]) -> bool:
        return self.test(values[self.field]) != self.negated


@dataclass(frozen=True, slots=True)
class Rule:
    """One line of a rules file."""

    line: int
    text: str
    node_id: str
    conditions: tuple[Condition, ...]

    def matches(self, values: dict[str, str]) -> bool:
        """Whether every condition holds for a product's field values."""
        return all(condition(values) for condition in self.conditions)


@dataclass(frozen=True, slots=True)
class RuleMatch:
    """The rule that decides a product, and the later rules that disagree with it."""

    rule: Rule
    conflicts: tuple[Rule, ...] = ()

    @property
    def reason(self) -> str:
        """The text recorded as the mapping's reason."""
        return f"rule line {self.rule.line}: {self.rule.text}"


def _values(product: Product) -> dict[str, str]:
    return {
        "title": product.title,
        "path": " > ".join(product.category_path),
        "brand": product.brand,
        "description": product.description,
        "id": product.product_id,
    }


@dataclass
class RuleSet:
    """Rules in file order, and counts of what they did.

    Attributes:
        rules: the rules.
        path: the file they came from.
        matched: rule line -> products it decided.
        conflicts: number of products matched by rules pointing to different nodes.
        conflict_examples: (product id, deciding rule line, disagreeing rule lines), first few.
    """

    rules: list[Rule]
    path: str | None = None
    matched: dict[int, int] = field(default_factory=dict)
    conflicts: int = 0
    conflict_examples: list[tuple[str, int, list[int]]] = field(default_factory=list)

    def __len__(self) -> int:
        return len(self.rules)

    def match(self, product: Product) -> RuleMatch | None:
        """Return the first matching rule (and later disagreeing ones), counted; None if none."""
        if not self.rules:
            return None
        values = _values(product)
        first: Rule | None = None
        disagreeing: list[Rule] = []
        for rule in self.rules:
            if not rule.matches(values):
                continue
            if first is None:
                first = rule
            elif rule.node_id != first.node_id:
                disagreeing.append(rule)
        if first is None:
            return None
        self.matched[first.line] = self.matched.get(first.line, 0) + 1
        if disagreeing:
            self.conflicts += 1
            if len(self.conflict_examples) < 20:
                self.conflict_examples.append(
                    (product.product_id, first.line, [r.line for r in disagreeing])
                )
        return RuleMatch(first, tuple(disagreeing))


def _text_test(operator: str, value: str) -> Callable[[str], bool]:
    folded = value.casefold()
    if operator == "contains":
        return lambda text: folded in text.casefold()
    if operator == "is":
        return lambda text: text.casefold().strip() == folded.strip()
    return lambda text: text.casefold().startswith(folded)


def _parse_line(text: str, line: int, path: str | None, tree: CategoryTree | None) -> Rule | None:
    tokens: list[tuple[str, str]] = []
    position = 0
    while position < len(text):
        found = _TOKEN.match(text, position)
        if found is None or found.end() == position:
            break
        position = found.end()
        kind = found.lastgroup or ""
        if kind == "comment":
            break
        tokens.append((kind, found.group(kind)))
    if not tokens:
        return None

    def fail(message: str) -> InputError:
        return InputError(message, path=path, line=line, hint=_HINT)

    def expect_word(i: int, *words: str) -> str:
        if i >= len(tokens) or tokens[i][0] != "word" or tokens[i][1].lower() not in words:
            got = tokens[i][1] if i < len(tokens) else "the end of the line"
            raise fail(f"expected {' or '.join(repr(w) for w in words)}, found {got!r}")
        return tokens[i][1].lower()

    conditions: list[Condition] = []
    i = 0
    while True:
        negated = False
        if i < len(tokens) and tokens[i] == ("word", "not"):
            negated, i = True, i + 1
        name = expect_word(i, *FIELDS)
        i += 1
        operator = expect_word(i, "contains", "is", "starts", "matches")
        i += 1
        if operator == "starts":
            expect_word(i, "with")
            i += 1
        if i >= len(tokens):
            raise fail(f"'{operator}' needs a value")
        kind, raw = tokens[i]
        i += 1
        if operator == "matches":
            if kind != "regex":
                raise fail("'matches' needs a /regular expression/, e.g. /\\bespresso\\b/i")
            body, _, flags = raw[1:].rpartition("/")
            if set(flags) - {"i"}:
                raise fail(f"unknown regular expression flag(s) {flags!r}; only 'i' is allowed")
            try:
                pattern = re.compile(body.replace("\\/", "/"), re.IGNORECASE if "i" in flags else 0)
            except re.error as error:
                raise fail(f"bad regular expression {raw}: {error}") from None

            def test(text: str, p: re.Pattern[str] = pattern) -> bool:
                return p.search(text) is not None

            value = raw
        else:
            if kind != "string":
                raise fail(f"'{operator}' needs a double-quoted text, found {raw!r}")
            value = re.sub(r"\\(.)", r"\1", raw[1:-1])
            if not value:
                raise fail("an empty text matches everything; write the words to look for")
            test = _text_test(operator, value)  # type: ignore[assignment]
        conditions.append(Condition(name, operator, value, negated, test))
        if i < len(tokens) and tokens[i] == ("word", "and"):
            i += 1
            continue
        break
    if i >= len(tokens) or tokens[i][0] != "arrow":
        got = tokens[i][1] if i < len(tokens) else "the end of the line"
        raise fail(f"expected 'and' or '=>' followed by a node id, found {got!r}")
    i += 1
    if i >= len(tokens) or tokens[i][0] != "word" or not tokens[i][1].isdigit():
        raise fail("'=>' must be followed by a node id (digits)")
    node_id = tokens[i][1]
    if i + 1 < len(tokens):
        raise fail(f"unexpected {tokens[i + 1][1]!r} after the node id")
    if tree is not None and node_id not in tree:
        raise fail(f"node {node_id} is not in tree version {tree.version}")
    clean = text.split("=>")[0].strip()
    return Rule(line, f"{clean} => {node_id}", node_id, tuple(conditions))


def parse_rules(text: str, *, path: str | None = None, tree: CategoryTree | None = None) -> RuleSet:
    """Parse the text of a rules file.

    Args:
        text: the file's text.
        path: the file name, for error messages.
        tree: when given, every node id must be in it.

    Returns:
        The rules, in file order.

    Raises:
        InputError: a line that is not a rule, naming the file and line.
    """
    rules = []
    for number, line in enumerate(text.splitlines(), start=1):
        rule = _parse_line(line, number, path, tree)
        if rule is not None:
            rules.append(rule)
    return RuleSet(rules, path)


def load_rules(path: str | Path, *, tree: CategoryTree | None = None) -> RuleSet:
    """Read and parse a rules file.

    Raises:
        InputError: the file cannot be read or has a bad line.
    """
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"the rules file cannot be read: {error}", path=path) from None
    return parse_rules(text, path=str(path), tree=tree)


def match_all(rules: RuleSet, products: Sequence[Product]) -> list[RuleMatch | None]:
    """Match each product (see :meth:`RuleSet.match`)."""
    return [rules.match(product) for product in products]
