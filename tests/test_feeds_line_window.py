"""Tests for the line window the delimited reader reads through (catmap.feeds._line_window)."""

from __future__ import annotations

import io

import pytest

from catmap.feeds import _line_window
from catmap.feeds._line_window import LineWindow


def _text(lines: list[str]) -> io.StringIO:
    return io.StringIO("".join(lines), newline="")


def test_lines_are_handed_on_unchanged_in_order(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(_line_window, "BLOCK_CHARS", 10)
    lines = [f"row {i}\r\n" if i % 2 else f"row {i}\n" for i in range(50)]
    window = LineWindow(_text(lines), first_line=1, record_start=lambda: 1, limit=1 << 20)
    assert list(window) == lines


def test_the_current_records_lines_are_kept_across_blocks(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setattr(_line_window, "BLOCK_CHARS", 12)
    lines = [f"line {n:03}\n" for n in range(1, 101)]  # 9 characters each
    record = {"start": 1}
    window = LineWindow(
        _text(lines), first_line=1, record_start=lambda: record["start"], limit=1 << 20
    )
    taken = iter(window)
    for number in range(1, 41):
        assert next(taken) == lines[number - 1]
        if number == 30:
            record["start"] = 31  # a record ended on line 30
    # The record starting on line 31 is the current one: lines 31..40 are held, 30 is not.
    assert window.lines(31, 40) == lines[30:40]
    assert window.lines(35, 35) == [lines[34]]
    assert window.lines(1, 2) is None


def test_a_record_longer_than_the_limit_lets_its_first_lines_go(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setattr(_line_window, "BLOCK_CHARS", 20)
    lines = [f"line {n:03}\n" for n in range(1, 201)]
    record = {"start": 1}
    window = LineWindow(_text(lines), first_line=1, record_start=lambda: record["start"], limit=200)
    taken = iter(window)
    for _ in range(100):  # one record of 100 lines (900 characters)
        next(taken)
    assert window.lines(1, 100) is None
    record["start"] = 101  # the next record is held again
    for _ in range(10):
        next(taken)
    assert window.lines(101, 110) == lines[100:110]


def test_a_cut_stream_gives_its_whole_lines_then_its_error() -> None:
    cut = ValueError("cut here")
    text = _text(["a,1\n", "b,2\n", "c,"])
    window = LineWindow(
        text, first_line=1, record_start=lambda: 1, limit=1 << 20,
        damage=lambda: cut if text.tell() == len("a,1\nb,2\nc,") else None,
    )  # fmt: skip
    seen: list[str] = []
    with pytest.raises(ValueError, match="cut here"):
        seen.extend(window)
    assert seen == ["a,1\n", "b,2\n"]


def test_lines_without_readlines_are_read_too() -> None:
    lines = [f"{n}\n" for n in range(3000)]
    window = LineWindow(iter(lines), first_line=7, record_start=lambda: 7, limit=1 << 20)
    assert list(window) == lines
