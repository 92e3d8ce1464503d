"""Tests of the demo world generator and of the committed demo files (feeds_demo/)."""

from __future__ import annotations

import csv
import gzip
import html
import io
import re
import xml.etree.ElementTree as ET
from collections import Counter, defaultdict
from pathlib import Path

import ftfy
import pytest

from catmap.demo import (
    DemoPaths,
    build_demo_world,
    demo_paths,
    ensure_demo_world,
    split_of,
)
from catmap.demo.__main__ import main as demo_main
from catmap.demo._blocklist import BLOCKED_DIGESTS, is_blocked
from catmap.demo._names import HARD_CASES
from catmap.demo._products import audience_said
from catmap.demo._retailers import ALL_RETAILERS
from catmap.demo.world import XML_EXT_NAMESPACE, XML_NAMESPACE
from catmap.records import AGE_VALUES, WHO_VALUES
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_tree

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "feeds_demo"
SMALL_FEEDS = {"ferravelle": 80, "quorvane": 60, "tallimbra": 90, "oskelund_labelled": 40}

SMALL_TREE = (Path(__file__).parent / "data" / "trees" / "small_world.txt").read_text(
    encoding="utf-8"
)


@pytest.fixture(scope="module")
def small_tree(tmp_path_factory: pytest.TempPathFactory) -> CategoryTree:
    path = tmp_path_factory.mktemp("tree") / "tree-small.txt"
    path.write_text(SMALL_TREE, encoding="utf-8")
    return load_tree(path)


@pytest.fixture(scope="module")
def tree_v1() -> CategoryTree:
    path = default_tree_path(1)
    if not path.exists():
        pytest.skip("taxonomies/tree-v1.txt is not there yet")
    return load_tree(path)


def _read_csv(data: bytes, *, encoding: str = "utf-8",
              delimiter: str = ",") -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(data.decode(encoding)), delimiter=delimiter))


def _read_reference(path: Path) -> list[dict[str, str]]:
    with gzip.open(path, "rt", encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def _disagreement(pairs: list[tuple[str, str]], tree: CategoryTree) -> float:
    """Share of products whose retailer category does not name their gold leaf.

    A category is mapped to the tree nodes whose English name or first keyword in any language
    equals its last level (case-insensitive); it agrees when the gold leaf is among them.
    Vague categories ("Sale"), a parent's or a neighbour's category therefore disagree.
    """
    words: dict[str, set[str]] = defaultdict(set)
    for node in tree:
        words[node.name.lower()].add(node.id)
        for terms in node.terms.values():
            if terms:
                words[terms[0].lower()].add(node.id)
    wrong = 0
    for category, gold in pairs:
        last = re.split(r"\s*(?:>>|>|/|\|)\s*", category)[-1].strip().lower()
        wrong += gold not in words.get(last, set())
    return wrong / len(pairs)


# Words by which a shop says whom a product is for, in the four languages of the demo world
# (common practice, no source). Written here apart from the generator's own word lists.
_SAYS_WHO = {
    "female": r"women|womens|woman|wmns|ladies|lady|for her|femmes?|damen\w*|frauen|mujer|"
              r"señora|girls?|filles?|mädchen\w*|niñas?",
    "male": r"men|mens|mns|man|gents|for him|hommes?|herren\w*|hombre|caballero|boys?|"
            r"garçons?|jungen\w*|niño",
}
_SAYS_AGE = {
    "kids": r"kids?|children|childrens|junior|enfants?|kinder\w*|niños|infantil|girls?|boys?|"
            r"filles?|garçons?|mädchen\w*|jungen\w*|niñas?|niño|"
            # children's sizes: "8 ans", "age 4-5", "Gr. 128", "116 cm", "104/110", "EU 30"
            r"\d+ ?(?:ans|años|jahre|years|yrs|y)|age \d+|gr\. ?1\d\d|1\d\d ?cm|1\d\d/1\d\d|"
            r"(?:eu|gr\.|pointure|talla) [23]\d",
    "baby": r"bab(?:y|ys|ies)\w*|infant|newborn|bébé|bebé|naissance|recién nacido|"
            r"neugeboren\w*|\d+ ?(?:months|mois|monate|meses|m)|gr\. [5-8]\d|\d\d/\d\d|0m\+",
}
_NOT_SAYING = r"baby (?:pink|blue)|babyblau|babyrosa|rose bébé|bleu bébé"
# Gender column values that give a child's age but not whether the child is a girl or a boy.
_AGE_ONLY_COLUMN = {"kids", "k-g", "k-b", "baby", "bébé", "bebé", "infant", "newborn", "kinder",
                    "enfant", "niños", "children", "junior"}


def _readable(text: str) -> str:
    # as a reader sees it: mojibake repaired (as catmap's normaliser does, with ftfy), HTML
    # entities and tags undone, case and apostrophes dropped
    text = html.unescape(ftfy.fix_encoding(text)).casefold().replace("'", "")
    return re.sub(_NOT_SAYING, " ", re.sub(r"<[^>]+>", " ", text))


def _unsaid(rows: list[dict[str, str]], spellings: dict[str, list[str]],
            tree: CategoryTree) -> tuple[list[dict[str, str]], list[dict[str, str]], Counter[str]]:
    """Products whose gold who (female / male) or age (kids / baby) no field says.

    Only nodes that leave several values open count (elsewhere the node says it). Rows hold
    ``title, description, category, gender, size`` and the gold columns. Also returns, for the
    gendered products, the one field that says it when only one does.
    """
    no_who, no_age = [], []
    sole: Counter[str] = Counter()
    for r in rows:
        fields = {"title": r["title"], "category": r["category"], "description": r["description"]}
        texts = {}
        for key, value in fields.items():
            text = _readable(value)
            for name in sorted(spellings.get(r["gold_brand"], []), key=len, reverse=True):
                text = text.replace(_readable(name), " ")
            texts[key] = text
        column = r["gender"].strip().casefold()
        who, age, node = r["gold_who"], r["gold_age"], r["gold_node"]
        if who in _SAYS_WHO and len(tree.who(node)) > 1:
            saying = [k for k, t in texts.items() if re.search(rf"\b(?:{_SAYS_WHO[who]})\b", t)]
            if column and column not in _AGE_ONLY_COLUMN:
                saying.append("column")
            if not saying:
                no_who.append(r)
            elif len(saying) == 1:
                sole[saying[0]] += 1
        if age in _SAYS_AGE and len(tree.ages(node)) > 1:
            text = " | ".join([*texts.values(), _readable(r["size"])])
            if not column and not re.search(rf"\b(?:{_SAYS_AGE[age]})\b", text):
                no_age.append(r)
    return no_who, no_age, sole


def _spellings(path: Path) -> dict[str, list[str]]:
    return {r["brand"]: [r["brand"], *r["variants"].split(";")]
            for r in _read_csv(path.read_bytes())}


def _feed_rows(name: str, paths: DemoPaths) -> list[dict[str, str]]:
    """A feed's products (first of each id) as title / description / category / gender / size,
    joined with their gold labels."""
    data = paths.feeds[name].read_bytes()
    columns = ("title", "description", "category", "gender", "size")
    raw: list[tuple[str, ...]] = []
    if name == "ferravelle":
        for r in _read_csv(data, encoding="cp1252", delimiter=";"):
            raw.append((r["ref"], r["désignation"], r["descriptif"], r["rayon"], r["genre"],
                        r["taille"]))
    elif name == "tallimbra":
        for r in _read_csv(data, encoding="utf-8-sig", delimiter="\t"):
            raw.append((r["id"], r["title"], r["description"], r["category"], r["gender"],
                        r["size"]))
    else:
        ns = {"c": XML_NAMESPACE, "qv": XML_EXT_NAMESPACE}
        for o in ET.fromstring(data).iter(f"{{{XML_NAMESPACE}}}offer"):
            category = o.find("c:category", ns)
            raw.append((o.get("id", ""), o.findtext("c:title", "", ns),
                        o.findtext("c:description", "", ns),
                        category.get("breadcrumb", "") if category is not None else "",
                        o.findtext("qv:audience", "", ns), o.findtext("c:size", "", ns)))
    gold = {g["product_id"]: g for g in _read_csv(paths.gold[name].read_bytes())}
    rows: dict[str, dict[str, str]] = {}
    for pid, *values in raw:
        rows.setdefault(pid, {**dict(zip(columns, values, strict=True)), **gold[pid]})
    return list(rows.values())


# -- the generator, on a small tree --------------------------------------------------------------

def test_same_seed_gives_same_bytes(tmp_path: Path, small_tree: CategoryTree) -> None:
    a = build_demo_world(tmp_path / "a", seed=0, reference_size=400, feed_sizes=SMALL_FEEDS,
                         tree=small_tree)
    b = build_demo_world(tmp_path / "b", seed=0, reference_size=400, feed_sizes=SMALL_FEEDS,
                         tree=small_tree)
    c = build_demo_world(tmp_path / "c", seed=1, reference_size=400, feed_sizes=SMALL_FEEDS,
                         tree=small_tree)
    files_a, files_b, files_c = a.all_files(), b.all_files(), c.all_files()
    assert len(files_a) == 9
    for fa, fb in zip(files_a, files_b, strict=True):
        assert fa.read_bytes() == fb.read_bytes(), fa.name
    assert files_a[1].read_bytes() != files_c[1].read_bytes()


def test_ensure_builds_only_what_is_missing(tmp_path: Path, small_tree: CategoryTree) -> None:
    sizes = {"reference_size": 1500, "feed_sizes": SMALL_FEEDS}
    full = build_demo_world(tmp_path / "full", seed=0, tree=small_tree, **sizes)
    root = tmp_path / "partial"
    paths = ensure_demo_world(root, tree=small_tree, **sizes)
    assert [p.read_bytes() for p in paths.all_files()] == [
        p.read_bytes() for p in full.all_files()]
    paths.brands.write_text("kept\n", encoding="utf-8")
    paths.reference.unlink()
    ensure_demo_world(root, tree=small_tree, **sizes)
    assert paths.brands.read_text(encoding="utf-8") == "kept\n"
    assert paths.reference.read_bytes() == full.reference.read_bytes()


def test_small_tree_world_is_labelled_consistently(tmp_path: Path,
                                                   small_tree: CategoryTree) -> None:
    paths = build_demo_world(tmp_path, reference_size=1500, feed_sizes=SMALL_FEEDS,
                             tree=small_tree)
    rows = _read_reference(paths.reference)
    leaves = {n.id for n in small_tree.leaves()}
    assert {r["gold_node"] for r in rows} == leaves
    for r in rows:
        assert r["gold_who"] in WHO_VALUES and r["gold_age"] in AGE_VALUES
        node = r["gold_node"]
        expected_who = small_tree.who(node)
        assert (r["gold_who"] in expected_who) or (
            not expected_who and r["gold_who"] == "not_applicable")
        if r["gold_node"] in ("4011", "4012"):  # audience "none" in the tree
            assert (r["gold_who"], r["gold_age"]) == ("not_applicable", "not_applicable")


def test_small_tree_products_say_whom_they_are_for(tmp_path: Path,
                                                    small_tree: CategoryTree) -> None:
    paths = build_demo_world(tmp_path, reference_size=3000, feed_sizes=SMALL_FEEDS,
                             tree=small_tree)
    rows = [{**r, "category": r["retailer_category"]} for r in _read_reference(paths.reference)]
    no_who, no_age, _sole = _unsaid(rows, _spellings(paths.brands), small_tree)
    assert no_who == [] and no_age == []
    # the gendered products that remain are many: most got a cue, a few became unisex
    who = Counter(r["gold_who"] for r in rows if r["gold_node"] in ("1011", "1521", "1522"))
    assert who["female"] > who["unisex"] and who["male"] > who["unisex"] > 0


def test_audience_reader_of_the_generator() -> None:
    assert audience_said("Damenjacke wasserdicht") == {"female"}
    assert audience_said("Chaussures pour gar&ccedil;on") == {"male", "kids"}
    assert audience_said("MÃ¤dchen Kleid") == {"female", "kids"}  # mojibake read as repaired
    assert audience_said("Baby pink knit jumper") == set()
    assert audience_said("Girls' night out clutch") == set()
    assert audience_said("Body bébé 3 mois") == {"baby"}
    assert audience_said("Man-made fibre rug") == set()


# -- the committed files -------------------------------------------------------------------------

def test_brands_file_has_400_invented_brands_with_variants(tree_v1: CategoryTree) -> None:
    rows = _read_csv(demo_paths(DEMO).brands.read_bytes())
    assert len(rows) >= 400
    names = [r["brand"] for r in rows]
    assert len(set(names)) == len(names)
    departments = {d.id for d in tree_v1.departments()}
    for r in rows:
        variants = r["variants"].split(";")
        assert len(variants) >= 3, r["brand"]
        assert r["brand"] not in variants
        assert r["brand"].upper() in variants or len(r["brand"]) <= 3
        assert set(r["departments"].split(";")) <= departments
    assert {d for r in rows for d in r["departments"].split(";")} == departments
    # the hard cases: very short names, a shared first word, legal suffixes and ®/™ forms
    assert any(len(n) <= 3 for n in names)
    firsts = Counter(n.split()[0] for n in names if " " in n)
    assert firsts.most_common(1)[0][1] >= 2
    all_variants = ";".join(r["variants"] for r in rows)
    for mark in ("GmbH", "Ltd", "S.A.S.", "Inc.", "®", "™"):
        assert mark in all_variants
    assert set(HARD_CASES) <= set(names)


def test_no_generated_name_is_on_the_blocklist() -> None:
    assert len(BLOCKED_DIGESTS) >= 300
    rows = _read_csv(demo_paths(DEMO).brands.read_bytes())
    for r in rows:
        assert not is_blocked(r["brand"]), r["brand"]
    for retailer in ALL_RETAILERS:
        assert not is_blocked(retailer.name), retailer.name


def test_french_feed_is_cp1252_semicolon_with_decimal_commas() -> None:
    data = demo_paths(DEMO).feeds["ferravelle"].read_bytes()
    with pytest.raises(UnicodeDecodeError):
        data.decode("utf-8")
    rows = _read_csv(data, encoding="cp1252", delimiter=";")
    assert 2000 <= len(rows) <= 5000
    assert b"\r\n" in data[:2000]
    assert list(rows[0])[:2] == ["ref", "désignation"]
    prices = [r["prix"] for r in rows]
    assert all(re.fullmatch(r"\d{1,3}([ \u00a0]\d{3})*,\d\d €", p) for p in prices)
    assert any(" " in p[:-2] or "\u00a0" in p for p in prices)  # thousands separators


def test_xml_feed_has_namespaces_attributes_and_cdata() -> None:
    path = demo_paths(DEMO).feeds["quorvane"]
    data = path.read_bytes()
    assert b"<![CDATA[<p>" in data
    root = ET.fromstring(data)
    assert root.tag == f"{{{XML_NAMESPACE}}}catalogue"
    offers = root.findall(f"{{{XML_NAMESPACE}}}offers/{{{XML_NAMESPACE}}}offer")
    assert 2000 <= len(offers) <= 5000
    assert all(o.get("id") for o in offers)
    assert all(o.get(f"{{{XML_EXT_NAMESPACE}}}lang") for o in offers)
    prices = [o.find(f"{{{XML_NAMESPACE}}}price") for o in offers]
    assert all(p is not None and p.get("currency") for p in prices)
    assert any(o.find(f"{{{XML_EXT_NAMESPACE}}}audience") is not None for o in offers)
    levels = offers[0].findall(f"{{{XML_NAMESPACE}}}category/{{{XML_NAMESPACE}}}level")
    category = offers[0].find(f"{{{XML_NAMESPACE}}}category")
    assert levels and category is not None and category.get("breadcrumb")


def test_tsv_feed_has_bom_tabs_and_a_sparse_messy_gender_column() -> None:
    data = demo_paths(DEMO).feeds["tallimbra"].read_bytes()
    assert data.startswith(b"\xef\xbb\xbf")
    rows = _read_csv(data, encoding="utf-8-sig", delimiter="\t")
    assert 2000 <= len(rows) <= 5000
    assert list(rows[0])[:3] == ["id", "title", "brand"]
    filled = [r["gender"] for r in rows if r["gender"]]
    assert 0.2 <= len(filled) / len(rows) <= 0.4
    assert len(set(filled)) >= 20
    assert "Ã" in data.decode("utf-8-sig")  # some mojibake


@pytest.mark.parametrize("name", ["ferravelle", "quorvane", "tallimbra"])
def test_gold_covers_every_feed_product_and_uses_tree_leaves(
        name: str, tree_v1: CategoryTree) -> None:
    paths = demo_paths(DEMO)
    ids = _feed_ids(name, paths.feeds[name])
    gold = _read_csv(paths.gold[name].read_bytes())
    gold_ids = [g["product_id"] for g in gold]
    assert len(gold_ids) == len(set(gold_ids))
    assert set(ids) == set(gold_ids)
    assert 1 <= len(ids) - len(set(ids)) <= 20  # a handful of duplicate ids
    for g in gold:
        assert tree_v1.is_leaf(g["gold_node"])
        assert g["gold_who"] in WHO_VALUES and g["gold_age"] in AGE_VALUES


def _feed_ids(name: str, path: Path) -> list[str]:
    data = path.read_bytes()
    if name == "ferravelle":
        return [r["ref"] for r in _read_csv(data, encoding="cp1252", delimiter=";")]
    if name == "tallimbra":
        return [r["id"] for r in _read_csv(data, encoding="utf-8-sig", delimiter="\t")]
    root = ET.fromstring(data)
    return [o.get("id", "") for o in root.iter(f"{{{XML_NAMESPACE}}}offer")]


def _feed_categories(name: str, path: Path) -> dict[str, str]:
    data = path.read_bytes()
    if name == "ferravelle":
        return {r["ref"]: r["rayon"] for r in _read_csv(data, encoding="cp1252", delimiter=";")}
    if name == "tallimbra":
        return {r["id"]: r["category"]
                for r in _read_csv(data, encoding="utf-8-sig", delimiter="\t")}
    root = ET.fromstring(data)
    cat = f"{{{XML_NAMESPACE}}}category"
    return {o.get("id", ""): o.find(cat).get("breadcrumb", "")  # type: ignore[union-attr]
            for o in root.iter(f"{{{XML_NAMESPACE}}}offer")}


@pytest.mark.parametrize("name", ["ferravelle", "quorvane", "tallimbra"])
def test_retailer_categories_disagree_with_gold_often_enough(
        name: str, tree_v1: CategoryTree) -> None:
    paths = demo_paths(DEMO)
    categories = _feed_categories(name, paths.feeds[name])
    gold = {g["product_id"]: g["gold_node"] for g in _read_csv(paths.gold[name].read_bytes())}
    pairs = [(categories[pid], node) for pid, node in gold.items()]
    assert 0.15 <= _disagreement(pairs, tree_v1) <= 0.4


@pytest.mark.parametrize("name", ["ferravelle", "quorvane", "tallimbra"])
def test_feed_products_say_whom_they_are_for(name: str, tree_v1: CategoryTree) -> None:
    # A female / male (kids / baby) product under a node leaving that open says so in its
    # title, category path, gender column, description or (for age) size.
    paths = demo_paths(DEMO)
    rows = _feed_rows(name, paths)
    no_who, no_age, sole = _unsaid(rows, _spellings(paths.brands), tree_v1)
    assert no_who == [] and no_age == []
    # not always in the same place
    assert len(sole) >= 3 and max(sole.values()) < 0.9 * sum(sole.values()), sole


def test_labelled_feed_has_gold_columns() -> None:
    rows = _read_csv(demo_paths(DEMO).feeds["oskelund_labelled"].read_bytes())
    assert 2000 <= len(rows) <= 5000
    assert {"gold_node", "gold_brand", "gold_who", "gold_age", "gold_colour"} <= set(rows[0])


# -- the reference catalog on tree v1 --------------------------------------------------------------

def test_reference_on_tree_v1_covers_every_leaf(tmp_path: Path, tree_v1: CategoryTree) -> None:
    n_leaves = len(tree_v1.leaves())
    paths = build_demo_world(tmp_path, reference_size=3 * n_leaves, feed_sizes=SMALL_FEEDS,
                             tree=tree_v1)
    rows = _read_reference(paths.reference)
    assert {r["gold_node"] for r in rows} == {n.id for n in tree_v1.leaves()}
    assert len({r["retailer"] for r in rows}) >= 5
    pairs = [(r["retailer_category"], r["gold_node"]) for r in rows]
    assert 0.15 <= _disagreement(pairs, tree_v1) <= 0.4


@pytest.mark.slow
def test_full_size_reference_counts(tmp_path: Path, tree_v1: CategoryTree) -> None:
    paths = build_demo_world(tmp_path, tree=tree_v1)
    rows = _read_reference(paths.reference)
    assert len(rows) >= 60000
    per_leaf = Counter(r["gold_node"] for r in rows)
    assert set(per_leaf) == {n.id for n in tree_v1.leaves()}
    assert min(per_leaf.values()) >= 40
    assert max(per_leaf.values()) >= 3 * min(per_leaf.values())  # unequal sizes
    splits = Counter(r["split"] for r in rows)
    assert set(splits) == {"train", "valid", "test"}
    # realism checks on titles and labels
    titles = [(r["title"], r) for r in rows]
    womens = [r for t, r in titles if re.search(r"\b(Women's|Damen|Femme|Mujer)\b", t)]
    assert womens and all(r["gold_who"] == "female" for r in womens)
    mens = [r for t, r in titles if re.search(r"\b(Men's|Herren|Homme|Hombre)\b", t)]
    assert mens and all(r["gold_who"] == "male" for r in mens)
    kids_sized = [r for t, r in titles if re.search(r"\b(\d+ ans|age \d+-\d+|\d+ años)\b", t)]
    assert kids_sized and all(r["gold_age"] == "kids" for r in kids_sized)
    assert any(r["brand"] == "" and r["gold_brand"] and r["gold_brand"] in r["title"]
               for _, r in titles)


def test_split_rule_is_fixed_by_product_id() -> None:
    # the declared rule (feeds_demo/README.md): 70 / 10 / 20 by a hash of the product id
    ids = [f"X{i}" for i in range(20000)]
    counts = Counter(split_of(i) for i in ids)
    assert abs(counts["train"] / 20000 - 0.7) < 0.02
    assert abs(counts["valid"] / 20000 - 0.1) < 0.02
    assert abs(counts["test"] / 20000 - 0.2) < 0.02


def test_feed_gtins_mostly_valid_with_a_few_broken_ones() -> None:
    from stdnum import ean  # reference: python-stdnum, EAN / GTIN check digit

    rows = _read_csv(demo_paths(DEMO).feeds["tallimbra"].read_bytes(), encoding="utf-8-sig",
                     delimiter="\t")
    codes = [r["ean"] for r in rows if r["ean"]]
    valid = sum(ean.is_valid(c) for c in codes)
    assert 0.9 <= valid / len(codes) < 1.0
    assert len(codes) < len(rows)  # some products have no GTIN


def test_module_entry_point_has_help(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exc:
        demo_main(["--help"])
    assert exc.value.code == 0
    assert "--reference-size" in capsys.readouterr().out
