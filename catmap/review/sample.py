"""A tiny project store of invented products, for trying the review screen and for its tests.

Everything goes through the store's public API (:meth:`~catmap.store.Store.add_feed`,
:meth:`~catmap.store.Store.start_run`, :meth:`~catmap.store.Store.save_mapped`), on nodes of the
shared tree version 1. Brands and products are invented.

Queue order (priority, highest first): the six boots of one retailer category (a strong group;
their brand "Ostravel" is a candidate of the project's brand registry, learned from the titles),
the red wine, the T-shirt, the jumper with a brand conflict, the kids' hoodie with an audience
conflict, the audit sample, then two items of candidate brands
(:meth:`~catmap.store.Store.place_brand_items`): a tote bag queued for its node that also
stands for its brand "Pellivane" (learned from the titles), and a brand-only item for
"Kelvadra", read from the brand field of two pairs of socks already accepted.

The two brand items come last, at priorities chosen here, where onboarding would rank them
behind three quarters of the feed's low-confidence items (right after the boots), so that the
items before them keep the order the screen's tests walk. For the same reason "Ostravel" has no
item of its own (onboarding would add the brand's reason to the first boot's item); its
products still take ``c`` and ``r`` like any product carrying a candidate brand.
"""

from __future__ import annotations

from dataclasses import replace
from decimal import Decimal
from pathlib import Path

from catmap.attributes import CANDIDATE_MARK, BrandRegistry
from catmap.records import Alternative, Attributes, Mapping, Product
from catmap.store import MappedRow, Store

SAMPLE_FEED = "shop-sample"

# Node ids of the shared tree, version 1.
ANKLE_BOOTS = "1511"
CHELSEA_BOOTS = "1512"
RUNNING_SHOES = "1533"
T_SHIRTS = "1011"
LONG_SLEEVE_TOPS = "1016"
TANK_TOPS = "1013"
JUMPERS = "1051"
HOODIES = "1053"
SWEATSHIRTS = "1054"
RED_WINE = "8211"
TOTE_BAGS = "2012"
SHOULDER_BAGS = "2011"
CROSSBODY_BAGS = "2013"
WOOL_SOCKS = "1246"

BOOT_GROUP = "Shoes > Boots"

# The candidate brands queued for a person's verdict (see the module's docstring).
JOINED_BRAND = "Pellivane"
BRAND_ONLY = "Kelvadra"
# Below the audit sample's 0.5: the brand items come last.
JOINED_PRIORITY = 0.45
BRAND_ONLY_PRIORITY = 0.4


def _row(
    product_id: str,
    title: str,
    *,
    path: tuple[str, ...],
    node: str,
    confidence: float,
    alternatives: tuple[tuple[str, float], ...] = (),
    brand: str = "Quillmere",
    price: str = "49.90",
    status: str = "queued",
    priority: float = 0.0,
    reasons: tuple[str, ...] = (),
    attributes: Attributes | None = None,
    description: str = "",
) -> MappedRow:
    product = Product(
        product_id=product_id,
        title=title,
        description=description or f"{title}. Invented product for the sample store.",
        brand=brand,
        category_path=path,
        price=Decimal(price),
        currency="EUR",
    )
    mapping = Mapping(
        node_id=node,
        confidence=confidence,
        method="model",
        alternatives=tuple(Alternative(n, c) for n, c in alternatives),
    )
    attributes = attributes or Attributes(brand=brand, brand_confidence=0.9)
    if attributes.brand and attributes.brand_status == "none":
        attributes = replace(attributes, brand_status="dictionary")
    return MappedRow(
        product=product,
        mapping=mapping,
        attributes=attributes,
        status=status,
        group_key=" > ".join(path),
        priority=priority,
        reasons=reasons,
    )


def sample_rows() -> list[MappedRow]:
    """Return the sample products with their mappings and queue placement."""
    return [*_boot_group(), *_single_reviews(), *_audit_and_accepted(), *_candidate_brands()]


def _boot_group() -> list[MappedRow]:
    """Six boots of one retailer category, all mapped to ankle boots: a strong group."""
    boot_alternatives = ((CHELSEA_BOOTS, 0.22), (RUNNING_SHOES, 0.06), (T_SHIRTS, 0.01))
    return [
        _row(
            f"BT-{n:03d}",
            title,
            path=("Shoes", "Boots"),
            node=ANKLE_BOOTS,
            confidence=0.62 + n / 100,
            alternatives=boot_alternatives,
            brand="Ostravel",
            price="89.00",
            priority=3.0 - n / 100,
            attributes=Attributes(
                brand="Ostravel",
                brand_confidence=0.7,
                brand_evidence=f"title lead 'ostravel' {CANDIDATE_MARK}",
                brand_status="candidate",
            ),
        )
        for n, title in enumerate(
            (
                "Ostravel suede ankle boot, block heel",
                "Ostravel leather boot with side zip",
                "Ostravel lace-up boot, cognac",
                "Ostravel short boot, black nubuck",
                "Ostravel heeled bootie, taupe",
                "Ostravel lined winter boot",
            ),
            start=1,
        )
    ]


def _single_reviews() -> list[MappedRow]:
    """A restricted red wine, a doubtful T-shirt, a brand conflict and an audience conflict."""
    return [
        _row(
            "WN-001",
            "Valle Serena red blend 2019, 75 cl",
            path=("Drinks", "Wine"),
            node=RED_WINE,
            confidence=0.55,
            brand="Valle Serena",
            price="12.50",
            priority=2.0,
            attributes=Attributes(
                brand="Valle Serena", brand_confidence=0.8, restriction="alcohol"
            ),
        ),
        _row(
            "TS-001",
            "Quillmere organic cotton tee, crew neck",
            path=("Clothing", "Tops"),
            node=T_SHIRTS,
            confidence=0.48,
            alternatives=((LONG_SLEEVE_TOPS, 0.31), (TANK_TOPS, 0.12), (SWEATSHIRTS, 0.04)),
            price="19.90",
            priority=1.5,
            attributes=Attributes(
                brand="Quillmere",
                brand_confidence=0.9,
                who="unisex",
                age="adult",
                colour_family="white",
            ),
        ),
        _row(
            "JP-001",
            "Fennick merino jumper, roll neck",
            path=("Clothing", "Knitwear"),
            node=JUMPERS,
            confidence=0.93,
            alternatives=((SWEATSHIRTS, 0.04),),
            brand="Fenwick Loom",
            price="79.00",
            priority=1.0,
            reasons=("brand_conflict",),
            attributes=Attributes(
                brand="Fennick", brand_confidence=0.7, who="male", age="adult", colour_family="grey"
            ),
        ),
        _row(
            "HD-001",
            "Brisk Otter girls' zip hoodie, age 8-9",
            path=("Kids", "Hoodies"),
            node=HOODIES,
            confidence=0.9,
            alternatives=((SWEATSHIRTS, 0.07),),
            brand="Brisk Otter",
            price="29.00",
            priority=0.8,
            reasons=("audience_conflict",),
            attributes=Attributes(
                brand="Brisk Otter",
                brand_confidence=0.95,
                who="female",
                age="adult",
                audience_conflict=True,
                colour_family="pink",
            ),
        ),
    ]


def _audit_and_accepted() -> list[MappedRow]:
    """A confident hoodie drawn for the audit sample and a T-shirt already accepted."""
    return [
        _row(
            "HD-002",
            "Quillmere heavyweight hoodie, navy",
            path=("Clothing", "Hoodies"),
            node=HOODIES,
            confidence=0.97,
            alternatives=((SWEATSHIRTS, 0.02),),
            price="59.00",
            status="audit",
            priority=0.5,
        ),
        _row(
            "TS-002",
            "Quillmere striped tee, long sleeves",
            path=("Clothing", "Tops"),
            node=LONG_SLEEVE_TOPS,
            confidence=0.98,
            status="accepted",
        ),
    ]


def _candidate(brand: str, evidence: str) -> Attributes:
    return Attributes(
        brand=brand,
        brand_confidence=0.7,
        brand_evidence=f"{evidence} {CANDIDATE_MARK}",
        brand_status="candidate",
    )


def _candidate_brands() -> list[MappedRow]:
    """Two candidate brands: Pellivane on a tote queued for its node and on an accepted one,
    Kelvadra on two pairs of socks, both accepted."""
    totes = (("Clothing", "Bags"), TOTE_BAGS, "34.00")
    socks = (("Clothing", "Socks"), WOOL_SOCKS, "15.90")
    return [
        _row(
            "PV-001",
            "Pellivane waxed canvas tote, olive",
            path=totes[0],
            node=totes[1],
            confidence=0.58,
            alternatives=((SHOULDER_BAGS, 0.27), (CROSSBODY_BAGS, 0.09)),
            brand=JOINED_BRAND,
            price=totes[2],
            priority=JOINED_PRIORITY,
            attributes=_candidate(JOINED_BRAND, "title lead 'pellivane'"),
        ),
        _row(
            "PV-002",
            "Pellivane canvas tote, natural",
            path=totes[0],
            node=totes[1],
            confidence=0.97,
            brand=JOINED_BRAND,
            price=totes[2],
            status="accepted",
            attributes=_candidate(JOINED_BRAND, "title lead 'pellivane'"),
        ),
        *(
            _row(
                product_id,
                title,
                path=socks[0],
                node=socks[1],
                confidence=0.98,
                brand=BRAND_ONLY,
                price=socks[2],
                status="accepted",
                attributes=_candidate(BRAND_ONLY, f"field not in dictionary '{BRAND_ONLY}'"),
            )
            for product_id, title in (
                ("KV-001", "Kelvadra merino hiking socks, 2 pairs"),
                ("KV-002", "Kelvadra thermal bed socks, grey"),
            )
        ),
    ]


def build_sample_store(path: str | Path) -> Store:
    """Create (or fill again) a store at ``path`` with the sample products; return it open."""
    store = Store.open(path)
    feed = store.add_feed(SAMPLE_FEED, source_path=f"{SAMPLE_FEED}.csv")
    run = store.start_run("onboard", feed=feed)
    rows = sample_rows()
    store.save_mapped(feed, run, rows, model_version="sample", tree_version="1")
    store.finish_run(run, summary={"read": len(rows), "kept": len(rows), "rejected": 0})
    registry = BrandRegistry()
    for row in rows:
        registry.observe(row.attributes.brand, feed=SAMPLE_FEED)
    candidates = ("Ostravel", JOINED_BRAND, BRAND_ONLY)
    for brand in registry.brands():
        if brand.name not in candidates:
            registry.confirm(brand.name)  # stand-ins for brands of the dictionary
    store.save_brand_records(registry.to_dict()["brands"])
    # The socks' brand-only item at its priority; the tote's item, worth more, keeps its own.
    store.place_brand_items(
        feed, {name: [name] for name in (JOINED_BRAND, BRAND_ONLY)}, run_id=run,
        priority=BRAND_ONLY_PRIORITY,
    )  # fmt: skip
    return store
