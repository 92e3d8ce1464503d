"""The review screen: a reviewer works through the review queue of a project store.

:class:`ReviewSession` holds the logic (claims, decisions, undo, group decisions, attribute
corrections, pace) and talks to :class:`catmap.store.Store`; :class:`ReviewApp` is the textual
screen on top of it. Only this package and :mod:`catmap.cli` import textual.
"""

from __future__ import annotations

from catmap.review.session import REASON_TEXT, Pace, Pending, ReviewSession

__all__ = ["REASON_TEXT", "Pace", "Pending", "ReviewApp", "ReviewSession"]


def __getattr__(name: str) -> object:
    # The screen imports textual; load it only when asked for.
    if name == "ReviewApp":
        from catmap.review.app import ReviewApp

        return ReviewApp
    raise AttributeError(name)
