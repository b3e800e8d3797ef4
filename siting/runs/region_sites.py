"""The habitat sites of a regional run: their receptor points, figures and top contributors.

Each site's figures come from its own points (boundary and interior lattice), by the direct
sum over every farm at those points, not from the grid; at each site's point of maximum
deposition every farm's own contribution is computed too, which gives the top contributors
(they add up to the site's total there).

The all-farms total is an in-combination figure (``incomb_*``), so each site is judged by the
rule set's in-combination stages only (``siting.physics.staging.judge`` with
``usable=IN_COMBINATION_FIGURES``): a stage testing a single installation's figures is skipped,
and a tier with no stage on in-combination figures gets the verdict "no in-combination rule in
<set id>", which does not pass.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from siting.physics import assess
from siting.physics.constants import deposition_kg_n_ha_yr
from siting.physics.staging import IN_COMBINATION_FIGURES, Stage, judge
from siting.presentation.rule_text import rule_words
from siting.readers.rules import RuleSet
from siting.readers.site_points import site_boundary_points, site_sample_points
from siting.runs.region_inputs import RegionInputs
from siting.runs.region_tasks import _farms_at_points, _Runner

BOUNDARY_SPACING_M = 25.0  # site boundaries sampled at least this densely
#: What a regional run's verdicts judge (the ``basis`` column of its sites).
BASIS = "in combination (all farms of the layer)"


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
        sites = _with_in_combination_verdicts(sites, inputs.rules)
        conc_at_max = _farms_at_points(runner, inputs, settings, farm, max_points)
        contributors = _contributors(sites, inputs.farms, conc_at_max, inputs.options.top)
    return sites, contributors


def _site_figures(sites, site_index, px, py, interior, point_conc):
    """Per-site max and mean of the farms' total (in combination), % of level and load, and the
    point of maximum deposition."""
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
    # the single-installation threshold of thresholds.toml does not judge a regional total
    out = sites.drop(columns=["threshold_percent"], errors="ignore")
    out["incomb_conc_max_ug_m3"] = c_max
    out["incomb_conc_mean_ug_m3"] = c_mean
    out["incomb_dep_max_kg_n_ha_yr"] = d_max
    out["incomb_dep_mean_kg_n_ha_yr"] = d_mean
    out["incomb_pct_level"] = assess.percent_of(c_max, out["critical_level_ug_m3"].to_numpy())
    out["incomb_pct_load"] = assess.percent_of(
        d_max, out["critical_load_used_kg_n_ha_yr"].to_numpy()
    )
    out["max_x_m"], out["max_y_m"] = max_points[:, 0], max_points[:, 1]
    return out, max_points


def _in_combination_figures(sites: pd.DataFrame) -> dict[str, np.ndarray]:
    """The in-combination figures a rule set may test, from a regional sites table.

    Parameters
    ----------
    sites : pandas.DataFrame
        With ``incomb_pct_level``, ``incomb_pct_load`` [%] and ``incomb_dep_max_kg_n_ha_yr``
        [kg N ha-1 yr-1] (the all-farms maxima).

    Returns
    -------
    dict of str to ndarray
        Every figure of ``IN_COMBINATION_FIGURES``; ``incomb_pct`` is the larger share.
    """
    figures = {
        "incomb_pct_level": sites["incomb_pct_level"].to_numpy(float),
        "incomb_pct_load": sites["incomb_pct_load"].to_numpy(float),
        "incomb_dep_kg_n_ha_yr": sites["incomb_dep_max_kg_n_ha_yr"].to_numpy(float),
    }
    figures["incomb_pct"] = np.maximum(figures["incomb_pct_level"], figures["incomb_pct_load"])
    assert set(figures) == IN_COMBINATION_FIGURES
    return figures


def _has_in_combination_rule(stages: tuple[Stage, ...]) -> bool:
    """Whether a tier has a stage whose conditions test in-combination figures only.

    Parameters
    ----------
    stages : tuple of Stage
        One tier's stages.

    Returns
    -------
    bool
        False when only the tier's last (unconditional) stage could judge an in-combination
        total: the set has no rule for it.
    """
    return any(
        s.conditions and all(c.figure in IN_COMBINATION_FIGURES for c in s.conditions)
        for s in stages
    )


def _with_in_combination_verdicts(sites: pd.DataFrame, rules: RuleSet) -> pd.DataFrame:
    """The sites with their verdicts on the all-farms total under ``rules``' in-combination
    stages: ``verdict``, ``passes``, ``deciding_rule``, ``basis`` and ``rules``.

    Stages testing other figures are skipped; the tier's last stage takes what the others leave.
    A tier with no in-combination stage (:func:`_has_in_combination_rule`) gives "no
    in-combination rule in <set id>", which does not pass.

    Parameters
    ----------
    sites : pandas.DataFrame
        With ``tier`` and the figures of :func:`_in_combination_figures`.
    rules : RuleSet
        The rule set, with stages for every tier of the sites.

    Returns
    -------
    pandas.DataFrame
        A copy with the columns added.
    """
    out = sites.copy()
    tiers = out["tier"].to_numpy(object)
    found = judge(
        _in_combination_figures(out),
        tiers,
        rules.stages_by_tier,
        usable=IN_COMBINATION_FIGURES,
    )
    verdict, passes = found.verdict.copy(), found.passes.copy()
    deciding = []
    for i, (tier, k) in enumerate(zip(tiers, found.stage)):
        stages = rules.stages_by_tier[tier]
        if not _has_in_combination_rule(stages):
            verdict[i], passes[i] = f"no in-combination rule in {rules.id}", False
            deciding.append(f"{rules.id}: no rule of tier {tier} tests in-combination figures only")
        else:
            deciding.append(_deciding_words(stages, k, rules.id))
    out["verdict"] = verdict
    out["passes"] = passes.astype(bool)
    out["deciding_rule"] = deciding
    out["basis"] = BASIS
    out["rules"] = rules.id
    return out


def _deciding_words(stages: tuple[Stage, ...], k: int, set_id: str) -> str:
    """The deciding stage in words; the last (unconditional) one names the earlier stages that
    were skipped, not failed, because they test other figures."""
    if k < 0:
        return ""
    words = rule_words(stages[k], set_id)
    skipped = [
        s.rule_id
        for s in stages[:k]
        if any(c.figure not in IN_COMBINATION_FIGURES for c in s.conditions)
    ]
    if not stages[k].conditions and skipped:
        words += (
            f"; skipped, as testing figures other than in-combination ones: {', '.join(skipped)}"
        )
    return words


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
