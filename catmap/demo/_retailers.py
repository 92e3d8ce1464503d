"""The invented retailers of the demo world and the house style of each one.

Six retailers make up the labelled reference catalog; three more are the new feeds to onboard,
plus one small labelled feed. A retailer's style says which languages its titles use, how it
writes prices, ids and category paths, and how noisy it is (capitals, SKU codes in titles,
marketing filler, wrong or vague categories).
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class Retailer:
    """One invented retailer and its house style (probabilities are per product)."""

    name: str
    slug: str
    langs: dict[str, float]
    currency: str
    id_prefix: str
    price_style: str  # "dot", "symbol", "thousands", "fr", "de", "es"
    category_sep: str
    category_style: str  # "full", "dept_leaf", "leaf", "audience"
    caps_p: float = 0.03
    lower_p: float = 0.02
    sku_p: float = 0.1
    filler_p: float = 0.1
    emoji_p: float = 0.0
    entity_p: float = 0.0
    mojibake_p: float = 0.0
    html_desc_p: float = 0.0
    desc_missing_p: float = 0.15
    gender_fill: float = 0.6
    gender_wild: bool = False
    own_label_p: float = 0.04
    variant_p: float = 0.3
    category_noise: float = 0.2
    currency_in_price_p: float = 0.0
    duplicates: int = 5
    per_product_lang: bool = False  # category / availability in each product's own language
    weight: float = 1.0
    extra: dict[str, str] = field(default_factory=dict)

    def pick_lang(self, rng: random.Random) -> str:
        """Draw the language of one product's title."""
        langs = sorted(self.langs)
        return rng.choices(langs, weights=[self.langs[k] for k in langs])[0]

    def shop_lang(self, product_lang: str) -> str:
        """The language of the retailer's own words (categories, availability) for a product."""
        return product_lang if self.per_product_lang else self.main_lang

    @property
    def main_lang(self) -> str:
        """The retailer's main language."""
        return max(sorted(self.langs), key=lambda k: self.langs[k])


# The reference catalog: mostly English, some French, German and Spanish.
REFERENCE_RETAILERS: tuple[Retailer, ...] = (
    Retailer("Hollowmere", "hollowmere", {"en": 1.0}, "GBP", "HM-", "symbol", " > ", "full",
             sku_p=0.05, filler_p=0.05, desc_missing_p=0.1, gender_fill=0.8, weight=0.24),
    Retailer("Tidewick Supply", "tidewick", {"en": 0.97, "es": 0.03}, "USD", "TW", "thousands",
             "/", "dept_leaf", caps_p=0.35, sku_p=0.45, filler_p=0.08, desc_missing_p=0.35,
             gender_fill=0.4, weight=0.2, currency_in_price_p=0.3),
    Retailer("Larkvane Outlet", "larkvane", {"en": 0.92, "fr": 0.04, "de": 0.04}, "GBP", "LV",
             "symbol", " | ", "audience", filler_p=0.4, emoji_p=0.12, entity_p=0.05,
             html_desc_p=0.6, gender_fill=0.5, category_noise=0.3, weight=0.2),
    Retailer("Galerie Fontavel", "fontavel", {"fr": 0.9, "en": 0.1}, "EUR", "GF", "fr", " > ",
             "audience", sku_p=0.15, filler_p=0.15, entity_p=0.04, html_desc_p=0.3,
             gender_fill=0.7, weight=0.12),
    Retailer("Kaufhaus Ostrani", "ostrani", {"de": 0.88, "en": 0.12}, "EUR", "KO-", "de", " > ",
             "full", caps_p=0.05, sku_p=0.3, filler_p=0.12, gender_fill=0.7, weight=0.12),
    Retailer("Almacenes Quiralta", "quiralta", {"es": 0.9, "en": 0.1}, "EUR", "AQ", "es", " / ",
             "dept_leaf", sku_p=0.1, filler_p=0.2, emoji_p=0.04, desc_missing_p=0.25,
             gender_fill=0.6, weight=0.12),
)

# New feeds to onboard (their gold labels are kept apart).
FEED_A = Retailer("Ferravelle", "ferravelle", {"fr": 0.85, "en": 0.15}, "EUR", "FV", "fr",
                  " > ", "audience", caps_p=0.08, sku_p=0.25, filler_p=0.2, entity_p=0.08,
                  html_desc_p=0.2, desc_missing_p=0.2, gender_fill=0.75, category_noise=0.22,
                  duplicates=6)
FEED_B = Retailer("Quorvane", "quorvane", {"en": 0.9, "de": 0.05, "fr": 0.05}, "EUR", "QV-",
                  "dot", " / ", "full", caps_p=0.04, sku_p=0.15, filler_p=0.15, emoji_p=0.05,
                  entity_p=0.06, html_desc_p=0.9, desc_missing_p=0.1, gender_fill=0.6,
                  category_noise=0.22, duplicates=5)
FEED_C = Retailer("Tallimbra", "tallimbra", {"en": 0.45, "de": 0.3, "es": 0.25}, "EUR", "",
                  "thousands", " >> ", "dept_leaf", caps_p=0.12, lower_p=0.06, sku_p=0.35,
                  filler_p=0.25, emoji_p=0.1, mojibake_p=0.04, desc_missing_p=0.4,
                  gender_fill=0.6, gender_wild=True, category_noise=0.25, duplicates=7,
                  currency_in_price_p=0.2, per_product_lang=True)
LABELLED_FEED = Retailer("Oskelund", "oskelund", {"en": 0.9, "de": 0.1}, "GBP", "OS", "symbol",
                         " > ", "full", sku_p=0.1, filler_p=0.1, gender_fill=0.6, duplicates=3)

ALL_RETAILERS: tuple[Retailer, ...] = (*REFERENCE_RETAILERS, FEED_A, FEED_B, FEED_C,
                                       LABELLED_FEED)
