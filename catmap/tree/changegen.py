"""Seeded random change sets on a category tree, to measure the tree diff on changes never seen.

:func:`generate_change_set` draws, from one seed, a round of changes a taxonomy team could make
to a tree, in the change log's own terms (:class:`catmap.tree.changelog.Change`), and replays
them to get the new tree:

- **renames** use a synonym from the node's own keywords, in English or another of its
  languages (the keyword's English neighbour when the node has one);
- **moves** give a leaf a new parent at the same depth (in its department or another);
- **splits** share a leaf's keywords among two or three new leaves beside it (the last part,
  sometimes, with words of its own only, as a real split often brings); each labelled
  product of the old leaf goes to the part whose keywords its title holds (the instance
  evidence: which product belongs where after the split);
- **merges** join two sibling leaves, into one of them or into a new leaf with both their words;
- **additions** are new leaves with invented words, alone or beside a word of the parent;
  **removals** retire a leaf, its products going to a sibling (or, unsaid, to the parent).

Each node is touched by one change at most, ids are never reused, and the result is a valid
tree (leaves keep their depth; no inner node is left without children).
"""

from __future__ import annotations

import random
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

from catmap.tree.changelog import Change, ChangeLog, apply_changes
from catmap.tree.search import fold_text
from catmap.tree.taxonomy import CategoryTree
from catmap.tree.treefile import LANGUAGES, Node

__all__ = ["ChangeSet", "ChangeSetSizes", "generate_change_set"]

# Syllables of the invented words that name added nodes (no real word, no brand).
_SYLLABLES = ("bra", "vel", "ton", "mi", "ska", "ru", "den", "lo", "qua", "fen", "sor", "ib")


@dataclass(frozen=True, slots=True)
class ChangeSetSizes:
    """How many changes of each kind one change set holds."""

    renames: int = 6
    moves: int = 5
    splits: int = 3
    merges: int = 3
    additions: int = 5
    removals: int = 4


@dataclass
class ChangeSet:
    """One generated round of changes.

    Attributes:
        seed: the seed it was drawn from.
        log: the changes, as a change log from the old tree's version to the new one's.
        new_tree: the old tree with the changes replayed.
        instances: product id -> the new node it belongs to, for the labelled products of split
            and merged leaves (a product of a split leaf whose title holds no part's keyword is
            left out: nothing says where it goes).
    """

    seed: int
    log: ChangeLog
    new_tree: CategoryTree
    instances: dict[str, str] = field(default_factory=dict)


class _Draw:
    """The state of one draw: the tree, the nodes already touched, the ids already used."""

    def __init__(self, tree: CategoryTree, rng: random.Random) -> None:
        self.tree = tree
        self.rng = rng
        self.touched: set[str] = set()
        self.used_ids = {int(n.id) for n in tree}
        self.children_left = {n.id: len(tree.children(n.id)) for n in tree}
        self.changes: list[Change] = []
        self.line = 2

    def free_leaves(self) -> list[Node]:
        return [
            n for n in self.tree
            if self.tree.is_leaf(n.id) and n.id not in self.touched and n.parent is not None
            and n.parent not in self.touched
        ]

    def new_id(self, near: str) -> str:
        # The department's block of ids (README: 500 per department), after its last used id.
        block = int(self.tree.department(near).id)
        candidate = max(i for i in self.used_ids if block <= i < block + 500) + 1
        while candidate in self.used_ids:
            candidate += 1
        self.used_ids.add(candidate)
        return str(candidate)

    def add(self, change: Change) -> None:
        self.changes.append(replace(change, line=self.line))
        self.line += 1 + len(change.nodes)

    def can_lose_child(self, parent: str | None) -> bool:
        return parent is not None and self.children_left.get(parent, 0) >= 2


def _words(node: Node, lang: str) -> list[str]:
    name = fold_text(node.name)
    return [t for t in node.terms.get(lang, ()) if fold_text(t) != name]


def _title(text: str) -> str:
    return text[:1].upper() + text[1:]


def _rename(draw: _Draw) -> bool:
    candidates = [n for n in draw.free_leaves() if len(_words(n, "en")) >= 2]
    if not candidates:
        return False
    node = draw.rng.choice(candidates)
    # The required languages only: a tree's extra ones would change what a seed draws.
    lang = draw.rng.choice(("en", "en", *[lg for lg in LANGUAGES if lg != "en"]))
    pool = _words(node, lang) or _words(node, "en")
    taken = {fold_text(s.name) for s in draw.tree.children(node.parent or "")}
    choices = [w for w in pool if fold_text(w) not in taken]
    if not choices:
        return False
    new_name = _title(draw.rng.choice(choices))
    if lang != "en":
        # A name in the node's other language, with its English synonym beside it.
        new_name = f"{new_name} ({_words(node, 'en')[0]})"
    draw.touched.add(node.id)
    draw.add(Change("rename", node.id, old=node.name, new=new_name))
    return True


def _move(draw: _Draw) -> bool:
    tree = draw.tree
    leaves = [n for n in draw.free_leaves() if draw.can_lose_child(n.parent)]
    if not leaves:
        return False
    node = draw.rng.choice(leaves)
    depth = len(tree.ancestors(node.id))
    parents = [
        p for p in tree
        if not tree.is_leaf(p.id) and p.id != node.parent and p.id not in draw.touched
        and len(tree.ancestors(p.id)) == depth - 1
        and fold_text(node.name) not in {fold_text(c.name) for c in tree.children(p.id)}
    ]
    if not parents:
        return False
    target = draw.rng.choice(parents)
    draw.touched.add(node.id)
    draw.children_left[node.parent or ""] -= 1
    draw.add(Change("move", node.id, old=node.parent or "-", new=target.id))
    return True


_Products = dict[str, list[tuple[str, str]]]


def _split(draw: _Draw, products: _Products, instances: dict[str, str]) -> bool:
    candidates = [
        n for n in draw.free_leaves()
        if len(_words(n, "en")) >= 4 and len(products.get(n.id, ())) >= 2
    ]
    if not candidates:
        return False
    node = draw.rng.choice(candidates)
    count = 3 if len(_words(node, "en")) >= 6 and draw.rng.random() < 0.4 else 2
    parts: list[Node] = []
    for index in range(count):
        terms = {
            lang: tuple(w for i, w in enumerate(_words(node, lang) or list(node.terms[lang]))
                        if i % count == index) or tuple(node.terms[lang][:1])
            for lang in node.terms
        }
        if index == count - 1 and draw.rng.random() < 0.4:
            # A part with words of its own, none of the old leaf's: found only by its place.
            word = _invented_word(draw.rng)
            terms = {lang: (word, f"{word} {lang}") for lang in node.terms}
        name = _title(terms["en"][0])
        parts.append(replace(node, id=draw.new_id(node.id), name=name, terms=terms))
    draw.touched.add(node.id)
    for product_id, title in products.get(node.id, ()):
        folded = fold_text(title)
        hits = [
            (sum(fold_text(t) in folded for t in p.terms["en"]), i) for i, p in enumerate(parts)
        ]
        best = max(hits)
        if best[0] > 0 and [h[0] for h in hits].count(best[0]) == 1:
            instances[product_id] = parts[best[1]].id
    draw.add(
        Change(
            "split",
            node.id,
            sources=(node.id,),
            targets=tuple(p.id for p in parts),
            nodes=tuple(parts),
        )
    )
    return True


def _merge(draw: _Draw, products: _Products, instances: dict[str, str]) -> bool:
    tree = draw.tree
    pairs = []
    for parent in tree:
        kids = [
            c.id for c in tree.children(parent.id)
            if tree.is_leaf(c.id) and c.id not in draw.touched
        ]
        if len(kids) >= 2 and parent.id not in draw.touched and draw.can_lose_child(parent.id):
            pairs.append(kids)
    if not pairs:
        return False
    first, second = draw.rng.sample(draw.rng.choice(pairs), 2)
    sources = (first, second)
    if draw.rng.random() < 0.5:
        target = first
        nodes: tuple[Node, ...] = ()
    else:
        a, b = tree[first], tree[second]
        terms = {
            lang: tuple(dict.fromkeys((*a.terms.get(lang, ()), *b.terms.get(lang, ()))))
            for lang in dict.fromkeys((*a.terms, *b.terms))
        }
        target = draw.new_id(first)
        nodes = (replace(a, id=target, name=f"{a.name} and {fold_text(b.name)}", terms=terms),)
    draw.touched.update(sources)
    draw.children_left[tree[first].parent or ""] -= 1
    for source in sources:
        for product_id, _title_text in products.get(source, ()):
            instances[product_id] = target
    draw.add(Change("merge", target, sources=sources, targets=(target,), nodes=nodes))
    return True


def _invented_word(rng: random.Random) -> str:
    return "".join(rng.choice(_SYLLABLES) for _ in range(3))


def _addition(draw: _Draw) -> bool:
    tree = draw.tree
    parents = [
        p for p in tree
        if not tree.is_leaf(p.id) and p.id not in draw.touched and p.parent is not None
        and 1 <= len(tree.ancestors(p.id)) <= 3
        and all(tree.is_leaf(c.id) for c in tree.children(p.id))
    ]
    if not parents:
        return False
    parent = draw.rng.choice(parents)
    word = _invented_word(draw.rng)
    languages = dict.fromkeys((*LANGUAGES, *tree.languages()))
    terms: dict[str, tuple[str, ...]]
    if draw.rng.random() < 0.5:
        name = word
        terms = {lang: (word, f"{word} {lang}") for lang in languages}
    else:
        # A new kind of the parent's things: the parent's word with a new one beside it.
        terms = {
            lang: (f"{word} {parent.terms[lang][0]}", word) if parent.terms.get(lang)
            else (word,)
            for lang in languages
        }
        name = terms["en"][0]
    node = Node(
        id=draw.new_id(parent.id),
        parent=parent.id,
        name=_title(name),
        audience=".",
        restriction=None,
        terms=terms,
    )
    draw.touched.add(node.id)
    draw.add(Change("add", node.id, targets=(node.id,), nodes=(node,)))
    return True


def _removal(draw: _Draw) -> bool:
    tree = draw.tree
    leaves = [n for n in draw.free_leaves() if draw.can_lose_child(n.parent)]
    if not leaves:
        return False
    node = draw.rng.choice(leaves)
    siblings = [
        c.id for c in tree.children(node.parent or "")
        if c.id != node.id and tree.is_leaf(c.id) and c.id not in draw.touched
    ]
    heir = draw.rng.choice(siblings) if siblings and draw.rng.random() < 0.7 else None
    draw.touched.add(node.id)
    if heir is not None:
        draw.touched.add(heir)
    draw.children_left[node.parent or ""] -= 1
    draw.add(Change("remove", node.id, new=heir))
    return True


def generate_change_set(
    tree: CategoryTree,
    seed: int,
    *,
    products: Sequence[tuple[str, str, str]] = (),
    sizes: ChangeSetSizes | None = None,
) -> ChangeSet:
    """Draw one round of changes on ``tree`` and replay it.

    Args:
        tree: the old tree.
        seed: the random seed (the same seed gives the same change set).
        products: labelled products (product id, title, node id on ``tree``): splits pick
            leaves that hold some, and their instances say where they go.
        sizes: how many changes of each kind (default: :class:`ChangeSetSizes`).

    Returns:
        The change set: its log, the new tree and the instance evidence.
    """
    sizes = sizes or ChangeSetSizes()
    rng = random.Random(seed)
    draw = _Draw(tree, rng)
    by_node: dict[str, list[tuple[str, str]]] = {}
    for product_id, title, node_id in products:
        by_node.setdefault(node_id, []).append((product_id, title))
    instances: dict[str, str] = {}
    plan = (
        ["split"] * sizes.splits + ["merge"] * sizes.merges + ["remove"] * sizes.removals
        + ["move"] * sizes.moves + ["rename"] * sizes.renames + ["add"] * sizes.additions
    )
    for kind in plan:
        for _attempt in range(20):
            if kind == "split":
                done = _split(draw, by_node, instances)
            elif kind == "merge":
                done = _merge(draw, by_node, instances)
            elif kind == "remove":
                done = _removal(draw)
            elif kind == "move":
                done = _move(draw)
            elif kind == "rename":
                done = _rename(draw)
            else:
                done = _addition(draw)
            if done:
                break
    new_version = str(int(tree.version) + 1)
    log = ChangeLog(str(tree.version), new_version, tuple(draw.changes), f"generated:{seed}")
    new_tree = apply_changes(tree, draw.changes, version=new_version, path=log.path)
    return ChangeSet(seed, log, new_tree, instances)
