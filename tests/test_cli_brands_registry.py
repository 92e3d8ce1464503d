"""Tests for the brand registry through the commands: `catmap onboard` fills it,
`catmap brands list` shows it, `catmap brands confirm` trusts a candidate, and the retailer's
own name in the brand field is reported (and read as no brand when the profile says so)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner, Result
from test_onboard import TEST_MAX_ERROR, SmallWorld, new_project

from catmap.cli import main
from catmap.errors import EXIT_INPUT
from catmap.project import profile_path
from catmap.review import reject_brand
from catmap.store import Store, store_path

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


# An invented shop, Kelvora, writes its own name in the brand field of its house products
# (8 of 14 branded, in 4 categories), and one invented brand three ways.
KELVORA = [
    *(f"K{i},Kelvora {kind},Kelvora,{path},9.90 EUR" for i, (kind, path) in enumerate([
        ("cotton shirt", "Men > Shirts"), ("wool coat", "Women > Coats"),
        ("leather belt", "Men > Belts"), ("canvas bag", "Bags"), ("linen shirt", "Men > Shirts"),
        ("rain coat", "Women > Coats"), ("cotton socks", "Men > Socks"), ("tote bag", "Bags"),
    ])),
    "B1,Bench Low wool scarf,Bench Low,Women > Scarves,19.00 EUR",
    "B2,Benchlow cotton scarf,Benchlow GmbH,Women > Scarves,19.00 EUR",
    "B3,Benchlow linen scarf,BENCHLOW,Women > Scarves,19.00 EUR",
    "B4,Benchlow silk scarf,Benchlow,Women > Scarves,29.00 EUR",
    "B5,Benchlow wool gloves,Benchlow,Women > Gloves,19.00 EUR",
    "B6,Benchlow leather gloves,Benchlow,Women > Gloves,39.00 EUR",
]
# Another shop sells the same brand, once misspelt.
MARLUNE = [
    "M1,Benchlow wool hat,Benchlow,Hats,19.00 EUR",
    "M2,Benchlow cotton hat,Benchlow,Hats,19.00 EUR",
    "M3,Benchlow linen hat,Benchlow,Hats,19.00 EUR",
    "M4,Benchlow rain hat,Benchlow,Hats,19.00 EUR",
    "M5,Benchlov wool hat,Benchlov,Hats,19.00 EUR",
    "M6,Plain mug,,Kitchen,5.00 EUR",
]


def _feed(folder: Path, name: str, rows: list[str]) -> Path:
    path = folder / f"{name}.csv"
    path.write_text("id,title,brand,category,price\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


def _run(*args: str) -> Result:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def _onboard(world: SmallWorld, project: Path, feed: Path, *more: str) -> Result:
    return _run(
        "onboard", str(feed), "--project", str(project), "--max-error", str(TEST_MAX_ERROR),
        "--validation", str(world.paths.reference), *more,
    )  # fmt: skip


def _json(result: Result) -> dict[str, Any]:
    assert result.exit_code == 0, result.output
    facts: dict[str, Any] = json.loads(result.stdout)
    return facts


def _brands(project: Path) -> dict[str, dict[str, Any]]:
    facts = _json(_run("brands", "list", "--project", str(project), "--json"))
    return {b["name"]: b for b in facts["brands"]}


def _evidence(project: Path, feed: str) -> dict[str, str]:
    with Store.open(store_path(project)) as store:
        return {p.product_id: m.attributes.brand_evidence for p, m in store.mappings(feed)}


def _status_of(project: Path, feed: str) -> dict[str, str]:
    with Store.open(store_path(project)) as store:
        return {p.product_id: m.attributes.brand_status for p, m in store.mappings(feed)}


def _brand_of(project: Path, feed: str) -> dict[str, str]:
    with Store.open(store_path(project)) as store:
        return {p.product_id: m.attributes.brand for p, m in store.mappings(feed)}


def test_onboarding_reports_the_retailers_own_name(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    facts = _json(_onboard(world, project, feed, "--json"))
    retailer = facts["brands"]["retailer"]
    assert retailer["name"] == "Kelvora"
    assert retailer["reason"] == "feed name"
    assert retailer["as_no_brand"] is False
    assert _brand_of(project, "kelvora")["K0"] == "Kelvora"

    text = " ".join(_onboard(world, project, feed).stdout.split())
    assert "retailer's own name in the brand field: Kelvora (matches the feed's name)" in text


def test_the_profile_setting_reads_the_retailers_name_as_no_brand(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    _json(_onboard(world, project, feed, "--json"))
    profile = profile_path(project, feed)
    text = profile.read_text(encoding="utf-8")
    assert "# retailer_as_no_brand = true" in text
    profile.write_text(text.replace("# retailer_as_no_brand = true", "retailer_as_no_brand = true"),
                       encoding="utf-8")
    facts = _json(_onboard(world, project, feed, "--json"))
    assert facts["brands"]["retailer"]["as_no_brand"] is True
    brands = _brand_of(project, "kelvora")
    assert all(brands[f"K{i}"] != "Kelvora" for i in range(8))
    assert brands["B4"] == "Benchlow"


def test_onboarding_twice_and_another_feed_merge_the_registry(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    kelvora = _feed(tmp_path, "kelvora", KELVORA)
    marlune = _feed(tmp_path, "marlune", MARLUNE)
    _json(_onboard(world, project, kelvora, "--json"))
    once = _brands(project)["Benchlow"]
    assert once["status"] == "candidate"
    # Counts are per sighting: a product's brand field and its title each count once.
    assert once["seen"] >= 6
    assert once["feeds"] == {"kelvora": once["seen"]}
    assert {"Bench Low", "Benchlow GmbH", "BENCHLOW", "Benchlow"} <= {
        v["spelling"] for v in once["variants"]
    }

    _json(_onboard(world, project, kelvora, "--json"))  # again: counted once, not twice
    assert _brands(project)["Benchlow"]["seen"] == once["seen"]
    facts = _json(_onboard(world, project, marlune, "--json"))
    brand = _brands(project)["Benchlow"]
    # The typo "Benchlov" of the second feed joins the brand across feeds.
    assert brand["feeds"]["kelvora"] == once["seen"]
    assert brand["feeds"]["marlune"] >= 5
    assert brand["seen"] == once["seen"] + brand["feeds"]["marlune"]
    assert "Benchlov" in {v["spelling"] for v in brand["variants"]}
    assert facts["brands"]["registry_brands"] == len(_brands(project))

    shown = " ".join(_run("brands", "list", "--project", str(project)).stdout.split())
    total = len(_brands(project))
    assert f"Brand registry: {total} brands (0 confirmed, {total} candidates)" in shown
    assert "Benchlow" in shown and "catmap brands confirm NAME" in shown


def test_confirm_changes_the_status_and_later_runs_trust_the_brand(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    _json(_onboard(world, project, feed, "--json"))
    assert _evidence(project, "kelvora")["B4"].endswith("[candidate]")
    assert _status_of(project, "kelvora")["B4"] == "candidate"

    facts = _json(_run("brands", "confirm", "bench low", "--project", str(project), "--json"))
    assert facts["name"] == "Benchlow"
    assert (facts["was"], facts["status"]) == ("candidate", "confirmed")
    assert _brands(project)["Benchlow"]["status"] == "confirmed"
    # The products that carry it are trusted at once, before any later run.
    benchlow = [pid for pid, brand in _brand_of(project, "kelvora").items() if brand == "Benchlow"]
    assert len(benchlow) == facts["products_confirmed"] >= 6
    statuses = _status_of(project, "kelvora")
    assert {statuses[pid] for pid in benchlow} == {"confirmed"}
    assert not _evidence(project, "kelvora")["B4"].endswith("[candidate]")
    again = _run("brands", "confirm", "Benchlow", "--project", str(project))
    assert "already confirmed" in again.stdout

    _json(_onboard(world, project, feed, "--json"))
    assert _brands(project)["Benchlow"]["status"] == "confirmed"
    evidence = _evidence(project, "kelvora")
    assert not evidence["B4"].endswith("[candidate]")
    assert _brand_of(project, "kelvora")["B2"] == "Benchlow"
    assert _status_of(project, "kelvora")["B4"] == "confirmed"
    status = _json(_run("status", "--project", str(project), "--json"))["feeds"][0]
    kelvora = [pid for pid, brand in _brand_of(project, "kelvora").items() if brand == "Kelvora"]
    # Only the shop's own name is left a candidate.
    assert status["brand_status"] == {"confirmed": len(benchlow), "candidate": len(kelvora)}


def test_a_rejected_brand_stays_rejected_and_is_never_learned_again(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    kelvora = _feed(tmp_path, "kelvora", KELVORA)
    _json(_onboard(world, project, kelvora, "--json"))
    with Store.open(store_path(project)) as store:
        verdict = reject_brand(store, "Benchlow", actor="ana")
    assert verdict.products >= 6
    assert all(b != "Benchlow" for b in _brand_of(project, "kelvora").values())

    # Onboarding again, and another feed with the brand: it stays rejected, no product gets it.
    _json(_onboard(world, project, kelvora, "--json"))
    _json(_onboard(world, project, _feed(tmp_path, "marlune", MARLUNE), "--json"))
    assert _brands(project)["Benchlow"]["status"] == "rejected"
    for feed in ("kelvora", "marlune"):
        assert all(b not in ("Benchlow", "Bench Low") for b in _brand_of(project, feed).values())
    shown = " ".join(_run("brands", "list", "--project", str(project)).stdout.split())
    assert "1 rejected)" in shown


def test_confirming_an_unknown_brand_is_an_input_error(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    result = CliRunner().invoke(main, ["brands", "confirm", "Nowhere", "--project", str(project)])
    assert result.exit_code == EXIT_INPUT
    assert result.output.startswith("catmap: error: ")
    assert "onboard a feed first" in result.output
    listed = _run("brands", "list", "--project", str(project))
    assert "No brand in the registry yet" in listed.stdout


def test_reject_takes_the_brand_off_its_candidates_and_reset_gives_it_back(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    _json(_onboard(world, project, feed, "--json"))
    before = _brand_of(project, "kelvora")
    evidence = _evidence(project, "kelvora")
    benchlow = sorted(pid for pid, brand in before.items() if brand == "Benchlow")
    assert len(benchlow) >= 6

    facts = _json(_run("brands", "reject", "BENCHLOW", "--project", str(project), "--json"))
    assert facts["name"] == "Benchlow"
    assert (facts["was"], facts["status"]) == ("candidate", "rejected")
    assert facts["products_cleared"] == len(benchlow)
    assert _brands(project)["Benchlow"]["status"] == "rejected"
    after = _brand_of(project, "kelvora")
    statuses = _status_of(project, "kelvora")
    assert {after[pid] for pid in benchlow} == {""}
    assert {statuses[pid] for pid in benchlow} == {"none"}
    # The shop's own name is another brand: untouched.
    assert all(after[pid] == "Kelvora" for pid, b in before.items() if b == "Kelvora")
    with Store.open(store_path(project)) as store:
        entry = [e for e in store.audit_log() if e.action == "brand_rejected"]
    assert [(e.actor, e.detail["brand"], e.detail["products"]) for e in entry] == [
        ("cli", "Benchlow", len(benchlow))
    ]
    text = _run("brands", "reject", "Benchlow", "--project", str(project)).stdout
    assert text.startswith("Benchlow was already rejected.")

    facts = _json(_run("brands", "reset", "Benchlow", "--project", str(project), "--json"))
    assert (facts["was"], facts["status"]) == ("rejected", "candidate")
    assert facts["products_reset"] == len(benchlow)
    # Every product holds again exactly what it held before the rejection.
    assert _brand_of(project, "kelvora") == before
    assert _evidence(project, "kelvora") == evidence
    assert {_status_of(project, "kelvora")[pid] for pid in benchlow} == {"candidate"}
    again = _run("brands", "reset", "Benchlow", "--project", str(project))
    assert again.stdout.startswith("Benchlow was already a candidate.")


def test_reset_takes_a_confirmation_back(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    _json(_onboard(world, project, feed, "--json"))
    evidence = _evidence(project, "kelvora")
    confirmed = _json(_run("brands", "confirm", "Benchlow", "--project", str(project), "--json"))
    text = " ".join(_run("brands", "reset", "bench low", "--project", str(project)).stdout.split())
    assert text.startswith(
        f"Set Benchlow back to a candidate (was confirmed; seen {confirmed['seen']} times; "
        f"{confirmed['products_confirmed']} products are candidates of it again)."
    )
    assert _brands(project)["Benchlow"]["status"] == "candidate"
    assert _evidence(project, "kelvora") == evidence
    with Store.open(store_path(project)) as store:
        actions = [e.action for e in store.audit_log() if e.action.startswith("brand_")]
    assert actions[-2:] == ["brand_confirmed", "brand_reset"]


def test_brands_list_helps_decide_examples_and_the_feeds_own_name(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    _json(_onboard(world, project, _feed(tmp_path, "kelvora", KELVORA), "--json"))
    brands = _brands(project)
    titles = {row.split(",")[1] for row in KELVORA}
    assert 1 <= len(brands["Benchlow"]["examples"]) <= 2
    assert set(brands["Benchlow"]["examples"]) <= titles
    assert all("enchlow" in t or "Bench Low" in t for t in brands["Benchlow"]["examples"])
    assert brands["Kelvora"]["feed_own_name"] == "kelvora"
    assert brands["Benchlow"]["feed_own_name"] is None

    shown = " ".join(_run("brands", "list", "--project", str(project)).stdout.split())
    assert "own name" in shown
    assert "reject it, or set retailer_as_no_brand = true" in shown
    assert "catmap brands reject NAME" in shown
    # A person warned before rejecting or confirming the shop's name.
    said = " ".join(_run("brands", "reject", "Kelvora", "--project", str(project)).stdout.split())
    assert "Note: Kelvora is the feed's own name (kelvora)." in said


@pytest.mark.parametrize("command", ["reject", "reset"])
def test_an_unknown_brand_names_it_and_says_what_to_do(
    world: SmallWorld, tmp_path: Path, command: str
) -> None:
    project = new_project(world, tmp_path / "p")
    _json(_onboard(world, project, _feed(tmp_path, "kelvora", KELVORA), "--json"))
    result = CliRunner().invoke(main, ["brands", command, "Nowhere", "--project", str(project)])
    assert result.exit_code == EXIT_INPUT
    assert result.output == (
        "catmap: error: field 'brand': no brand 'Nowhere' in the project's brand registry "
        "(`catmap brands list` shows the brands `catmap onboard` has seen; use one of their "
        "names or spellings)\n"
    )


def _brand_item(project: Path, brand: str) -> tuple[int, str, tuple[str, ...], str] | None:
    """The review item standing for a candidate brand: (id, product, reasons, state)."""
    with Store.open(store_path(project)) as store:
        found = [
            (i.id, i.product_id, i.reasons, i.state)
            for i in store.items()
            if i.state != "done" and "brand_candidate" in i.reasons
            and store._conn.execute(
                "SELECT brand FROM review_items WHERE id = ?", (i.id,)
            ).fetchone()[0] == brand
        ]  # fmt: skip
    assert len(found) <= 1
    return found[0] if found else None


def test_onboarding_queues_each_candidate_brand_once_and_verdicts_settle_it(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _feed(tmp_path, "kelvora", KELVORA)
    facts = _json(_onboard(world, project, feed, "--json"))
    candidates = _brands(project)
    waiting = sorted(n for n, b in candidates.items() if b["status"] == "candidate")
    assert facts["queued_by_reason"]["brand_candidate"] == len(waiting)
    item = _brand_item(project, "Benchlow")
    assert item is not None
    statuses = _status_of(project, "kelvora")
    assert statuses[item[1]] == "candidate" and _brand_of(project, "kelvora")[item[1]] == "Benchlow"
    # Onboarding again picks the same item.
    _json(_onboard(world, project, feed, "--json"))
    assert _brand_item(project, "Benchlow") == item
    status = " ".join(_run("status", "--project", str(project)).stdout.split())
    count = len(waiting)
    assert f"{count} brand{'s wait' if count != 1 else ' waits'} in the review queue" in status

    _json(_run("brands", "reject", "Benchlow", "--project", str(project), "--json"))
    assert _brand_item(project, "Benchlow") is None
    status = json.loads(_run("status", "--project", str(project), "--json").stdout)
    assert status["brands_waiting"] == count - 1
    _json(_run("brands", "reset", "Benchlow", "--project", str(project), "--json"))
    assert _brand_item(project, "Benchlow") == item
    with Store.open(store_path(project)) as store:
        entries = [e for e in store.audit_log() if e.action in ("brand_rejected", "brand_reset")]
    assert [e.detail["items"] for e in entries] == [[item[0]], [item[0]]]
