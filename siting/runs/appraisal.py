"""The abatement appraisal of a run's sources: what each technique takes and costs (sources.csv).

:func:`appraise_sources` adds, for every source with an abatement technique, the scrubber's
capacity, its water, electricity and acid use, the capital, the annual cost and the cost per kg
of ammonia abated (the columns ``APPRAISAL_COLUMNS``) to the sources table that
``screening_sources.derive_sources`` builds; :func:`prepare` calls it, so every command's
sources table has them. The figures per technique and the ventilation rates come from
``config/abatement_appraisal.toml`` (``Tables.abatement_appraisal``), the prices from the
scenario's ``[appraisal]``; the arithmetic is ``siting.physics.appraisal``'s. The ammonia
removed, the nitrogen captured and the effluent are the derivation's own columns
(``nh3_removed_kg_yr``, ``n_captured_kg_yr``, ``effluent_m3_yr``), used as they are.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from siting.physics.appraisal import (
    annuity_eur_yr,
    cost_eur_per_kg_nh3,
    running_cost_eur_yr,
    scrubber_capacity_m3_h,
    sulphuric_acid_kg_yr,
)
from siting.readers.scenario import Scenario
from siting.readers.scenario_appraisal import AppraisalSection
from siting.readers.scenario_sources import SourceSpec
from siting.readers.table_appraisal import APPRAISAL_FILE
from siting.readers.tables import Tables

#: The columns :func:`appraise_sources` adds, in this order (NaN or "" without a technique).
APPRAISAL_COLUMNS = (
    "scrubber_capacity_m3_h",
    "water_m3_yr",
    "electricity_kwh_yr",
    "acid_kg_yr",
    "capital_eur",
    "annual_cost_eur_yr",
    "cost_eur_per_kg_nh3",
    "appraisal_note",
)

_NUMBERS = APPRAISAL_COLUMNS[:-1]


def appraise_sources(scenario: Scenario, tables: Tables, sources: pd.DataFrame) -> pd.DataFrame:
    """The sources table with each abated source's appraisal: use, capital, cost per kg.

    For a source with an abatement technique (sources without one get NaN and ""):

    * ``scrubber_capacity_m3_h`` (scrubbers): the livestock's maximum ventilation rate per
      place x places x the design share (``scrubber_design_share``, else
      ``treated_air_fraction``, else 1); NaN for a housing measure and for a source given by
      ``nh3_kg_per_year`` (no places, so no sizing, and no capital or annual cost either);
    * ``water_m3_yr``: a scrubber's evaporation per m3/h of capacity x capacity, plus its
      effluent (bled off and replaced by fresh water); a housing measure's per place x places;
    * ``electricity_kwh_yr``: per m3/h of capacity (scrubbers) or per place (housing measures);
    * ``acid_kg_yr``: sulphuric acid as 100 % H2SO4 bound by the share of the ammonia removed
      that the technique binds with acid (2 NH3 + H2SO4 -> (NH4)2SO4); 0 without acid;
    * ``capital_eur``: per m3/h of capacity or per place;
    * ``annual_cost_eur_yr``: the capital's annuity over its life at the scenario's interest
      rate, plus electricity, water, acid and effluent disposal at the scenario's prices,
      maintenance (% of capital) and other running costs per place;
    * ``cost_eur_per_kg_nh3``: the annual cost over the ammonia abated (``nh3_removed_kg_yr``,
      the emission before abatement less after);
    * ``appraisal_note``: what could not be appraised and why, and which prices were the
      invented placeholders of ``[appraisal]``.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its sources' places, livestock and design shares, its [appraisal]).
    tables : Tables
        The lookup tables (``abatement_appraisal``; None leaves every source unappraised).
    sources : pandas.DataFrame
        The sources table of :func:`siting.runs.screening_sources.derive_sources` (one row
        per source, ``source_id`` naming it).

    Returns
    -------
    pandas.DataFrame
        A copy of ``sources`` with the columns ``APPRAISAL_COLUMNS`` added at the end.
    """
    specs = {s.id: s for s in scenario.sources}
    rows = [
        _appraise_one(specs.get(row["source_id"]), row, tables, scenario.appraisal)
        for _, row in sources.iterrows()
    ]
    out = sources.copy()
    for column in APPRAISAL_COLUMNS:
        fill = "" if column == "appraisal_note" else np.nan
        out[column] = [r.get(column, fill) for r in rows] if rows else []
    return out


def _appraise_one(
    src: SourceSpec | None, row: pd.Series, tables: Tables, prices: AppraisalSection
) -> dict:
    """One source's appraisal columns (NaN and "" without a technique or without a row)."""
    technique_id = row.get("abatement") or ""
    empty = dict.fromkeys(_NUMBERS, np.nan) | {"appraisal_note": ""}
    if not technique_id or src is None:
        return empty
    table = tables.abatement_appraisal
    if table is None:
        return empty | {"appraisal_note": f"no {APPRAISAL_FILE} in {tables.folder}: not appraised"}
    cost = table["technique"].get(technique_id)
    if cost is None:
        return empty | {
            "appraisal_note": f'no row for "{technique_id}" in {APPRAISAL_FILE}: not appraised'
        }
    uses, notes = (
        _scrubber_uses(src, row, cost, table["ventilation"])
        if cost["kind"] == "scrubber"
        else _housing_uses(src, cost)
    )
    removed_kg_yr = float(row["nh3_removed_kg_yr"])
    life_years = prices.life_years if prices.life_years is not None else cost["life_years"]
    capital = uses["capital_eur"]
    running = running_cost_eur_yr(
        electricity_kwh_yr=uses["electricity_kwh_yr"],
        electricity_eur_per_kwh=prices.electricity_eur_per_kwh,
        water_m3_yr=uses["water_m3_yr"],
        water_eur_per_m3=prices.water_eur_per_m3,
        acid_kg_yr=uses["acid_kg_yr"],
        acid_eur_per_kg=prices.acid_eur_per_kg,
        effluent_m3_yr=uses.pop("effluent_cost_m3_yr"),
        effluent_eur_per_m3=prices.effluent_eur_per_m3,
        maintenance_eur_yr=capital * cost["maintenance_percent_of_capital_yr"] / 100.0,
        other_eur_yr=uses.pop("other_eur_yr"),
    )
    annual = float(
        annuity_eur_yr(capital, prices.interest_percent, life_years) + running
        if math.isfinite(capital)
        else np.nan
    )
    if removed_kg_yr <= 0:
        notes.append("nothing abated: no cost per kg")
    if prices.placeholder_keys:
        notes.append(
            "costs at invented placeholder prices for "
            f"{', '.join(prices.placeholder_keys)} (set them in the scenario's [appraisal])"
        )
    return uses | {
        "annual_cost_eur_yr": annual,
        "cost_eur_per_kg_nh3": float(cost_eur_per_kg_nh3(annual, removed_kg_yr)),
        "appraisal_note": "; ".join(notes),
    }


def _design_share(src: SourceSpec) -> float:
    """The share of the maximum ventilation a scrubber is sized for [-]: scrubber_design_share,
    else treated_air_fraction, else 1."""
    if src.scrubber_design_share is not None:
        return src.scrubber_design_share
    if src.treated_air_fraction is not None:
        return src.treated_air_fraction
    return 1.0


def _scrubber_uses(
    src: SourceSpec, row: pd.Series, cost: dict, ventilation: dict
) -> tuple[dict, list[str]]:
    """A scrubber's capacity, water, electricity, acid and capital, with the notes on what
    could not be sized; also the effluent to be paid for and no other running cost."""
    notes = []
    removed_kg_yr = float(row["nh3_removed_kg_yr"])
    effluent_m3_yr = float(row["effluent_m3_yr"]) if pd.notna(row["effluent_m3_yr"]) else np.nan
    capacity = np.nan
    if src.places is None:
        notes.append(
            "no sizing: the emission is given as nh3_kg_per_year, without places, so no "
            "scrubber capacity, water, electricity, capital or annual cost"
        )
    elif src.livestock not in ventilation:
        notes.append(
            f'no sizing: no maximum ventilation rate for "{src.livestock}" in {APPRAISAL_FILE} '
            "([[ventilation]]), so no capacity, water, electricity, capital or annual cost"
        )
    else:
        rate = ventilation[src.livestock]["max_ventilation_m3_h_per_place"]
        capacity = float(scrubber_capacity_m3_h(rate, src.places, _design_share(src)))
    if not math.isfinite(effluent_m3_yr):
        notes.append(
            "no effluent volume (abatement.toml gives no effluent_kg_n_per_m3): no water "
            "use or annual cost"
        )
    uses = {
        "scrubber_capacity_m3_h": capacity,
        "water_m3_yr": capacity * cost["evaporation_m3_per_m3_h_yr"] + effluent_m3_yr,
        "electricity_kwh_yr": capacity * cost["electricity_kwh_per_m3_h_yr"],
        "acid_kg_yr": float(sulphuric_acid_kg_yr(removed_kg_yr, cost["acid_captured_fraction"])),
        "capital_eur": capacity * cost["capital_eur_per_m3_h"],
        "effluent_cost_m3_yr": effluent_m3_yr,
        "other_eur_yr": 0.0,
    }
    return uses, notes


def _housing_uses(src: SourceSpec, cost: dict) -> tuple[dict, list[str]]:
    """A housing measure's water, electricity and capital per place x places (no capacity, no
    acid, no effluent), its other running costs, and the note when it has no places."""
    notes = []
    places = src.places if src.places is not None else np.nan
    if src.places is None:
        notes.append(
            "no places (the emission is given as nh3_kg_per_year): no water, electricity, "
            "capital or annual cost"
        )
    uses = {
        "scrubber_capacity_m3_h": np.nan,  # scrubbers only
        "water_m3_yr": places * cost["water_m3_per_place_yr"],
        "electricity_kwh_yr": places * cost["electricity_kwh_per_place_yr"],
        "acid_kg_yr": 0.0,
        "capital_eur": places * cost["capital_eur_per_place"],
        "effluent_cost_m3_yr": 0.0,
        "other_eur_yr": places * cost["running_eur_per_place_yr"],
    }
    return uses, notes
