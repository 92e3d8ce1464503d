"""CSV cells safe to open in a spreadsheet, and read back as they were.

Every CSV catmap writes goes through :func:`neutralise_cell`; a CSV catmap also reads back (the
brand dictionary, the remapped catalog) goes through :func:`restore_cell` on the way in, so a
value that had to be quoted comes back unchanged.
"""

from __future__ import annotations

import re

__all__ = ["neutralise_cell", "restore_cell"]

# OWASP "CSV Injection" guidance: a cell that starts with = + - @ TAB or CR can be read as a
# formula by a spreadsheet; prefixing a single quote makes it plain text.
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# A plain negative number ("-12.5", "-3,75") is left alone: spreadsheets read it as the number it
# is, it runs no formula, and prices / stock deltas would otherwise become text. (Our choice.)
_PLAIN_NEGATIVE_NUMBER = re.compile(r"-\d+(?:[.,]\d+)?")


def neutralise_cell(value: str) -> str:
    """Return ``value`` safe to put in a CSV cell that a spreadsheet may open.

    A cell starting with ``=``, ``+``, ``-``, ``@``, TAB or CR gets a leading single quote
    (OWASP CSV Injection guidance), except a plain negative number such as ``-12.5``.

    Args:
        value: the cell text.

    Returns:
        The text, quoted when it could be read as a formula.
    """
    if value and value[0] in _FORMULA_STARTS and not _PLAIN_NEGATIVE_NUMBER.fullmatch(value):
        return "'" + value
    return value


def restore_cell(value: str) -> str:
    """Undo :func:`neutralise_cell`: ``restore_cell(neutralise_cell(v)) == v``.

    That holds for every text except one that itself starts with a quote and a formula
    character (``'=x`` reads back as ``=x``). Only such a quote is removed, so a value that
    starts with a quote and a letter stays as it is.

    Args:
        value: the cell text as read.

    Returns:
        The original text.
    """
    if len(value) > 1 and value[0] == "'" and value[1] in _FORMULA_STARTS:
        rest = value[1:]
        if not _PLAIN_NEGATIVE_NUMBER.fullmatch(rest):
            return rest
    return value
