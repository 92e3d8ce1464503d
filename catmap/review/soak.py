"""A seeded random soak of reviewers sharing one queue, and the checks it must pass.

Two (or more) :class:`~catmap.review.session.ReviewSession` take turns at random: accept,
choose another node, no fit, undo, settle a group, skip, correct who / age, quit and come back.
A shared fake clock moves on between actions, so leases run out and items change hands; now and
then a product gets another reason to be reviewed (a brand conflict or an audit sample), which
must join its waiting item or open a new one once it was decided. Refusals (an undo that would
discard another reviewer's decision, an item another reviewer holds) are counted, not errors.

:func:`check_store` then reads the store and lists every broken promise:

- every live decision is reflected in its mapping (the newest live decision of a product gives
  its node, and the mapping is ``reviewed``); a product without a live decision is not
  ``reviewed``;
- no item is decided twice (at most one live decision per item, skips aside);
- at most one item waits per product;
- the training examples are exactly the reviewed products with a node.

Used by ``tests/test_review.py`` (a short run) and ``benchmarks/soak_review.py`` (a long one).
No textual import: the sessions are driven directly.
"""

from __future__ import annotations

import random
from collections import Counter, deque
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from pathlib import Path

from catmap.errors import CatmapError
from catmap.records import AGE_VALUES, WHO_VALUES, Alternative, Attributes, Mapping, Product
from catmap.review.session import ReviewSession
from catmap.store import MappedRow, Store
from catmap.tree.taxonomy import CategoryTree, load_default_tree

SOAK_FEED = "shop-soak"

# Leaf nodes of the shared tree, version 1 (clothing, shoes and a restricted one).
SOAK_NODES = ("1511", "1512", "1533", "1011", "1016", "1013", "1051", "1053", "1054", "8211")

ACTIONS = (
    "accept",
    "choose",
    "no_fit",
    "undo",
    "group",
    "skip",
    "who_age",
    "quit",
    "requeue",
)
# How often each action is drawn (relative weights, common practice for a soak: the everyday
# keys most, the rarer ones often enough to meet each other).
ACTION_WEIGHTS = (30, 14, 3, 14, 3, 10, 6, 3, 12)


class SoakClock:
    """A clock shared by the store and the sessions, moved on by the soak."""

    def __init__(self) -> None:
        self.now = datetime(2026, 1, 1, 9, 0, tzinfo=UTC)

    def __call__(self) -> datetime:
        return self.now

    def advance(self, seconds: float) -> None:
        self.now += timedelta(seconds=seconds)


@dataclass
class SoakReport:
    """What a soak did and what :func:`check_store` found.

    Attributes:
        actions: actions taken, by name.
        refused: actions the store or session refused with a :class:`CatmapError`, by name.
        idle: actions that found nothing to review (the queue was empty for that reviewer).
        decisions: live decisions at the end (skips aside).
        undone: decisions undone.
        products: products in the store.
        problems: every broken promise found (empty when all hold).
    """

    actions: Counter[str] = field(default_factory=Counter)
    refused: Counter[str] = field(default_factory=Counter)
    idle: int = 0
    decisions: int = 0
    undone: int = 0
    products: int = 0
    problems: list[str] = field(default_factory=list)

    @property
    def total(self) -> int:
        """Actions taken in all."""
        return sum(self.actions.values())


def soak_rows(products: int, *, groups: int, seed: int) -> list[MappedRow]:
    """Invented products spread over retailer categories, all queued (some with a conflict)."""
    draw = random.Random(seed)
    rows = []
    for index in range(products):
        group = index % groups
        node = SOAK_NODES[group % len(SOAK_NODES)]
        others = [n for n in SOAK_NODES if n != node]
        alternatives = tuple(Alternative(n, 0.3 / (k + 1)) for k, n in enumerate(others[:3]))
        product = Product(
            product_id=f"SK-{index:05d}",
            title=f"Ralvendo soak product {index}",
            brand="Ralvendo",
            category_path=("Soak", f"Group {group:02d}"),
            price=Decimal("10.00"),
            currency="EUR",
        )
        reasons: tuple[str, ...] = ("low_confidence",)
        if draw.random() < 0.1:
            reasons = ("low_confidence", "brand_conflict")
        rows.append(
            MappedRow(
                product=product,
                mapping=Mapping(node, 0.5, "model", alternatives),
                attributes=Attributes(
                    brand="Ralvendo", brand_confidence=0.9, brand_status="dictionary"
                ),
                status="queued",
                group_key=" > ".join(product.category_path),
                priority=draw.random(),
                reasons=reasons,
            )
        )
    return rows


def build_soak_store(store: Store, products: int, *, groups: int, seed: int) -> None:
    """Fill ``store`` with the soak's feed, products and queue."""
    feed = store.add_feed(SOAK_FEED, source_path=f"{SOAK_FEED}.csv")
    run = store.start_run("onboard", feed=feed)
    rows = soak_rows(products, groups=groups, seed=seed)
    store.save_mapped(feed, run, rows, model_version="soak", tree_version="1")
    store.finish_run(run, summary={"read": len(rows), "kept": len(rows), "rejected": 0})


def run_soak(
    stores: list[Store],
    *,
    actions: int,
    seed: int,
    clock: SoakClock,
    reviewers: tuple[str, ...] = ("ana", "bo"),
    tree: CategoryTree | None = None,
    on_action: Callable[[int], None] | None = None,
) -> SoakReport:
    """Let ``reviewers`` take ``actions`` random actions in turn; return what was done.

    Args:
        stores: one open store per reviewer (the same object for all, or one per reviewer on
            the same file, as separate processes would have).
        actions: how many actions in all.
        seed: the random seed (the same seed replays the same run).
        clock: the clock the stores were opened with.
        reviewers: the reviewers' names.
        tree: the category tree (default: the shared tree, version 1).
        on_action: called with the number of actions done after each one.

    Returns:
        The report, with the checks of :func:`check_store` already run.
    """
    draw = random.Random(seed)
    tree = tree or load_default_tree(1)
    stores = stores * len(reviewers) if len(stores) == 1 else stores
    sessions = [
        ReviewSession(store, name, tree=tree, clock=clock)
        for store, name in zip(stores, reviewers, strict=True)
    ]
    report = SoakReport()
    products = sum(1 for _ in stores[0].mappings(SOAK_FEED))
    recent: deque[str] = deque(maxlen=8)
    for done in range(actions):
        turn = draw.randrange(len(sessions))
        session = sessions[turn]
        action = draw.choices(ACTIONS, ACTION_WEIGHTS)[0]
        report.actions[action] += 1
        try:
            if not _act(session, action, draw, products, recent):
                report.idle += 1
        except CatmapError:
            report.refused[action] += 1
            session.current = None  # read the queue again, as the screen does
        if action == "quit":
            session.close()
            sessions[turn] = ReviewSession(stores[turn], session.reviewer, tree=tree, clock=clock)
        # Mostly seconds between keys; now and then a long pause that lets a lease run out.
        clock.advance(draw.choice((2, 5, 20, 60)) if draw.random() > 0.02 else 900)
        if on_action is not None:
            on_action(done + 1)
    for session in sessions:
        session.close()
    check_store(stores[0], report)
    return report


def _act(
    session: ReviewSession,
    action: str,
    draw: random.Random,
    products: int,
    recent: deque[str],
) -> bool:
    """One reviewer's action (the item on screen is claimed first when there is none).

    Returns:
        False when there was nothing to act on (an empty queue).
    """
    store = session.store
    if action == "requeue":
        # Another reason for a product: joins its waiting item, or opens one if decided.
        # Mostly a product just decided, so that the reviewers meet on the same products.
        if recent and draw.random() < 0.7:
            product_id = draw.choice(recent)
        else:
            product_id = f"SK-{draw.randrange(products):05d}"
        reason = draw.choice(("brand_conflict", "audit_sample"))
        store.enqueue(SOAK_FEED, product_id, reason, priority=draw.random())
        return True
    if action == "undo":
        return bool(session.undo())
    if action == "quit":
        return True
    if session.current is None:
        session.next()
    else:
        session.refresh()  # another reviewer may have moved it on
    view = session.current
    if view is None:
        return False
    if action in ("accept", "choose", "no_fit", "group"):
        recent.append(view.product.product_id)
    if action == "accept":
        session.accept()
    elif action == "choose":
        session.choose(draw.choice(SOAK_NODES))
    elif action == "no_fit":
        session.no_fit()
    elif action == "group" and not view.item.group_key:
        session.accept()  # no retailer category: no group to decide
    elif action == "group":
        node = draw.choice((None, *SOAK_NODES))
        if node is None and not view.mapping.node_id:
            node = draw.choice(SOAK_NODES)
        session.decide_group(node)
    elif action == "skip":
        session.skip()
    elif action == "who_age":
        session.set_who(draw.choice(WHO_VALUES))
        session.set_age(draw.choice(AGE_VALUES))
    return True


def check_store(store: Store, report: SoakReport) -> SoakReport:
    """Check the store's promises after a soak; add what is broken to ``report.problems``."""
    problems = report.problems
    decisions = store.decisions()
    live = [d for d in decisions if d.action != "skip"]
    report.decisions = len(live)
    report.undone = len(store.decisions(include_undone=True)) - len(decisions)
    per_item = Counter(d.item_id for d in live)
    for item_id, count in sorted(per_item.items()):
        if count > 1:
            problems.append(f"item {item_id} has {count} live decisions")
    newest: dict[tuple[int, str], str] = {}
    for decision in live:  # in decision order: the last one of a product wins
        newest[(decision.feed_id, decision.product_id)] = decision.to_node or ""
    waiting = Counter(
        (i.feed_id, i.product_id) for i in store.items() if i.state != "done"
    )
    for key, count in sorted(waiting.items()):
        if count > 1:
            problems.append(f"product {key[1]} has {count} waiting items")
    expected_training: set[tuple[int, str]] = set()
    report.products = 0
    for product, stored in store.mappings(SOAK_FEED):
        report.products += 1
        key = (stored.feed_id, product.product_id)
        if key in newest:
            node = newest[key]
            if stored.status != "reviewed" or stored.mapping.node_id != node:
                problems.append(
                    f"product {product.product_id}: newest live decision says {node!r}, the "
                    f"mapping is {stored.mapping.node_id!r} ({stored.status})"
                )
            if node:
                expected_training.add(key)
        elif stored.status == "reviewed":
            problems.append(f"product {product.product_id} is reviewed without a live decision")
    training = {(t.feed_id, t.product.product_id) for t in store.training_examples()}
    if training != expected_training:
        problems.append(
            f"training examples differ: {len(training - expected_training)} extra, "
            f"{len(expected_training - training)} missing"
        )
    return report


def soak_file_stores(
    folder: Path, *, products: int, groups: int, seed: int, reviewers: int, clock: SoakClock
) -> list[Store]:
    """One store file, opened once per reviewer (as separate processes would)."""
    path = folder / "soak.sqlite"
    first = Store.open(path, clock=clock)
    build_soak_store(first, products, groups=groups, seed=seed)
    return [first] + [Store.open(path, clock=clock) for _ in range(reviewers - 1)]
