"""Fitting text into the review screen's columns, measured in terminal cells.

A CJK character takes two cells and a combining accent none, so lengths are counted with
:func:`rich.cells.cell_len`, never ``len``; emoji sequences whose width terminals disagree on
are first taken apart into plain emoji (:func:`plain_emoji`). Text is shortened deliberately:
at a word boundary when there is one in reach, and a path loses whole segments from its middle
(the top level and the node's own name stay) before anything is cut inside a name.
"""

from __future__ import annotations

from rich.cells import cell_len

ELLIPSIS = "…"
PATH_SEPARATOR = " > "
# A cut falls back to the last space when that keeps at least this share of the width.
WORD_CUT_SHARE = 0.6

# What joins or adorns an emoji into a sequence: the text and emoji presentation selectors, the
# zero-width joiner, the five skin-tone modifiers and the tag letters of subdivision flags.
# rich counts a whole sequence as one emoji of two cells, but a terminal that draws code point
# by code point does not: tmux 3.3 draws "❤️" (heart + emoji selector) and "🏳️‍🌈" in one cell and
# "👍🏽" in four, and the panel border after them moves. Without them every code point left
# has the one width rich and the terminals agree on ("❤" one cell, "👍" two).
_EMOJI_ADORNMENTS = dict.fromkeys(
    [0xFE0E, 0xFE0F, 0x200D, *range(0x1F3FB, 0x1F400), *range(0xE0020, 0xE0080)]
)


def plain_emoji(text: str) -> str:
    """``text`` with its emoji sequences taken apart into their plain emoji (see above).

    Example:
        >>> plain_emoji("Love ❤️ socks 👍🏽")
        'Love ❤ socks 👍'
    """
    return text.translate(_EMOJI_ADORNMENTS)


def _head(text: str, width: int) -> str:
    """The longest start of ``text`` that fits ``width`` cells."""
    used = 0
    for index, character in enumerate(text):
        used += cell_len(character)
        if used > width:
            return text[:index]
    return text


def fit(text: str, width: int) -> str:
    """``text`` in at most ``width`` cells: whole when it fits, else cut with an ellipsis,
    at the last word boundary when that keeps most of the width."""
    text = plain_emoji(text)
    if cell_len(text) <= width:
        return text
    if width <= 1:
        return ELLIPSIS[:width]
    head = _head(text, width - 1)
    space = head.rfind(" ")
    ends_a_word = text[len(head)].isspace()
    if not ends_a_word and space > 0 and cell_len(head[:space]) >= WORD_CUT_SHARE * (width - 1):
        head = head[:space]
    return head.rstrip(" ,;:·-") + ELLIPSIS


def fit_path(text: str, width: int) -> str:
    """A category path in at most ``width`` cells, keeping its top level and its last name.

    Middle segments give way first ("Top > … > Leaf"), then the top ("… > Leaf"), then the
    marks (the last name alone); only a last name that does not fit on its own is cut, at its
    end.
    """
    parts = plain_emoji(text).split(PATH_SEPARATOR)
    for candidate in _shortened(parts):
        joined = PATH_SEPARATOR.join(candidate)
        if cell_len(joined) <= width:
            return joined
    leaf = parts[-1]
    if cell_len(leaf) <= width:
        return leaf
    return fit(leaf, width)


def _shortened(parts: list[str]) -> list[list[str]]:
    """A path's segments, then the shorter forms tried in turn: middle segments dropped one by
    one, those nearest the top first ("Top > … > Leaf"), then the top too ("… > Leaf")."""
    forms = [parts]
    forms += [[parts[0], ELLIPSIS, *parts[start + 1 :]] for start in range(1, len(parts) - 1)]
    forms += [[ELLIPSIS, *parts[start:]] for start in range(1, len(parts))]
    return forms


def wrap(text: str, width: int, max_lines: int | None = None) -> list[str]:
    """``text`` wrapped at spaces into lines of at most ``width`` cells.

    A word longer than a line is cut across lines. With ``max_lines``, text past that many
    lines is left out and the last line kept ends with an ellipsis (see :func:`fit`).
    """
    width = max(width, 1)
    lines: list[str] = []
    line = ""
    for word in plain_emoji(text).split():
        joined = f"{line} {word}" if line else word
        if cell_len(joined) <= width:
            line = joined
            continue
        if line:
            lines.append(line)
        while cell_len(word) > width:
            head = _head(word, width)
            lines.append(head)
            word = word[len(head) :]
        line = word
    if line or not lines:
        lines.append(line)
    if max_lines is not None and len(lines) > max_lines:
        kept = lines[: max(max_lines, 1)]
        rest = " ".join(lines[len(kept) :])
        kept[-1] = fit(f"{kept[-1]} {rest}", width)
        return kept
    return lines


def _path_lines(parts: list[str], width: int) -> list[str]:
    """Path segments packed into lines, each line but the last ending with ">"."""
    lines: list[str] = []
    line = ""
    for index, part in enumerate(parts):
        last = index == len(parts) - 1
        piece = part if last else f"{part} >"
        joined = f"{line} {piece}" if line else piece
        if cell_len(joined) <= width:
            line = joined
            continue
        if line:
            lines.append(line)
        # A segment longer than a line wraps at its own spaces.
        *full, line = wrap(piece, width)
        lines.extend(full)
    lines.append(line)
    return lines


def wrap_path(text: str, width: int, max_lines: int) -> list[str]:
    """A category path over at most ``max_lines`` lines of ``width`` cells, broken after its
    separators; when it needs more, middle segments give way as in :func:`fit_path`."""
    parts = plain_emoji(text).split(PATH_SEPARATOR)
    for candidate in _shortened(parts):
        lines = _path_lines(candidate, width)
        if len(lines) <= max_lines:
            return lines
    return wrap(parts[-1], width, max_lines)
