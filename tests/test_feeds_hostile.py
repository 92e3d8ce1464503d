"""Hostile feeds through the whole feed stage: each one ends in rejects with their reasons or in
exit 3 with one line, and leaves a profile that reads back, however often it is run."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main
from catmap.errors import FeedFormatError
from catmap.feeds import open_feed
from catmap.feeds.fieldmap import FeedProfile, load_profile, save_profile
from catmap.records import Reject, SourceRecord

BAD = Path(__file__).parent / "data" / "bad"
# Files that need the encoding given to reach their problem.
GIVEN_ENCODING = {"not_utf8_given_utf8.csv": "utf-8", "invalid_utf8_mid_file.csv": "utf-8"}


def _normalize(feed: Path, project: Path, out: Path, *extra: str) -> object:
    return CliRunner().invoke(
        main,
        ["normalize", str(feed), "--out", str(out), "--project", str(project), "--json", *extra],
        catch_exceptions=False,
    )


def _check_run(result: object, out: Path) -> None:
    code = result.exit_code  # type: ignore[attr-defined]
    stderr = result.stderr.strip()  # type: ignore[attr-defined]
    assert code in (0, 3), stderr
    if code == 3:
        assert stderr.startswith("catmap: error:")
        assert len(stderr.splitlines()) == 1
        assert "Traceback" not in stderr
    if code == 0 or (out / "accounting.json").exists():
        facts = json.loads((out / "accounting.json").read_text("utf-8"))
        assert facts["read"] == facts["kept"] + facts["rejected"]
        for reason in facts["by_reason"]:
            assert reason  # every reject is counted under a reason


@pytest.mark.parametrize("path", sorted(BAD.iterdir()), ids=lambda p: p.name)
def test_bad_feed_twice_through_normalize(path: Path, tmp_path: Path) -> None:
    project = tmp_path / "project"
    extra = ("--encoding", GIVEN_ENCODING[path.name]) if path.name in GIVEN_ENCODING else ()
    for run in (1, 2):
        out = tmp_path / f"out{run}"
        _check_run(_normalize(path, project, out, *extra), out)
        for saved in (project / "profiles").rglob("*.toml") if project.exists() else ():
            load_profile(saved)  # raises on a profile that does not read back
            assert not list(saved.parent.glob("*.tmp"))  # nothing left of an atomic write


def test_json_nested_100000_levels_is_one_reject(tmp_path: Path) -> None:
    feed = tmp_path / "deep.jsonl"
    deep = "[" * 100_000 + "]" * 100_000
    feed.write_text(
        '{"id": "A1", "title": "Lantern small", "extra": ' + deep + "}\n"
        '{"id": "A2", "title": "Thimble brass"}\n',
        encoding="utf-8",
    )
    results = list(open_feed(feed))
    rejects = [r for r in results if isinstance(r, Reject)]
    assert [r.reason for r in rejects] == ["unparseable_record"]
    assert "nested too deep" in rejects[0].detail
    assert [r.fields["id"] for r in results if isinstance(r, SourceRecord)] == ["A2"]
    for run in (1, 2):
        out = tmp_path / f"out{run}"
        _check_run(_normalize(feed, tmp_path / "p", out), out)


@pytest.mark.parametrize("codec", ["rot13", "base64", "idna", "utf-7", "hex", "zlib"])
def test_encoding_that_is_not_a_text_encoding_exits_3(codec: str, tmp_path: Path) -> None:
    feed = tmp_path / "shop.csv"
    feed.write_text("id,title\nA1,Lantern small\n", encoding="utf-8")
    result = _normalize(feed, tmp_path / "p", tmp_path / "o", "--encoding", codec)
    assert result.exit_code == 3  # type: ignore[attr-defined]
    stderr = result.stderr.strip()  # type: ignore[attr-defined]
    assert len(stderr.splitlines()) == 1
    assert "not a text encoding" in stderr


def test_saved_profile_with_a_bad_codec_exits_3(tmp_path: Path) -> None:
    feed = tmp_path / "shop.csv"
    feed.write_text("id,title\nA1,Lantern small\n", encoding="utf-8")
    profile = tmp_path / "bad.toml"
    save_profile(
        FeedProfile(columns={"product_id": "id", "title": "title"}, encoding="rot13"), profile
    )
    result = _normalize(feed, tmp_path / "p", tmp_path / "o", "--profile", str(profile))
    assert result.exit_code == 3  # type: ignore[attr-defined]
    assert "not a text encoding" in result.stderr  # type: ignore[attr-defined]


def test_huge_unquoted_cell_is_not_called_an_unclosed_quote(tmp_path: Path) -> None:
    feed = tmp_path / "huge.csv"
    with feed.open("w", encoding="ascii") as out:
        out.write("id,title,notes\nA1,Lantern small,short\nA2,Thimble brass,")
        chunk = "x" * (1 << 20)
        for _ in range(70):  # 70 MiB, above the 64 MiB cell limit
            out.write(chunk)
        out.write("\nA3,Copper kettle,short\n")
    with pytest.raises(FeedFormatError) as info:
        list(open_feed(feed))
    assert "larger than 64 MiB" in info.value.message
    assert "never closed" not in str(info.value)
    assert info.value.line == 3


def test_a_quote_running_past_the_cell_limit_loses_no_line(tmp_path: Path) -> None:
    feed = tmp_path / "stray.csv"
    with feed.open("w", encoding="ascii") as out:
        out.write('id,title\nA1,Lantern small\nA2,"Thimble brass\n')
        out.writelines(["y" * 1023 + "\n"] * 2048)  # 2 MiB swallowed by the open quote
        out.write("A3,Copper kettle\n")
    before = csv.field_size_limit(1 << 20)  # a small limit keeps the test fast
    try:
        results = list(open_feed(feed))
    finally:
        csv.field_size_limit(before)
    first, broken, *swallowed, last = results
    assert isinstance(first, SourceRecord) and isinstance(last, SourceRecord)
    assert (first.fields["id"], last.fields["id"], last.line) == ("A1", "A3", 2052)
    assert isinstance(broken, Reject) and broken.line == 3
    assert "runs on past the cell size limit (1 MiB)" in broken.detail
    # Every line the quote took is read on its own (one cell: a ragged row), once, in order.
    assert [(r.reason, r.line) for r in swallowed if isinstance(r, Reject)] == [
        ("ragged_row", line) for line in range(4, 2052)
    ]


def test_profile_is_written_atomically(tmp_path: Path) -> None:
    target = tmp_path / "profiles" / "shop.toml"
    profile = FeedProfile(
        columns={"product_id": "id", "title": "ti\x01tle"},
        source_columns=("id", "ti\x01tle", "no\udce9te"),
    )
    save_profile(profile, target)
    save_profile(profile, target)  # over an existing file
    assert [p.name for p in target.parent.iterdir()] == ["shop.toml"]
    loaded = load_profile(target)
    assert loaded.columns == {"product_id": "id", "title": "ti\x01tle"}


def test_bad_utf16_code_unit_says_the_file_is_damaged() -> None:
    rejects = [r for r in open_feed(BAD / "bad_code_unit_utf16.csv") if isinstance(r, Reject)]
    assert [r.reason for r in rejects] == ["bad_encoding"]
    assert "damaged" in rejects[0].detail and "cp1252" not in rejects[0].detail
