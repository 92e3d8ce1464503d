"""catmap train on a tiny labelled feed."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main
from tests._classify_fixtures import write_labelled_feed, write_tree


@pytest.fixture()
def setup(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[Path, Path]:
    write_tree(tmp_path / "taxonomies")
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path / "taxonomies"))
    return write_labelled_feed(tmp_path / "shop.csv"), tmp_path / "project"


def test_train_writes_a_model_and_reports_json(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project), "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["classes"] == 6
    assert facts["products_train"] == 144
    assert facts["products_valid"] == 48
    assert 0.0 <= facts["metrics"]["valid_ece"] <= 1.0
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert manifest["tree_version"] == "1"
    assert manifest["training_data_fingerprint"]


def test_train_summary_is_readable(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 0, result.output
    text = " ".join(result.stdout.split())
    # 144 train, then the 48 validation products too (the refit).
    assert "Trained on 144 products, then on 192 with the validation products, 6 classes" in text
    assert "validation products 48 (calibrated on, then trained on too" in text
    assert "validation accuracy" in result.stdout
    # Six classes: both structures were trained, the summary says which one was kept.
    assert "structure" in result.stdout and "validation macro-F1" in result.stdout


def test_missing_label_column_is_an_input_error(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(
        main, ["train", str(feed), "--project", str(project), "--label-column", "node"]
    )
    assert result.exit_code == 3
    assert "no label column 'node'" in result.stderr


def _own_project_on_version_two(project: Path, status: str) -> Path:
    """A project of one's own whose store holds 48 mappings on version 2 of its tree, all
    with ``status``; returns the kept copy of version 2."""
    from catmap.records import Mapping, Product
    from catmap.store import MappedRow, Store, store_path

    treediff = Path(__file__).parent / "data" / "treediff"
    runner = CliRunner()
    init = runner.invoke(main, ["init", str(project), "--tree", str(treediff / "old.txt")])
    assert init.exit_code == 0, init.output
    # The store after a remap to version 2 of the project's tree (a copy kept in the project).
    kept = project / "tree-v2.txt"
    kept.write_bytes((treediff / "split.txt").read_bytes())
    titles = {"111": "suede ankle boots", "112": "rubber rain wellies", "212": "portable radio",
              "214": "closed over-ear headphones"}  # fmt: skip
    with Store.open(store_path(project)) as store:
        store.add_feed("shop-a")
        run = store.start_run("onboard", feed="shop-a")
        rows = [
            MappedRow(
                product=Product(product_id=f"{node}-{i}", title=f"{title} {i}"),
                mapping=Mapping(node_id=node, confidence=0.99, method="model"),
                status=status,
                group_key="",
            )
            for node, title in titles.items()
            for i in range(12)
        ]
        store.save_mapped("shop-a", run, rows, tree_version="2")
        store.finish_run(run, summary={"threshold": 0.5})
    return kept


def test_a_project_of_ones_own_trains_on_its_remapped_tree_from_the_store(
    tmp_path: Path,
) -> None:
    project = tmp_path / "own"
    runner = CliRunner()
    kept = _own_project_on_version_two(project, "accepted")
    # No labelled feeds given: the project's labels are on version 1, so version 2 learns
    # from the store's mappings on it.
    result = runner.invoke(
        main, ["train", "--project", str(project), "--tree-file", str(kept), "--json"]
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["tree_version"] == "2"
    assert [Path(feed).name for feed in facts["feeds"]] == ["remapped-catalog-v2.jsonl"]
    assert facts["rows_read"] == 48
    assert facts["older_labels"] == ""  # the project has no labelled feeds to point to
    # With labelled feeds of version 1, the summary says they were left out and how to use them.
    import dataclasses

    from catmap.project import load_settings, save_settings

    settings = load_settings(project)
    assert settings is not None
    save_settings(project, dataclasses.replace(settings, labelled=[str(project / "old.csv")]))
    again = runner.invoke(main, ["train", "--project", str(project), "--tree-file", str(kept)])
    assert again.exit_code == 0, again.output
    said = " ".join(again.stdout.split())
    assert "the project's labelled feeds name tree 1's nodes and were left out" in said
    assert "`catmap train --labels-tree 1`" in said


def test_training_on_a_remapped_tree_with_nothing_settled_says_what_to_do(
    tmp_path: Path,
) -> None:
    project = tmp_path / "own"
    kept = _own_project_on_version_two(project, "queued")
    result = CliRunner().invoke(
        main, ["train", "--project", str(project), "--tree-file", str(kept)]
    )
    assert result.exit_code == 4, result.output
    message = " ".join(result.stderr.split())
    assert "no settled mappings on tree version 2" in message
    # The remap is done already: the way out is reviewing or labelled feeds, not another remap.
    assert "its 48 mappings on this version all wait for review" in message
    assert "catmap remap" not in message


def test_labels_of_an_older_tree_are_read_through_its_changes(tmp_path: Path) -> None:
    from catmap.classify.training import labels_translation, read_labelled
    from catmap.tree.taxonomy import load_tree

    treediff = Path(__file__).parent / "data" / "treediff"
    old, new = treediff / "old.txt", treediff / "split.txt"  # 211 Headphones split in two
    project = tmp_path / "own"
    runner = CliRunner()
    assert runner.invoke(main, ["init", str(project), "--tree", str(old)]).exit_code == 0
    words = {"111": "suede ankle boots", "112": "rubber rain wellies", "121": "running shoes",
             "122": "hiking shoes", "211": "closed over-ear headphones",
             "Audio > Listening > Radios": "portable radio"}  # fmt: skip
    feed = tmp_path / "labelled.csv"
    feed.write_text(
        "id,title,gold_node\n"
        + "".join(
            f"{n}-{i},{title} model {i},{label}\n"
            for n, (label, title) in enumerate(words.items())
            for i in range(16)
        ),
        encoding="utf-8",
    )
    args = ["train", str(feed), "--project", str(project), "--tree-file", str(new)]
    # Read as ids of the new tree, the split node's labels are unknown: too many to go on,
    # and the way out is named.
    refused = runner.invoke(main, args)
    assert refused.exit_code == 3, refused.output
    assert "--labels-tree" in " ".join(refused.stderr.split())

    result = runner.invoke(main, [*args, "--labels-tree", str(old), "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["labels_translation"] == {
        "from_version": "1",
        "from_file": str(old.resolve()),
        "kept": 80,
        "translated": 0,
        "dropped": {"split": 16},
    }
    assert facts["unknown_labels"] == 0
    assert facts["classes"] == 5
    # The model keeps where its labels came from; calibration reads them the same way, so the
    # rows training held out are the ones it calibrates on.
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert manifest["labels_tree"] == {"version": "1", "file": str(old.resolve()), "changes": ""}
    tree = load_tree(new)
    data = read_labelled(
        [feed], tree=tree, project=project,
        translation=labels_translation(manifest["labels_tree"], tree),
    )  # fmt: skip
    assert len(data.valid) == facts["products_valid"]
    assert "211" not in {label for _product, label in data.train + data.valid}
    text = runner.invoke(main, [*args, "--labels-tree", str(old)]).stdout
    assert "labels of tree 1" in text and "80 of unchanged nodes" in " ".join(text.split())
    assert "split 16" in text


def test_a_finalised_remap_onto_a_newer_shared_tree_makes_it_the_projects_tree(
    tmp_path: Path,
) -> None:
    from catmap.jobs._project_tree import adopt_version_tree, project_tree
    from catmap.project import fingerprint, load_settings
    from catmap.tree.taxonomy import default_tree_path

    project = tmp_path / "shop"
    runner = CliRunner()
    init = runner.invoke(main, ["init", str(project)])
    assert init.exit_code == 0, init.output
    assert project_tree(project).version == "1"
    # What `catmap remap-finalise` does once a remap onto shared tree 2 is kept.
    assert adopt_version_tree(project, "2") == default_tree_path(2)
    settings = load_settings(project)
    assert settings is not None
    assert (settings.tree_version, settings.labels_version) == ("2", "1")
    assert settings.tree_fingerprint == fingerprint(default_tree_path(2))
    assert project_tree(project).version == "2"
    assert adopt_version_tree(project, "2") is None  # already its tree
    # The labelled feeds still name tree 1's nodes: training with none given learns from the
    # remapped catalog (none here), and says how to use those feeds instead.
    result = runner.invoke(main, ["train", "--project", str(project)])
    assert result.exit_code == 4, result.output
    message = " ".join(result.stderr.split())
    assert "no labelled products for tree version 2" in message
    assert "--labels-tree VERSION" in message


def test_no_validation_rows_means_nothing_to_train_again_on(setup: tuple[Path, Path]) -> None:
    import csv

    feed, project = setup
    with feed.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    every = feed.with_name("all-train.csv")
    with every.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows({**row, "split": "train"} for row in rows)
    result = CliRunner().invoke(main, ["train", str(every), "--project", str(project), "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    # Calibration borrowed a tenth of the training products: they are trained on already.
    assert facts["refit"] is False
    assert "validation products are training products" in facts["metrics"]["refit_skipped"]
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert "refit_feeds" not in manifest
    shown = CliRunner().invoke(main, ["train", str(every), "--project", str(project)])
    assert "taken from the training products" in " ".join(shown.stdout.split())


def test_the_held_out_part_alone_is_the_same_rows_without_the_others(
    setup: tuple[Path, Path],
) -> None:
    from catmap.classify.training import read_labelled
    from catmap.tree.taxonomy import load_default_tree

    feed, project = setup
    tree = load_default_tree(1)
    whole = read_labelled([feed], tree=tree, project=project)
    valid = read_labelled([feed], tree=tree, project=project, keep=("valid",))
    assert whole.valid and whole.train and whole.test
    assert valid.train == [] and valid.test == []
    assert [(p.product_id, label) for p, label in valid.valid] == [
        (p.product_id, label) for p, label in whole.valid
    ]
    assert valid.fingerprint == whole.fingerprint  # every row was still read
