"""The project folder: feed names without dates and run counters, the settings file."""

from __future__ import annotations

from pathlib import Path

import pytest

from catmap.errors import InputError
from catmap.project import (
    ProjectSettings,
    feed_name,
    feed_names,
    feed_stem,
    is_demo_project,
    load_settings,
    profile_path,
    save_settings,
    settings_path,
)


@pytest.mark.parametrize(
    "file_name",
    [
        "shop-a.csv",
        "shop-a.csv.gz",
        "shop-a_2026-11-30.csv",
        "shop-a-20261130.csv.gz",
        "shop-a (2).csv",
        "shop-a.001.csv",
        "2026-11-30_shop-a.xml",
        "shop-a_20261130T120000.jsonl",
        "shop-a_2026-11-30 (3).csv.zip",
    ],
)
def test_a_daily_file_keeps_its_feed_name(file_name: str) -> None:
    assert feed_stem(Path("in") / file_name) == "shop-a"


@pytest.mark.parametrize(
    ("file_name", "name"),
    [
        ("shop-24.csv", "shop-24"),  # digits of a retailer's name are not a date
        ("store2020.csv", "store2020"),
        ("20261130.csv", "20261130"),  # nothing but a date: the stem stays
        ("shop-2026-13-40.csv", "shop-2026-13-40"),  # no such month or day
    ],
)
def test_names_that_are_not_dates_stay(file_name: str, name: str) -> None:
    assert feed_stem(file_name) == name


def test_a_given_feed_name_wins_and_names_the_profile(tmp_path: Path) -> None:
    assert feed_name("shop-a_2026-11-30.csv", "north shop") == "north shop"
    assert profile_path(tmp_path, "x.csv", name="north shop").name == "north shop.toml"


@pytest.mark.parametrize("bad", ["../escape", "a/b", ".hidden", "", "x" * 101])
def test_a_feed_name_that_cannot_name_a_file_is_refused(bad: str) -> None:
    with pytest.raises(InputError, match="cannot be a feed name"):
        feed_name("shop.csv", bad)


def test_settings_read_back(tmp_path: Path) -> None:
    settings = ProjectSettings(
        tree_file="tree.txt",
        tree_version="3",
        tree_fingerprint="ab" * 32,
        brands_file="brands.csv",
        labelled=[str(tmp_path / 'a "quoted" \\ name.csv')],
    )
    save_settings(tmp_path, settings)
    assert load_settings(tmp_path) == settings
    assert not is_demo_project(tmp_path)


def test_no_settings_is_no_project_of_init(tmp_path: Path) -> None:
    assert load_settings(tmp_path) is None
    assert not is_demo_project(tmp_path)


def test_damaged_settings_are_an_input_error(tmp_path: Path) -> None:
    settings_path(tmp_path).write_text("[tree\n", encoding="utf-8")
    with pytest.raises(InputError, match="cannot read the project settings"):
        load_settings(tmp_path)
    settings_path(tmp_path).write_text("[train]\nlabelled = 3\n", encoding="utf-8")
    with pytest.raises(InputError, match="not in catmap's format"):
        load_settings(tmp_path)


def test_feed_names_of_one_run_must_differ() -> None:
    """A run of several feeds names each by its file; two files that name one feed (a dated
    copy of the same retailer's export) are refused, and --feed names one feed only."""
    assert feed_names(["a/shop-a.csv", "b/shop-b.xml"], verb="map") == ["shop-a", "shop-b"]
    assert feed_names(["x.csv"], "mine", verb="onboard") == ["mine"]
    with pytest.raises(InputError, match="two feeds are named 'shop-a'"):
        feed_names(["shop-a_2026-11-30.csv", "shop-a.csv.gz"], verb="onboard")
    with pytest.raises(InputError, match="--feed names one feed"):
        feed_names(["a.csv", "b.csv"], "mine", verb="map")
