"""Many farms over a region: in-combination concentration and deposition, tiled, on dask.

The Python API behind ``siting region``. A farms layer (points or polygons, one feature per
farm, with an annual ammonia emission or the livestock, housing and places to derive one)
becomes a list of sources, each in a *release class* (kind, release height rounded to
0.5 m, footprint side rounded to a sqrt(2) ladder; ``kernels.release_class``). Then:

- **Grid.** For each class the unit-source kernel (``kernels.unit_kernel``) is convolved
  with the class's emissions, placed on the cell centres with bilinear weights; a near-field
  correction makes every cell within ``near_field_cells`` of a farm the direct sum at the farm's
  true position. The grid is split into tiles; each tile is one task summing, class by class,
  the FFT convolution of every block of farms within the kernel's reach (overlap-add). The
  memory budget picks the tile size.
- **Sites.** Each habitat site's figures come from its own receptor points (boundary and
  interior lattice), by the direct sum over every farm at those points: not from the grid. At
  each site's point of maximum deposition every farm's own contribution is computed too, which
  gives the top contributors (they add up to the site's total there).
- **Deposition.** Grid cells use the short-vegetation deposition velocity (0.02 m/s in the
  bundled config/deposition_velocities.toml); site points use the site's own land cover (as
  ``siting screen`` does). Plume depletion along the path uses the short-vegetation velocity.
- **Verdicts.** A site's all-farms total is an in-combination figure (``incomb_*``): it is
  judged by the rule set's in-combination stages only (``region_sites.py``); a tier whose set
  has none reads "no in-combination rule in <set id>" (not passing).

Tasks (kernels, near-field corrections, tiles, chunks of site points) run on dask: threads on
this machine by default, a dask.distributed cluster with a scheduler address, or with no dask at
all (``scheduler=None``). The tasks and their order of summation are the same in every case, so
the results are identical whichever runs them.

Here: :func:`region` (from files), :func:`compute_region` (the dispersion, from prepared
inputs) and :class:`RegionResult`. Elsewhere: the options and reading of the inputs
(``region_inputs.py``; the farms layer is ``readers/farms.py``), the tile plan against the
memory budget (``region_tiles.py``), the tasks and what runs them (``region_tasks.py``), the
sites' points, figures and contributors (``region_sites.py``), the kernels, cells and
convolution arithmetic (``dispersion/kernels.py``, ``cells.py``, ``convolution.py``). Hourly
weather is not used: a regional run needs a frequency table; ``siting weather`` makes one from
an hourly record.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.grid import GridSpec
from siting.dispersion.inputs import DispersionSettings
from siting.dispersion.kernels import kernel_half_size, offset_lattice
from siting.errors import collecting_warnings
from siting.physics.constants import deposition_kg_n_ha_yr
from siting.readers.farms import FarmFields
from siting.readers.rules import RuleSet
from siting.runs.region_inputs import RegionInputs, RegionOptions, prepare_region
from siting.runs.region_sites import _all_site_points, _site_results
from siting.runs.region_tasks import (
    _class_tasks,
    _concurrent,
    _farm_arrays,
    _gather,
    _Runner,
    _tile_tasks,
)
from siting.runs.region_tiles import TilePlan, engine_budget_mb, plan_tiles

CAUTIONS = [
    "Screening estimate of many farms together: flat terrain, no building wake, long-term "
    "annual means from a sector-averaged Gaussian plume; each farm is one point or one square "
    "volume source with its release height rounded to 0.5 m.",
    "Grid cells use the short-vegetation deposition velocity; habitat sites their own land "
    "cover. Site figures come from each site's own points, not from the grid.",
    "Verdicts judge each site's all-farms total by the rule set's in-combination stages only; "
    "rules on one installation's own contribution are not applied (there is none here), and "
    "a tier without an in-combination rule is not judged.",
    "Emission figures and deposition velocities carry wide uncertainty. Local rules and the "
    "competent authority decide; for borderline results seek detailed modelling.",
]


@dataclass
class RegionResult:
    """A regional run in memory (see write_region_outputs).

    Attributes
    ----------
    inputs : RegionInputs
        What was read.
    concentration_ug_m3 : ndarray, (n_rows, n_cols)
        Annual mean NH3 concentration of all farms together [ug m-3].
    sites : geopandas.GeoDataFrame or None
        Each site's all-farms figures (``incomb_*``: max and mean concentration and deposition,
        % of critical level and load) and its verdict under the rule set's in-combination
        stages (``verdict``, ``passes``, ``deciding_rule``, ``basis``, ``rules``); None without
        a habitat layer.
    contributors : pandas.DataFrame
        Per site, the top farms at its point of maximum deposition.
    plan : TilePlan
        How the grid was tiled.
    timings_s : dict
        Seconds by phase, and counts (farms, release classes, tiles, workers).
    warnings : list of str
        The messages of the SitingWarnings the run raised (its inputs' first), in order, each
        once.
    """

    inputs: RegionInputs
    concentration_ug_m3: np.ndarray  # (n_rows, n_cols)
    sites: object  # GeoDataFrame with the figures, or None
    contributors: pd.DataFrame
    plan: TilePlan
    timings_s: dict
    warnings: list[str] = field(default_factory=list)

    @property
    def cautions(self) -> list[str]:
        """The cautions every output of a regional run carries."""
        return list(CAUTIONS)

    @property
    def grid(self) -> GridSpec:
        """The regional grid."""
        return self.inputs.grid

    @property
    def deposition_kg_n_ha_yr(self) -> np.ndarray:
        """Dry deposition on the grid [kg N ha-1 yr-1]."""
        return deposition_kg_n_ha_yr(
            self.concentration_ug_m3, self.inputs.grid_deposition_velocity_m_s
        )


@collecting_warnings
def compute_region(inputs: RegionInputs) -> RegionResult:
    """Concentration and deposition over the grid, and every site's figures and contributors.

    Parameters
    ----------
    inputs : RegionInputs
        From :func:`prepare_region`.

    Returns
    -------
    RegionResult
        The grid, the sites' figures and contributors, timings and warnings.

    Raises
    ------
    InputError
        When no tile size fits the memory budget.
    """
    clock = {"start": time.perf_counter()}
    opt, grid = inputs.options, inputs.grid
    workers = opt.workers or os.cpu_count() or 1
    runner = _Runner(opt.scheduler, workers)
    try:
        if runner.client is not None and opt.workers is None:
            workers = max(1, sum(runner.client.nthreads().values()))
        half_rows, half_cols = kernel_half_size(grid.n_rows, grid.n_cols, grid.cell_m, opt.reach_m)
        settings, plan = _settings_and_plan(inputs, workers, half_rows, half_cols)
        points = _all_site_points(inputs)
        farm = _farm_arrays(inputs)
        lattice = runner.call(
            offset_lattice,
            half_rows,
            half_cols,
            grid.cell_m,
            inputs.weather,
            settings.chunk_receptors,
        )
        kernels, placed, corrections, site_parts = _class_tasks(
            runner, inputs, settings, lattice, farm, points.x_m, points.y_m
        )
        tiles, ranges = _tile_tasks(runner, grid, plan, kernels, placed, corrections)
        clock["graph"] = time.perf_counter()
        done = runner.compute(tiles + site_parts)
        clock["grid_and_sites"] = time.perf_counter()
        concentration, point_conc = _gather(grid, ranges, done, points.x_m.size)
        sites, contributors = _site_results(runner, inputs, settings, farm, points, point_conc)
        clock["contributors"] = time.perf_counter()
    finally:
        runner.close()
    timings = _timings(clock, inputs, plan, workers, points.x_m.size)
    return RegionResult(
        inputs, concentration, sites, contributors, plan, timings, list(inputs.warnings)
    )


def _settings_and_plan(
    inputs: RegionInputs, workers: int, half_rows: int, half_cols: int
) -> tuple[DispersionSettings, TilePlan]:
    """The engine settings with the budget of one task among those running at once, and the
    tile plan that fits the memory budget (InputError when none does)."""
    opt, grid = inputs.options, inputs.grid
    concurrent = _concurrent(opt, workers)
    settings = replace(
        inputs.settings, memory_budget_mb=engine_budget_mb(opt.memory_mb, concurrent)
    )
    plan = plan_tiles(
        grid.n_rows,
        grid.n_cols,
        len(inputs.classes),
        half_rows,
        half_cols,
        opt.memory_mb * 1e6,
        concurrent,
        settings.memory_budget_mb * 1e6,
        opt.tile_size,
        len(inputs.farms),
        opt.near_field_cells,
    )
    return settings, plan


def _timings(clock: dict, inputs: RegionInputs, plan: TilePlan, workers: int, n_points: int):
    """The run's phases [s] and sizes, for run.json."""
    return {
        "setup_s": clock["graph"] - clock["start"],
        "grid_and_site_points_s": clock["grid_and_sites"] - clock["graph"],
        "contributors_s": clock["contributors"] - clock["grid_and_sites"],
        "total_s": clock["contributors"] - clock["start"],
        "site_points": int(n_points),
        "farms": len(inputs.farms),
        "release_classes": len(inputs.classes),
        "tiles": plan.n_tiles,
        "workers": int(workers),
    }


@collecting_warnings
def region(
    farms_path,
    weather_path,
    habitats_path=None,
    options: RegionOptions = RegionOptions(),  # noqa: B008 (frozen dataclass: an immutable default)
    fields: FarmFields = FarmFields(),  # noqa: B008 (frozen dataclass: an immutable default)
    crs: str | None = None,
    *,
    rules: RuleSet | str | Path | None = None,
    **habitat_fields,
) -> RegionResult:
    """A regional run from files: :func:`prepare_region`, then :func:`compute_region`.

    The Python call behind ``siting region``; write its files with
    :func:`siting.output.region.write_region_outputs`.

    Parameters
    ----------
    farms_path : str or Path
        The farms layer (points or house footprints).
    weather_path : str or Path
        A frequency table CSV.
    habitats_path : str or Path, optional
        The habitat layer; None for the grid alone.
    options : RegionOptions
        The run's settings (grid spacing [m], margin [m], memory [MB], scheduler, ...).
    fields : FarmFields
        The farms layer's attribute names.
    crs : str, optional
        Projected CRS to work in; default the farms layer's own.
    rules : RuleSet, str or Path, optional
        The rule set each site's all-farms total is judged by (its in-combination stages),
        in place of ``options.rules`` (default "plain"): a RuleSet, a bundled id or a file.
        Read and checked before anything is computed.
    **habitat_fields
        ``tables``, ``habitats_layer``, ``name_field``, ``habitat_field``,
        ``designation_field``, as for :func:`prepare_region`.

    Returns
    -------
    RegionResult
        The grid, the sites' figures and contributors, timings and warnings.

    Raises
    ------
    InputFileError
        A file does not exist.
    InputError
        An option out of range, a fault in the rule set or an input (named), or no tile size
        fits.
    """
    if rules is not None:
        options = replace(options, rules=rules)
    return compute_region(
        prepare_region(
            farms_path, weather_path, habitats_path, options, fields, crs, **habitat_fields
        )
    )
