"""A tree file from a list of category paths (catmap/tree/frompaths.py, `catmap tree
from-paths`)."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main
from catmap.jobs.tree_from_paths import read_paths
from catmap.tree.frompaths import detect_separator, tree_from_paths
from catmap.tree.taxonomy import CategoryTree, load_default_tree, load_tree
from catmap.tree.treefile import MAX_LEVEL


def _paths(tree: CategoryTree) -> dict[str, str]:
    """Every node's path of names -> its id."""
    return {tree.path_text(node.id): node.id for node in tree}


def _run(*args: str) -> object:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_the_leaf_paths_of_the_shared_tree_rebuild_its_structure(tmp_path: Path) -> None:
    shared = load_default_tree(1)
    leaves = [shared.path_text(node.id) for node in shared if shared.is_leaf(node.id)]
    listed = tmp_path / "paths.txt"
    listed.write_text("\n".join(leaves) + "\n", encoding="utf-8")
    out = tmp_path / "tree.txt"
    result = _run("tree", "from-paths", str(listed), "--out", str(out), "--json")
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    facts = json.loads(result.stdout)  # type: ignore[attr-defined]
    rebuilt = load_tree(out)
    # Every inner node comes back from the prefixes of its leaves' paths.
    assert set(_paths(rebuilt)) == set(_paths(shared))
    assert facts["nodes"] == len(_paths(shared))
    assert facts["leaves"] == len(leaves)
    assert facts["separator"] == " > "


def test_ids_given_in_a_csv_are_kept_and_the_parents_follow(tmp_path: Path) -> None:
    shared = load_default_tree(1)
    listed = tmp_path / "categories.csv"
    with listed.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle, delimiter=";")
        writer.writerow(["ID", "Breadcrumb"])  # header names in any case
        for node in shared:
            writer.writerow([node.id, shared.path_text(node.id)])
    built = tree_from_paths(read_paths(listed))
    assert built.rejects == []
    assert {(n.id, n.parent, n.name) for n in built.nodes} == {
        (n.id, n.parent, n.name) for n in shared
    }


def test_made_ids_are_the_same_on_every_conversion(tmp_path: Path) -> None:
    rows = [(1, "", "Garden > Tools > Spades"), (2, "", "Garden > Furniture")]
    first = {path: node_id for _g, node_id, path in tree_from_paths(rows).ids}
    again = tree_from_paths([(1, "", "Kitchen > Pots"), *rows])
    second = {path: node_id for _g, node_id, path in again.ids}
    assert {p: second[p] for p in first} == first  # a new path moves no other id
    assert all(node_id.isdigit() and len(node_id) == 9 for node_id in second.values())
    # Case and spacing do not make another node, nor another id.
    other = tree_from_paths([(1, "", "garden >  tools > Spades")])
    assert other.ids[-1][1] == first["Garden > Tools > Spades"]


@pytest.mark.parametrize(
    ("lines", "expected"),
    [
        (["A > B", "A > C > D"], " > "),
        (["Damen/Schuhe", "Damen/Taschen", "Herren/Hemden"], "/"),
        (["Home|Decor|Lamps", "Home|Garden"], "|"),
        (["Garden > Tools/Spades", "Garden > Chairs"], " > "),  # "/" inside a name
        (["Toys", "Books"], " > "),  # no separator: departments only
    ],
)
def test_the_separator_is_the_one_in_the_most_lines(lines: list[str], expected: str) -> None:
    assert detect_separator(lines) == expected


def test_lines_that_cannot_be_used_are_written_with_their_reasons(tmp_path: Path) -> None:
    listed = tmp_path / "cats.csv"
    deep = " > ".join(f"L{i}" for i in range(MAX_LEVEL + 1))
    listed.write_text(
        "id,path,products\n"
        "10,Garden > Tools,3\n"
        "11,Kitchen > Pots,2\n"
        "10,Bath > Towels,1\n"  # line 4: id 10 is Garden > Tools already
        "12,garden > tools,1\n"  # line 5: that path has id 10
        f",{deep},0\n"  # line 6
        ", > ,0\n"  # line 7
        ",Garden > Tools > Spades,4\n",
        encoding="utf-8",
    )
    out = tmp_path / "mine.txt"
    result = CliRunner().invoke(main, ["tree", "from-paths", str(listed), "--out", str(out)])
    assert result.exit_code == 3
    assert "4 of 7 lines were not used" in " ".join(result.output.split())
    with (tmp_path / "mine.rejects.csv").open(encoding="utf-8") as handle:
        rejects = {(r["line"], r["reason"]) for r in csv.DictReader(handle)}
    assert rejects == {
        ("4", "id_reused"), ("5", "path_with_two_ids"), ("6", "too_deep"), ("7", "empty_path")
    }
    tree = load_tree(out)  # the good lines are a valid tree
    assert _paths(tree) == {
        "Garden": _paths(tree)["Garden"],
        "Garden > Tools": "10",
        "Garden > Tools > Spades": _paths(tree)["Garden > Tools > Spades"],
        "Kitchen": _paths(tree)["Kitchen"],
        "Kitchen > Pots": "11",
    }
    with (tmp_path / "mine.ids.csv").open(encoding="utf-8") as handle:
        ids = {r["path"]: (r["source_id"], r["node_id"]) for r in csv.DictReader(handle)}
    assert ids["Garden > Tools"] == ("10", "10")
    assert ids["Garden"][0] == ""


def test_non_digit_ids_are_listed_beside_the_made_ones(tmp_path: Path) -> None:
    listed = tmp_path / "cats.csv"
    listed.write_text("code,category\nGT-1,Garden/Tools\nG-0,Garden\n", encoding="utf-8")
    built = tree_from_paths(read_paths(listed))
    by_path = {path: (given, node_id) for given, node_id, path in built.ids}
    assert by_path["Garden"][0] == "G-0" and by_path["Garden"][1].isdigit()
    assert by_path["Garden > Tools"][0] == "GT-1"


def test_names_give_their_parts_as_keywords_and_a_cp1252_list_is_read(tmp_path: Path) -> None:
    listed = tmp_path / "cats.txt"
    listed.write_bytes("Maison > Linge de lit et serviettes\nMaison > Vaisselle & Verres\n".encode(
        "cp1252"
    ))
    built = tree_from_paths(read_paths(listed), language="fr")
    terms = {node.name: node.terms["fr"] for node in built.nodes}
    assert terms["Linge de lit et serviettes"] == (
        "linge de lit et serviettes", "linge de lit", "serviettes"
    )
    assert terms["Vaisselle & Verres"] == ("vaisselle & verres", "vaisselle", "verres")


def test_a_list_with_no_usable_line_stops_with_the_reason(tmp_path: Path) -> None:
    listed = tmp_path / "cats.txt"
    listed.write_text("# nothing yet\n\n", encoding="utf-8")
    result = CliRunner().invoke(
        main, ["tree", "from-paths", str(listed), "--out", str(tmp_path / "t.txt")]
    )
    assert result.exit_code == 3
    assert "holds no path" in result.output
    assert not (tmp_path / "t.txt").exists()


def test_names_in_another_language_go_into_its_own_cell(tmp_path: Path) -> None:
    listed = tmp_path / "categorie.txt"
    listed.write_text("Casa > Pentole e padelle\n", encoding="utf-8")
    out = tmp_path / "albero.txt"
    result = _run("tree", "from-paths", str(listed), "--out", str(out), "--language", "it")
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    tree = load_tree(out)
    assert tree.languages() == ("it",)
    leaf = tree.find_path("Casa > Pentole e padelle")
    assert leaf.terms["it"] == ("pentole e padelle", "pentole", "padelle")
    bad = CliRunner().invoke(
        main, ["tree", "from-paths", str(listed), "--out", str(out), "--language", "xx"]
    )
    assert bad.exit_code == 2


def _paths_tree(tmp_path: Path, name: str, lines: list[str], version: int) -> CategoryTree:
    listed = tmp_path / f"{name}.txt"
    listed.write_text("\n".join(lines) + "\n", encoding="utf-8")
    out = tmp_path / f"{name}-tree.txt"
    result = _run(
        "tree", "from-paths", str(listed), "--out", str(out), "--language", "es",
        "--tree-version", str(version),
    )  # fmt: skip
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    return load_tree(out)


def test_a_category_split_into_new_paths_below_it_is_a_split(tmp_path: Path) -> None:
    from catmap.jobs.remap import remap_store
    from catmap.records import Mapping, Product
    from catmap.store import MappedRow, Store
    from catmap.tree.diff import diff_trees

    kitchen = "Hogar > Cocina"
    old = _paths_tree(tmp_path, "v1", [f"{kitchen} > Cafeteras", f"{kitchen} > Sartenes"], 1)
    new = _paths_tree(
        tmp_path,
        "v2",
        [
            f"{kitchen} > Cafeteras > Cafeteras de goteo",
            f"{kitchen} > Cafeteras > Cafeteras de cápsulas",
            f"{kitchen} > Sartenes",
            f"{kitchen} > Sartenes > Sartenes de hierro",  # one new leaf alone: an addition
        ],
        2,
    )
    makers = old.find_path(f"{kitchen} > Cafeteras").id
    pans = old.find_path(f"{kitchen} > Sartenes").id
    drip = new.find_path(f"{kitchen} > Cafeteras > Cafeteras de goteo").id
    capsule = new.find_path(f"{kitchen} > Cafeteras > Cafeteras de cápsulas").id
    iron = new.find_path(f"{kitchen} > Sartenes > Sartenes de hierro").id
    by_old = {c.old_id: c for c in diff_trees(old, new).correspondences}
    assert by_old[makers].changes == ("split",)
    assert set(by_old[makers].new_ids) == {drip, capsule}
    assert by_old[pans].changes == ("unchanged",)
    added = {c.new_ids for c in diff_trees(old, new).correspondences if c.old_id is None}
    assert added == {(iron,)}

    # The products of the split category are re-scored over its new leaves, not left on a
    # node that is no longer a leaf.
    with Store.open(tmp_path / "store.sqlite") as store:
        store.add_feed("tienda", source_path="tienda.csv")
        run = store.start_run("onboard", feed="tienda")
        rows = [
            MappedRow(
                product=Product(product_id=pid, title=title, category_path=("Cocina",)),
                mapping=Mapping(node_id=node, confidence=0.99, method="model"),
                status="accepted",
                group_key="Cocina",
            )
            for pid, title, node in [
                ("c1", "Cafetera de goteo 10 tazas", makers),
                ("c2", "Cafetera de cápsulas compacta", makers),
                ("s1", "Sartén antiadherente 28 cm", pans),
            ]
        ]
        store.save_mapped("tienda", run, rows, model_version="m1", tree_version="1")
        store.finish_run(run, summary={"threshold": 0.5})
        report = remap_store(store, old, new)
        assert report.rescored == 2
        placed = {pid: store.mapping("tienda", pid).mapping.node_id for pid in ("c1", "c2", "s1")}
    assert placed == {"c1": drip, "c2": capsule, "s1": pans}
