"""What it takes for the house to pass: the cheapest technique, share of the air or places.

The search (physics.what_it_takes) weighs only the ends of each way's range of places; the
checks here are a brute-force search over every whole number of places and a fine grid of
shares of the air for every technique of a made-up table (hand-made costs, no source needed:
the claim checked is the search's, not the figures'), the pass condition p (1 - r f) <= a
checked on every answer, and `siting place` on a one-house copy of the invented demo.
"""

import hashlib
import json
import math
import shutil

import numpy as np
import pandas as pd
import pytest
from scenario_text import ONE_HOUSE

from siting.cli import main
from siting.physics.what_it_takes import (
    AS_PLANNED,
    CANNOT,
    NONE_NEEDED,
    Technique,
    cheapest_ways,
)
from siting.readers.resources import demo_dir

#: A made-up table: two scrubbers and a housing measure (hand-made costs per place and year).
TABLE = [
    Technique("acid", "acid scrubber", "scrubber", 0.70, 17.0),
    Technique("bio", "biological scrubber", "scrubber", 0.70, 19.0),
    Technique("pit", "reduced pit", "housing_measure", 0.25, 1.5),
]
PLACES = 240
MARGIN = 60.0


def _brute_force(allowed: float, techniques=TABLE, margin=MARGIN) -> float:
    """The cheapest cost over every whole number of places, every technique (or none) and
    shares of the air in steps of 1/2000, with the pass condition checked directly."""
    best = math.inf
    shares = np.linspace(0.0, 1.0, 2001)
    for p in range(1, PLACES + 1):
        lost = margin * (PLACES - p)
        if p <= allowed + 1e-9:
            best = min(best, lost)  # no technique
        for t in techniques:
            if t.kind == "scrubber":
                ok = p * (1 - t.reduction * shares) <= allowed + 1e-9
                if ok.any():
                    best = min(best, t.cost_eur_per_place_yr * p * shares[ok][0] + lost)
            elif p * (1 - t.reduction) <= allowed + 1e-9:
                best = min(best, t.cost_eur_per_place_yr * p + lost)
    return best


@pytest.mark.parametrize("allowed", [300.0, 240.0, 200.0, 150.0, 100.0, 72.0, 50.0, 10.0, 0.5, 0.0])
def test_cheapest_way_equals_a_brute_force_search(allowed):
    found = cheapest_ways(np.array([allowed]), PLACES, TABLE, MARGIN)
    expected = _brute_force(allowed)
    if math.isinf(expected):
        assert found["what"][0] == CANNOT and np.isnan(found["cost_eur_yr"][0])
        return
    cost = found["cost_eur_yr"][0]
    # the brute force's shares are on a grid, so it can only be as cheap or a grid step dearer
    assert cost <= expected + 1e-6
    assert expected - cost <= max(t.cost_eur_per_place_yr for t in TABLE) * PLACES / 2000 + 1e-6
    # and the way found passes: p (1 - r f) <= a
    p, f = found["places"][0], found["share"][0]
    reduction = {t.id: t.reduction for t in TABLE}.get(found["technique"][0], 0.0)
    share = 1.0 if np.isnan(f) else f
    assert p * (1 - reduction * share) <= allowed + 1e-9


def test_a_random_table_against_the_brute_force():
    rng = np.random.default_rng(7)  # made-up tables: the search's claim holds for any costs
    for _ in range(20):
        table = [
            Technique(f"s{i}", f"s{i}", "scrubber", float(rng.uniform(0.3, 0.95)),
                      float(rng.uniform(1, 80)))
            for i in range(2)
        ] + [Technique("h", "h", "housing_measure", float(rng.uniform(0.05, 0.4)),
                       float(rng.uniform(0, 30)))]  # fmt: skip
        margin = float(rng.uniform(0, 120))
        allowed = float(rng.uniform(0, 300))
        cost = cheapest_ways(np.array([allowed]), PLACES, table, margin)["cost_eur_yr"][0]
        expected = _brute_force(allowed, table, margin)
        if math.isinf(expected):
            assert np.isnan(cost)
        else:
            step = max(t.cost_eur_per_place_yr for t in table) * PLACES / 2000
            assert cost <= expected + 1e-6 and expected - cost <= step + 1e-6


def test_as_planned_and_no_technique_come_first():
    ways = cheapest_ways(np.array([500.0, 100.0]), PLACES, TABLE, MARGIN, [True, True], 3000.0)
    assert ways["what"][0] == NONE_NEEDED and ways["cost_eur_yr"][0] == 0.0
    # passes as planned for 3000 a year; the cheapest other way here costs more
    other = cheapest_ways(np.array([100.0]), PLACES, TABLE, MARGIN)["cost_eur_yr"][0]
    assert other > 3000.0 and ways["what"][1] == AS_PLANNED
    dearer = cheapest_ways(np.array([100.0]), PLACES, TABLE, MARGIN, [True], other + 1.0)
    assert dearer["what"][0] != AS_PLANNED  # a cheaper way than the plan is shown


def test_share_needed_is_exact_at_the_limit():
    # all places through the acid scrubber at the share that just passes: 240 (1 - 0.7 f) = 120
    ways = cheapest_ways(np.array([120.0]), PLACES, TABLE[:1], 1e9)
    assert ways["share"][0] == pytest.approx((1 - 120 / 240) / 0.7, rel=1e-12)
    assert ways["cost_eur_yr"][0] == pytest.approx(17.0 * 240 * (1 - 120 / 240) / 0.7)


_H1 = ONE_HOUSE


def test_place_writes_the_cheapest_way_of_every_position(tmp_path):
    folder = tmp_path / "in"
    shutil.copytree(demo_dir(), folder)
    text = (folder / "scenario.toml").read_text()
    head = text[: text.index("[[source]]")].replace("spacing_m = 10.0", "spacing_m = 40.0", 1)
    (folder / "one.toml").write_text(head + _H1)
    out = tmp_path / "out"
    args = ["place", str(folder / "one.toml"), "--house", "H1", "--rules", "germany-2021"]
    assert main([*args, "--out", str(out), "--quiet"]) == 0
    positions = pd.read_csv(out / "positions.csv")
    for column in ("cheapest_option", "cheapest_cost_eur_yr", "cheapest_technique"):
        assert column in positions, column
    words = positions["cheapest_option"].astype(str)
    assert words.str.startswith(("passes", "does not pass")).all()
    # a position that passes as planned never costs more than the plan's own abatement
    planned = positions[positions["passes_as_described"]]
    assert len(planned)  # germany-2021 lets some positions through with the acid scrubber
    assert (planned["cheapest_cost_eur_yr"] <= 40_000).all()  # EUR 39,944: the demo's H1 row
    report = (out / "report.html").read_text()
    for heading in ("1. Summary", "2. The best positions", "3. Side by side", "4. Cautions"):
        assert heading in report, heading
    ways = pd.read_csv(out / "position_ways.csv")
    assert set(ways["rank"]) == set(range(1, 11))
    for way in ways["way"].unique():  # every way of position_ways.csv heads a column
        assert f"<th>{way}</th>" in report.replace("&#39;", "'"), way
    page = (out / "map.html").read_text()
    # run.json, written last, hashes every output (hashlib on the files as written)
    recorded = json.loads((out / "run.json").read_text())["outputs"]
    written = {p.name for p in out.iterdir() if p.is_file()} - {"run.json", ".siting-output"}
    assert set(recorded) == written and {"map.html", "report.html"} <= written
    for name, entry in recorded.items():
        assert entry["sha256"] == hashlib.sha256((out / name).read_bytes()).hexdigest(), name
    assert "Cheapest annual cost to pass" in page
    assert any(w in page for w in words.head(10))


def _one_house(tmp_path, places: float, spacing: str = "100.0"):
    folder = tmp_path / "in"
    if not folder.exists():
        shutil.copytree(demo_dir(), folder)
    text = (folder / "scenario.toml").read_text()
    head = text[: text.index("[[source]]")].replace("spacing_m = 25.0", f"spacing_m = {spacing}", 1)
    path = folder / f"one_{places:g}.toml"
    path.write_text(head + _H1.replace("places = 2400", f"places = {places:g}"))
    return path


def test_screen_finds_the_largest_emission_that_passes(tmp_path):
    # check: the limit found is the limit, by separate runs of the house with its places just
    # below and just above it (every judged figure grows with the places)
    from siting.runs.screening import screen

    result = screen(_one_house(tmp_path, 2400), sensitivity=False)
    ways = result.what_it_takes
    assert list(ways["source_id"]) == ["H1"]
    scale = float(ways["max_share_of_planned"].iloc[0])
    assert 0 < scale < 1  # the demo's H1 alone, judged by plain, fails as planned
    below = screen(_one_house(tmp_path, 2400 * scale * (1 - 2e-3)), sensitivity=False)
    above = screen(_one_house(tmp_path, 2400 * scale * (1 + 2e-3)), sensitivity=False)
    judged = below.sites["assessed"]
    assert below.sites["passes"][judged].all()
    assert not above.sites["passes"][judged].all()
    # the cheapest way is the search's over the house's own costed table
    words = str(ways["cheapest_option"].iloc[0])
    assert words.startswith("passes with") and ways["cheapest_cost_eur_yr"].iloc[0] > 0


def test_screen_writes_what_it_takes(tmp_path):
    out = tmp_path / "out"
    assert (
        main(["screen", str(_one_house(tmp_path, 2400)), "--out", str(out), "--quiet", "--no-pdf"])
        == 0
    )
    table = pd.read_csv(out / "what_it_takes.csv")
    assert list(table["source_id"]) == ["H1"]
    report = (out / "report.html").read_text()
    assert "What it takes for each proposed house to pass" in report
    assert str(table["cheapest_option"].iloc[0]).split(",")[0] in report


def test_side_by_side_equals_separate_searches(tmp_path):
    # check: at the best positions, "with <technique>" and "half the places" say what a
    # separate search of the house so changed says at the same position
    from siting.runs.placing import place

    folder = tmp_path / "in"
    shutil.copytree(demo_dir(), folder)
    text = (folder / "scenario.toml").read_text()
    head = text[: text.index("[[source]]")].replace("spacing_m = 10.0", "spacing_m = 40.0", 1)
    variants = {
        "planned": _H1,
        "with Biological air scrubber (biotrickling filter)": _H1.replace(
            '"acid_scrubber"', '"biological_scrubber"'
        ),
        "with Partly slatted floor with reduced slurry pit": _H1.replace(
            'abatement = "acid_scrubber"', 'abatement = "reduced_emitting_pit"'
        ),
        "half the places": _H1.replace("places = 2400", "places = 1200"),
    }
    runs = {}
    for name, source in variants.items():
        path = folder / f"{len(runs)}.toml"
        path.write_text(head + source)
        runs[name] = place(path, "H1", rules="germany-2021")
    base = runs.pop("planned")
    table = base.side_by_side
    for rank, position in enumerate(base.positions.head(10).itertuples(), start=1):
        for name, other in runs.items():
            at = other.positions[
                (other.positions["x"] == position.x) & (other.positions["y"] == position.y)
            ]
            shown = table[(table["rank"] == rank) & (table["way"] == name)]
            assert len(at) == 1 and len(shown) == 1, name
            assert bool(shown["passes"].iloc[0]) == bool(at["passes_as_described"].iloc[0]), (
                rank,
                name,
            )
    assert table["passes"].any() and not table["passes"].all()  # both outcomes are checked
    planned = table[table["way"] == "as planned"]
    assert list(planned["passes"]) == list(base.positions["passes_as_described"].head(10))


def test_where_the_other_sources_alone_fail_the_words_say_so(tmp_path):
    # the invented demo under plain: the existing farm alone puts Fernwhistle Moss over its
    # threshold (README), so no emission of H1 passes anywhere, and the words say why
    from siting.runs.placing import place

    folder = tmp_path / "in"
    shutil.copytree(demo_dir(), folder)
    path = folder / "scenario.toml"
    path.write_text(path.read_text().replace("spacing_m = 10.0", "spacing_m = 40.0", 1))
    positions = place(path, "H1").positions
    assert (positions["max_share_of_planned"] == 0).all()
    assert positions["cheapest_option"].str.endswith("already fail without the house").all()
    assert positions["cheapest_cost_eur_yr"].isna().all()
