"""The review stage: the project store's review queue in, a reviewer's decisions out.

Input: a :class:`catmap.store.Store` with products queued for review and the category tree.
Output: decisions (accepted or corrected node, attribute corrections) written back to the store.

- :mod:`~catmap.review.session`: the logic, without a screen.
- :mod:`~catmap.review.app`: the textual screen.
- :mod:`~catmap.review.follow`: the attributes that follow a product to its new node.
- :mod:`~catmap.review.brands`: a person's verdict on a candidate brand (confirm, reject).
- :mod:`~catmap.review.sample`: a tiny store of invented products to try the screen on.

:class:`ReviewSession` holds the logic (claims, decisions, undo, group decisions, attribute
corrections, pace) and talks to :class:`catmap.store.Store`; :class:`ReviewApp` is the textual
screen on top of it. Only this package and :mod:`catmap.cli` import textual.
"""

from __future__ import annotations

from catmap.review.brands import confirm_brand, reject_brand, reset_brand, settle_brand
from catmap.review.session import REASON_TEXT, Pace, Pending, ReviewSession

__all__ = [
    "REASON_TEXT",
    "Pace",
    "Pending",
    "ReviewApp",
    "ReviewSession",
    "confirm_brand",
    "reject_brand",
    "reset_brand",
    "settle_brand",
]


def __getattr__(name: str) -> object:
    # The screen imports textual; load it only when asked for.
    if name == "ReviewApp":
        from catmap.review.app import ReviewApp

        return ReviewApp
    raise AttributeError(name)
