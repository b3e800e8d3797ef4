"""The placement search: where on the holding a new house does least harm (``siting place``).

Wires the adapters to the placement arithmetic: reads the holding boundary and exclusion layers,
lays candidate positions where the house's footprint fits inside the allowed area, computes the
house's unit-emission field once as an offset kernel (placement.PolarKernel) and reads every
candidate's site maxima off it. Each position is judged by the run's rule set
(placing_rules.py): the house with the farm's other sources its basis names, the verdict at
every site, the reduction of the house's emission the rules would need, and the most animal
places that pass unabated and with each abatement option of config/abatement.toml.

The other sources' contribution at each site is their maximum over the site, added to the
house's maximum there; the two maxima may lie at different points, so the sum is an upper
bound (cautious).
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.grid import GridSpec
from siting.dispersion.placement import PolarKernel, site_maxima
from siting.errors import InputError, InputWarning, collecting_warnings
from siting.physics.constants import KG_YR_TO_G_S
from siting.physics.staging import allowed_scale
from siting.presentation.rule_text import rule_words
from siting.readers.habitats import read_vector_layer
from siting.readers.rules import RuleSet
from siting.readers.scenario import Scenario, load_scenario
from siting.readers.site_points import site_outline_points
from siting.readers.tables import default_reduction_percent
from siting.runs.placing_rules import (
    figures_at,
    fixed_site_maxima,
    installation_distance_m,
    judge_positions,
    position_figures,
)
from siting.runs.screening_inputs import Prepared, prepare
from siting.runs.screening_sites import BOUNDARY_SPACING_M
from siting.runs.screening_sources import _source_elements
from siting.runs.what_it_takes import SIDE_BY_SIDE_POSITIONS, cheapest_columns, side_by_side

MAX_CANDIDATES = 200_000


@dataclass
class PlaceResult:
    """Everything a placement search produced, in memory.

    Attributes
    ----------
    prepared : Prepared
        The scenario's inputs, read and checked.
    house_id : str
        The source placed.
    positions : pandas.DataFrame
        Every allowed position, best first (positions.csv): x, y [m], worst site, worst % of
        critical load and level, required reduction [%], max places.
    grid : GridSpec
        The grid of candidate positions.
    suitability_pct_load : ndarray, (n_rows, n_cols)
        Worst % of critical load by house position; NaN where it may not go.
    share_of_threshold : ndarray, (n_rows, n_cols)
        Worst share of a site's threshold by house position [-]; NaN where it may not go.
    cheapest_cost : ndarray, (n_rows, n_cols)
        The cheapest way's annual cost by house position [EUR yr-1] (positions.csv's
        cheapest_cost_eur_yr); NaN where it may not go or where no way passes.
    allowed_area : shapely geometry
        Where the house's centre may go.
    holding : shapely geometry
        The holding boundary.
    options : list of dict
        The abatement options of abatement.toml, for the max-places columns.
    by_site : dict of str to ndarray
        Per position (ranked order) and site: % of critical level and load.
    side_by_side : pandas.DataFrame
        The best positions' ways side by side (as planned, each technique, half the places):
        :func:`siting.runs.what_it_takes.side_by_side`.
    warnings : list of str
        Legal but doubtful input.
    timings_s : dict
        Seconds by phase, and counts (positions, site points).
    """

    prepared: Prepared
    house_id: str
    positions: pd.DataFrame
    grid: GridSpec
    suitability_pct_load: np.ndarray
    share_of_threshold: np.ndarray  # same grid: worst share of a site's threshold
    cheapest_cost: np.ndarray  # same grid: the cheapest way's annual cost [EUR/yr]
    allowed_area: object  # shapely geometry
    holding: object  # shapely geometry
    options: list[dict]
    by_site: dict[str, np.ndarray]  # per position (ranked order) and site: pct_level, pct_load
    side_by_side: pd.DataFrame  # the best positions: as planned, each technique, half places
    warnings: list[str] = field(default_factory=list)
    timings_s: dict = field(default_factory=dict)


def _read_polygons(path: Path, layer: str | None, crs: str, what: str):
    """A layer's geometries as one valid geometry in ``crs``, and the layer itself."""
    import shapely

    gdf = read_vector_layer(path, layer, what)
    geoms = gdf.to_crs(crs).geometry
    return shapely.make_valid(shapely.union_all(geoms.to_numpy())), gdf


def _allowed_area(scenario: Scenario, house_id: str, prep: Prepared):
    import shapely

    cfg = scenario.holding
    holding, gdf = _read_polygons(cfg.file, cfg.layer, scenario.crs, "holding.file")
    if not set(gdf.geometry.geom_type) <= {"Polygon", "MultiPolygon"}:
        raise InputError(
            f"holding.file {cfg.file.name}: the holding boundary must be polygons, "
            f"got {', '.join(sorted(set(gdf.geometry.geom_type)))}"
        )
    if holding.area <= 0:
        raise InputError(f"holding.file {cfg.file.name}: the boundary encloses no area")
    allowed = holding.buffer(-cfg.boundary_buffer_m) if cfg.boundary_buffer_m else holding
    for i, ex in enumerate(cfg.exclusion, start=1):
        zone, _ = _read_polygons(ex.file, ex.layer, scenario.crs, f"holding.exclusion #{i}")
        allowed = allowed.difference(zone.buffer(ex.buffer_m) if ex.buffer_m else zone)
    if cfg.min_distance_to_existing_m > 0:
        keep_off = [
            shape
            for src, (_, shape) in zip(
                scenario.sources, (_source_elements(s) for s in scenario.sources)
            )
            if src.role == "existing" and src.id != house_id
        ]
        if keep_off:
            allowed = allowed.difference(
                shapely.union_all(keep_off).buffer(cfg.min_distance_to_existing_m)
            )
    if allowed.is_empty or allowed.area <= 0:
        raise InputError(
            "holding: no allowed area left after the boundary buffer, exclusion "
            "zones and distance to existing houses; relax one of them"
        )
    return holding, allowed


def _candidates(allowed, house_shape, spacing_m: float, house_id: str):
    """Candidate centres on a spacing grid where the house footprint fits in the allowed area."""
    import shapely
    from shapely import affinity

    minx, miny, maxx, maxy = allowed.bounds
    west = math.floor(minx / spacing_m) * spacing_m
    north = math.ceil(maxy / spacing_m) * spacing_m
    n_cols = max(1, int(math.ceil((maxx - west) / spacing_m)))
    n_rows = max(1, int(math.ceil((north - miny) / spacing_m)))
    if n_cols * n_rows > MAX_CANDIDATES:
        raise InputError(
            f"holding.spacing_m = {spacing_m:g} gives {n_cols * n_rows:,} candidate "
            f"positions (limit {MAX_CANDIDATES:,}); use a coarser spacing"
        )
    xs = west + (np.arange(n_cols) + 0.5) * spacing_m
    ys = north - (np.arange(n_rows) + 0.5) * spacing_m
    gx, gy = np.meshgrid(xs, ys)
    cx, cy = gx.ravel(), gy.ravel()
    inside = shapely.contains_xy(allowed, cx, cy)
    cx, cy = cx[inside], cy[inside]
    if house_shape.geom_type != "Point" and cx.size:
        centre = house_shape.centroid
        shapes = [
            affinity.translate(house_shape, x - centre.x, y - centre.y) for x, y in zip(cx, cy)
        ]
        fits = shapely.contains(allowed, np.array(shapes, dtype=object))
        cx, cy = cx[fits], cy[fits]
    if cx.size == 0:
        raise InputError(
            f'source "{house_id}": the house does not fit anywhere in the allowed '
            "area at this spacing (check its width_m/length_m, the buffers and "
            "exclusion zones)"
        )
    grid = GridSpec(west, north, spacing_m, n_cols, n_rows, "")
    col = np.round((cx - west) / spacing_m - 0.5).astype(int)
    row = np.round((north - cy) / spacing_m - 0.5).astype(int)
    return cx, cy, grid, row, col


def _house_of(scenario: Scenario, house_id: str):
    """The source the search moves, refused without a [holding] or an unknown id."""
    if scenario.holding is None:
        raise InputError(
            f"{scenario.path.name if scenario.path else 'scenario'}: "
            "`siting place` needs a [holding] table with the boundary file"
        )
    ids = [s.id for s in scenario.sources]
    if house_id not in ids:
        raise InputError(
            f'house_id "{house_id}": no such source (sources: {", ".join(ids)})',
            parameters=("house_id",),
        )
    return scenario.sources[ids.index(house_id)]


def _unit_site_maxima(prep: Prepared, house_id: str, elements0, cx, cy, px, py, p_site):
    """Each site's maximum concentration [ug m-3 per g s-1] from the house at each candidate
    position: the house's unit field as a kernel of offsets, wide enough for every pair."""
    corners = np.array(
        [[cx.min(), cy.min()], [cx.min(), cy.max()], [cx.max(), cy.min()], [cx.max(), cy.max()]]
    )
    reach = np.hypot(px[:, None] - corners[None, :, 0], py[:, None] - corners[None, :, 1]).max()
    min_radius = min(e.min_distance_m for e in elements0)
    radius, bearing, ox, oy = PolarKernel.offsets(min_radius, reach * 1.02 + 10.0)
    kernel = PolarKernel(
        radius, bearing, prep.unit_concentration_ug_m3(house_id, elements0, ox, oy)
    )
    n_sites = len(prep.sites)
    return site_maxima(kernel, cx, cy, px, py, p_site, n_sites), int(ox.size)


def _position_table(prep: Prepared, house, unit_conc, fixed, in_combination, distance, cx, cy):
    """The candidate positions judged by the run's rule set, best first; the per-site % of level
    and load (rows in the table's order); each position's worst % of load and its described
    emission as a share of the most the rule set allows (1 = at the limit)."""
    rules = prep.rules
    sites = prep.sites
    src_row = prep.sources.set_index("source_id").loc[house.id]
    described_g_s = float(src_row["emission_g_s"])
    unabated_g_s = float(src_row["nh3_unabated_kg_yr"]) * KG_YR_TO_G_S
    described = described_g_s / unabated_g_s if unabated_g_s > 0 else 0.0
    offset, slope = position_figures(prep, unit_conc, unabated_g_s, fixed, in_combination, distance)
    tiers = sites["tier"].to_numpy(object)
    allowed = allowed_scale(offset, slope, tiers, rules.stages_by_tier)  # (positions, sites)
    figures = figures_at(offset, slope, described)
    verdict, passes, stage = judge_positions(figures, tiers, rules)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(allowed > 0, described / allowed, np.inf)
    share = np.where(described == 0, 0.0, share)
    pct_level, pct_load = figures["pct_level"], figures["pct_load"]
    names = sites["name"].to_numpy()
    rows = np.arange(cx.size)
    worst_load_site = pct_load.argmax(axis=1)
    limiting = share.argmax(axis=1)
    most = allowed.min(axis=1)  # the largest s every site allows
    table = pd.DataFrame(
        {
            "x": cx,
            "y": cy,
            "worst_site": names[worst_load_site],
            "worst_pct_load": pct_load[rows, worst_load_site],
            "worst_pct_level": pct_level.max(axis=1),
            "required_reduction_percent": 100.0 * (1.0 - np.clip(most, 0.0, 1.0)),
        }
    )
    if house.places is not None:
        table["max_places_unabated"] = _whole_places(house.places, most)
        for option in prep.tables.abatement.values():
            remaining = 1.0 - default_reduction_percent(option) / 100.0
            table[f"max_places_{option['id']}"] = _whole_places(house.places, most / remaining)
    else:
        warnings.warn(
            f'source "{house.id}" gives nh3_kg_per_year, not places: the '
            "max-places columns are left out",
            InputWarning,
            stacklevel=2,
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        table["max_share_of_planned"] = np.where(described > 0, most / described, np.inf)
    for column, values in cheapest_columns(prep, house, most, passes.all(axis=1)).items():
        table[column] = values
    table["limiting_site"] = names[limiting]
    table["limiting_share_of_threshold"] = share[rows, limiting]
    table["passes_as_described"] = passes.all(axis=1)
    table["verdict"] = verdict[rows, limiting]
    tiers_at = tiers[limiting]
    table["deciding_rule"] = [
        rule_words(rules.stages_by_tier[t][k], rules.id)
        for t, k in zip(tiers_at, stage[rows, limiting])
    ]
    table["basis"] = rules.basis
    table["rules"] = rules.id
    order = np.lexsort(
        (table["worst_pct_load"].to_numpy(), table["limiting_share_of_threshold"].to_numpy())
    )
    cost = table["cheapest_cost_eur_yr"].to_numpy(float)  # before ranking: the grid's order
    table = table.iloc[order].reset_index(drop=True)
    by_site = {"pct_level": pct_level[order], "pct_load": pct_load[order]}
    return table, by_site, pct_load.max(axis=1), share.max(axis=1), cost


def _whole_places(places: float, scale) -> np.ndarray:
    """Whole places (rounded down) of a house whose unabated emission may be ``scale`` times
    that of ``places`` places; inf where any number passes."""
    with np.errstate(invalid="ignore"):
        return np.where(np.isinf(scale), np.inf, np.floor(places * np.asarray(scale) + 1e-9))


@collecting_warnings
def place(
    scenario: Scenario | str | Path,
    house_id: str,
    *,
    spacing_m: float | None = None,
    rules: RuleSet | str | Path | None = None,
) -> PlaceResult:
    """Search the holding for positions of source ``house_id`` (its x/y are ignored).

    The Python call behind ``siting place``; write its files with
    :func:`siting.output.place.write_place_outputs`.

    The steps: the house and the allowed area (:func:`_allowed_area`), candidate positions,
    each site's maximum from the house anywhere (:func:`_unit_site_maxima`) and from the other
    sources (:func:`_other_sources_ug_m3`), and the table of positions (:func:`_position_table`).

    Parameters
    ----------
    scenario : Scenario, str or Path
        A loaded scenario with a [holding] table, or its file.
    house_id : str
        The [[source]] to place; its footprint must fit inside the allowed area.
    spacing_m : float, optional
        Spacing of the candidate positions [m]; default the holding's ``spacing_m``.
    rules : RuleSet, str or Path, optional
        The rule set the positions are judged by (default: the scenario's [assessment]
        rules); its basis says which of the farm's other sources join the house.

    Returns
    -------
    PlaceResult
        Every allowed position ranked, the suitability surface and warnings.

    Raises
    ------
    InputError
        No [holding] table, no such source, no allowed position, or a fault in an input.
    """
    clock = {"start": time.perf_counter()}
    if not isinstance(scenario, Scenario):
        scenario = load_scenario(scenario)
    house = _house_of(scenario, house_id)
    cfg = scenario.holding
    spacing_m = spacing_m or cfg.spacing_m
    if cfg.in_combination:
        warnings.warn(
            "holding.in_combination no longer changes the search: the rule set's basis says "
            "which sources join the house, and its in-combination rules add the other sources",
            InputWarning,
            stacklevel=2,
        )
    prep = prepare(scenario, rules=rules)
    holding, allowed = _allowed_area(scenario, house_id, prep)
    origin_house = house.model_copy(update={"x": 0.0, "y": 0.0})
    elements0, shape0 = _source_elements(origin_house)
    cx, cy, grid, row, col = _candidates(allowed, shape0, spacing_m, house_id)
    grid = GridSpec(grid.west_m, grid.north_m, grid.cell_m, grid.n_cols, grid.n_rows, scenario.crs)
    p_site, px, py = site_outline_points(prep.sites.geometry, min(spacing_m, BOUNDARY_SPACING_M))
    clock["inputs"] = time.perf_counter()

    unit_conc, kernel_points = _unit_site_maxima(prep, house_id, elements0, cx, cy, px, py, p_site)
    clock["kernel"] = time.perf_counter()

    fixed, in_combination = fixed_site_maxima(prep, house_id, px, py, p_site, prep.rules.basis)
    distance = installation_distance_m(prep, house, shape0, cx, cy, prep.rules.basis)
    table, by_site, worst_load, worst_share, cost_by_position = _position_table(
        prep, house, unit_conc, fixed, in_combination, distance, cx, cy
    )
    surface = np.full((grid.n_rows, grid.n_cols), np.nan)
    surface[row, col] = worst_load
    share_surface = np.full((grid.n_rows, grid.n_cols), np.nan)
    share_surface[row, col] = worst_share
    cost_surface = np.full((grid.n_rows, grid.n_cols), np.nan)
    cost_surface[row, col] = cost_by_position
    clock["assessment"] = time.perf_counter()
    timings = {
        "inputs_s": clock["inputs"] - clock["start"],
        "kernel_s": clock["kernel"] - clock["inputs"],
        "assessment_s": clock["assessment"] - clock["kernel"],
        "positions": int(cx.size),
        "site_points": int(px.size),
        "kernel_points": kernel_points,
    }
    return PlaceResult(
        prep,
        house_id,
        table,
        grid,
        surface,
        share_surface,
        cost_surface,
        allowed,
        holding,
        list(prep.tables.abatement.values()),
        by_site,
        side_by_side(
            prep, house, table["max_share_of_planned"].head(SIDE_BY_SIDE_POSITIONS).to_numpy()
        ),
        [],  # filled by @collecting_warnings
        timings,
    )
