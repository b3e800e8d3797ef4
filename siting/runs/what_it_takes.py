"""What it takes to pass: the cheapest technique (at the share of the air it needs), fewer
places, or both, with its annual cost, for the house at each position of ``siting place``
(:func:`cheapest_columns`) and for each proposed house of ``siting screen``
(:func:`proposal_ways`).

Each technique of abatement.toml is costed on the house itself (its livestock, places and the
scenario's [appraisal] prices) by the abatement appraisal (``runs.appraisal``) at its lower
reduction, treating all the air; the search (``physics.what_it_takes``) scales that cost to the
share needed. The margin lost per place not kept is [appraisal] margin_eur_per_place_yr.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd

from siting.errors import SitingWarning
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
from siting.runs.run_cache import RunCache
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


#: Added to "does not pass" where no emission of the house passes at all.
OTHERS_FAIL = ": the other sources the rule set counts already fail without the house"


def costed_techniques(prep: Prepared, house) -> list[Technique]:
    """Every technique of abatement.toml costed on the house, treating all its air.

    Parameters
    ----------
    prep : Prepared or ScreenResult
        The scenario, its tables ([appraisal] prices) and sources table.
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
    prep : Prepared or ScreenResult
        The scenario, its tables and its sources table (the house's planned annual cost).
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
    alone = np.asarray(allowed_scale, dtype=float).ravel() <= 0  # not even an empty house
    words = [w + OTHERS_FAIL if none else w for w, none in zip(words, alone)]
    return {
        "cheapest_option": np.array(words, dtype=object),
        "cheapest_cost_eur_yr": ways["cost_eur_yr"],
        "cheapest_technique": ways["technique"],
        "cheapest_share_of_air": ways["share"],
        "cheapest_places": ways["places"],
    }


#: Relative precision of the largest emission a proposed house may have in ``screen`` [-].
SCALE_PRECISION = 1e-3
#: The largest scale of the planned emission ``screen`` looks for (beyond it: any emission).
MAX_SCALE = 1024.0


def proposal_ways(result, run, cache: RunCache) -> pd.DataFrame:
    """What it takes for each proposed house of a screening run to let every site pass, the
    other sources as planned.

    The largest emission of the house that passes is found by bisection on its places (or
    its nh3_kg_per_year), so its abatement, release and hourly weights stay as planned and
    every re-run reuses the base's dispersion: each judged figure grows with the house's
    emission, so "every site passes" holds below a limit and fails above it. The bisection
    runs at the sites' own points; the limit found is then checked with the grid as well and
    lowered until that passes too (a grid node inside a site can hold its maximum).

    Parameters
    ----------
    result : ScreenResult
        The base run (its scenario, tables, sources and rule set).
    run : callable
        :func:`siting.runs.screening.screen` (passed in: this module is below it).
    cache : RunCache
        The base run's, so the re-runs reuse its dispersion.

    Returns
    -------
    pandas.DataFrame
        One row per proposed source: ``source_id``, ``places``, ``max_share_of_planned``
        (the largest multiple of its planned emission that passes; inf: any, 0: none) and
        ``CHEAPEST_COLUMNS``.
    """
    rows = []
    planned_passes = _all_pass(result.sites)
    sources = result.sources.set_index("source_id")
    for house in (s for s in result.scenario.sources if s.role == "proposed"):
        row = sources.loc[house.id]
        scale = _largest_passing_scale(result, run, house, cache)
        unabated = float(row["nh3_unabated_kg_yr"])
        ratio = float(row["nh3_kg_yr"]) / unabated if unabated > 0 else 1.0
        ways = cheapest_columns(result, house, np.array([scale * ratio]), [planned_passes])
        rows.append(
            {
                "source_id": house.id,
                "places": house.places,
                "max_share_of_planned": scale,
                **{k: v[0] for k, v in ways.items()},
            }
        )
    return pd.DataFrame(rows, columns=["source_id", "places", "max_share_of_planned",
                                       *CHEAPEST_COLUMNS])  # fmt: skip


def _all_pass(sites) -> bool:
    """Whether every assessed site passes (a run with no assessed site passes none)."""
    assessed = sites["assessed"].to_numpy(bool)
    return bool(assessed.any() and sites["passes"].to_numpy(bool)[assessed].all())


def _scaled(result, house, scale: float):
    """The scenario with ``house``'s places (or direct emission) times ``scale``."""
    key = "places" if house.places is not None else "nh3_kg_per_year"
    changed = house.model_copy(update={key: getattr(house, key) * scale})
    sources = [changed if s.id == house.id else s for s in result.scenario.sources]
    return result.scenario.model_copy(update={"sources": sources})  # options kept: one grid


def _largest_passing_scale(result, run, house, cache: RunCache) -> float:
    """The largest multiple of ``house``'s planned emission with which every site passes."""

    def passes(scale: float, with_grid: bool = False) -> bool:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SitingWarning)
            rerun = run(
                _scaled(result, house, scale),
                tables=result.tables,
                with_grid=with_grid,
                sensitivity=False,
                cache=cache,
                rules=result.rules,
                options=False,
                what_it_takes=False,
            )
        return _all_pass(rerun.sites)

    if not passes(0.0):
        return 0.0
    low, high = 0.0, 1.0
    while passes(high):
        low, high = high, 2.0 * high
        if high > MAX_SCALE:
            return math.inf
    low = _bisect(passes, low, high)
    if low > 0 and not passes(low, with_grid=True):  # a grid node inside a site held it
        low = _bisect(lambda scale: passes(scale, with_grid=True), 0.0, low)
    return low


def _bisect(passes, low: float, high: float) -> float:
    """The largest scale found to pass between ``low`` (passes) and ``high`` (does not), to
    SCALE_PRECISION of ``high``."""
    while high - low > SCALE_PRECISION * high:
        middle = 0.5 * (low + high)
        low, high = (middle, high) if passes(middle) else (low, middle)
    return low


#: The best positions of ``siting place`` given the side-by-side comparison of ways.
SIDE_BY_SIDE_POSITIONS = 10


def side_by_side(prep, house, max_share_of_planned) -> pd.DataFrame:
    """The farmer's comparison at the given positions: the house as planned, with each
    technique on all its air (the lower end of its range), and with half the places.

    Parameters
    ----------
    prep : Prepared or ScreenResult
        The scenario, its tables and its sources table.
    house : SourceSpec
        The house placed.
    max_share_of_planned : sequence of float
        Per position (rank order), the largest multiple of the planned emission that passes.

    Returns
    -------
    pandas.DataFrame
        One row per position and way: ``rank`` (1 = best), ``way`` in words, ``passes``,
        ``share_of_allowed`` (its emission over the most that passes there; inf where
        nothing passes) and ``cost_eur_yr`` (its annual cost [EUR yr-1]: the abatement's,
        and for half the places also the margin lost).
    """
    row = prep.sources.set_index("source_id").loc[house.id]
    unabated = float(row["nh3_unabated_kg_yr"])
    planned_scale = float(row["nh3_kg_yr"]) / unabated if unabated > 0 else 1.0
    planned_cost = float(row.get("annual_cost_eur_yr", np.nan))
    planned_cost = 0.0 if planned_cost != planned_cost else planned_cost
    ways = [("as planned", 1.0, planned_cost)]
    if house.places:
        for t in costed_techniques(prep, house):
            if np.isfinite(t.cost_eur_per_place_yr) and planned_scale > 0:
                relative = (1.0 - t.reduction) / planned_scale
                ways.append((f"with {t.name}", relative, t.cost_eur_per_place_yr * house.places))
        margin = prep.scenario.appraisal.margin_eur_per_place_yr
        ways.append(("half the places", 0.5, planned_cost / 2 + margin * house.places / 2))
    rows = []
    for rank, allowed in enumerate(np.asarray(max_share_of_planned, dtype=float), start=1):
        for way, relative, cost in ways:
            with np.errstate(divide="ignore", invalid="ignore"):
                share = relative / allowed if allowed > 0 else math.inf
            rows.append(
                {
                    "rank": rank,
                    "way": way,
                    "passes": bool(relative <= allowed),
                    "share_of_allowed": share,
                    "cost_eur_yr": cost,
                }
            )
    return pd.DataFrame(rows, columns=["rank", "way", "passes", "share_of_allowed", "cost_eur_yr"])


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
        return f"passes with {technique} treating {_air_words(share)}, {money}"
    air = "" if share != share else f" treating {_air_words(share)}"
    return (
        f"passes with {technique}{air} and {places:,.0f} places, {money} (the lost margin included)"
    )


def _air_words(share: float) -> str:
    """The share of the air treated in words, rounded up to a whole per cent: "64 % of the
    air", or "all the air" where that rounds to 100."""
    percent = max(1, math.ceil(share * 100 - 1e-9))
    return "all the air" if percent >= 100 else f"{percent} % of the air"
