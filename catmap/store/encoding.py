"""How products and a mapping's alternatives are written as JSON text in the store, and read back.

Bulk writes serialise hundreds of thousands of products, so the writers here take the cheapest
path the standard json module offers; the readers still accept the older object format.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from decimal import Decimal
from math import isfinite

from catmap.errors import StoreError
from catmap.records import Alternative, Product

# One encoder reused for every row: bulk writes serialise hundreds of thousands of products.
# No key sorting, no spaces, no ASCII escaping: the cheapest JSON the C encoder writes.
_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))
_encode = _ENCODER.encode

# Products are saved as a JSON array in this field order, led by the format number: half the
# size of an object with keys and about twice as fast to write. Objects (the format before)
# are still read.
_PRODUCT_FORMAT = 2
_PRODUCT_FIELDS = (
    "product_id",
    "title",
    "description",
    "brand",
    "category_path",
    "price",
    "currency",
    "gtin",
    "gtin_raw",
    "gender_text",
    "colour",
    "size",
    "url",
    "image_url",
    "availability",
    "extra",
    "flags",
    "source_line",
)


def product_to_json(product: Product) -> str:
    """Return a product as JSON text that :func:`product_from_json` turns back into it."""
    price = product.price
    return _encode(
        [
            _PRODUCT_FORMAT,
            product.product_id,
            product.title,
            product.description,
            product.brand,
            product.category_path,
            # Decimal as text: a float would change 19.90 into 19.9 or worse.
            None if price is None else str(price),
            product.currency,
            product.gtin,
            product.gtin_raw,
            product.gender_text,
            product.colour,
            product.size,
            product.url,
            product.image_url,
            product.availability,
            product.extra,
            product.flags,
            product.source_line,
        ]
    )


def product_from_json(text: str) -> Product:
    """Rebuild a product saved by :func:`product_to_json` (either format)."""
    data = json.loads(text)
    if isinstance(data, list):
        if data[0] != _PRODUCT_FORMAT:
            raise StoreError(f"unknown product format {data[0]!r} in the store")
        data = dict(zip(_PRODUCT_FIELDS, data[1:], strict=True))
    price = data.get("price")
    return Product(
        product_id=data["product_id"],
        title=data["title"],
        description=data.get("description", ""),
        brand=data.get("brand", ""),
        category_path=tuple(data.get("category_path", ())),
        price=Decimal(price) if price is not None else None,
        currency=data.get("currency"),
        gtin=data.get("gtin"),
        gtin_raw=data.get("gtin_raw", ""),
        gender_text=data.get("gender_text", ""),
        colour=data.get("colour", ""),
        size=data.get("size", ""),
        url=data.get("url", ""),
        image_url=data.get("image_url", ""),
        availability=data.get("availability", "unknown"),
        extra=dict(data.get("extra", {})),
        flags=tuple(data.get("flags", ())),
        source_line=int(data.get("source_line", 0)),
    )


_quote = json.encoder.encode_basestring  # the C string quoter of the json module


def _alternatives_json(alternatives: Sequence[Alternative]) -> str:
    # Written by hand: calling the encoder costs more than the few short pairs it writes.
    if not alternatives:
        return "[]"
    parts = []
    for alt in alternatives:
        confidence = float(alt.confidence)
        if not isfinite(confidence):
            return _encode([(a.node_id, a.confidence) for a in alternatives])
        parts.append(f"[{_quote(alt.node_id)},{confidence!r}]")
    return "[" + ",".join(parts) + "]"


def _alternatives_from_json(text: str) -> tuple[Alternative, ...]:
    return tuple(Alternative(str(node), float(conf)) for node, conf in json.loads(text))
