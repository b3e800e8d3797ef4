"""What it takes for the house to pass at each position of ``siting place``: the cheapest
technique (at the share of the air it needs), fewer places, or both, with its annual cost.

Each technique of abatement.toml is costed on the house itself (its livestock, places and the
scenario's [appraisal] prices) by the abatement appraisal (``runs.appraisal``) at its lower
reduction, treating all the air; the search (``physics.what_it_takes``) scales that cost to the
share needed. The margin lost per place not kept is [appraisal] margin_eur_per_place_yr.
"""

from __future__ import annotations

import math

import numpy as np

from siting.physics.what_it_takes import (
    AS_PLANNED,
    CANNOT,
    FEWER_PLACES,
    NONE_NEEDED,
    TECHNIQUE,
    Technique,
    cheapest_ways,
)
from siting.readers.tables import default_reduction_percent
from siting.runs.appraisal import appraise_sources
from siting.runs.screening_inputs import Prepared
from siting.runs.screening_sources import derive_sources

#: The columns of positions.csv this adds.
CHEAPEST_COLUMNS = (
    "cheapest_option",
    "cheapest_cost_eur_yr",
    "cheapest_technique",
    "cheapest_share_of_air",
    "cheapest_places",
)


def costed_techniques(prep: Prepared, house) -> list[Technique]:
    """Every technique of abatement.toml costed on the house, treating all its air.

    Parameters
    ----------
    prep : Prepared
        The scenario's inputs (tables, [appraisal] prices).
    house : SourceSpec
        The house placed (its livestock and places).

    Returns
    -------
    list of Technique
        In the table's order; a technique the appraisal cannot cost (no places, no row) has
        a NaN cost and is never chosen.
    """
    out = []
    for technique in prep.tables.abatement.values():
        scrubber = technique["kind"] == "scrubber"
        cost = math.nan
        if house.places:
            variant = house.model_copy(
                update={
                    "abatement": technique["id"],
                    "reduction_percent": None,
                    "reduction_basis": None,
                    "treated_air_fraction": 1.0 if scrubber else None,
                    "scrubber_design_share": None,
                    "role": "proposed",
                }
            )
            alone = prep.scenario.model_copy(update={"sources": [variant]})
            rows = appraise_sources(alone, prep.tables, derive_sources(alone, prep.tables))
            cost = float(rows["annual_cost_eur_yr"].iloc[0]) / house.places
        out.append(
            Technique(
                technique["id"],
                technique["name"],
                technique["kind"],
                default_reduction_percent(technique) / 100.0,
                cost,
            )
        )
    return out


def cheapest_columns(prep: Prepared, house, allowed_scale, passes_as_planned) -> dict:
    """positions.csv's cheapest-way columns, per position.

    Parameters
    ----------
    prep : Prepared
        The scenario's inputs (its sources table has the house's planned annual cost).
    house : SourceSpec
        The house placed.
    allowed_scale : ndarray
        Per position, the largest scale of the house's unabated emission every site allows.
    passes_as_planned : ndarray of bool
        Per position, whether the house passes as planned.

    Returns
    -------
    dict of str to ndarray
        ``CHEAPEST_COLUMNS``: the way in words, its annual cost [EUR yr-1] (NaN where none
        passes), the technique's id, the share of the air it treats [-] and the places kept.
        Without places (an emission given as nh3_kg_per_year) only the house as planned
        and no technique are weighed.
    """
    planned = prep.sources.set_index("source_id").loc[house.id]
    planned_cost = planned.get("annual_cost_eur_yr", np.nan)
    places = float(house.places) if house.places else 1.0
    techniques = costed_techniques(prep, house) if house.places else []
    margin = prep.scenario.appraisal.margin_eur_per_place_yr if house.places else math.inf
    ways = cheapest_ways(
        np.asarray(allowed_scale, dtype=float) * places,
        places,
        techniques,
        margin,
        passes_as_planned,
        float(planned_cost) if planned_cost == planned_cost else 0.0,
    )
    names = {t.id: t.name for t in techniques}
    words = [
        way_words(w, names.get(t, t), s, p, c)
        for w, t, s, p, c in zip(
            ways["what"], ways["technique"], ways["share"], ways["places"], ways["cost_eur_yr"]
        )
    ]
    return {
        "cheapest_option": np.array(words, dtype=object),
        "cheapest_cost_eur_yr": ways["cost_eur_yr"],
        "cheapest_technique": ways["technique"],
        "cheapest_share_of_air": ways["share"],
        "cheapest_places": ways["places"],
    }


def way_words(what: str, technique: str, share: float, places: float, cost: float) -> str:
    """The cheapest way in words, e.g. "passes with Acid (chemical) air scrubber treating
    64 % of the air, about EUR 17,800 a year".

    Parameters
    ----------
    what : str
        The kind of way (physics.what_it_takes: AS_PLANNED, NONE_NEEDED, ...).
    technique : str
        The technique's name ("" without one).
    share : float
        Share of the air a scrubber treats [-] (shown rounded up to a whole per cent; NaN
        for a housing measure).
    places : float
        Places kept.
    cost : float
        Annual cost [EUR yr-1].

    Returns
    -------
    str
    """
    money = f"about EUR {cost:,.0f} a year" if cost == cost else ""
    if what == CANNOT:
        return "does not pass with any technique in the table, nor with fewer places"
    if what == AS_PLANNED:
        return f"passes as planned ({money} for its own abatement)" if cost else "passes as planned"
    if what == NONE_NEEDED:
        return "passes without any technique"
    if what == FEWER_PLACES:
        return f"passes with {places:,.0f} places and no technique, {money} of lost margin"
    if what == TECHNIQUE:
        if share != share:  # a housing measure: the whole house
            return f"passes with {technique}, {money}"
        if share >= 1.0 - 1e-9:
            return f"passes with {technique} treating all the air, {money}"
        percent = max(1, math.ceil(share * 100 - 1e-9))
        return f"passes with {technique} treating {percent} % of the air, {money}"
    air = (
        "" if share != share else f" treating {max(1, math.ceil(share * 100 - 1e-9))} % of the air"
    )
    return (
        f"passes with {technique}{air} and {places:,.0f} places, {money} (the lost margin included)"
    )
