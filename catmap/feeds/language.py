"""Which language a feed is written in, so that a run can warn when the tree's terms miss it.

The guess counts words that mark one language among English, French, German, Spanish,
Italian, Dutch and Portuguese (function words and the trade's common words: "with", "for",
"women", "black", "size"...) in the titles, category paths and descriptions of a sample of
records. It needs no model and reads only the sample: a feed's language does not change from
record to record.

Example:
    >>> guess_language(["Giacca uomo nera con cappuccio", "Borsa da donna in pelle"]).language
    'it'
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from catmap.records import SourceRecord

__all__ = ["LANGUAGE_NAMES", "LanguageGuess", "feed_language", "guess_language", "language_warning"]

LANGUAGE_NAMES: dict[str, str] = {
    "en": "English", "fr": "French", "de": "German", "es": "Spanish", "it": "Italian",
    "nl": "Dutch", "pt": "Portuguese",
}  # fmt: skip

# Words that mark one language (accents removed, lower case). A word shared by two of these
# languages ("de", "con", "per"...) is left out unless it is frequent in only one of them in
# product text. Common practice, no source.
_MARKERS: dict[str, frozenset[str]] = {
    "en": frozenset(
        "the and with for of in women men kids black white blue red green size pack set "
        "long short sleeve shirt shoes bag cotton leather steel wooden small large new "
        "without from by".split()
    ),
    "fr": frozenset(
        "le la les et avec pour du des une un femme homme enfant noir noire blanc blanche "
        "bleu rouge vert taille sac chaussures coton cuir acier bois petit grand sans "
        "au aux manches".split()
    ),
    "de": frozenset(
        "der die das und mit fur von ein eine damen herren kinder schwarz weiss blau rot "
        "grun grosse tasche schuhe baumwolle leder stahl holz klein gross ohne aus zum "
        "zur im".split()
    ),
    "es": frozenset(
        "el los las y con para del una mujer hombre nino nina negro negra blanco blanca "
        "azul rojo roja verde talla bolso zapatos algodon cuero acero madera pequeno "
        "grande sin manga".split()
    ),
    "it": frozenset(
        "il lo gli di e con per della delle dei uno donna uomo bambino bambina nero nera "
        "bianco bianca blu rosso rossa verde taglia borsa scarpe cotone pelle acciaio legno "
        "piccolo grande senza manica da".split()
    ),
    "nl": frozenset(
        "het een en met voor van dames heren kinderen zwart wit blauw rood groen maat tas "
        "schoenen katoen leer staal hout klein groot zonder uit lange korte mouw".split()
    ),
    "pt": frozenset(
        "o os as e com para do da dos das um uma mulher homem menino menina preto preta "
        "branco branca azul vermelho vermelha verde tamanho bolsa sapatos algodao couro aco "
        "madeira pequeno grande sem manga em".split()
    ),
}
# A guess needs this many marker words in the sample, and the best language this share of them.
MIN_MARKERS = 8
MIN_SHARE = 0.4
_WORD_RE = re.compile(r"[^\W\d_]+")
# Fields read for the guess, most telling first.
TEXT_FIELDS = ("title", "category_path", "description")
_CHARACTERS_READ = 600  # of each value: the start of a long description is enough


@dataclass(frozen=True, slots=True)
class LanguageGuess:
    """The language a feed seems to be written in.

    Attributes:
        language: a code of :data:`LANGUAGE_NAMES`, or "" when the sample says too little.
        share: the share of marker words that belong to that language.
        markers: marker words counted in the sample.
        evidence: the most frequent marker words of that language.
    """

    language: str
    share: float
    markers: int
    evidence: tuple[str, ...] = ()

    @property
    def name(self) -> str:
        """The language's English name ("" when unknown)."""
        return LANGUAGE_NAMES.get(self.language, "")

    def to_dict(self) -> dict[str, object]:
        """Return the guess as JSON-ready values."""
        return {
            "language": self.language,
            "name": self.name,
            "share": round(self.share, 3),
            "markers": self.markers,
            "evidence": list(self.evidence),
        }


def _fold(text: str) -> str:
    text = text.casefold()
    if text.isascii():
        return text
    decomposed = unicodedata.normalize("NFKD", text.replace("ß", "ss"))
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch))


def guess_language(texts: Iterable[str]) -> LanguageGuess:
    """Guess the language of some product texts.

    Args:
        texts: titles, category paths, descriptions.

    Returns:
        The guess; ``language`` is "" when fewer than :data:`MIN_MARKERS` marker words were
        found or no language has :data:`MIN_SHARE` of them.
    """
    hits: dict[str, Counter[str]] = {code: Counter() for code in _MARKERS}
    for text in texts:
        for word in _WORD_RE.findall(_fold(text[:_CHARACTERS_READ])):
            for code, markers in _MARKERS.items():
                if word in markers:
                    hits[code][word] += 1
    totals = {code: sum(counter.values()) for code, counter in hits.items()}
    counted = sum(totals.values())
    if not counted:
        return LanguageGuess("", 0.0, 0)
    best = max(totals, key=lambda code: (totals[code], code == "en"))
    share = totals[best] / counted
    evidence = tuple(word for word, _ in hits[best].most_common(5))
    if counted < MIN_MARKERS or share < MIN_SHARE:
        return LanguageGuess("", share, counted, evidence)
    return LanguageGuess(best, share, counted, evidence)


def feed_language(sample: Sequence[SourceRecord], columns: dict[str, str]) -> LanguageGuess:
    """Guess a feed's language from a sample of its records and its profile's columns.

    Args:
        sample: the first records of the feed.
        columns: the profile's field -> source column mapping.

    Returns:
        The guess (read from the title, category path and description columns).
    """
    chosen = [columns[name] for name in TEXT_FIELDS if columns.get(name)]
    return guess_language(
        value for record in sample for column in chosen if (value := record.fields.get(column))
    )


def language_warning(guess: LanguageGuess, covered: Sequence[str]) -> str | None:
    """Say when a feed's language is not among the tree's languages.

    Args:
        guess: from :func:`feed_language` or :func:`guess_language`.
        covered: the language codes the category tree has terms in.

    Returns:
        A one-sentence warning, or None when the language is covered or unknown.
    """
    if not guess.language or guess.language in covered:
        return None
    names = ", ".join(LANGUAGE_NAMES.get(code, code) for code in covered)
    return (
        f"the feed seems to be in {guess.name} ({guess.share:.0%} of {guess.markers} marker "
        f"words: {', '.join(guess.evidence)}), which the category tree has no terms for "
        f"(it has {names}); expect weaker mappings and more products to review"
    )
