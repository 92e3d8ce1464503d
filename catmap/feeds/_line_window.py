"""Hand the csv reader its lines and keep those of the record it is on, to split them again.

When a stray quote makes the csv reader take the following lines into one cell and it then
cannot split the row, those lines are wanted again, each read on its own. Reading the file
again from its start to find them costs the whole file per stray quote; keeping every line
costs the whole file in memory. The window keeps only the lines from the current record's
first one on.

The lines go to the reader in blocks (``readlines`` with a size hint, so the per-line work
stays in C): the window holds the block being read, and the blocks before it only while a
record runs on over a block's end. How long it holds them is bounded: beyond ``limit``
characters the record's first lines are let go, and :meth:`LineWindow.lines` says so.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from itertools import chain, islice

# Characters asked of ``readlines`` per block: a few hundred ordinary rows. The window holds
# one block at a time (two when a record runs over a block's end).
BLOCK_CHARS = 64 * 1024
# Lines per block for text without ``readlines`` (lines already in memory).
_BLOCK_LINES = 1024


class LineWindow:
    """An iterable of text lines that remembers the lines of the csv reader's current record.

    Args:
        text: the decoded lines (a text stream opened with ``newline=""``, or a list of lines).
        first_line: the number of the text's first line.
        record_start: returns the number of the current record's first line (the line after
            the last one of the previous record); called once per block.
        limit: characters held for one record, at most (about: whole blocks are counted).
        damage: returns the error of a byte stream found cut or damaged, or None; a stream
            that found damage reads as ended. Its last line, when it has no line end, is cut
            off: it is dropped, and the error is raised after the lines before it.
    """

    def __init__(
        self,
        text: Iterable[str],
        *,
        first_line: int,
        record_start: Callable[[], int],
        limit: int,
        damage: Callable[[], BaseException | None] | None = None,
    ) -> None:
        self._text = text
        self._record_start = record_start
        self._limit = limit
        self._damage = damage
        self._blocks: list[list[str]] = []
        # Characters of each held block, -1 until it is measured (only a block a record runs
        # on from is measured).
        self._sizes: list[int] = []
        self._first = first_line  # number of the first held line
        self._next = first_line  # number of the next block's first line

    def __iter__(self) -> Iterator[str]:
        return chain.from_iterable(self._read())

    def _read(self) -> Iterator[list[str]]:
        readlines = getattr(self._text, "readlines", None)
        if callable(readlines):
            next_block: Callable[[], list[str]] = lambda: readlines(BLOCK_CHARS)  # noqa: E731
        else:
            lines = iter(self._text)
            next_block = lambda: list(islice(lines, _BLOCK_LINES))  # noqa: E731
        damage = self._damage
        while True:
            block = next_block()
            error = damage() if damage is not None else None
            if error is not None and block and not block[-1].endswith(("\n", "\r")):
                block.pop()  # the line the cut went through
            if block:
                self._hold(block)
                yield block
            if error is not None:
                raise error
            if not block:
                return

    def _hold(self, block: list[str]) -> None:
        start = self._record_start()
        if start >= self._next or start < self._first:
            # The usual case: the record begins in this block. (Or its beginning was let go:
            # too long to keep.)
            self._blocks = [block]
            self._sizes = [-1]
            self._first = self._next
        else:
            # The record began in a held block and runs on into this one.
            blocks, sizes = self._blocks, self._sizes
            while self._first + len(blocks[0]) <= start:
                self._first += len(blocks.pop(0))
                sizes.pop(0)
            if sizes[-1] < 0:
                sizes[-1] = sum(map(len, blocks[-1]))
            blocks.append(block)
            sizes.append(-1)
            if sum(sizes[:-1]) > self._limit:
                self._blocks = [block]
                self._sizes = [-1]
                self._first = self._next
        self._next += len(block)

    def lines(self, first: int, last: int) -> list[str] | None:
        """Return the lines ``first``..``last`` with their line ends, or None when the record
        they belong to grew past the limit and its first lines were let go."""
        if first < self._first or last < first:
            return None
        count = last - first + 1
        offset = first - self._first
        found = list(islice(chain.from_iterable(self._blocks), offset, offset + count))
        return found if len(found) == count else None
