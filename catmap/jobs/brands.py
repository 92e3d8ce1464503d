"""The brand dictionary grows: names that repeat in a feed but are unknown (candidates), and a
brand added with its spellings; the project's brand registry listed, and a brand in it confirmed
(the facts ``catmap brands`` prints)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from catmap.attributes import BrandCandidates, BrandDictionary, RegistryBrand, brand_key
from catmap.attributes.brand import (
    append_brand,
    demo_dictionary_path,
    dictionary_in_use,
    project_dictionary_path,
)
from catmap.attributes.registry import CANDIDATE, CONFIRMED, REJECTED
from catmap.errors import InputError
from catmap.feeds.fieldmap import suggest_profile
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, iter_products
from catmap.jobs._brand_registry import load_registry, settle_registry_brand
from catmap.jobs._feed_profile import SAMPLE_SIZE, open_with_profile, saved_profile
from catmap.project import is_demo_project, profile_path
from catmap.records import Product
from catmap.review.brands import feed_own_names
from catmap.store import Store, store_path

__all__ = [
    "accept_brand",
    "brand_candidates",
    "confirm_registry_brand",
    "registry_brands",
    "reject_registry_brand",
    "reset_registry_brand",
]

# Example titles shown per brand by `catmap brands list`: enough to tell a brand from a shop
# word or a product line at a glance. Common practice, no source.
EXAMPLE_TITLES = 2


def brand_candidates(
    feed: Path,
    *,
    project: Path,
    min_count: int = 5,
    retailers: Sequence[str] = (),
    dictionary: Path | None = None,
    feed_name: str | None = None,
) -> dict[str, Any]:
    """Return the names that repeat in a feed's brand field or leading title words but are
    not in the brand dictionary.

    The feed is read with its saved profile, or one suggested without saving it.

    Args:
        feed: the feed file.
        project: the project folder.
        min_count: names seen at least this many times.
        retailers: the retailer's own names (never a candidate).
        dictionary: the brand dictionary CSV (default: the project's).
        feed_name: the feed's name, which names its profile (default: from the file name).

    Returns:
        The facts: products read, the candidates with counts and example titles, and why
        reading stopped early (None when it did not).
    """
    dictionary_path = dictionary_in_use(project, dictionary)
    brands = BrandDictionary.from_csv(dictionary_path) if dictionary_path else BrandDictionary([])
    profile = saved_profile(profile_path(project, feed, name=feed_name))
    opened = open_with_profile(feed, profile)
    if profile is None:
        profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    collector = BrandCandidates(brands, retailer_names=tuple(retailers))
    accounting = Accounting()
    stopped: str | None = None
    try:
        for item in iter_products(opened, profile, accounting):
            if isinstance(item, Product):
                collector.add(item.brand, item.title)
    except FATAL_FEED_ERRORS as error:
        stopped = str(error)
    found = collector.candidates(min_count)
    return {
        "feed": str(feed),
        "dictionary": str(dictionary_path) if dictionary_path else None,
        "products": accounting.kept,
        "min_count": min_count,
        "candidates": [
            {"name": c.name, "count": c.count, "source": c.source, "examples": c.examples}
            for c in found
        ],
        "stopped_early": stopped,
    }


def accept_brand(
    name: str,
    *,
    project: Path,
    variants: Sequence[str] = (),
    departments: Sequence[str] = (),
    dictionary: Path | None = None,
) -> dict[str, Any]:
    """Add a brand (with case, joined and legal-suffix spellings) to the brand dictionary.

    The project's dictionary ``<project>/brands.csv`` is created on first use (from the demo
    one in the project of ``catmap demo``, else empty).

    Args:
        name: the brand's name.
        project: the project folder.
        variants: other spellings.
        departments: department node ids the brand sells in.
        dictionary: the brand dictionary CSV (default: the project's).

    Returns:
        The facts: the entry as saved, the dictionary, and whether it was created.
    """
    path = dictionary or project_dictionary_path(project)
    created = not path.exists()
    seed = demo_dictionary_path() if is_demo_project(project) else None
    entry = append_brand(path, name, variants=variants, departments=departments, seed_from=seed)
    return {
        "brand": entry.name,
        "variants": list(entry.variants),
        "departments": list(entry.departments),
        "dictionary": str(path),
        "created": created,
    }


def _brand_facts(
    brand: RegistryBrand, store: Store | None = None, own_names: dict[str, str] | None = None
) -> dict[str, Any]:
    own = (own_names or {}).get(brand_key(brand.name), None)
    if own is None and own_names:
        own = next((own_names[k] for k in brand.keys() if k in own_names), None)
    return {
        "name": brand.name,
        "status": brand.status,
        "in_dictionary": bool(brand.dictionary_name),
        "seen": brand.count,
        "feeds": dict(sorted(brand.feeds.items())),
        "variants": [
            {"spelling": v.spelling, "seen": v.count}
            for v in sorted(brand.variants.values(), key=lambda v: (-v.count, v.spelling))
        ],
        "departments": dict(sorted(brand.departments.items(), key=lambda d: -d[1])),
        "sources": dict(sorted(brand.sources.items())),
        "feed_own_name": own,
        "examples": (
            store.brand_example_titles([brand.name, *brand.variants], limit=EXAMPLE_TITLES)
            if store is not None else []
        ),
    }


def registry_brands(project: Path, *, status: str | None = None) -> dict[str, Any]:
    """Return the project's brand registry: every canonical brand seen by onboarding.

    Args:
        project: the project folder.
        status: only brands of this status (``candidate``, ``confirmed`` or ``rejected``;
            None: all).

    Returns:
        The facts: the store, counts per status, and each brand (most seen first) with its
        status, sightings ("seen": a product's brand field and its title count one each), the
        sightings per feed, variants with counts, departments and sources, the feed whose own
        shop name it is (``feed_own_name``: None when it is no feed's), and up to
        :data:`EXAMPLE_TITLES` example product titles.
    """
    counts = {CANDIDATE: 0, CONFIRMED: 0, REJECTED: 0}
    facts: list[dict[str, Any]] = []
    total = 0
    if store_path(project).exists():
        with Store.for_project(project) as store:
            everything = load_registry(store).brands()
            own_names = feed_own_names(store)
            facts = [
                _brand_facts(b, store, own_names)
                for b in everything if status is None or b.status == status
            ]  # fmt: skip
        total = len(everything)
        for brand in everything:
            counts[brand.status] = counts.get(brand.status, 0) + 1
    return {
        "store": str(store_path(project)),
        "total": total,
        "by_status": counts,
        "brands": facts,
    }


def _settle(name: str, status: str, project: Path) -> dict[str, Any]:
    if not store_path(project).exists():
        raise InputError(
            f"no brand '{name}' in the registry: the project has no store yet",
            path=store_path(project), field="brand",
            hint="onboard a feed first (`catmap onboard FEED`)",
        )  # fmt: skip
    with Store.for_project(project) as store:
        brand, verdict = settle_registry_brand(store, name, status)
        facts = _brand_facts(brand, store, feed_own_names(store))
    facts["was"] = verdict.was
    facts["products_changed"] = verdict.products
    facts["audit_id"] = verdict.audit_id
    return facts


def confirm_registry_brand(name: str, *, project: Path) -> dict[str, Any]:
    """Mark a brand of the project's registry as confirmed: later runs trust it as a brand of
    the dictionary (every spelling seen of it included).

    Args:
        name: the brand's name, or any spelling of it seen.
        project: the project folder.

    Returns:
        The facts: the brand as now stored, its status before, and how many products that
        carried it as a candidate are now confirmed (``products_confirmed``).

    Raises:
        InputError: no brand of that name or spelling is in the registry.
    """
    facts = _settle(name, CONFIRMED, project)
    facts["products_confirmed"] = facts["products_changed"]
    return facts


def reject_registry_brand(name: str, *, project: Path) -> dict[str, Any]:
    """Mark a brand of the project's registry as rejected (no brand): the products that carry
    it as a candidate lose it, and later runs never learn it again.

    Args:
        name: the brand's name, or any spelling of it seen.
        project: the project folder.

    Returns:
        The facts: the brand as now stored, its status before, and how many products lost it
        (``products_cleared``).

    Raises:
        InputError: no brand of that name or spelling is in the registry, or it is a brand of
            the dictionary.
    """
    facts = _settle(name, REJECTED, project)
    facts["products_cleared"] = facts["products_changed"]
    return facts


def reset_registry_brand(name: str, *, project: Path) -> dict[str, Any]:
    """Set a brand of the project's registry back to a candidate, taking a confirmation or a
    rejection back: products that carry it as confirmed are candidates again, and those its
    last rejection took it from get it back (unless changed since).

    Args:
        name: the brand's name, or any spelling of it seen.
        project: the project folder.

    Returns:
        The facts: the brand as now stored, its status before, and how many products are
        candidates of it again (``products_reset``).

    Raises:
        InputError: no brand of that name or spelling is in the registry, or it is a brand of
            the dictionary.
    """
    facts = _settle(name, CANDIDATE, project)
    facts["products_reset"] = facts["products_changed"]
    return facts
