"""Text folding shared by the attribute extractors and the colour reader of the feeds stage.

Every extractor looks at words, not characters: text is case-folded, stripped of diacritics,
apostrophes and dots are deleted ("men's" → "mens", "S.A." → "sa"), "&" and "+" become "and",
every other non-alphanumeric character becomes a space, and runs of spaces collapse. Lexicons
are folded the same way when they are built, so a look-up is a plain string comparison.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable

import ahocorasick

_DECIMAL = re.compile(r"(?<=\d)[.,](?=\d)")
_DELETE = re.compile(r"['’`´.]")
# Removed before Unicode decomposition, which would turn "™" into the letters "TM".
_MARKS = re.compile(r"[®™©℠]")
_AND = re.compile(r"\s*[&+]\s*")
_NON_WORD = re.compile(r"[^0-9a-z]+")
# Letters NFKD does not decompose into a base letter plus a mark.
# A trade mark written in letters and glued to the name: "KentonTM", "KENTONTM", "Priso(R)"
# (after two capitals only, so that "ATM" stays a word).
_GLUED_MARK = re.compile(r"(?<=[a-z])TM\b|(?<=[A-Z]{2})TM\b|\((?:TM|tm|R|r|C|c)\)")
_SPECIAL = str.maketrans({"ß": "ss", "ø": "o", "æ": "ae", "œ": "oe", "ł": "l", "đ": "d", "ı": "i"})


def fold(text: str) -> str:
    """Return ``text`` as lower-case ASCII words separated by single spaces.

    Args:
        text: any string.

    Returns:
        The folded words ("" when there are none).

    Example:
        >>> fold("Mädchen-Jacke, Bébé's ROSE!")
        'madchen jacke bebes rose'
    """
    if "TM" in text or "(" in text:
        text = _GLUED_MARK.sub("", text)
    text = text.lower()
    if not text.isascii():
        text = _MARKS.sub("", text)
        text = text.translate(_SPECIAL)
        text = "".join(
            c for c in unicodedata.normalize("NFKD", text) if not unicodedata.combining(c)
        )
        text = text.lower()
        deletions = True
    else:
        # Plain ASCII: the deletions are needed only when one of their characters is there.
        deletions = "." in text or "'" in text or "`" in text
    if "." in text or "," in text:
        # "1.5 m" must not read as "15 m": a decimal point stays inside its number as "d".
        text = _DECIMAL.sub("d", text)
    if deletions:
        text = _DELETE.sub("", text)
    if "&" in text or "+" in text:
        text = _AND.sub(" and ", text)
    return _NON_WORD.sub(" ", text).strip()


class PhraseIndex:
    """Find whole-word phrases in folded text in one pass (Aho-Corasick).

    Each phrase carries a payload; :meth:`find` returns every occurrence as
    ``(start, end, phrase, payload)`` where start/end index the folded text.
    """

    def __init__(self, phrases: Iterable[tuple[str, object]]) -> None:
        self._automaton = ahocorasick.Automaton()
        count = 0
        for phrase, payload in phrases:
            key = fold(phrase)
            if key:
                # Padding with spaces on both sides makes every match a whole-word match.
                self._automaton.add_word(f" {key} ", (key, payload))
                count += 1
        self._empty = count == 0
        if not self._empty:
            self._automaton.make_automaton()

    def find(self, folded: str) -> list[tuple[int, int, str, object]]:
        """Return all whole-word occurrences in a folded text, in order of their end."""
        if self._empty or not folded:
            return []
        # In the padded text a match ends at `end` (its closing space); map back to `folded`.
        return [
            (end - len(key) - 1, end - 1, key, payload)
            for end, (key, payload) in self._automaton.iter(f" {folded} ")
        ]
