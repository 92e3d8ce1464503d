"""catmap: map retailer product feeds onto one shared category tree.

The pipeline, one module or small package per stage:
feeds (read) → normalize → taxonomy → classify → attributes → store / queue → review → export.
"""

from __future__ import annotations

from catmap.errors import CatmapError
from catmap.records import Attributes, Mapping, Product, Reject, SourceRecord

__all__ = ["Attributes", "CatmapError", "Mapping", "Product", "Reject", "SourceRecord"]
__version__ = "0.1.0"
