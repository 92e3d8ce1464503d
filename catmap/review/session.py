"""The review screen's logic, kept out of the widgets: one reviewer working through the queue.

:class:`ReviewSession` claims items from the project store, turns the reviewer's keys into
store calls (one transaction each: :meth:`~catmap.store.Store.decide`,
:meth:`~catmap.store.Store.accept_group`, :meth:`~catmap.store.Store.undo_last`, ...) and keeps
the few things only a session knows: the item on screen, attribute corrections typed but not
yet decided, and the pace of this session.

A brand on screen that is a candidate (learned from a feed, no person has confirmed it) can be
confirmed into the project's brand registry or rejected as no brand at once
(:meth:`ReviewSession.confirm_brand`, :meth:`ReviewSession.reject_brand`, through
:mod:`catmap.review.brands`): a verdict on the brand, for every product that carries it, not a
decision on the item, which stays on screen. The verdict settles the brand's ``brand_candidate``
items: an item queued for the brand alone is done with it, and the next item comes on screen;
undo brings it back. Accepting the node of an item queued for the brand alone is refused (its
node is not in question; :meth:`ReviewSession.waits_for_brand`); a node chosen on an item that
carries the brand leaves it waiting for the brand.

Attribute corrections (brand, who, age) travel with the reviewer's decision on the item, in the
same transaction: a correction alone does not close an item whose node still needs judging.
When a decision moves a product to another node, the restriction flag and who / age
applicability follow the new node (:mod:`catmap.review.follow`), written in that transaction.
Everything the store holds comes back from the store after each action, never from screen
state.

No textual import here: the session can be driven and tested without a terminal.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from catmap.attributes import AttributeExtractor, BrandDictionary, brand_key, colour_family
from catmap.errors import ReviewError, StoreError, UnknownNode
from catmap.records import AGE_VALUES, WHO_VALUES
from catmap.review.brands import feed_own_names, reset_brand, settle_brand
from catmap.review.follow import NodeFollower
from catmap.store import (
    DEFAULT_LEASE_SECONDS,
    GROUP_REASONS,
    BrandVerdict,
    Decision,
    NodeAttributes,
    ReviewView,
    Store,
)
from catmap.tree.search import SearchMatch
from catmap.tree.taxonomy import CategoryTree, load_default_tree

# What each queue reason means, in the words the screen shows.
REASON_TEXT = {
    # Not "unsure": a feed with no threshold (or a high one) queues a mapping at 100% too.
    "low_confidence": "low confidence: under the feed's accept threshold",
    "audit_sample": "audit sample: auto-accepted, checked to measure the real error rate",
    "brand_conflict": "brand conflict: the brand found disagrees with the feed's brand",
    "audience_conflict": "audience conflict: who / age from the text contradict the node",
    "remap": "remap: the category tree changed under this product",
    "audit_over_target": "audit over target: auto-accepted, but the feed's audits found more "
    "errors than its target at this confidence",
    "brand_candidate": "brand candidate: a brand no person has confirmed yet (one item per "
    "brand and feed)",
}

# Alternatives offered by number (keys 1..3).
MAX_ALTERNATIVES = 3

Clock = Callable[[], datetime]


def _now() -> datetime:
    return datetime.now(UTC)


@dataclass(frozen=True, slots=True)
class Pace:
    """How this session is going.

    Attributes:
        done: items decided in this session (undone ones not counted).
        left: items still to review in the queue (open or claimed, any reviewer).
        per_minute: items decided per minute in this session (None before the first).
        finish: when the queue would be empty at this pace (None when unknown).
    """

    done: int
    left: int
    per_minute: float | None
    finish: datetime | None


@dataclass(frozen=True, slots=True)
class Pending:
    """Attribute corrections typed for the item on screen, saved with the next decision."""

    brand: str | None = None
    who: str | None = None
    age: str | None = None

    def any(self) -> bool:
        """True when at least one correction is waiting."""
        return self.brand is not None or self.who is not None or self.age is not None


class ReviewSession:
    """One reviewer's pass over the review queue of a project store.

    Args:
        store: the open project store.
        reviewer: the reviewer's name (claims and decisions are made in it).
        feed: only review this feed's items (name or id); None for every feed.
        tree: the category tree to show paths and search in; None loads the shared tree of
            the version each mapping was made with.
        lease_seconds: how long a claim holds without a decision.
        clock: the current UTC time (tests pass a fake one).
        brands: the project's brand dictionary, used when who / age are read again for a
            chosen node (so that a brand's name is not read as an audience); None for none.
    """

    def __init__(
        self,
        store: Store,
        reviewer: str,
        *,
        feed: int | str | None = None,
        tree: CategoryTree | None = None,
        lease_seconds: float = DEFAULT_LEASE_SECONDS,
        clock: Clock = _now,
        brands: BrandDictionary | None = None,
    ) -> None:
        if not reviewer.strip():
            raise ValueError("a reviewer name is needed")
        self.store = store
        self.reviewer = reviewer
        self.feed = feed
        self.lease_seconds = lease_seconds
        self._tree = tree
        self._trees: dict[str, CategoryTree] = {}
        self._brands = brands
        self._followers: dict[str, NodeFollower] = {}
        self._tree_versions: dict[tuple[int, str], str] = {}
        self._clock = clock
        self.started = clock()
        self.first_decision_at: datetime | None = None
        self.done = 0
        # Items each store-level decision of this session settled (0 for a skip), newest last:
        # undo takes back what the last one counted, and nothing for an older session's.
        self._history: list[int] = []
        # Brands this session confirmed or rejected, each with the length of _history then:
        # undo takes back whichever came last, a brand verdict or a decision.
        self._brand_history: list[tuple[int, BrandVerdict]] = []
        # What the last undo took back when it was a brand verdict (None: a decision).
        self.undone_brand: BrandVerdict | None = None
        self._own_names: dict[str, str] | None = None
        self.current: ReviewView | None = None
        self.pending = Pending()

    # -- the tree ------------------------------------------------------------------------------

    @property
    def tree(self) -> CategoryTree:
        """The category tree of the item on screen (or the one given)."""
        if self._tree is not None:
            return self._tree
        version = "1"
        if self.current is not None:
            key = (self.current.item.feed_id, self.current.item.product_id)
            if key not in self._tree_versions:
                stored = self.store.mapping(*key)
                self._tree_versions = {key: stored.tree_version or "1"}  # one item at a time
            version = self._tree_versions[key]
        if version not in self._trees:
            self._trees[version] = load_default_tree(version)
        return self._trees[version]

    def path_text(self, node_id: str) -> str:
        """The full path of a node, or a plain note when the tree does not know it."""
        if not node_id:
            return "(no fitting node)"
        try:
            return self.tree.path_text(node_id)
        except UnknownNode:
            return f"node {node_id} (not in tree version {self.tree.version})"

    def reason_text(self, method: str, reason: str, alternatives: Sequence[str] = ()) -> str:
        """A mapping's reason for a person: a back-off names the leaf it left by name (and its
        place among the alternatives), not by id; any other reason is shown as stored."""
        prefix = "backed off from "
        leaf = reason[len(prefix) :] if reason.startswith(prefix) else ""
        if method != "backoff" or leaf not in self.tree:
            return reason
        place = ""
        if leaf in alternatives:
            place = f" (alternative {list(alternatives).index(leaf) + 1})"
        return f"too unsure of {self.tree[leaf].name}{place}: answered a broader node"

    def restriction(self, node_id: str | None) -> str:
        """The restriction flag ``node_id`` carries in the tree ('' for none or no node)."""
        if not node_id or node_id not in self.tree:
            return ""
        return self.tree.restriction(node_id) or ""

    def _follower(self) -> NodeFollower:
        tree = self.tree
        key = str(tree.version)
        follower = self._followers.get(key)
        if follower is None or follower.tree is not tree:
            extractor = AttributeExtractor(brands=self._brands or BrandDictionary([]), tree=tree)
            follower = self._followers[key] = NodeFollower(tree, extractor=extractor)
        return follower

    def _node_attributes(self, view: ReviewView, node_id: str | None) -> NodeAttributes | None:
        """What ``node_id`` decides for the product on screen (None: the node is unchanged)."""
        if not node_id or node_id == view.mapping.node_id:
            return None
        stored = self.store.mapping(view.item.feed_id, view.item.product_id)
        return self._follower().node_attributes(view.product, stored, node_id)

    def search(self, text: str, *, limit: int = 12) -> list[SearchMatch]:
        """Fuzzy search of the tree's names and synonyms, in all its languages."""
        return self.tree.search_matches(text, limit=limit)

    # -- moving through the queue --------------------------------------------------------------

    def next(self) -> ReviewView | None:
        """Claim the next item (the reviewer's own claimed item first) and show it.

        Returns:
            The item on screen, or None when the queue has nothing left for this reviewer.
        """
        self.pending = Pending()
        item = self.store.claim_next(
            self.reviewer, lease_seconds=self.lease_seconds, feed=self.feed
        )
        self.current = self.store.review_item(item.id) if item is not None else None
        return self.current

    def refresh(self) -> ReviewView | None:
        """Read the item on screen again from the store."""
        if self.current is not None:
            self.current = self.store.review_item(self.current.item.id)
        return self.current

    def _require(self) -> ReviewView:
        if self.current is None:
            raise StoreError("no item on screen", hint="the queue is empty")
        return self.current

    def _counted(self, decisions: int) -> None:
        if decisions and self.first_decision_at is None:
            self.first_decision_at = self._clock()
        self.done += decisions
        self._history.append(decisions)

    # -- deciding ------------------------------------------------------------------------------

    def _decide(self, action: str, node_id: str | None = None) -> Decision:
        view = self._require()
        pending = self.pending if action != "skip" else Pending()
        decision = self._decide_view(view, action, node_id, pending)
        self._counted(0 if action == "skip" else 1)
        self.next()
        return decision

    def _decide_view(
        self, view: ReviewView, action: str, node_id: str | None, pending: Pending
    ) -> Decision:
        """One store decision on ``view``; a move to another node takes that node's attributes."""
        who, age = pending.who, pending.age
        follow = self._node_attributes(view, node_id) if action == "choose" else None
        if follow is not None and node_id:
            who, age = self._follower().reviewer_values(node_id, who, age)
        return self.store.decide(
            view.item.id,
            self.reviewer,
            action,
            node_id=node_id,
            brand=pending.brand,
            who=who,
            age=age,
            node_attributes=follow,
        )

    def accept(self) -> Decision:
        """The suggested node is right (attribute corrections go with it).

        Raises:
            ReviewError: the item is queued for its candidate brand alone
                (:meth:`waits_for_brand`): nothing is written.
        """
        view = self._require()
        if self.waits_for_brand():
            raise ReviewError(
                f"this item waits for a verdict on the brand '{view.attributes.brand}', not "
                "on its node",
                product_id=view.product.product_id,
                hint="c confirms the brand, r says it is no brand, s skips; 1-3 or / moves the "
                "product if its node is wrong",
            )
        return self._decide("accept")

    def waits_for_brand(self) -> bool:
        """True when the item on screen is queued for its candidate brand alone."""
        view = self.current
        return (
            view is not None
            and view.item.reasons == ("brand_candidate",)
            and bool(self.candidate_brand())
        )

    def choose(self, node_id: str) -> Decision:
        """Put the product on ``node_id`` (from an alternative or the tree search).

        Raises:
            UnknownNode: the node is not in the tree.
        """
        self.tree[node_id]  # an unknown node fails here, before anything is written
        view = self._require()
        if node_id == view.mapping.node_id:
            return self._decide("accept")
        return self._decide("choose", node_id)

    def alternative(self, number: int) -> str | None:
        """The node id of alternative ``number`` (1-based), None when there is none."""
        view = self._require()
        alternatives = view.mapping.alternatives[:MAX_ALTERNATIVES]
        if 1 <= number <= len(alternatives):
            return alternatives[number - 1].node_id
        return None

    def choose_alternative(self, number: int) -> Decision | None:
        """Choose alternative ``number`` (1-based); None (nothing written) when there is none."""
        node_id = self.alternative(number)
        if node_id is None:
            return None
        return self.choose(node_id)

    def no_fit(self) -> Decision:
        """No node of the tree fits this product."""
        return self._decide("no_fit")

    def skip(self) -> Decision:
        """Put the item back in the queue (behind the items never skipped) and move on."""
        return self._decide("skip")

    def undo(self) -> list[int]:
        """Undo this reviewer's last decision (a group decision as a whole), or the brand
        this session confirmed or rejected last when that came after it.

        The item on screen is released; a reopened item comes on screen (the others stay
        claimed by the reviewer and come next). A brand verdict taken back sets the brand
        back to a candidate, and its products with it (:attr:`undone_brand` says which); it
        is refused when someone else settled the brand since, and is then dropped from this
        session's undo.

        Returns:
            The ids of the items reopened (empty when there was nothing to undo, or a brand
            verdict was taken back).

        Raises:
            StoreError: the decision or brand verdict was overtaken by someone else's.
        """
        self.undone_brand = None
        if self._brand_history and self._brand_history[-1][0] >= len(self._history):
            _position, verdict = self._brand_history.pop()
            current = self.current.item.id if self.current is not None else None
            self.undone_brand = reset_brand(
                self.store, verdict.name, actor=self.reviewer, item_id=current,
                taking_back=verdict.audit_id, claim_items_for=self.reviewer,
                lease_seconds=self.lease_seconds,
            )  # fmt: skip
            # The item the verdict settled (an item queued for the brand alone) comes back.
            back = [i for i in self.undone_brand.items if i in verdict.items and i != current]
            if back and any(self.store.item(i).claimed_by == self.reviewer for i in back):
                if current is not None:
                    self.store.release(current, self.reviewer)
                self.next()
            else:
                self.refresh()
            return []
        reopened = self.store.undo_last(self.reviewer, lease_seconds=self.lease_seconds)
        if not reopened:
            return []
        if self.current is not None and self.current.item.id not in reopened:
            self.store.release(self.current.item.id, self.reviewer)
        if self._history:
            self.done -= self._history.pop()
        # The reopened items are claimed by this reviewer, so the next claim returns one of
        # them (the highest priority: the one that was on screen for a group decision).
        self.next()
        return reopened

    # -- the group -----------------------------------------------------------------------------

    def group_targets(self) -> int:
        """How many items a group decision on the item on screen would settle."""
        view = self._require()
        now = self._clock().astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
        count = 0
        for state in ("open", "claimed"):
            for item in self.store.items(feed=view.item.feed_id, state=state):
                if item.group_key != view.item.group_key or item.id == view.item.id:
                    continue
                if any(r not in GROUP_REASONS for r in item.reasons):
                    continue
                if state == "claimed" and item.claimed_by != self.reviewer:
                    if (item.lease_until or "") >= now:
                        continue  # another reviewer holds it
                count += 1
        return count + 1  # the item on screen is decided too

    def group_target(self, node_id: str | None = None) -> str:
        """The node a group decision would put the on-screen item's group on.

        Args:
            node_id: the node picked for the group; None means the on-screen suggestion.

        Returns:
            The node id.

        Raises:
            ReviewError: the product has no retailer category (so no group), or there is no
                node to use (the product was set to no fitting node, e.g. through another of
                its review items, and no node was picked).
            UnknownNode: the node is not in the tree.
        """
        view = self._require()
        if not view.item.group_key:
            raise ReviewError(
                "this product has no retailer category, so it belongs to no group: products "
                "without one share nothing to decide them by",
                product_id=view.product.product_id,
                hint="decide it alone (Enter, 1-3, / or n)",
            )
        target = node_id or view.mapping.node_id
        if not target:
            raise ReviewError(
                "this product is set to 'no fitting node', so there is no suggested node to "
                "put its group on",
                product_id=view.product.product_id,
                hint="pick the group's node with 1-3 or /, or decide this item alone",
            )
        self.tree[target]
        return target

    def decide_group(self, node_id: str | None = None) -> list[Decision]:
        """Put every open item of the on-screen item's group on one node.

        The item on screen is decided first, with its attribute corrections (when it has some
        or when its reason is judged one by one, such as an audit sample); the rest of the
        group goes in one bulk decision (undone as a whole).

        Args:
            node_id: the node for the whole group; None means the on-screen suggestion.

        Returns:
            Every decision written.

        Raises:
            ReviewError: no node to put the group on (see :meth:`group_target`).
        """
        view = self._require()
        target = self.group_target(node_id)
        decisions: list[Decision] = []
        single = self.pending.any() or any(r not in GROUP_REASONS for r in view.item.reasons)
        if single:
            action = "accept" if target == view.mapping.node_id else "choose"
            decisions.append(
                self._decide_view(
                    view, action, target if action == "choose" else None, self.pending
                )
            )
        decisions.extend(
            self.store.accept_group(
                self.reviewer,
                view.item.feed_id,
                view.item.group_key,
                node_id=target,
                lease_seconds=self.lease_seconds,
                node_attributes=self._follower().for_node(target),
            )
        )
        if single:
            self._counted(1)
        if len(decisions) > int(single):
            self._counted(len(decisions) - int(single))  # the bulk: undone as a whole
        self.next()
        return decisions

    # -- attribute corrections -----------------------------------------------------------------

    def set_brand(self, brand: str) -> None:
        """Correct the brand (saved with the next decision on this item).

        Raises:
            ReviewError: the brand is empty (an empty box is never saved as the brand).
        """
        view = self._require()
        cleaned = " ".join(brand.split())
        if not cleaned:
            raise ReviewError(
                "an empty brand is not saved; the brand stays as it was",
                product_id=view.product.product_id,
                hint="press b and type the brand",
            )
        self.pending = Pending(cleaned, self.pending.who, self.pending.age)

    def set_who(self, value: str) -> str:
        """Set who to ``value`` (one of ``WHO_VALUES``; saved with the next decision)."""
        self._require()
        if value not in WHO_VALUES:
            raise ValueError(f"unknown who {value!r}; expected one of {WHO_VALUES}")
        self.pending = Pending(self.pending.brand, value, self.pending.age)
        return value

    def set_age(self, value: str) -> str:
        """Set age to ``value`` (one of ``AGE_VALUES``; saved with the next decision)."""
        self._require()
        if value not in AGE_VALUES:
            raise ValueError(f"unknown age {value!r}; expected one of {AGE_VALUES}")
        self.pending = Pending(self.pending.brand, self.pending.who, value)
        return value

    # -- the brand registry --------------------------------------------------------------------

    def candidate_brand(self) -> str:
        """The brand on screen when it is a candidate no person has confirmed ('' otherwise)."""
        view = self.current
        if view is None or view.attributes.brand_status != "candidate":
            return ""
        return view.attributes.brand

    def confirm_brand(self) -> BrandVerdict:
        """Confirm the candidate brand on screen in the project's brand registry: it and every
        product carrying it as a candidate are trusted from now on (audited; the item stays
        on screen to be decided).

        Raises:
            ReviewError: the brand on screen is not a candidate.
            InputError: the registry does not hold the brand (it was onboarded before the
                registry existed).
        """
        return self._brand_verdict("confirmed")

    def reject_brand(self) -> BrandVerdict:
        """Reject the candidate brand on screen as no brand: every product carrying it as a
        candidate loses it, and later runs never read it as a brand (audited; the item stays
        on screen to be decided).

        Raises:
            ReviewError: the brand on screen is not a candidate.
            InputError: the registry does not hold the brand.
        """
        return self._brand_verdict("rejected")

    def _brand_verdict(self, status: str) -> BrandVerdict:
        view = self._require()
        brand = self.candidate_brand()
        if not brand:
            shown = view.attributes.brand
            raise ReviewError(
                f"the brand '{shown}' is {view.attributes.brand_status}, not a candidate"
                if shown
                else "this product has no brand to confirm or reject",
                product_id=view.product.product_id,
                hint="press b to correct this product's brand",
            )
        verdict = settle_brand(
            self.store, brand, status, actor=self.reviewer, item_id=view.item.id
        )
        self._brand_history.append((len(self._history), verdict))
        current = self.refresh()
        if current is not None and current.item.state == "done":
            self.next()  # the item waited for the brand alone: the verdict settled it
        return verdict

    def candidate_shop_name(self) -> str | None:
        """The feed whose own shop name the candidate brand on screen is (onboarding found
        the shop writing its name in the brand field), '' when the feed is not known, None
        when it is no feed's own name (or not a candidate)."""
        brand = self.candidate_brand()
        if not brand:
            return None
        if self._own_names is None:
            self._own_names = feed_own_names(self.store)
        return self._own_names.get(brand_key(brand))

    def sources(self) -> dict[str, str]:
        """Where the brand, who, age and colour on screen came from, in a few words each.

        A value typed on this screen is "your correction"; one a reviewer saved is "reviewer
        NAME"; otherwise the extraction's evidence says which field, the title, the brand
        dictionary or the node's default gave it.
        """
        view = self._require()
        attributes, pending = view.attributes, self.pending
        people = self.store.attribute_correctors(view.item.feed_id, view.product.product_id)
        found = {
            "brand": _brand_source(attributes.brand_evidence),
            "who": _audience_source(attributes.audience_evidence, "who"),
            "age": _audience_source(attributes.audience_evidence, "age"),
            "colour": _colour_source(view),
        }
        for name in ("brand", "who", "age"):
            if name in people:
                found[name] = f"reviewer {people[name]}"
        for name, value in (("brand", pending.brand), ("who", pending.who), ("age", pending.age)):
            if value is not None:
                found[name] = "your correction"
        return found

    def cycle_who(self) -> str:
        """Move who to the next allowed value (saved with the next decision on this item)."""
        view = self._require()
        current = self.pending.who if self.pending.who is not None else view.attributes.who
        value = _next_value(WHO_VALUES, current)
        self.pending = Pending(self.pending.brand, value, self.pending.age)
        return value

    def cycle_age(self) -> str:
        """Move age to the next allowed value (saved with the next decision on this item)."""
        view = self._require()
        current = self.pending.age if self.pending.age is not None else view.attributes.age
        value = _next_value(AGE_VALUES, current)
        self.pending = Pending(self.pending.brand, self.pending.who, value)
        return value

    # -- progress and leaving ------------------------------------------------------------------

    def now(self) -> datetime:
        """The session clock's time (the clock given to the session; the wall clock by default)."""
        return self._clock()

    def pace(self) -> Pace:
        """Items done this session, left in the queue, items per minute, projected finish."""
        summary = self.store.queue_summary(self.feed)
        left = summary.open + summary.claimed
        if not self.done or self.first_decision_at is None:
            return Pace(self.done, left, None, None)
        # From the session start: reading the first item is part of the work.
        minutes = max((self._clock() - self.started).total_seconds() / 60.0, 1 / 60)
        rate = self.done / minutes
        finish = self._clock() + timedelta(minutes=left / rate) if left else self._clock()
        return Pace(self.done, left, rate, finish)

    def close(self) -> None:
        """Leave: give back every claim but keep the on-screen item marked as this reviewer's.

        Other items claimed by the reviewer (e.g. reopened by a group undo) go back to the
        queue. The on-screen item keeps its mark with a lease that ends now: another reviewer
        may take it at once, and if nobody does, the next session resumes on it.
        """
        current = self.current.item.id if self.current is not None else None
        for item in self.store.items(feed=self.feed, state="claimed"):
            if item.claimed_by == self.reviewer and item.id != current:
                self.store.release(item.id, self.reviewer)
        if current is not None:
            item = self.store.item(current)
            if item.state == "claimed" and item.claimed_by == self.reviewer:
                # claim_next gives the reviewer's own claim back first: renewing it with a lease
                # of zero keeps the mark and frees the item for others.
                self.store.claim_next(self.reviewer, lease_seconds=0, feed=self.feed)
        self.current = None


def _next_value(values: tuple[str, ...], current: str) -> str:
    if current not in values:
        return values[0]
    return values[(values.index(current) + 1) % len(values)]


def _brand_source(evidence: str) -> str:
    """The extraction's brand evidence in a reviewer's words."""
    words = evidence.split(" ", 2)
    if not evidence or evidence == "no brand found":
        return "none found"
    place = {"field": "brand field", "title": "title", "description": "description"}.get(
        words[0]
    )
    if place is None:
        return evidence
    rest = words[1:]
    if rest[:1] == ["exact"]:
        return f"{place}, dictionary name"
    if rest[:1] == ["fuzzy"]:
        return f"{place}, near a dictionary name"
    if rest[:1] == ["not"]:
        return f"{place}, not in the dictionary"
    return f"{place} ({' '.join(rest)})" if rest else place


def _audience_source(evidence: str, name: str) -> str:
    """Which source gave who (or age), read from the audience evidence notes.

    The extraction writes at most one note per attribute besides its conflicts, who's first;
    "not_applicable" ends notes of both, so who takes the first match and age the last.
    """
    values = WHO_VALUES if name == "who" else AGE_VALUES
    marks = ("gender does not apply", "unisex by default") if name == "who" else (
        "age does not apply",
        "adult by default",
    )
    notes = [n.strip() for n in evidence.split(";") if n.strip()]
    mine = [
        n
        for n in notes
        if not n.startswith("conflict")
        and (n.endswith(marks) or any(n.endswith(v) or n.endswith(f"{v} (weak)") for v in values))
    ]
    if not mine:
        return "not read (no cue)"
    note = mine[0] if name == "who" else mine[-1]
    if note.startswith("column"):
        return "gender / age field"
    if note.startswith("text"):
        return "title / text" + (", weak cue" if note.endswith("(weak)") else "")
    if note.startswith("node"):
        return "node default"
    if note.startswith("nothing said"):
        return "default, nothing said"
    return note


def _colour_source(view: ReviewView) -> str:
    """Where the colour family came from: the colour field or the title ('' when unknown)."""
    family = view.attributes.colour_family
    if not family:
        return "none found"
    found, evidence = colour_family(view.product.colour, view.product.title)
    if found != family:
        return "as the run stored it"
    if evidence.startswith("colour field"):
        return "colour field"
    if evidence.startswith("title"):
        return "title"
    return evidence
