"""catmap init: a project of one's own, with its tree, brand list and labelled feeds; every
command on the project's tree; models, stores and trees that disagree refused by name."""

from __future__ import annotations

import json
import re
import shlex
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from catmap.attributes.brand import dictionary_in_use
from catmap.classify.storage import load_model
from catmap.cli import main
from catmap.errors import ModelTreeMismatch
from catmap.jobs.onboard import FeedMapper, check_store_tree
from catmap.project import SETTINGS_FILE, load_settings
from catmap.store import Store
from catmap.tree.taxonomy import load_tree

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "own-project"
TREE = EXAMPLE / "tree.txt"
LABELLED = EXAMPLE / "labelled.csv"
NEW_FEED = EXAMPLE / "new-shop_2026-11-30.csv"


def run(*args: str | Path) -> Result:
    return CliRunner().invoke(main, [str(a) for a in args])


def test_the_readme_commands_run_as_written(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = readme.split("## A project of your own", 1)[1].split("\n## ", 1)[0]
    commands = re.search(r"```\n(.*?)```", section, re.S)
    assert commands is not None
    monkeypatch.chdir(ROOT)
    project = tmp_path / "my-shop"
    for line in commands.group(1).splitlines():
        args = [project if arg == "my-shop" else arg for arg in shlex.split(line)[1:]]
        if args[0] == "review":  # the screen needs a terminal: its store must be ready
            args = ["status", *args[1:]]
        result = run(*args)
        assert result.exit_code == 0, f"{line}: {result.output}"
    status = json.loads(run("status", "--project", project, "--json").stdout)
    assert [feed["feed"] for feed in status["feeds"]] == ["new-shop"]  # the date is not its name


def test_init_copies_and_fingerprints_the_tree(tmp_path: Path) -> None:
    project = tmp_path / "p"
    result = run("init", project, "--tree", TREE, "--labelled", LABELLED, "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert (project / "tree.txt").read_bytes() == TREE.read_bytes()
    settings = load_settings(project)
    assert settings is not None and settings.tree_file == "tree.txt"
    assert settings.tree_fingerprint == facts["tree"]["fingerprint"]
    assert settings.labelled == [str(LABELLED.resolve())]
    assert facts["tree"]["leaves"] == 10
    assert not settings.demo
    # An empty brand list by default: no demo brand comes out of a real feed.
    assert dictionary_in_use(project) is None


def test_init_twice_and_an_invalid_tree_are_refused(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project).exit_code == 0
    again = run("init", project)
    assert again.exit_code == 3
    assert "already holds a catmap project" in again.stderr
    broken = tmp_path / "broken.txt"
    broken.write_text("@tree-version 1\n1 | - | Garden\n", encoding="utf-8")
    bad = run("init", tmp_path / "q", "--tree", broken)
    assert bad.exit_code == 3
    assert f"{broken}:2" in bad.stderr  # the file and the line
    assert not (tmp_path / "q" / SETTINGS_FILE).exists()


def test_init_takes_a_brand_list(tmp_path: Path) -> None:
    brands = tmp_path / "brands.csv"
    brands.write_text("brand,variants,departments\nBrambleworth,,\nTarrow,,\n", encoding="utf-8")
    result = run("init", tmp_path / "p", "--brands", brands, "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["brands"]["count"] == 2
    assert dictionary_in_use(tmp_path / "p") == tmp_path / "p" / "brands.csv"


def test_train_without_feeds_says_how_to_give_some(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE).exit_code == 0
    result = run("train", "--project", project)
    assert result.exit_code == 3
    assert "no labelled feeds to train on" in result.stderr
    assert "catmap init DIR --labelled FEED" in result.stderr


def test_a_changed_tree_copy_is_refused_with_both_fingerprints(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", LABELLED).exit_code == 0
    with open(project / "tree.txt", "a", encoding="utf-8") as handle:
        handle.write("# edited\n")
    result = run("train", "--project", project)
    assert result.exit_code == 3
    assert "was changed after `catmap init`" in result.stderr
    assert "fingerprint" in result.stderr


def test_model_and_tree_that_disagree_name_both_trees(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", LABELLED).exit_code == 0
    assert run("train", "--project", project).exit_code == 0
    # The shared tree v1 is another tree than the project's: the model is refused.
    result = run("map", NEW_FEED, "--out", tmp_path / "out", "--project", project,
                 "--tree-version", "1")  # fmt: skip
    assert result.exit_code == 4
    assert "the model was trained on tree version 1" in result.stderr
    assert str(project / "tree.txt") in result.stderr
    assert "taxonomies/tree-v1.txt" in result.stderr
    # The same nodes in a file of other content: still another tree.
    edited = tmp_path / "edited.txt"
    edited.write_text(TREE.read_text(encoding="utf-8") + "# a comment\n", encoding="utf-8")
    other = run("map", NEW_FEED, "--out", tmp_path / "out", "--project", project,
                "--tree-file", edited)  # fmt: skip
    assert other.exit_code == 4
    assert "fingerprint" in other.stderr


def test_map_and_evaluate_use_the_projects_tree(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", LABELLED).exit_code == 0
    assert run("train", "--project", project).exit_code == 0
    mapped = run("map", NEW_FEED, "--out", tmp_path / "out", "--project", project, "--json",
                 "--workers", "1")  # fmt: skip
    assert mapped.exit_code == 0, mapped.output
    facts = json.loads(mapped.stdout)
    assert facts["mode"] == "model"
    assert facts["feed_name"] == "new-shop"
    assert set(facts["by_department"]) <= {"Garden", "Crafts"}
    evaluated = run("evaluate", LABELLED, "--project", project, "--json")
    assert evaluated.exit_code == 0, evaluated.output
    report = json.loads(evaluated.stdout)
    assert report["mapping"]["accuracy"] > 0.5
    # The model was trained on that feed: the report says so, by name, with what to do.
    assert str(LABELLED.resolve()) in report["trained_on"]
    assert "--split test" in report["trained_on"]
    shown = run("evaluate", LABELLED, "--project", project, "--out", tmp_path / "r")
    assert "Note: the model was trained on this feed" in " ".join(shown.output.split())
    page = (tmp_path / "r" / "report.html").read_text(encoding="utf-8")
    assert "the model was trained on this feed" in page
    # A feed it never trained on gets no such note.
    other = tmp_path / "other.csv"
    other.write_text(
        "\n".join(LABELLED.read_text(encoding="utf-8").splitlines()[:40]) + "\n",
        encoding="utf-8",
    )
    assert json.loads(run("evaluate", other, "--project", project, "--json").stdout)[
        "trained_on"
    ] is None


def test_a_labelled_feed_naming_nodes_by_path_trains_and_calibrates(tmp_path: Path) -> None:
    # The team's own label column, holding paths of names: training reads them as nodes,
    # and onboarding calibrates on the same column of the held-out part.
    import csv

    tree = load_tree(TREE)
    with LABELLED.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    labelled = tmp_path / "labelled-by-path.csv"
    with labelled.open("w", encoding="utf-8", newline="") as handle:
        fields = [f for f in rows[0] if f != "gold_node"] + ["category"]
        writer = csv.DictWriter(handle, fieldnames=fields)
        writer.writeheader()
        for row in rows:
            node = row.pop("gold_node")
            writer.writerow({**row, "category": tree.path_text(node)})
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", labelled).exit_code == 0
    trained = run("train", "--project", project, "--label-column", "category", "--json")
    assert trained.exit_code == 0, trained.output
    facts = json.loads(trained.stdout)
    assert facts["labels_as_paths"] == facts["rows_read"] == len(rows)
    onboarded = run("onboard", NEW_FEED, "--project", project, "--json")
    assert onboarded.exit_code == 0, onboarded.output
    assert str(labelled) in json.loads(onboarded.stdout)["validation_source"]


def test_a_store_on_another_tree_is_refused(tmp_path: Path) -> None:
    tree = load_tree(TREE)
    with Store.for_project(tmp_path) as store:
        store.start_run(
            "onboard",
            params={"tree_version": "1", "tree_file": "old.txt", "tree_fingerprint": "0" * 64},
        )
        with pytest.raises(ModelTreeMismatch, match="store's mappings are on tree version 1"):
            check_store_tree(store, tree)
        # A remap moves the store to a new tree: the next onboarding sets it.
        store.start_run("remap", params={})
        check_store_tree(store, tree)


def test_the_demo_stays_out_of_a_project_of_ones_own(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project).exit_code == 0
    result = run("demo", "--project", project)
    assert result.exit_code == 3
    assert "the demo world stays out of it" in result.stderr


def test_a_refit_model_calibrates_on_what_it_predicted_before_it_saw_the_held_out_rows(
    tmp_path: Path,
) -> None:
    import csv

    import numpy as np

    from catmap.jobs.onboard import held_out_predictions, validation_predictions

    # Half of the example's labelled rows train; the other half is a feed the model never saw.
    with LABELLED.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    halves = {"train": rows[::2], "unseen": rows[1::2]}
    files = {}
    for name, part in halves.items():
        files[name] = tmp_path / f"{name}.csv"
        with files[name].open("w", encoding="utf-8", newline="") as handle:
            writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
            writer.writeheader()
            writer.writerows(part)
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", files["train"]).exit_code == 0
    # The same training without the refit: its model has not seen the held-out rows either.
    plain = tmp_path / "plain-model"
    assert run("train", "--project", project, "--no-refit", "--model", plain).exit_code == 0
    trained = run("train", "--project", project, "--refit", "--json")
    assert trained.exit_code == 0, trained.output
    facts = json.loads(trained.stdout)
    assert facts["refit"] is True
    assert facts["metrics"]["refit_products"] == facts["products_train"] + facts["products_valid"]
    folder = project / "models" / "current"
    manifest = json.loads((folder / "manifest.json").read_text())
    assert manifest["refit_feeds"] == [str(files["train"].resolve())]
    # The held-out rows were mapped before the refit, by the model that had not seen them: the
    # plain model, saved and loaded, maps them to the same scores.
    kept = held_out_predictions(folder, files["train"])
    assert kept is not None and len(kept) == facts["products_valid"]
    assert "cross-fitted" in kept.source
    # A copy of the training feed is the same rows: the same held-out predictions, never the
    # refit model's own predictions of rows it trained on.
    copy = tmp_path / "elsewhere" / files["train"].name
    copy.parent.mkdir()
    copy.write_bytes(files["train"].read_bytes())
    assert held_out_predictions(folder, copy) is not None
    tree = load_tree(TREE)
    model, plain_manifest = load_model(plain, tree)
    before = validation_predictions(
        FeedMapper(model, plain_manifest, tree), plain, project=project,
        labelled_feeds=[files["train"]],
    )  # fmt: skip
    assert np.array_equal(before.correct, kept.correct)
    assert np.allclose(before.scores, kept.scores, rtol=0, atol=1e-12)
    assert np.array_equal(before.retailers, kept.retailers)
    # Onboarding calibrates on them, and says so.
    onboarded = run("onboard", NEW_FEED, "--project", project, "--json")
    assert onboarded.exit_code == 0, onboarded.output
    assert "cross-fitted" in json.loads(onboarded.stdout)["validation_source"]
    # A damaged file of them is no file: refused with what to do, no traceback.
    for cached in folder.glob("*.npz"):
        if cached.name.startswith(("calibration-", "validation-")):
            cached.unlink()
    held = next(folder.glob("held-out-*.npz"))
    held.write_bytes(b"not a zip")
    refused = run("onboard", NEW_FEED, "--project", project)
    assert refused.exit_code != 0
    assert "Traceback" not in refused.stderr
    message = " ".join(refused.stderr.split())
    assert "trained on every labelled product (refit)" in message
    assert "--validation FEED" in message
    onboarded = run("onboard", NEW_FEED, "--project", project, "--validation", files["unseen"],
                    "--json")  # fmt: skip
    assert onboarded.exit_code == 0, onboarded.output
    source = json.loads(onboarded.stdout)["validation_source"]
    assert str(files["unseen"]) in source and "not trained on" in source


def test_onboard_takes_the_tree_version_its_error_hint_names(tmp_path: Path) -> None:
    project = tmp_path / "p"
    assert run("init", project, "--tree", TREE, "--labelled", LABELLED).exit_code == 0
    assert run("train", "--project", project).exit_code == 0
    # The shared tree v1 is not the model's tree: refused, and the hint's options exist here.
    result = run("onboard", NEW_FEED, "--project", project, "--tree-version", "1")
    assert result.exit_code == 4, result.output
    assert "the model was trained on tree version 1" in result.stderr
    assert "taxonomies/tree-v1.txt" in result.stderr
    assert "--tree-version N" in result.stderr
