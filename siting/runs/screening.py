"""The screening run: scenario -> process contribution at every habitat site.

This is the Python API behind ``siting screen``. It wires the adapters (scenario, tables,
weather, habitats, receptors) to the physics (emissions, long-term plume, deposition) and the
assessment arithmetic, and returns a :class:`ScreenResult`; writing files is
``siting.output.screen``'s job.

:func:`screen` is a short sequence of named steps over four modules: the inputs read and checked
(``screening_inputs.prepare``), where the run computes (``screening_sites``: grid, named points,
the sites' sample points) and the sources' release elements (``screening_sources``), the
dispersion (:func:`_disperse`), the roles combined and the figures at each site and named point
(``screening_sites``), then the two-sided sensitivity (``sensitivity.py``).

Roles: the installation's process contribution (PC) is proposed + existing sources; the net
change is proposed - removed; the in-combination total is PC + other; the predicted
environmental total is background + PC where the habitat layer gives a background.
"""

from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.grid import GridSpec
from siting.errors import collecting_warnings
from siting.physics.constants import deposition_kg_n_ha_yr
from siting.readers.rules import RuleSet
from siting.readers.scenario import Scenario
from siting.readers.tables import Tables
from siting.runs.judging import with_verdicts
from siting.runs.run_cache import RunCache
from siting.runs.screening_inputs import CAUTIONS, Prepared, prepare
from siting.runs.screening_options import OptionRuns, screen_options
from siting.runs.screening_sites import (
    _assessed_sites,
    _named_point_table,
    _read_named_receptors,
    _Receptors,
    _receptors,
    _site_table,
    screen_grid,
)
from siting.runs.screening_sources import _source_elements
from siting.runs.sensitivity import sensitivity as two_sided
from siting.runs.weather_years import judged_concentration, site_years
from siting.runs.what_it_takes import proposal_ways


@dataclass
class ScreenResult:
    """Everything a screening run produced, in memory (see :func:`siting.output.screen.write_outputs`).

    Attributes
    ----------
    scenario : Scenario
        The scenario run.
    tables : Tables
        The lookup tables used.
    grid : GridSpec
        The receptor grid.
    weather_summary : dict
        The weather's summary (sectors, speeds, stability shares, hours used, ...).
    sources : pandas.DataFrame
        One row per source: its emission derivation [kg NH3 yr-1, g s-1], plume rise and why.
    source_geometries : list
        Each source's shapely geometry (point or footprint), for the map.
    sites : geopandas.GeoDataFrame
        One row per habitat site: critical values, max and mean PC [ug m-3, kg N ha-1 yr-1],
        % of critical level and load, verdict (the columns of sites.csv).
    receptors : pandas.DataFrame
        The named points' figures (receptors.csv).
    fields : dict of str to ndarray
        Grids (n_rows, n_cols): pc_conc_ug_m3 [ug m-3], pc_dep_kg_n_ha_yr,
        incomb_dep_kg_n_ha_yr and net_dep_kg_n_ha_yr [kg N ha-1 yr-1]; (0, 0) with
        ``with_grid=False``.
    warnings : list of str
        Legal but doubtful input, in the order raised.
    timings_s : dict of str to float
        Seconds by phase.
    weather : WeatherClasses or HourlyWeather
        The weather used, for the weather figures.
    sensitivity : pandas.DataFrame, optional
        One row per (site, variant) of the two-sided sensitivity (sensitivity.csv).
    sensitivity_summary : pandas.DataFrame, optional
        One row per site: the range of its figures and whether a variant flips its verdict.
    rules : RuleSet, optional
        The rule set the sites were judged by.
    options : OptionRuns, optional
        The scenario's [[option]] runs on the base's grid, their table and differences
        (None without options).
    what_it_takes : pandas.DataFrame, optional
        Per proposed house, the cheapest way to let every site pass (what_it_takes.csv).
    """

    scenario: Scenario
    tables: Tables
    grid: GridSpec
    weather_summary: dict
    sources: pd.DataFrame
    source_geometries: list
    sites: object  # GeoDataFrame
    receptors: pd.DataFrame
    fields: dict[str, np.ndarray]
    warnings: list[str] = field(default_factory=list)
    timings_s: dict[str, float] = field(default_factory=dict)
    weather: object = None  # WeatherClasses or HourlyWeather, for the weather figures
    sensitivity: pd.DataFrame | None = None  # one row per (site, variant); see sensitivity.py
    sensitivity_summary: pd.DataFrame | None = None  # one row per site
    rules: RuleSet | None = None  # the rule set the sites were judged by
    options: OptionRuns | None = None  # the [[option]] runs beside this base
    what_it_takes: pd.DataFrame | None = None  # per proposed house: the cheapest way to pass

    @property
    def cautions(self) -> list[str]:
        """The cautions every output of a screening run carries."""
        return list(CAUTIONS)


@collecting_warnings
def screen(
    scenario: Scenario | str | Path,
    *,
    progress: bool = False,
    tables: Tables | None = None,
    with_grid: bool = True,
    sensitivity: bool = True,
    cache: RunCache | None = None,
    rules: RuleSet | str | Path | None = None,
    options: bool = True,
    what_it_takes: bool = True,
) -> ScreenResult:
    """Run a full screening assessment of a scenario (a file path or a loaded Scenario).

    The Python call behind ``siting screen``; write its files with
    :func:`siting.output.screen.write_outputs`.

    The steps: read and check the inputs (:func:`prepare`), lay out the receptors and the
    sources' release elements (:func:`_layout`), disperse (:func:`_disperse`), combine the
    roles and tabulate the sites, the named points and the grids (:func:`_assess`), then add
    the two-sided sensitivity (:func:`_add_sensitivity`).
    The warnings the run raised (SitingWarning) are on the result, in the order raised, each
    once, and issued on; those of the sensitivity's re-runs are not.

    Parameters
    ----------
    scenario : Scenario, str or Path
        A loaded scenario (:func:`siting.readers.scenario.load_scenario`) or its file.
    progress : bool
        Show a progress bar on the terminal.
    tables : Tables, optional
        Replaces the scenario's lookup tables (used by sensitivity runs).
    with_grid : bool
        False computes the sites and named points only (the fields are then empty: site
        figures come from their own points, so only a site's grid nodes are missing).
    sensitivity : bool
        With the grid, add the two-sided sensitivity of every site (sensitivity.py): the same
        assumptions varied both ways, re-run at the sites' points.
    cache : RunCache, optional
        Shared by the re-runs of one scenario (a sensitivity; see RunCache).
    rules : RuleSet, str or Path, optional
        Judge the sites by this rule set instead of the scenario's ([assessment] rules): a
        bundled id, a file, or a loaded RuleSet.
    options : bool
        With the grid, also screen each of the scenario's [[option]] tables on the base's grid
        (``result.options``; screening_options.py), reusing the dispersion of every release
        an option leaves as it is.
    what_it_takes : bool
        With the grid, also find for each proposed house the cheapest way to let every site
        pass (``result.what_it_takes``; runs/what_it_takes.py), re-running the base with the
        house's places scaled.

    Returns
    -------
    ScreenResult
        Sites, named points, sources, grids, sensitivity, warnings and timings.

    Raises
    ------
    InputFileError
        A file the scenario names does not exist.
    InputError
        A fault in the scenario, a table, the weather or the habitat layer (named).
    """
    clock = _PhaseClock()
    prep = prepare(scenario, tables, cache, rules)
    # the base screens its options; an option's own run (option_name set) does not
    with_options = (
        options and with_grid and bool(prep.scenario.options) and prep.scenario.option_name is None
    )
    with_ways = what_it_takes and with_grid and prep.scenario.option_name is None
    if (with_options or with_ways) and prep.cache is None:
        prep.cache = cache = RunCache()  # shared with the options' runs
    layout = _layout(prep, with_grid)
    clock.lap("inputs_s")
    conc_by_role, undepleted_pc = _disperse(prep, layout, with_grid, progress)
    clock.lap("dispersion_s")
    result = _assess(prep, layout, conc_by_role, undepleted_pc, with_grid)
    clock.lap("assessment_s")
    result.timings_s = {**clock.laps_s, "receptors": int(layout.receptors.x_m.size)}
    if sensitivity and with_grid:
        _add_sensitivity(result)
        result.timings_s["sensitivity_s"] = clock.since_last_s()
    if with_options:
        started = time.perf_counter()
        result.options = screen_options(result, screen, cache=cache, progress=progress)
        result.timings_s["options_s"] = time.perf_counter() - started
    if with_ways:
        started = time.perf_counter()
        result.what_it_takes = proposal_ways(result, screen, prep.cache)
        result.timings_s["what_it_takes_s"] = time.perf_counter() - started
    return result


class _PhaseClock:
    """Seconds by phase of a run: each lap is the time since the one before (or the start)."""

    def __init__(self):
        self.laps_s: dict[str, float] = {}
        self._last = time.perf_counter()

    def lap(self, name: str) -> None:
        """Record the seconds since the last lap as phase ``name``."""
        now = time.perf_counter()
        self.laps_s[name] = now - self._last
        self._last = now

    def since_last_s(self) -> float:
        """Seconds since the last lap [s]."""
        return time.perf_counter() - self._last


@dataclass
class _Layout:
    """Where a run computes and what it releases: the grid, the named points, which sites the
    grid reaches, every receptor, and each source's release elements and footprint."""

    grid: GridSpec
    named: pd.DataFrame
    assessed: np.ndarray
    receptors: _Receptors
    element_lists: list
    source_shapes: list


def _layout(prep: Prepared, with_grid: bool) -> _Layout:
    """Read the named points, set the grid, find the sites it reaches (an AccuracyWarning for
    each it misses), place every receptor and split each source into release elements."""
    scenario = prep.scenario
    named = _read_named_receptors(scenario, prep.tables)
    grid = screen_grid(scenario)
    assessed = _assessed_sites(prep.sites, grid)
    receptors = _receptors(prep, grid, named, assessed, with_grid)
    elements_and_shapes = [_source_elements(s) for s in scenario.sources]
    return _Layout(
        grid,
        named,
        assessed,
        receptors,
        element_lists=[elements for elements, _ in elements_and_shapes],
        source_shapes=[shape for _, shape in elements_and_shapes],
    )


def _disperse(prep: Prepared, layout: _Layout, with_grid: bool, progress: bool):
    """(concentration by role [ug m-3], undepleted PC or None) at every receptor.

    With depletion the same run without it is made at the sites' points (and grid nodes inside
    sites) only, to show what depletion took off; without the grid at every point, the same
    points as a run without depletion, so a sensitivity's re-runs share it through the cache.
    """
    element_lists, rec = layout.element_lists, layout.receptors
    depleted = prep.settings.depletion_velocity_m_s is not None
    bar = _progress(progress)
    task = (
        bar.add_task(
            "dispersion",
            total=len(element_lists) * (2 if depleted else 1) * max(1, len(prep.weather_years)),
        )
        if bar
        else None
    )
    if bar:
        bar.start()
    try:
        advance = (lambda: bar.advance(task)) if bar else None
        conc_by_role = prep.concentration_by_role_ug_m3(
            element_lists, rec.x_m, rec.y_m, advance=advance
        )
        undepleted_pc = None
        if depleted:
            at = np.unique(rec.member_receptor) if with_grid else np.arange(rec.x_m.size)
            plain = dataclasses.replace(prep.settings, depletion_velocity_m_s=None)
            twin = prep.concentration_by_role_ug_m3(
                element_lists, rec.x_m[at], rec.y_m[at], plain, advance=advance
            )
            undepleted_pc = np.full(rec.x_m.size, np.nan)
            undepleted_pc[at] = twin["proposed"] + twin["existing"]
    finally:
        if bar:
            bar.stop()
    return conc_by_role, undepleted_pc


def _progress(enabled: bool):
    """A transient progress bar on the terminal (rich), or None when not enabled."""
    if not enabled:
        return None
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    return Progress(
        TextColumn("{task.description}"),
        BarColumn(),
        TextColumn("{task.completed}/{task.total}"),
        TimeElapsedColumn(),
        transient=True,
    )


def _assess(
    prep: Prepared, layout: _Layout, conc_by_role: dict, undepleted_pc, with_grid: bool
) -> ScreenResult:
    """Combine the roles (PC = proposed + existing, net = proposed - removed, in-combination
    = PC + other), their deposition, and the run's result: the sites' and named points'
    figures and the grids (empty without the grid); timings and warnings are added after."""
    import geopandas as gpd

    scenario, rec, grid = prep.scenario, layout.receptors, layout.grid
    combos = {
        "pc": conc_by_role["proposed"] + conc_by_role["existing"],
        "net": conc_by_role["proposed"] - conc_by_role["removed"],
    }
    combos["incomb"] = combos["pc"] + conc_by_role["other"]
    # the contribution the rule set judges, alone and with the other sources
    combos["judged"] = judged_concentration(conc_by_role, prep.rules.basis)
    combos["judged_incomb"] = combos["judged"] + conc_by_role["other"]
    dep = {k: deposition_kg_n_ha_yr(v, rec.vd_m_s) for k, v in combos.items()}
    sites = _site_table(prep, combos, undepleted_pc, rec, layout.source_shapes, layout.assessed)
    if getattr(conc_by_role, "year_pick", None) is not None:
        sites["weather_year"] = site_years(
            prep.weather_years,
            conc_by_role.year_pick,
            combos["judged"],
            rec.member_site,
            rec.member_receptor,
            len(sites),
        )
        prep.weather_summary["worst_year_by_site"] = dict(
            zip(sites["name"].astype(str), sites["weather_year"])
        )
    sites = with_verdicts(sites, prep.rules)
    receptors = _named_point_table(layout.named, combos, dep, rec)
    shape = (grid.n_rows, grid.n_cols) if with_grid else (0, 0)
    fields = {
        "pc_conc_ug_m3": combos["pc"][: rec.n_grid].reshape(shape),
        "pc_dep_kg_n_ha_yr": dep["pc"][: rec.n_grid].reshape(shape),
        "incomb_dep_kg_n_ha_yr": dep["incomb"][: rec.n_grid].reshape(shape),
        "net_dep_kg_n_ha_yr": dep["net"][: rec.n_grid].reshape(shape),
    }
    return ScreenResult(
        scenario,
        prep.tables,
        grid,
        prep.weather_summary,
        prep.sources,
        layout.source_shapes,
        gpd.GeoDataFrame(sites, geometry="geometry", crs=scenario.crs),
        receptors,
        fields,
        [],  # filled by @collecting_warnings
        {},  # timings, filled by screen()
        prep.weather,
        rules=prep.rules,
    )


def _add_sensitivity(result: ScreenResult) -> None:
    """The two-sided sensitivity of every site (sensitivity.py), onto the result: each
    assumption varied both ways and re-run at the sites' points by :func:`screen` itself."""
    result.sensitivity, result.sensitivity_summary = two_sided(result.scenario, result, run=screen)
