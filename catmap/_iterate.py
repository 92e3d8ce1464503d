"""Small iteration helpers shared by the streaming stages."""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import TypeVar

T = TypeVar("T")


def chunked(items: Iterable[T], size: int) -> Iterator[list[T]]:
    """Yield lists of up to ``size`` consecutive items, the last one possibly shorter.

    Example:
        >>> list(chunked(range(5), 2))
        [[0, 1], [2, 3], [4]]
    """
    chunk: list[T] = []
    for item in items:
        chunk.append(item)
        if len(chunk) >= size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk
