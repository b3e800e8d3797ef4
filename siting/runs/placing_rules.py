"""The placement search judged by a rule set: each position's figures as offset + slope x s.

s scales the placed house's unabated emission (s = 1: the house as described, before its own
abatement). The judged contribution at a site is the house's maximum there plus the maximum of
the rule set basis's other sources (the farm's existing and other proposed sources for the
installation basis; its other proposed sources less the removed ones for the net basis; its
other proposed sources for the proposal basis); the in-combination figures add the scenario's
"other" sources. Two maxima may lie at different points of a site, so the sum is an upper bound
(cautious). Every figure is then affine in s, so the largest s each rule set allows is exact
(``physics.staging.allowed_scale``).
"""

from __future__ import annotations

import numpy as np

from siting.physics import assess
from siting.physics.constants import MOL_N_PER_KG_N, UG_NH3_M2_S_TO_KG_N_HA_YR
from siting.physics.staging import FIGURES, judge
from siting.runs.screening_inputs import Prepared
from siting.runs.screening_sources import _source_elements

#: The weight of each role's sources in the judged contribution, by basis (the house aside).
BASIS_WEIGHTS = {
    "proposal": {"proposed": 1.0},
    "installation": {"proposed": 1.0, "existing": 1.0},
    "net": {"proposed": 1.0, "removed": -1.0},
}


def fixed_site_maxima(prep: Prepared, house_id: str, px, py, p_site, basis: str):
    """Per-site maxima [ug m-3] of the judged contribution's sources other than the house, and
    of those with the scenario's "other" sources (in combination).

    Parameters
    ----------
    prep : Prepared
        The scenario's inputs.
    house_id : str
        The source being placed (left out).
    px, py : ndarray
        The sites' outline points [m].
    p_site : ndarray of int
        The site of each point.
    basis : str
        The rule set's basis.

    Returns
    -------
    fixed, in_combination : ndarray, (n_sites,)
        [ug m-3]; 0 where no such source reaches a site.
    """
    weights = BASIS_WEIGHTS[basis]
    fixed = np.zeros(np.size(px))
    other = np.zeros(np.size(px))
    for src, emission_g_s in zip(prep.scenario.sources, prep.sources["emission_g_s"]):
        weight = weights.get(src.role, 0.0)
        if src.id == house_id or emission_g_s <= 0 or (weight == 0 and src.role != "other"):
            continue
        elements, _ = _source_elements(src)
        field = emission_g_s * prep.unit_concentration_ug_m3(src.id, elements, px, py)
        if src.role == "other":
            other += field
        else:
            fixed += weight * field
    n_sites = len(prep.sites)
    return _site_max(fixed, p_site, n_sites), _site_max(fixed + other, p_site, n_sites)


def _site_max(values, p_site, n_sites: int) -> np.ndarray:
    out = np.full(n_sites, -np.inf)
    np.maximum.at(out, p_site, values)
    return np.where(np.isfinite(out), out, 0.0)


def installation_distance_m(prep: Prepared, house, house_shape, cx, cy, basis: str) -> np.ndarray:
    """Distance [m] from each position's installation to each site, (n_positions, n_sites).

    The nearer of the house (its centre's distance less half the footprint's diagonal: never
    more than the footprint's own distance, cautious) and the judged contribution's other
    sources (as screening measures it, from the proposed and existing sources).

    Parameters
    ----------
    prep : Prepared
    house : Source
        The source placed.
    house_shape : shapely geometry
        Its footprint at the origin.
    cx, cy : ndarray
        Candidate centres [m].
    basis : str
        The rule set's basis (unused: the installation is always proposed + existing).

    Returns
    -------
    ndarray
    """
    import shapely

    minx, miny, maxx, maxy = house_shape.bounds
    half_diagonal = 0.5 * float(np.hypot(maxx - minx, maxy - miny))
    geoms = prep.sites.geometry.to_numpy()
    points = shapely.points(cx, cy)
    house_m = np.maximum(shapely.distance(points[:, None], geoms[None, :]) - half_diagonal, 0.0)
    others = [
        _source_elements(s)[1]
        for s in prep.scenario.sources
        if s.id != house.id and s.role in ("proposed", "existing")
    ]
    if not others:
        return house_m
    fixed_m = shapely.distance(shapely.union_all(others), geoms)
    return np.minimum(house_m, fixed_m[None, :])


def position_figures(prep: Prepared, unit_conc, q_unabated_g_s, fixed, in_combination, distance):
    """Each figure at each position and site as (offset, slope) in s.

    Parameters
    ----------
    prep : Prepared
    unit_conc : ndarray, (n_positions, n_sites)
        The house's site maxima per unit emission [ug m-3 per g s-1].
    q_unabated_g_s : float
        The house's unabated emission [g s-1] (s = 1).
    fixed, in_combination : ndarray, (n_sites,)
        From :func:`fixed_site_maxima` [ug m-3].
    distance : ndarray, (n_positions, n_sites)
        From :func:`installation_distance_m` [m].

    Returns
    -------
    offset, slope : dict of str to ndarray, (n_positions, n_sites)
        For every figure of FIGURES but the composite "pct" and "incomb_pct".
    """
    sites = prep.sites
    level = sites["critical_level_ug_m3"].to_numpy(float)
    load = sites["critical_load_used_kg_n_ha_yr"].to_numpy(float)
    to_dep = sites["deposition_velocity_m_s"].to_numpy(float) * UG_NH3_M2_S_TO_KG_N_HA_YR
    bg_conc = sites["background_conc_ug_m3"].to_numpy(float)
    bg_dep = sites["background_dep_kg_n_ha_yr"].to_numpy(float)
    shape = unit_conc.shape
    house = unit_conc * q_unabated_g_s

    def both(offset_conc, slope_conc):
        return np.broadcast_to(offset_conc, shape), np.broadcast_to(slope_conc, shape)

    c0, c1 = both(fixed, house)
    i0, i1 = both(in_combination, house)
    offset = {
        "conc_ug_m3": c0,
        "pct_level": assess.percent_of(c0, level),
        "dep_kg_n_ha_yr": c0 * to_dep,
        "pct_load": assess.percent_of(c0 * to_dep, load),
        "pec_pct_level": assess.percent_of(bg_conc + c0, level),
        "pec_pct_load": assess.percent_of(bg_dep + c0 * to_dep, load),
        "incomb_pct_level": assess.percent_of(i0, level),
        "incomb_pct_load": assess.percent_of(i0 * to_dep, load),
        "incomb_dep_kg_n_ha_yr": i0 * to_dep,
        "distance_m": np.asarray(distance, dtype=float),
    }
    slope = {
        "conc_ug_m3": c1,
        "pct_level": assess.percent_of(c1, level),
        "dep_kg_n_ha_yr": c1 * to_dep,
        "pct_load": assess.percent_of(c1 * to_dep, load),
        "pec_pct_level": assess.percent_of(c1, level),
        "pec_pct_load": assess.percent_of(c1 * to_dep, load),
        "incomb_pct_level": assess.percent_of(i1, level),
        "incomb_pct_load": assess.percent_of(i1 * to_dep, load),
        "incomb_dep_kg_n_ha_yr": i1 * to_dep,
        "distance_m": np.zeros(shape),
    }
    offset["dep_mol_n_ha_yr"] = offset["dep_kg_n_ha_yr"] * MOL_N_PER_KG_N
    slope["dep_mol_n_ha_yr"] = slope["dep_kg_n_ha_yr"] * MOL_N_PER_KG_N
    return offset, slope


def figures_at(offset: dict, slope: dict, scale) -> dict[str, np.ndarray]:
    """Every figure of FIGURES at scale s (composites included).

    Parameters
    ----------
    offset, slope : dict of str to ndarray
        From :func:`position_figures`.
    scale : float or ndarray
        s.

    Returns
    -------
    dict of str to ndarray
    """
    out = {name: offset[name] + slope[name] * scale for name in offset}
    out["pct"] = np.maximum(out["pct_level"], out["pct_load"])
    out["incomb_pct"] = np.maximum(out["incomb_pct_level"], out["incomb_pct_load"])
    assert set(out) == set(FIGURES)
    return out


def judge_positions(figures: dict, tiers, rules):
    """The verdict at every (position, site) under a rule set.

    Parameters
    ----------
    figures : dict of str to ndarray, (n_positions, n_sites)
    tiers : sequence of str, (n_sites,)
    rules : RuleSet

    Returns
    -------
    verdict, passes, stage : ndarray, (n_positions, n_sites)
    """
    shape = figures["pct"].shape
    flat = {name: np.broadcast_to(v, shape).ravel() for name, v in figures.items()}
    tiers_flat = np.tile(np.asarray(tiers, dtype=object), shape[0])
    judgement = judge(flat, tiers_flat, rules.stages_by_tier)
    return (
        judgement.verdict.reshape(shape),
        judgement.passes.reshape(shape),
        judgement.stage.reshape(shape),
    )
