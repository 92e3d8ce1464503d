"""Per-feed rules: parsing, errors naming the line, first-rule-wins and conflicts."""

from __future__ import annotations

from pathlib import Path

import pytest

from catmap.classify.rules import load_rules, parse_rules
from catmap.errors import InputError
from catmap.records import Product
from catmap.tree.taxonomy import load_tree
from tests._classify_fixtures import write_tree

RULES = """# trusted retailer paths
path contains "Bottines" => 1101

title matches /\\bespresso\\b/i and not brand is "Quintaro" => 2101   # machines
title starts with "tongs" => 1201
title contains "boot" => 1102
"""


def product(title: str, path: tuple[str, ...] = (), brand: str = "") -> Product:
    return Product(product_id="p1", title=title, category_path=path, brand=brand)


def test_parses_rules_in_file_order_with_their_lines() -> None:
    rules = parse_rules(RULES)
    assert [(r.line, r.node_id) for r in rules.rules] == [
        (2, "1101"),
        (4, "2101"),
        (5, "1201"),
        (6, "1102"),
    ]


def test_conditions_and_negation() -> None:
    rules = parse_rules(RULES)
    assert rules.match(product("Velmora ESPRESSO maker"))
    match = rules.match(product("Velmora Espresso maker", brand="quintaro"))
    assert match is None
    match = rules.match(product("Tongs de plage"))
    assert match is not None and match.rule.node_id == "1201"


def test_first_rule_wins_and_conflict_is_counted_with_lines() -> None:
    rules = parse_rules(RULES)
    match = rules.match(product("Leather boot", ("Femmes", "Bottines")))
    assert match is not None
    assert match.rule.line == 2
    assert [r.line for r in match.conflicts] == [6]
    assert "rule line 2" in match.reason
    assert rules.conflicts == 1
    assert rules.conflict_examples == [("p1", 2, [6])]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ('title has "x" => 1101', "expected 'contains'"),
        ("title contains x => 1101", "double-quoted"),
        ('title contains "x" 1101', "'=>'"),
        ("title matches /(/ => 1101", "bad regular expression"),
        ("title matches /x/g => 1101", "flag"),
        ('colour contains "x" => 1101', "expected 'title'"),
        ('title contains "x" => 9999', "not in tree"),
        ('title contains "" => 1101', "empty text"),
    ],
)
def test_errors_name_file_and_line(tmp_path: Path, text: str, message: str) -> None:
    tree = load_tree(write_tree(tmp_path))
    path = tmp_path / "shop.rules"
    path.write_text("# ok\n\n" + text + "\n", encoding="utf-8")
    with pytest.raises(InputError, match=message) as error:
        load_rules(path, tree=tree)
    assert error.value.line == 3
    assert error.value.path == str(path)
