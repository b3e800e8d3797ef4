"""The habitat sites of a regional run: their receptor points, figures and top contributors.

Each site's figures come from its own points (boundary and interior lattice), by the direct
sum over every farm at those points, not from the grid; at each site's point of maximum
deposition every farm's own contribution is computed too, which gives the top contributors
(they add up to the site's total there).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from siting.physics import assess
from siting.physics.constants import deposition_kg_n_ha_yr
from siting.readers.site_points import site_boundary_points, site_sample_points
from siting.runs.region_inputs import RegionInputs
from siting.runs.region_tasks import _farms_at_points, _Runner

BOUNDARY_SPACING_M = 25.0  # site boundaries sampled at least this densely


CONTRIBUTOR_COLUMNS = [
    "site_id",
    "site",
    "rank",
    "farm_id",
    "conc_ug_m3",
    "dep_kg_n_ha_yr",
    "share_of_site_total_percent",
    "distance_m",
]


@dataclass(frozen=True)
class _SitePoints:
    """Every site's receptor points: site (row of inputs.sites), x, y [m], interior or not."""

    site_index: np.ndarray
    x_m: np.ndarray
    y_m: np.ndarray
    interior: np.ndarray


def _site_points(sites, spacing_m: float):
    """(site, x [m], y [m], interior) of every site's points: the interior sample at the grid
    spacing first, then the boundary every BOUNDARY_SPACING_M or closer (not interior)."""
    b_index, bx, by = site_boundary_points(sites.geometry, min(spacing_m, BOUNDARY_SPACING_M))
    s_index, sx, sy, interior = site_sample_points(sites.geometry, [], [], spacing_m)
    return (
        np.concatenate([s_index, b_index]),
        np.concatenate([sx, bx]),
        np.concatenate([sy, by]),
        np.concatenate([interior, np.zeros(b_index.size, bool)]),
    )


def _all_site_points(inputs: RegionInputs) -> _SitePoints:
    """The sites' receptor points (:func:`_site_points`); none without a habitats layer."""
    if inputs.sites is None:
        return _SitePoints(np.zeros(0, int), np.zeros(0), np.zeros(0), np.zeros(0, bool))
    return _SitePoints(*_site_points(inputs.sites, inputs.grid.cell_m))


def _site_results(runner: _Runner, inputs: RegionInputs, settings, farm, points, point_conc):
    """Every site's figures and its top contributors (None and an empty table without sites)."""
    sites, contributors = None, pd.DataFrame(columns=CONTRIBUTOR_COLUMNS)
    if inputs.sites is not None:
        sites, max_points = _site_figures(
            inputs.sites, points.site_index, points.x_m, points.y_m, points.interior, point_conc
        )
        conc_at_max = _farms_at_points(runner, inputs, settings, farm, max_points)
        contributors = _contributors(sites, inputs.farms, conc_at_max, inputs.options.top)
    return sites, contributors


def _site_figures(sites, site_index, px, py, interior, point_conc):
    """Per-site max and mean of the farms' total, % of level and load, verdict, max point."""
    n_sites = len(sites)
    vd = sites["deposition_velocity_m_s"].to_numpy(float)
    point_dep = deposition_kg_n_ha_yr(point_conc, vd[site_index])
    c_max, c_mean = assess.site_max_and_mean(point_conc, site_index, interior, n_sites)
    d_max, d_mean = assess.site_max_and_mean(point_dep, site_index, interior, n_sites)
    max_points = np.full((n_sites, 2), np.nan)
    for i in range(n_sites):
        on_site = np.flatnonzero(site_index == i)
        best = on_site[np.argmax(point_dep[on_site])]
        max_points[i] = px[best], py[best]
    out = sites.copy()
    out["pc_conc_max_ug_m3"] = c_max
    out["pc_conc_mean_ug_m3"] = c_mean
    out["pc_dep_max_kg_n_ha_yr"] = d_max
    out["pc_dep_mean_kg_n_ha_yr"] = d_mean
    out["pc_pct_level"] = assess.percent_of(c_max, out["critical_level_ug_m3"].to_numpy())
    out["pc_pct_load"] = assess.percent_of(d_max, out["critical_load_used_kg_n_ha_yr"].to_numpy())
    out["max_x_m"], out["max_y_m"] = max_points[:, 0], max_points[:, 1]
    out["verdict"] = assess.verdict(
        out["pc_pct_level"].to_numpy(),
        out["pc_pct_load"].to_numpy(),
        out["threshold_percent"].to_numpy(),
    )
    return out, max_points


def _contributors(sites, farms, conc_at_max, top: int) -> pd.DataFrame:
    """Top contributors per site at its point of maximum deposition."""
    vd = sites["deposition_velocity_m_s"].to_numpy(float)
    rows = []
    for j, site in enumerate(sites.itertuples()):
        conc = conc_at_max[:, j]
        dep = deposition_kg_n_ha_yr(conc, vd[j])
        total = dep.sum()
        order = np.argsort(-dep, kind="stable")[:top]
        for rank, i in enumerate(order, start=1):
            rows.append(
                {
                    "site_id": site.site_id,
                    "site": site.name,
                    "rank": rank,
                    "farm_id": farms["farm_id"].iloc[i],
                    "conc_ug_m3": conc[i],
                    "dep_kg_n_ha_yr": dep[i],
                    "share_of_site_total_percent": 100.0 * dep[i] / total if total > 0 else np.nan,
                    "distance_m": math.hypot(
                        site.max_x_m - farms["x_m"].iloc[i], site.max_y_m - farms["y_m"].iloc[i]
                    ),
                }
            )
    return pd.DataFrame(rows, columns=CONTRIBUTOR_COLUMNS)
