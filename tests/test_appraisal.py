"""The abatement appraisal (issue 15 item 3): scrubber size, acid, annuity, cost per kg NH3.

Checked against what lies outside the code: the stoichiometry of ammonium sulphate with the
IUPAC abridged standard atomic weights (IUPAC2021: H 1.008, N 14.007, O 15.999, S 32.06; the
code uses CIAAW conventional values to more figures, so rtol 1e-4 covers the rounding, which
moves the ratio M(H2SO4) / 2 M(NH3) by 3e-5), the annuity of a textbook loan (10,000 at 5 % over
10 years: 1,295.05 a year; its present value checked here), and the demo's H1 worked by hand
from the rows of the config tables and the demo's [appraisal] prices. The table's and the
[appraisal] section's refusals are read by their messages.
"""

from __future__ import annotations

import math
import shutil
import tomllib

import numpy as np
import pytest

from siting.errors import InputError
from siting.physics.appraisal import (
    annuity_eur_yr,
    annuity_factor_per_yr,
    cost_eur_per_kg_nh3,
    scrubber_capacity_m3_h,
    sulphuric_acid_kg_yr,
)
from siting.readers.resources import config_dir, demo_dir
from siting.readers.scenario import _validate, load_scenario
from siting.readers.scenario_sources import SourceSpec
from siting.readers.tables import load_tables
from siting.runs.appraisal import APPRAISAL_COLUMNS, appraise_sources
from siting.runs.screening_sources import derive_sources

#: IUPAC2021 abridged standard atomic weights [g/mol] (the test's own, independent of the code)
H, N, OX, S = 1.008, 14.007, 15.999, 32.06
M_NH3 = N + 3 * H  # 17.031
M_H2SO4 = 2 * H + S + 4 * OX  # 98.072
M_AMMONIUM_SULPHATE = 2 * N + 8 * H + S + 4 * OX  # (NH4)2SO4, 132.134
#: atomic-weight rounding of the test's molar masses against the code's (see the docstring)
RTOL_ATOMIC = 1e-4


def _toml(path) -> dict:
    with open(path, "rb") as handle:
        return tomllib.load(handle)


@pytest.fixture(scope="module")
def demo():
    """The demo scenario, the bundled tables and its appraised sources table by source id."""
    scenario = load_scenario(demo_dir() / "scenario.toml")
    tables = load_tables()
    sources = appraise_sources(scenario, tables, derive_sources(scenario, tables))
    return scenario, tables, sources.set_index("source_id")


def _appraised(scenario, tables, *changed: SourceSpec):
    """The sources table of the scenario with ``changed`` as its sources, by source id."""
    varied = scenario.model_copy(update={"sources": list(changed)})
    return appraise_sources(varied, tables, derive_sources(varied, tables)).set_index("source_id")


def _source(scenario, source_id: str, **change) -> SourceSpec:
    base = next(s for s in scenario.sources if s.id == source_id).model_dump()
    return SourceSpec.model_validate({**base, **change})


# --- the formulas -----------------------------------------------------------------------------


def test_acid_is_the_stoichiometry_of_ammonium_sulphate():
    """2 NH3 + H2SO4 -> (NH4)2SO4: kg acid = kg NH3 x M(H2SO4) / (2 M(NH3)), and the salt's
    mass is the ammonia's plus the acid's (conservation of mass)."""
    nh3_kg = np.array([0.0, 1.0, 1000.0, 4725.84])
    acid_kg = sulphuric_acid_kg_yr(nh3_kg)
    np.testing.assert_allclose(acid_kg, nh3_kg * M_H2SO4 / (2 * M_NH3), rtol=RTOL_ATOMIC)
    salt_kg = nh3_kg * M_AMMONIUM_SULPHATE / (2 * M_NH3)
    np.testing.assert_allclose(nh3_kg + acid_kg, salt_kg, rtol=RTOL_ATOMIC)
    # linear in the share bound by acid (analytic)
    np.testing.assert_allclose(sulphuric_acid_kg_yr(nh3_kg, 0.5), acid_kg / 2, rtol=1e-12)
    assert np.all(sulphuric_acid_kg_yr(nh3_kg, 0.0) == 0.0)
    with pytest.raises(ValueError, match="nh3_captured_kg_yr"):
        sulphuric_acid_kg_yr(-1.0)


def test_annuity_of_a_textbook_loan():
    """10,000 at 5 % over 10 years: 1,295.05 a year (the A/P factor 0.12950 of compound-interest
    tables, from memory), and the ten payments discounted at 5 % give back the loan."""
    payment = float(annuity_eur_yr(10_000.0, 5.0, 10))
    assert payment == pytest.approx(1295.05, abs=0.005)  # printed to the cent
    present_value = sum(payment / 1.05**t for t in range(1, 11))  # analytic: definition of A
    assert present_value == pytest.approx(10_000.0, rel=1e-12)
    assert float(annuity_factor_per_yr(5.0, 10)) == pytest.approx(0.12950, abs=5e-6)


def test_annuity_without_interest_is_straight_repayment():
    """r = 0: the limit of r / (1 - (1 + r)^-n) is 1 / n (analytic); near zero it is continuous."""
    assert float(annuity_eur_yr(10_000.0, 0.0, 10)) == pytest.approx(1000.0, rel=1e-12)
    assert float(annuity_eur_yr(10_000.0, 1e-6, 10)) == pytest.approx(1000.0, rel=1e-6)
    with pytest.raises(ValueError, match="life_years"):
        annuity_factor_per_yr(5.0, 0.0)


def test_capacity_and_cost_per_kg_are_plain_products_and_quotients():
    """Capacity is linear in rate, places and share; nothing abated has no cost per kg."""
    assert float(scrubber_capacity_m3_h(60.0, 2400, 0.5)) == pytest.approx(72_000.0)  # 60x2400/2
    assert math.isnan(float(cost_eur_per_kg_nh3(100.0, 0.0)))
    assert float(cost_eur_per_kg_nh3(100.0, 4.0)) == pytest.approx(25.0)  # hand: 100 / 4
    with pytest.raises(ValueError, match="design_share_fraction"):
        scrubber_capacity_m3_h(60.0, 10, 1.5)


# --- the demo, by hand ------------------------------------------------------------------------


def test_demo_h1_acid_scrubber_by_hand(demo):
    """H1 (2400 finishing-pig places, fully slatted, acid scrubber at the lower end of its range,
    all air treated) worked by hand from the rows of the config tables and the demo's prices."""
    _, _, sources = demo
    config = config_dir()
    factor = next(
        r["nh3_kg_per_place_yr"]
        for r in _toml(config / "emission_factors.toml")["factor"]
        if (r["livestock"], r["housing"]) == ("finishing_pig", "fully_slatted")
    )
    technique = next(
        r for r in _toml(config / "abatement.toml")["technique"] if r["id"] == "acid_scrubber"
    )
    appraisal = _toml(config / "abatement_appraisal.toml")
    cost = next(r for r in appraisal["scrubber"] if r["id"] == "acid_scrubber")
    rate = next(
        r["max_ventilation_m3_h_per_place"]
        for r in appraisal["ventilation"]
        if r["livestock"] == "finishing_pig"
    )
    prices = _toml(demo_dir() / "scenario.toml")["appraisal"]
    places = 2400

    removed = places * factor * technique["reduction_percent_min"] / 100  # 4725.84 kg NH3/yr
    effluent = removed * N / M_NH3 / technique["effluent_kg_n_per_m3"]  # m3/yr
    capacity = rate * places * 1.0  # treated_air_fraction 1.0
    capital = capacity * cost["capital_eur_per_m3_h"]
    electricity = capacity * cost["electricity_kwh_per_m3_h_yr"]
    water = capacity * cost["evaporation_m3_per_m3_h_yr"] + effluent
    acid = removed * M_H2SO4 / (2 * M_NH3)
    r, n = prices["interest_percent"] / 100, cost["life_years"]
    annual = (
        capital * r / (1 - (1 + r) ** -n)
        + capital * cost["maintenance_percent_of_capital_yr"] / 100
        + electricity * prices["electricity_eur_per_kwh"]
        + water * prices["water_eur_per_m3"]
        + acid * prices["acid_eur_per_kg"]
        + effluent * prices["effluent_eur_per_m3"]
    )
    h1 = sources.loc["H1"]
    assert h1["nh3_removed_kg_yr"] == pytest.approx(removed, rel=1e-12)
    assert h1["scrubber_capacity_m3_h"] == pytest.approx(capacity, rel=1e-12)
    assert h1["capital_eur"] == pytest.approx(capital, rel=1e-12)
    assert h1["electricity_kwh_yr"] == pytest.approx(electricity, rel=1e-12)
    assert h1["water_m3_yr"] == pytest.approx(water, rel=RTOL_ATOMIC)
    assert h1["acid_kg_yr"] == pytest.approx(acid, rel=RTOL_ATOMIC)
    assert h1["annual_cost_eur_yr"] == pytest.approx(annual, rel=RTOL_ATOMIC)
    assert h1["cost_eur_per_kg_nh3"] == pytest.approx(annual / removed, rel=RTOL_ATOMIC)
    assert h1["appraisal_note"] == ""  # the demo sets every price


def test_demo_h2_housing_measure_is_costed_per_place(demo):
    """H2 (1800 weaner places, low-protein feed): no capacity or acid, its cost the table's
    running cost per place x places (no capital), by hand."""
    _, _, sources = demo
    cost = next(
        r
        for r in _toml(config_dir() / "abatement_appraisal.toml")["housing_measure"]
        if r["id"] == "low_protein_feed"
    )
    h2 = sources.loc["H2"]
    assert math.isnan(h2["scrubber_capacity_m3_h"])
    assert h2["acid_kg_yr"] == 0.0
    assert h2["capital_eur"] == pytest.approx(1800 * cost["capital_eur_per_place"])
    assert h2["annual_cost_eur_yr"] == pytest.approx(1800 * cost["running_eur_per_place_yr"])
    assert h2["cost_eur_per_kg_nh3"] == pytest.approx(
        h2["annual_cost_eur_yr"] / h2["nh3_removed_kg_yr"]
    )


def test_a_source_without_a_technique_gets_nan(demo):
    """E1, R1, M1 and N1 have no abatement: every appraisal figure NaN, no note."""
    _, _, sources = demo
    assert list(sources.columns[-len(APPRAISAL_COLUMNS) :]) == list(APPRAISAL_COLUMNS)
    for source_id in ("E1", "R1", "M1", "N1"):
        row = sources.loc[source_id]
        assert all(math.isnan(row[c]) for c in APPRAISAL_COLUMNS[:-1]), source_id
        assert row["appraisal_note"] == ""


def test_scrubber_sized_for_its_treated_share(demo):
    """treated_air_fraction 0.6 sizes the scrubber for 60 % of the maximum air (hand: 60 m3/h x
    2400 places x 0.6), and its capital with it."""
    scenario, tables, sources = demo
    partial = _appraised(scenario, tables, _source(scenario, "H1", treated_air_fraction=0.6))
    full = sources.loc["H1"]
    assert partial.loc["H1", "scrubber_capacity_m3_h"] == pytest.approx(
        0.6 * full["scrubber_capacity_m3_h"], rel=1e-12
    )
    assert partial.loc["H1", "capital_eur"] == pytest.approx(0.6 * full["capital_eur"], rel=1e-12)


def test_scrubber_design_share_sets_the_size_not_the_treated_share(demo):
    """With scrubber_design_share 0.6 the scrubber is sized for 60 % of the maximum air (hand:
    0.6 x the full size), whatever share of the ammonia it treats over the year (0.9 here, as
    the hourly record would give it)."""
    scenario, tables, sources = demo
    h1 = _source(scenario, "H1", treated_air_fraction=None, scrubber_design_share=0.6)
    varied = scenario.model_copy(update={"sources": [h1]})
    table = appraise_sources(varied, tables, derive_sources(varied, tables, {"H1": 0.9}))
    assert table.loc[0, "treated_air_fraction"] == 0.9
    assert table.loc[0, "scrubber_capacity_m3_h"] == pytest.approx(
        0.6 * sources.loc["H1", "scrubber_capacity_m3_h"], rel=1e-12
    )


def test_a_direct_emission_is_not_sized(demo):
    """M1 (nh3_kg_per_year, no places) given an acid scrubber: its acid follows the ammonia
    removed, but there is no capacity, capital or annual cost, and the note says why."""
    scenario, tables, _ = demo
    sources = _appraised(scenario, tables, _source(scenario, "M1", abatement="acid_scrubber"))
    m1 = sources.loc["M1"]
    for column in ("scrubber_capacity_m3_h", "capital_eur", "annual_cost_eur_yr"):
        assert math.isnan(m1[column]), column
    assert m1["acid_kg_yr"] == pytest.approx(
        m1["nh3_removed_kg_yr"] * M_H2SO4 / (2 * M_NH3), rel=RTOL_ATOMIC
    )
    assert "nh3_kg_per_year" in m1["appraisal_note"] and "no sizing" in m1["appraisal_note"]


def test_prices_left_out_are_named_as_placeholders(demo):
    """A scenario without [appraisal] is costed at the invented placeholders, and says so."""
    _, tables, _ = demo
    raw = _toml(demo_dir() / "scenario.toml")
    raw.pop("appraisal")
    bare = _validate(raw, "scenario.toml")
    note = appraise_sources(bare, tables, derive_sources(bare, tables)).set_index("source_id")
    assert "invented placeholder prices" in note.loc["H1", "appraisal_note"]
    assert "electricity_eur_per_kwh" in note.loc["H1", "appraisal_note"]


# --- the table and the scenario section -------------------------------------------------------


def _config_copy(tmp_path):
    folder = tmp_path / "config"
    shutil.copytree(config_dir(), folder)
    return folder


def _edit(path, change) -> None:
    """Rewrite one table row by text: ``change(text) -> text`` must change it."""
    text = path.read_text(encoding="utf-8")
    new = change(text)
    assert new != text, "test setup: the edit changed nothing"
    path.write_text(new, encoding="utf-8")


def test_every_row_names_a_source_with_its_status():
    """Each row of abatement_appraisal.toml has a source saying how sure it is."""
    marks = ("confirmed", "derived", "from memory", "common practice, no source")
    table = _toml(config_dir() / "abatement_appraisal.toml")
    for section in ("scrubber", "housing_measure", "ventilation"):
        for row in table[section]:
            assert any(mark in row["source"] for mark in marks), (section, row)


def test_a_row_without_a_source_is_refused(tmp_path):
    """A [[scrubber]] row with its source taken out is refused, naming file, row and key."""
    folder = _config_copy(tmp_path)
    path = folder / "abatement_appraisal.toml"
    _edit(path, lambda t: t.replace('source = "capital 0.5-1.5', 'note = "capital 0.5-1.5', 1))
    row = r'abatement_appraisal\.toml, \[\[scrubber\]\] row 1 \("acid_scrubber"\)'
    with pytest.raises(InputError, match=row + ".*source"):
        load_tables(folder)


def test_rows_must_match_the_other_tables(tmp_path):
    """A row for an unknown technique or livestock is refused with a suggestion, and a
    technique in the section of the other kind is told where it belongs."""
    folder = _config_copy(tmp_path)
    path = folder / "abatement_appraisal.toml"
    _edit(path, lambda t: t.replace('id = "acid_scrubber"', 'id = "acid_scrubbers"', 1))
    unknown = r'\[\[scrubber\]\] row 1.*"acid_scrubbers".*did you mean "acid_scrubber"'
    with pytest.raises(InputError, match=unknown):
        load_tables(folder)
    shutil.copy(config_dir() / "abatement_appraisal.toml", path)
    _edit(path, lambda t: t.replace('id = "low_protein_feed"', 'id = "acid_scrubber"', 1))
    with pytest.raises(InputError, match=r'"acid_scrubber".*appears twice'):
        load_tables(folder)
    shutil.copy(config_dir() / "abatement_appraisal.toml", path)
    _edit(path, lambda t: t.replace('livestock = "weaner"', 'livestock = "weaners"', 1))
    unknown = r'\[\[ventilation\]\] row 2 \("weaners"\).*did you mean "weaner"'
    with pytest.raises(InputError, match=unknown):
        load_tables(folder)


def test_a_row_in_the_section_of_the_other_kind_is_told_where_it_belongs(tmp_path):
    """slurry_cooling made a scrubber in abatement.toml: its [[housing_measure]] row is refused,
    naming the section it belongs in."""
    folder = _config_copy(tmp_path)
    _edit(
        folder / "abatement.toml",
        lambda t: t.replace(
            'id = "slurry_cooling"\nname = "In-house slurry cooling"\nkind = "housing_measure"',
            'id = "slurry_cooling"\nname = "In-house slurry cooling"\nkind = "scrubber"',
        ),
    )
    with pytest.raises(InputError, match=r'"slurry_cooling".*move the row to \[\[scrubber\]\]'):
        load_tables(folder)


def test_a_config_dir_copy_replaces_the_table(tmp_path, demo):
    """The user's copy is the one used (and hashed): twice the capital per m3/h (its range
    with it, the figure must lie in it), twice H1's capital; a copy made before the table
    existed leaves sources unappraised, saying so."""
    scenario, _, sources = demo
    folder = _config_copy(tmp_path)
    path = folder / "abatement_appraisal.toml"
    _edit(
        path,
        lambda t: t.replace("capital_eur_per_m3_h = 1.0", "capital_eur_per_m3_h = 2.0", 1).replace(
            "capital_eur_per_m3_h_max = 1.5", "capital_eur_per_m3_h_max = 3.0", 1
        ),
    )
    tables = load_tables(folder)
    assert tables.abatement_appraisal["technique"]["acid_scrubber"]["capital_eur_per_m3_h"] == 2.0
    assert "abatement_appraisal.toml" in tables.files_sha256
    copied = appraise_sources(scenario, tables, derive_sources(scenario, tables))
    assert copied.set_index("source_id").loc["H1", "capital_eur"] == pytest.approx(
        2 * sources.loc["H1", "capital_eur"], rel=1e-12
    )
    path.unlink()
    older = load_tables(folder)
    assert older.abatement_appraisal is None
    assert "abatement_appraisal.toml" not in older.files_sha256
    bare = appraise_sources(scenario, older, derive_sources(scenario, older))
    h1 = bare.set_index("source_id").loc["H1"]
    assert math.isnan(h1["capital_eur"]) and "not appraised" in h1["appraisal_note"]


@pytest.mark.parametrize(
    ("section", "pattern"),
    [
        ({"electricity_eur_per_kwh": -0.1}, r"appraisal: electricity_eur_per_kwh must be >= 0"),
        ({"acid_eur_per_kg": -1.0}, r"appraisal: acid_eur_per_kg must be >= 0"),
        ({"interest_percent": "4"}, r"appraisal: interest_percent must be a number"),
        (
            {"electricity_price": 0.2},
            r'appraisal: unknown key electricity_price; did you mean "electricity_eur_per_kwh"',
        ),
        ({"life_years": 0.0}, r"appraisal: life_years must be > 0"),
    ],
)
def test_appraisal_section_refuses_bad_keys(section, pattern):
    """[appraisal] refuses negative prices, text for numbers and unknown keys, by name."""
    raw = _toml(demo_dir() / "scenario.toml")
    raw["appraisal"] = section
    with pytest.raises(InputError, match=pattern):
        _validate(raw, "scenario.toml")
