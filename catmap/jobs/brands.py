"""The brand dictionary grows: names that repeat in a feed but are unknown (candidates), and a
brand added with its spellings; the project's brand registry listed, and a brand in it confirmed
(the facts ``catmap brands`` prints)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from catmap.attributes import BrandCandidates, BrandDictionary, RegistryBrand
from catmap.attributes.brand import (
    append_brand,
    demo_dictionary_path,
    dictionary_in_use,
    project_dictionary_path,
)
from catmap.errors import InputError
from catmap.feeds.fieldmap import suggest_profile
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, iter_products
from catmap.jobs._brand_registry import confirm_brand, load_registry
from catmap.jobs._feed_profile import SAMPLE_SIZE, open_with_profile, saved_profile
from catmap.project import is_demo_project, profile_path
from catmap.records import Product
from catmap.store import Store, store_path

__all__ = ["accept_brand", "brand_candidates", "confirm_registry_brand", "registry_brands"]


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


def _brand_facts(brand: RegistryBrand) -> dict[str, Any]:
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
        sightings per feed, variants with counts, departments and sources.
    """
    if not store_path(project).exists():
        everything: list[RegistryBrand] = []
    else:
        with Store.for_project(project) as store:
            everything = load_registry(store).brands()
    shown = [b for b in everything if status is None or b.status == status]
    counts = {"candidate": 0, "confirmed": 0, "rejected": 0}
    for brand in everything:
        counts[brand.status] = counts.get(brand.status, 0) + 1
    return {
        "store": str(store_path(project)),
        "total": len(everything),
        "by_status": counts,
        "brands": [_brand_facts(b) for b in shown],
    }


def confirm_registry_brand(name: str, *, project: Path) -> dict[str, Any]:
    """Mark a brand of the project's registry as confirmed: later runs trust it as a brand of
    the dictionary (every spelling seen of it included).

    Args:
        name: the brand's name, or any spelling of it seen.
        project: the project folder.

    Returns:
        The facts: the brand as now stored, its status before, and how many products that
        carried it as a candidate are now confirmed.

    Raises:
        InputError: no brand of that name or spelling is in the registry.
    """
    if not store_path(project).exists():
        raise InputError(
            f"no brand '{name}' in the registry: the project has no store yet",
            path=store_path(project), field="brand",
            hint="onboard a feed first (`catmap onboard FEED`)",
        )  # fmt: skip
    with Store.for_project(project) as store:
        brand, before, products = confirm_brand(store, name)
    facts = _brand_facts(brand)
    facts["was"] = before
    facts["products_confirmed"] = products
    return facts
