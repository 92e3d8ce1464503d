"""Python's garbage collector around start-up: paused while modules and the model load, and the
long-lived objects then frozen out of its rounds when catmap runs as a program.

Loading a model makes hundreds of thousands of Python objects that live as long as the process
(vocabularies, caches, the tree). While they are made, the collector runs again and again over a
heap that only grows, and finds almost nothing to free (about a tenth of a one-row
``catmap map``); once they are made, every full collection walks them all again while a feed
streams through (a quarter of the mapping time when nothing was frozen). So start-up runs with
the collector paused (:func:`paused`), and a program freezes what it has loaded
(:func:`settle`, ``gc.freeze``): frozen objects are never scanned, and worker processes forked
afterwards do not touch (and copy) their shared pages.

Freezing is for a program only (the command line marks itself with :func:`run_as_program`): a
library call must not change how its caller's heap is collected.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["is_program", "paused", "run_as_program", "settle"]

_program = False


def run_as_program() -> None:
    """Mark this process as catmap's command line: :func:`settle` may freeze its heap."""
    global _program
    _program = True


def is_program() -> bool:
    """Whether this process runs as catmap's command line (see :func:`run_as_program`)."""
    return _program


@contextmanager
def paused() -> Iterator[None]:
    """Pause automatic garbage collection inside the block.

    The collector runs again after the block if it ran before it (so nested blocks resume only
    at the outermost one); reference counting frees what it can meanwhile, as always.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def settle() -> None:
    """A part of start-up is over: in a program, freeze every object alive now.

    What start-up made (modules, the loaded model) lives as long as the process. Frozen, it is
    never scanned again, nor collected; the little garbage start-up left in reference cycles
    (some thousand small objects after a model's load) is frozen with it rather than paid for
    with a full collection. In a library call, nothing.
    """
    if _program:
        gc.freeze()
