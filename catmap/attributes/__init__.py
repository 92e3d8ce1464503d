"""The attributes stage: a product and its mapped node in, brand / who / age / colour out.

Input: a :class:`~catmap.records.Product`, the node it was mapped to (or None) and the tree,
with a brand dictionary. Output: :class:`catmap.records.Attributes` (brand with confidence and
evidence, who, age, colour family, restriction flag).

- :mod:`~catmap.attributes.brand`: brand dictionary and finder (exact, variant, fuzzy).
- :mod:`~catmap.attributes.audience`: who and age from text, path and size.
- :mod:`~catmap.feeds.colour`: colour family.
- :mod:`~catmap.attributes.restriction`: restriction flag from the node or keywords.

:class:`AttributeExtractor` fills a :class:`catmap.records.Attributes` for a product and the node
it was mapped to. The pure functions behind it are exported too, for tests and other stages.

Speed: text is folded once per product and shared by every extractor; brand look-ups are cached
per distinct brand field and per distinct leading title words, colour per distinct colour field,
and everything the node says per node.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING

from catmap._text import fold
from catmap.attributes.audience import (
    LEXICON_WORDS,
    Audience,
    age_from_size,
    blank_spans,
    decide_audience,
    extract_audience,
    extract_audience_folded,
    is_body_sized,
    is_personal_item,
    read_cues,
)
from catmap.attributes.brand import (
    FUZZY_THRESHOLD,
    LEGAL_SUFFIXES,
    SHORT_NAME_LENGTH,
    BrandCandidate,
    BrandCandidates,
    BrandDictionary,
    BrandEntry,
    BrandFinder,
    BrandMatch,
    brand_variants,
    compact_key,
    normalize_brand,
)
from catmap.attributes.discover import (
    CANDIDATE_MARK,
    FeedBrandLearner,
    RetailerFinding,
    TitleCandidate,
    brand_is_candidate,
    brand_status,
)
from catmap.attributes.registry import (
    BrandRegistry,
    BrandVariant,
    RegistryBrand,
    brand_key,
    clean_spelling,
)
from catmap.attributes.restriction import (
    RESTRICTION_CAUTION,
    RESTRICTIONS,
    node_context,
    quiet_flags,
    restriction_for_node,
    restriction_from_text,
    restriction_from_text_folded,
)
from catmap.feeds.colour import (
    COLOUR_WORDS,
    FAMILIES,
    blank_codes,
    colour_family,
    colour_family_folded,
)
from catmap.records import Attributes, Product

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "CANDIDATE_MARK",
    "BrandRegistry",
    "BrandVariant",
    "FeedBrandLearner",
    "RegistryBrand",
    "RetailerFinding",
    "TitleCandidate",
    "brand_is_candidate",
    "brand_status",
    "brand_key",
    "clean_spelling",
    "FAMILIES",
    "FUZZY_THRESHOLD",
    "LEGAL_SUFFIXES",
    "RESTRICTIONS",
    "RESTRICTION_CAUTION",
    "SHORT_NAME_LENGTH",
    "AttributeExtractor",
    "Audience",
    "BrandCandidate",
    "BrandCandidates",
    "BrandDictionary",
    "BrandEntry",
    "BrandFinder",
    "BrandMatch",
    "age_from_size",
    "blank_spans",
    "brand_variants",
    "blank_codes",
    "colour_family",
    "compact_key",
    "decide_audience",
    "extract_audience",
    "fold",
    "normalize_brand",
    "colour_family_folded",
    "extract_audience_folded",
    "is_body_sized",
    "is_personal_item",
    "read_cues",
    "node_context",
    "quiet_flags",
    "restriction_for_node",
    "restriction_from_text",
    "restriction_from_text_folded",
]


# Words other extractors read: a title's fuzzy brand pass leaves them alone ("Señora" is not a
# misspelt "Serora").
_ATTRIBUTE_WORDS = LEXICON_WORDS | frozenset(
    fold(word) for by_lang in COLOUR_WORDS.values() for words in by_lang.values() for word in words
)


@dataclass(frozen=True, slots=True)
class _NodeFacts:
    who: frozenset[str] | None
    ages: frozenset[str] | None
    restriction: str | None
    read_keywords: bool  # the node cannot say: read restriction keywords
    quiet: frozenset[str]  # flags whose general keywords the node's context silences
    body_sizes: bool  # apparel / footwear (or unknown): heights and shoe sizes say kids / baby
    said_only: bool  # no audience by default, but worn or carried: an explicit cue decides


class AttributeExtractor:
    """Extract brand, who, age, colour family and restriction for products.

    Args:
        brands: the brand dictionary.
        tree: the category tree the node ids belong to (None: decide from the text only).
        retailer_names: the retailer's own names; a brand field holding one counts as empty.
        feed_brands: a :class:`FeedBrandLearner` fitted on this feed: brands no dictionary
            knows are then found too (marked as candidates until confirmed), field spellings
            resolve to the feed's canonical brand, and the retailer's own name found in the
            feed counts as empty when the learner's setting says so.
        confirmed_brands: names of the brands a person confirmed in the project's brand
            registry (they are in ``brands`` too): their status is "confirmed".
        not_brands: spellings a person said name no brand: a brand field holding one counts
            as empty.

    Example:
        >>> extractor = AttributeExtractor(brands=BrandDictionary([]), tree=None)
        >>> extractor.extract(Product("1", "Ladies navy wool coat"), None).colour_family
        'blue'
    """

    def __init__(
        self,
        *,
        brands: BrandDictionary,
        tree: CategoryTree | None,
        retailer_names: Iterable[str] = (),
        feed_brands: FeedBrandLearner | None = None,
        confirmed_brands: Iterable[str] = (),
        not_brands: Iterable[str] = (),
    ) -> None:
        self.brands = brands
        self.tree = tree
        self.retailer_names = tuple(retailer_names)
        self.feed_brands = feed_brands
        self.confirmed_brands = frozenset(confirmed_brands)
        self.not_brands = tuple(not_brands)
        self._not_brand_keys = frozenset(brand_key(s) for s in self.not_brands) - {""}
        self._finder = BrandFinder(
            brands, retailer_names=self.retailer_names, fuzzy_skip=_ATTRIBUTE_WORDS
        )
        self._nodes: dict[str | None, _NodeFacts] = {}
        self._colour_cache: dict[str, tuple[str, str]] = {}
        self._path_cache: dict[tuple[str, ...], str] = {}

    def _node(self, node_id: str | None) -> _NodeFacts:
        facts = self._nodes.get(node_id)
        if facts is None:
            if node_id is None or self.tree is None or node_id not in self.tree:
                facts = _NodeFacts(None, None, None, True, frozenset(), True, False)
            else:
                tree = self.tree
                node = tree[node_id]
                restriction, read_keywords, quiet = node_context(tree, node_id)
                who, ages = tree.who(node_id), tree.ages(node_id)
                words = tree.all_terms(node_id)
                if node.parent:
                    words += tree.all_terms(node.parent)
                facts = _NodeFacts(
                    who,
                    ages,
                    restriction or None,
                    read_keywords,
                    quiet,
                    is_body_sized(tree.all_terms(tree.department(node_id).id)),
                    not who and not ages and is_personal_item(words),
                )
            self._nodes[node_id] = facts
        return facts

    @staticmethod
    def _from_feed_field(
        value: str, match: BrandMatch, learner: FeedBrandLearner
    ) -> BrandMatch | None:
        """Let what the feed taught override the dictionary's guess for a brand field value:
        an unknown value resolves to the feed's canonical brand, and a value the dictionary
        took as a typo stays the feed's own brand when the feed writes it that way often."""
        if learner.retailer_as_no_brand and learner.is_retailer(value):
            return None
        if match.evidence.startswith(("field not in dictionary", "field fuzzy")):
            resolved = learner.resolve_field(value)
            if resolved is not None and (
                match.evidence.startswith("field not in dictionary")
                or resolved.brand != match.brand
            ):
                return resolved
        return match

    def extract(self, product: Product, node_id: str | None) -> Attributes:
        """Return the attributes of one product mapped to ``node_id`` (None: not mapped yet)."""
        facts = self._node(node_id)
        folded_title = fold(product.title)
        folded_description = ""

        # brand
        learner = self.feed_brands
        field_value = product.brand
        if field_value and self._not_brand_keys and brand_key(field_value) in self._not_brand_keys:
            field_value = ""
        match = self._finder.from_field(field_value) if field_value else None
        if match is not None and learner is not None:
            match = self._from_feed_field(field_value, match, learner)
        if match is not None:
            spans = tuple(
                (s, e)
                for s, e, _k, name in self.brands.find_in_text(folded_title)
                if name == match.brand
            )
        else:
            if learner is None:
                match = self._finder.from_text(folded_title, "title", product.title)
            else:
                # Exact before fuzzy: a spelling the feed taught beats a dictionary brand one
                # letter away, and spares the fuzzy look-ups for the feed's own brands.
                match = self._finder.from_text(folded_title, "title", fuzzy=False)
                if match is None:
                    match = learner.find_in_title(product.title, folded_title, typos=False)
                if match is None:
                    match = self._finder.fuzzy_in_title(folded_title, product.title)
                if match is None:
                    match = learner.find_in_title(product.title, folded_title)
            if match is None and product.description:
                folded_description = fold(product.description)
                found = self._finder.from_text(folded_description, "description")
                if found is not None:
                    confidence = round(found.confidence - 0.1, 3)
                    match = BrandMatch(found.brand, confidence, found.evidence)
            spans = match.spans if match is not None else ()
        if match is None:
            match = BrandMatch(evidence="no brand found")

        # who and age
        folded_path = ""
        if product.category_path:
            folded_path = self._path_cache.get(product.category_path, "")
            if not folded_path:
                folded_path = fold(" / ".join(product.category_path))
                if len(self._path_cache) > 100_000:
                    self._path_cache.clear()
                self._path_cache[product.category_path] = folded_path
        if not folded_description and product.description:
            folded_description = fold(product.description)
        if folded_description and match.brand:
            # A brand named like "Herrenhof" or "Niña ..." must not speak for the audience.
            folded_description = blank_spans(
                folded_description,
                [
                    (s, e)
                    for s, e, _k, name in self.brands.find_in_text(folded_description)
                    if name == match.brand
                ],
            )
        title_without_brand = blank_spans(folded_title, spans)
        audience = extract_audience_folded(
            gender_text=product.gender_text,
            folded_title=title_without_brand,
            folded_path=folded_path,
            folded_description=folded_description,
            size=product.size,
            allowed_who=facts.who,
            allowed_ages=facts.ages,
            body_sizes=facts.body_sizes,
            said_only=facts.said_only,
        )

        # colour
        if product.colour:
            colour = self._colour_cache.get(product.colour)
            if colour is None:
                colour = colour_family_folded(fold(product.colour))
                if len(self._colour_cache) > 100_000:
                    self._colour_cache.clear()
                self._colour_cache[product.colour] = colour
            if not colour[0]:
                colour = colour_family_folded("", blank_codes(product.title, title_without_brand))
        else:
            colour = colour_family_folded("", blank_codes(product.title, title_without_brand))

        # restriction
        restriction = restriction_for_node(
            facts.restriction or "",
            facts.read_keywords,
            f"{title_without_brand} {folded_path}".strip(),
            facts.quiet,
        )

        return Attributes(
            brand=match.brand,
            brand_confidence=match.confidence,
            brand_evidence=match.evidence,
            brand_status=brand_status(match.brand, match.evidence, self.confirmed_brands),
            who=audience.who,
            age=audience.age,
            audience_evidence=audience.evidence,
            audience_conflict=audience.conflict,
            colour_family=colour[0],
            restriction=restriction,
        )
