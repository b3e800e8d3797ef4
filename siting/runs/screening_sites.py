"""Where a screening run computes, and what it finds at each site and named point.

* :func:`_read_named_receptors` -- the scenario's named points (receptors.file).
* :func:`screen_grid`, :func:`_assessed_sites` -- the receptor grid and the sites it reaches.
* :func:`_receptors` -- every receptor in one flat array (:class:`_Receptors`): grid cells,
  named points and the sites' sample points, each with its deposition velocity and site.
* :func:`_site_table`, :func:`_named_point_table` -- the figures of each site (sites.csv) and
  named point (receptors.csv) from the concentrations by role.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from siting.dispersion.grid import GridSpec, grid_around
from siting.errors import AccuracyWarning, InputError, InputWarning
from siting.physics import assess
from siting.physics.constants import KEQ_PER_KG_N, deposition_kg_n_ha_yr, kg_n_to_mol_n
from siting.readers.scenario import Scenario
from siting.readers.site_points import (
    coarsened_sites,
    grid_nodes_in_sites,
    site_boundary_points,
    site_sample_points,
)
from siting.readers.tables import Tables
from siting.runs.screening_inputs import Prepared

MAX_GRID_CELLS = 2_000_000
BOUNDARY_SPACING_M = 10.0  # site boundaries are sampled at least this densely


def _read_named_receptors(scenario: Scenario, tables: Tables) -> pd.DataFrame:
    empty = pd.DataFrame({"id": [], "x": [], "y": [], "land_cover": []})
    if scenario.receptors is None:
        return empty
    path = scenario.receptors.file
    try:
        table = pd.read_csv(path, skipinitialspace=True, dtype={"id": str})
    except Exception as exc:
        raise InputError(f"receptors.file {path.name}: cannot read as CSV: {exc}") from exc
    missing = [c for c in ("id", "x", "y") if c not in table.columns]
    if missing:
        raise InputError(
            f"receptors.file {path.name}: missing column(s) {', '.join(missing)}; "
            "need id,x,y[,land_cover]"
        )
    for col in ("x", "y"):
        values = pd.to_numeric(table[col], errors="coerce")
        bad = values.isna() | ~np.isfinite(values.to_numpy(float, na_value=np.nan))
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0]) + 2
            raise InputError(
                f"receptors.file {path.name}, line {row}: {col} must be a finite number"
            )
        table[col] = values
    if "land_cover" not in table.columns:
        table["land_cover"] = scenario.deposition.depletion_land_cover
    table["land_cover"] = table["land_cover"].fillna(scenario.deposition.depletion_land_cover)
    unknown = set(table["land_cover"]) - set(tables.deposition_velocities)
    if unknown:
        raise InputError(
            f"receptors.file {path.name}: unknown land_cover {sorted(unknown)}; "
            f"known: {', '.join(sorted(tables.deposition_velocities))}"
        )
    if table["id"].duplicated().any():
        raise InputError(
            f"receptors.file {path.name}: duplicate id "
            f"{table['id'][table['id'].duplicated()].iloc[0]!r}"
        )
    return table[["id", "x", "y", "land_cover"]]


# --- the receptors -----------------------------------------------------------------------------


@dataclass
class _Receptors:
    """Every receptor of a run in one flat array: grid cells, named points, site sample points.

    ``vd_m_s`` is each receptor's deposition velocity [m s-1] by land cover; the member arrays
    say which receptors belong to which site (``member_site``, ``member_receptor``) and whether
    each counts towards the site's mean (``member_interior``).
    """

    x_m: np.ndarray
    y_m: np.ndarray
    vd_m_s: np.ndarray
    n_grid: int
    n_named: int
    member_site: np.ndarray
    member_receptor: np.ndarray
    member_interior: np.ndarray

    @property
    def named(self) -> slice:
        return slice(self.n_grid, self.n_grid + self.n_named)


def screen_grid(scenario: Scenario) -> GridSpec:
    """The receptor grid around every source of the base and of its options.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its sources, options and [grid]).

    Returns
    -------
    GridSpec
        The grid.

    Raises
    ------
    InputError
        The grid would have more than MAX_GRID_CELLS cells.
    """
    grid = grid_around(
        *scenario.layout_points,
        scenario.grid.margin_m,
        scenario.grid.spacing_m,
        scenario.crs,
    )
    if grid.size > MAX_GRID_CELLS:
        raise InputError(
            f"grid: {grid.n_cols} x {grid.n_rows} = {grid.size:,} cells exceeds "
            f"{MAX_GRID_CELLS:,}; increase grid.spacing_m or reduce grid.margin_m"
        )
    return grid


def _assessed_sites(sites, grid: GridSpec) -> np.ndarray:
    """Which sites touch the grid (an AccuracyWarning names each one that does not)."""
    import shapely

    extent = shapely.box(grid.west_m, grid.south_m, grid.east_m, grid.north_m)
    assessed = np.asarray(shapely.intersects(sites.geometry.values, extent), dtype=bool)
    for name in sites.loc[~assessed, "name"]:
        warnings.warn(
            f'site "{name}" lies outside the grid; not assessed (increase grid.margin_m)',
            AccuracyWarning,
            stacklevel=2,
        )
    return assessed


def _site_points(scenario: Scenario, sites, assessed_idx: np.ndarray):
    """(site index, x, y, interior) of the assessed sites' sample points: the boundary point
    nearest each source, the interior lattice and the boundary every BOUNDARY_SPACING_M."""
    geometries = sites.geometry.iloc[assessed_idx]
    boundary_spacing_m = min(scenario.grid.spacing_m, BOUNDARY_SPACING_M)
    s_index, s_x, s_y, s_interior = site_sample_points(
        geometries,
        *scenario.layout_points,
        scenario.grid.spacing_m,
    )
    b_index, b_x, b_y = site_boundary_points(geometries, boundary_spacing_m)
    coarsened_sites(  # an AccuracyWarning names the sites sampled wider than asked
        geometries, sites["name"].iloc[assessed_idx], scenario.grid.spacing_m, boundary_spacing_m
    )
    s_index = np.concatenate([s_index, b_index])
    s_index = assessed_idx[s_index] if len(s_index) else s_index
    return (
        s_index,
        np.concatenate([s_x, b_x]),
        np.concatenate([s_y, b_y]),
        np.concatenate([s_interior, np.zeros(b_index.size, bool)]),
    )


def _receptors(
    prep: Prepared, grid: GridSpec, named, assessed: np.ndarray, with_grid: bool
) -> _Receptors:
    """Every receptor of the run, its deposition velocity and which site it belongs to.

    A grid node inside two overlapping sites takes the higher of their deposition velocities
    (the cautious one); a named point takes its land cover's; a site point its site's.
    """
    sites = prep.sites
    gx, gy = grid.centres() if with_grid else (np.empty((0, 0)), np.empty((0, 0)))
    assessed_idx = np.flatnonzero(assessed)
    s_index, s_x, s_y, s_interior = _site_points(prep.scenario, sites, assessed_idx)
    rx = np.concatenate([gx.ravel(), named["x"].to_numpy(float), s_x])
    ry = np.concatenate([gy.ravel(), named["y"].to_numpy(float), s_y])
    n_grid, n_named = gx.size, len(named)

    vd = np.full(rx.size, prep.default_deposition_velocity_m_s, dtype=float)
    if with_grid:
        inside, site_of = grid_nodes_in_sites(sites.geometry.values[assessed_idx], grid)
    else:
        inside, site_of = np.zeros(0, int), np.zeros(0, int)
    site_of = assessed_idx[site_of]
    site_vd = sites["deposition_velocity_m_s"].to_numpy(float)
    vd[inside] = -np.inf
    np.maximum.at(vd, inside, site_vd[site_of])
    named_vd = named["land_cover"].map(
        {k: v["deposition_velocity_m_s"] for k, v in prep.tables.deposition_velocities.items()}
    )
    vd[n_grid : n_grid + n_named] = named_vd.to_numpy(float)
    vd[n_grid + n_named :] = site_vd[s_index] if len(s_index) else []
    return _Receptors(
        rx,
        ry,
        vd,
        n_grid,
        n_named,
        member_site=np.concatenate([s_index, site_of]).astype(int),
        member_receptor=np.concatenate([n_grid + n_named + np.arange(len(s_x)), inside]).astype(
            int
        ),
        member_interior=np.concatenate([s_interior, np.ones(inside.size, bool)]).astype(bool),
    )


# --- the figures at the sites and named points ------------------------------------------------


def _site_stats(conc_ug_m3, vd_m_s, member_receptor, member_site, member_interior, n_sites):
    """Per-site (max, mean) of concentration [ug m-3] and deposition [kg N ha-1 yr-1]."""
    dep = deposition_kg_n_ha_yr(conc_ug_m3[member_receptor], vd_m_s[member_receptor])
    c_max, c_mean = assess.site_max_and_mean(
        conc_ug_m3[member_receptor], member_site, member_interior, n_sites
    )
    d_max, d_mean = assess.site_max_and_mean(dep, member_site, member_interior, n_sites)
    return c_max, c_mean, d_max, d_mean


def _site_table(
    prep: Prepared,
    combos: dict,
    undepleted_pc,
    rec: _Receptors,
    source_shapes,
    assessed: np.ndarray,
):
    """The sites with their figures: PC, net change and in-combination maxima and means, % of
    critical level and load, the undepleted twin where depleted, the predicted environmental
    totals and distance from the installation (blank where not assessed); the verdicts are
    added by the rule set (judging.with_verdicts)."""
    import shapely

    sites, scenario = prep.sites, prep.scenario
    n_sites = len(sites)
    members = (rec.member_receptor, rec.member_site, rec.member_interior, n_sites)
    level = sites["critical_level_ug_m3"].to_numpy()
    load = sites["critical_load_used_kg_n_ha_yr"].to_numpy()
    out = sites.copy()
    for key, conc in combos.items():
        c_max, c_mean, d_max, d_mean = _site_stats(conc, rec.vd_m_s, *members)
        out[f"{key}_conc_max_ug_m3"] = c_max
        if key == "pc":
            out["pc_conc_mean_ug_m3"] = c_mean
        out[f"{key}_dep_max_kg_n_ha_yr"] = d_max
        if key == "pc":
            out["pc_dep_mean_kg_n_ha_yr"] = d_mean
            out["pc_dep_max_mol_n_ha_yr"] = kg_n_to_mol_n(d_max)
            out["pc_dep_max_keq_ha_yr"] = d_max * KEQ_PER_KG_N
        out[f"{key}_pct_level"] = assess.percent_of(c_max, level)
        out[f"{key}_pct_load"] = assess.percent_of(d_max, load)
    if undepleted_pc is not None:
        c_max, _, d_max, _ = _site_stats(undepleted_pc, rec.vd_m_s, *members)
        out["pc_conc_max_undepleted_ug_m3"] = c_max
        out["pc_dep_max_undepleted_kg_n_ha_yr"] = d_max
        out["pc_pct_level_undepleted"] = assess.percent_of(c_max, level)
        out["pc_pct_load_undepleted"] = assess.percent_of(d_max, load)
    out["pec_conc_ug_m3"] = out["background_conc_ug_m3"] + out["pc_conc_max_ug_m3"]
    out["pec_dep_kg_n_ha_yr"] = out["background_dep_kg_n_ha_yr"] + out["pc_dep_max_kg_n_ha_yr"]
    out["pec_pct_level"] = assess.percent_of(out["pec_conc_ug_m3"], level)
    out["pec_pct_load"] = assess.percent_of(out["pec_dep_kg_n_ha_yr"], load)
    installation = [
        shape
        for s, shape in zip(scenario.sources, source_shapes)
        if s.role in ("proposed", "existing")
    ]
    if installation:
        union = shapely.union_all(installation)
        out["distance_m"] = shapely.distance(sites.geometry.values, union)
    else:
        out["distance_m"] = np.nan
        warnings.warn(
            "no proposed or existing source: the installation's PC is zero",
            InputWarning,
            stacklevel=2,
        )
    out["assessed"] = assessed  # the verdicts are the rule set's (judging.with_verdicts)
    prefixes = ("pc_", "net_", "incomb_", "pec_", "judged_")
    for col in [c for c in out.columns if c.startswith(prefixes)]:
        out.loc[~assessed, col] = np.nan
    return out


def _named_point_table(named, combos: dict, dep: dict, rec: _Receptors):
    """The named points (receptors.csv): PC, net change and in-combination at each."""
    receptors = named[["id", "x", "y"]].copy()
    sl = rec.named
    receptors["conc_ug_m3"] = combos["pc"][sl]
    receptors["dep_kg_n_ha_yr"] = dep["pc"][sl]
    receptors["dep_mol_n_ha_yr"] = kg_n_to_mol_n(dep["pc"][sl])
    receptors["land_cover"] = named["land_cover"].to_numpy()
    receptors["deposition_velocity_m_s"] = rec.vd_m_s[sl]
    receptors["net_conc_ug_m3"] = combos["net"][sl]
    receptors["net_dep_kg_n_ha_yr"] = dep["net"][sl]
    receptors["incomb_conc_ug_m3"] = combos["incomb"][sl]
    receptors["incomb_dep_kg_n_ha_yr"] = dep["incomb"][sl]
    return receptors
