"""What a regional run reads and checks before any dispersion: its options and its inputs.

:class:`RegionOptions` holds the settings of ``siting region`` (and checks their ranges);
:func:`prepare_region` reads the farms layer (``readers/farms.py``), the frequency table and
the habitat layer, lays the grid around the farms and picks the dispersion settings, giving a
:class:`RegionInputs`. The dispersion itself is ``regional.compute_region``.
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from siting.dispersion.grid import GridSpec, grid_around
from siting.dispersion.inputs import DispersionSettings
from siting.dispersion.kernels import ReleaseClass
from siting.errors import AccuracyWarning, InputError, InputFileError, collecting_warnings
from siting.output.records import _layer_files
from siting.readers.farms import FarmFields, read_farms
from siting.readers.frequency_table import read_frequency_table
from siting.readers.habitats import read_habitats
from siting.readers.rules import DEFAULT_RULES, RuleSet, load_rule_set
from siting.readers.scenario_sections import HabitatsSection
from siting.readers.tables import Tables, load_tables, sigma_scheme, wind_exponents
from siting.runs.region_tiles import engine_budget_mb

LAND_COVER_GRID = "short_vegetation"  # deposition velocity of grid cells and plume depletion
NEAR_FIELD_CELLS = 10  # cells around each farm made exact by the near-field correction


@dataclass(frozen=True)
class RegionOptions:
    """Settings of a regional run (the CLI options of ``siting region``).

    Attributes
    ----------
    spacing_m : float
        Grid cell size [m].
    margin_m : float
        Grid = the farms' bounding box + this margin [m], >= spacing_m.
    tile_size : int or None
        Tile side [cells]; None: the whole grid if it fits the memory budget, else the largest
        of TILE_SIZES that does.
    memory_mb : float
        Memory budget of the run [MB]: kernels, the grid and every worker's tile.
    scheduler : str or None
        "threads" (dask, this machine), "synchronous" (dask, one thread), None (no dask), or
        the address of a dask.distributed scheduler ("tcp://host:8786").
    workers : int or None
        Threads for the "threads" scheduler (default: the machine's cores); with an address,
        the number of tasks the budget allows at once (default: the cluster's threads).
    reach_m : float or None
        Farms farther than this from a cell or site point are not counted there [m]; None
        counts every farm everywhere (exact; the kernels then cover the whole grid).
    top : int
        Contributors listed per site.
    land_type : str
        "rural" or "urban" dispersion coefficients (Briggs 1973).
    anemometer_height_m, min_wind_speed_m_s : float
        As in a scenario's [weather].
    plume_depletion : bool
        Source depletion with the short-vegetation velocity (default off: cautious).
    placement : str
        "bilinear" or "nearest" (how farms go onto cell centres; cells.place_on_cells).
    near_field_cells : int
        Half width of the window around each farm made exact (0: none).
    critical_load_end : str
        "lower", "middle" or "upper" end of each habitat's critical load range.
    critical_load_review : str
        "2022" (default) or "2011": which review's critical load ranges.
    wind_below_anemometer : str
        "power_law" (default) or "unchanged", as in a scenario's [weather].
    rules : RuleSet, str or Path
        The rule set each site's all-farms total is judged by (its in-combination stages): a
        loaded RuleSet, a bundled id or a rule set file; default "plain" (which has no
        in-combination stage, so every site reads "no in-combination rule in plain").
    """

    spacing_m: float = 100.0
    margin_m: float = 2000.0
    tile_size: int | None = None
    memory_mb: float = 2000.0
    scheduler: str | None = "threads"
    workers: int | None = None
    reach_m: float | None = None
    top: int = 10
    land_type: str = "rural"
    anemometer_height_m: float = 10.0
    min_wind_speed_m_s: float = 1.0
    plume_depletion: bool = False
    placement: str = "bilinear"
    near_field_cells: int = NEAR_FIELD_CELLS
    critical_load_end: str = "lower"
    critical_load_review: str = "2022"
    wind_below_anemometer: str = "power_law"
    rules: RuleSet | str | Path = DEFAULT_RULES

    def check(self) -> None:
        """Raise InputError for a value out of range (naming the option, in ``parameters``)."""
        physical = _physical_memory_mb()
        checks = (
            (
                "spacing_m",
                0 < self.spacing_m <= 5000,
                f"must be in (0, 5000] m, got {self.spacing_m:g}",
            ),
            (
                "margin_m",
                self.spacing_m <= self.margin_m <= 100_000,
                f"must be at least the spacing ({self.spacing_m:g} m) and at most 100000 m, "
                f"got {self.margin_m:g}",
            ),
            (
                "tile_size",
                self.tile_size is None or self.tile_size >= 16,
                f"must be >= 16 cells, got {self.tile_size}",
            ),
            (
                "memory_mb",
                0 < self.memory_mb < math.inf,
                f"must be a finite number > 0, got {self.memory_mb:g}",
            ),
            (
                "memory_mb",
                not physical or self.memory_mb <= physical,
                f"{self.memory_mb:g} is more than this machine has ({physical or 0:,.0f} MB); "
                "give at most that",
            ),
            (
                "workers",
                self.workers is None or self.workers >= 1,
                f"must be >= 1, got {self.workers}",
            ),
            (
                "reach_m",
                self.reach_m is None or self.spacing_m <= self.reach_m < math.inf,
                "must be a finite distance at least the spacing, got "
                + (f"{self.reach_m:g}" if self.reach_m is not None else ""),
            ),
            ("top", self.top >= 1, f"must be >= 1, got {self.top}"),
            (
                "anemometer_height_m",
                0 < self.anemometer_height_m <= 300,  # NaN and inf fail too
                f"must be in (0, 300] m, got {self.anemometer_height_m:g}",
            ),
            (
                "min_wind_speed_m_s",
                0 < self.min_wind_speed_m_s <= 5,
                f"must be in (0, 5] m/s, got {self.min_wind_speed_m_s:g}",
            ),
            (
                "land_type",
                self.land_type in ("rural", "urban"),
                f"must be rural or urban, got {self.land_type!r}",
            ),
            (
                "placement",
                self.placement in ("bilinear", "nearest"),
                f"must be bilinear or nearest, got {self.placement!r}",
            ),
            (
                "near_field_cells",
                0 <= self.near_field_cells <= 100,
                f"must be in 0..100 cells, got {self.near_field_cells}",
            ),
        )
        for name, ok, wrong in checks:  # in this order: the first fault is the one reported
            if not ok:
                raise InputError(f"{name} {wrong}", parameters=(name,))


def _physical_memory_mb() -> float | None:
    """This machine's memory [MB], or None where the system does not say."""
    try:
        return os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE") / 1e6
    except (AttributeError, OSError, ValueError):
        return None


@dataclass
class RegionInputs:
    """Everything read and checked before any dispersion.

    Attributes
    ----------
    farms : pandas.DataFrame
        One row per farm (:func:`siting.readers.farms.read_farms`).
    classes : list of ReleaseClass
        The farms' distinct release classes.
    crs : str
        The projected CRS of the run.
    grid : GridSpec
        The regional grid.
    weather : WeatherClasses
        The frequency table.
    weather_summary : dict
        Its summary (:func:`siting.readers.frequency_table.read_frequency_table`).
    settings : DispersionSettings
        Dispersion settings.
    sites : geopandas.GeoDataFrame or None
        The habitat sites with their critical values; None without a habitat layer.
    tables : Tables
        The lookup tables.
    options : RegionOptions
        The run's settings.
    rules : RuleSet
        The rule set the sites are judged by (``options.rules``, read and checked).
    input_files : dict of str to Path
        Each input file by role, for the run record.
    warnings : list of str
        The messages of the SitingWarnings the reading raised, in order, each once.
    """

    farms: pd.DataFrame
    classes: list[ReleaseClass]
    crs: str
    grid: GridSpec
    weather: object  # WeatherClasses
    weather_summary: dict
    settings: DispersionSettings
    sites: object  # GeoDataFrame or None
    tables: Tables
    options: RegionOptions
    rules: RuleSet
    input_files: dict[str, Path]
    warnings: list[str]

    @property
    def grid_land_cover(self) -> str:
        """Land cover whose deposition velocity the grid cells use."""
        return LAND_COVER_GRID

    @property
    def grid_deposition_velocity_m_s(self) -> float:
        """Deposition velocity of the grid cells [m s-1]."""
        return float(self.tables.deposition_velocities[LAND_COVER_GRID]["deposition_velocity_m_s"])


@collecting_warnings
def prepare_region(
    farms_path: str | Path,
    weather_path: str | Path,
    habitats_path: str | Path | None = None,
    options: RegionOptions = RegionOptions(),
    fields: FarmFields = FarmFields(),  # noqa: B008 (frozen dataclass: an immutable default)
    crs: str | None = None,
    tables: Tables | None = None,
    habitats_layer: str | None = None,
    name_field: str = "name",
    habitat_field: str = "habitat",
    designation_field: str = "designation",
) -> RegionInputs:
    """Read and check the farms, weather and habitats of a regional run (no dispersion).

    Parameters
    ----------
    farms_path : str or Path
        The farms layer (points or house footprints), projected in metres or with ``crs``.
    weather_path : str or Path
        A frequency table CSV.
    habitats_path : str or Path, optional
        The habitat layer; None for the grid alone.
    options : RegionOptions
        The run's settings (checked here).
    fields : FarmFields
        The farms layer's attribute names.
    crs : str, optional
        Projected CRS to work in; default the farms layer's own.
    tables : Tables, optional
        The lookup tables; default the bundled config/.
    habitats_layer : str, optional
        The habitat layer's layer, in a multi-layer file.
    name_field, habitat_field, designation_field : str
        The habitat layer's fields, as in a scenario's [habitats].

    Returns
    -------
    RegionInputs
        Everything read and checked.

    Raises
    ------
    InputFileError
        A file does not exist.
    InputError
        An option out of range, a fault in the rule set (named), or in the farms, weather or
        habitat layer (named).
    """

    options.check()
    tables = tables if tables is not None else load_tables()
    rules = _rule_set(options.rules, tables)  # read and checked before anything else
    farms, crs = read_farms(Path(farms_path), tables, fields, crs)
    weather_path = Path(weather_path)
    weather, weather_summary = _read_weather(weather_path, options)
    classes = _release_classes(farms)
    grid = grid_around(farms["x_m"], farms["y_m"], options.margin_m, options.spacing_m, crs)
    sites = None
    files = dict(_layer_files("farms", Path(farms_path).resolve()))
    files["weather"] = weather_path.resolve()
    if habitats_path is not None:
        sites = _read_sites(
            Path(habitats_path),
            crs,
            tables,
            options,
            habitats_layer,
            name_field,
            habitat_field,
            designation_field,
        )
        files.update(_layer_files("habitats", Path(habitats_path).resolve()))
        _warn_sites_off_grid(sites, grid)
    settings = _dispersion_settings(tables, options)
    return RegionInputs(
        farms,
        classes,
        crs,
        grid,
        weather,
        weather_summary,
        settings,
        sites,
        tables,
        options,
        rules,
        files,
        [],  # filled by @collecting_warnings
    )


def _rule_set(rules: RuleSet | str | Path, tables: Tables) -> RuleSet:
    """The rule set of the run, read and checked against the tiers of ``tables``."""
    tier_ids = [tier["id"] for tier in tables.thresholds]
    if not isinstance(rules, RuleSet):
        return load_rule_set(rules, tier_ids)
    missing = [tier for tier in tier_ids if tier not in rules.stages_by_tier]
    if missing:
        raise InputError(
            f'rules {rules.id}: tier "{missing[0]}" has no rule (tiers: {", ".join(tier_ids)})',
            parameters=("rules",),
        )
    return rules


def _read_weather(weather_path: Path, options: RegionOptions):
    """The frequency table (``weather_path``): (WeatherClasses, summary)."""

    if not weather_path.exists():
        raise InputFileError(
            f"weather_path {weather_path.name}: not found ({weather_path})",
            parameters=("weather_path",),
        )
    return read_frequency_table(
        weather_path, options.anemometer_height_m, options.min_wind_speed_m_s
    )


def _release_classes(farms: pd.DataFrame) -> list[ReleaseClass]:
    """The farms' distinct release classes, sorted by kind, release height and footprint."""
    return sorted(
        set(farms["release_class"]), key=lambda c: (c.kind, c.release_height_m, c.footprint_side_m)
    )


def _warn_sites_off_grid(sites, grid: GridSpec) -> None:
    """An AccuracyWarning for each site that does not touch the grid (it is still assessed)."""
    import shapely

    extent = shapely.box(grid.west_m, grid.south_m, grid.east_m, grid.north_m)
    for name, geom in zip(sites["name"], sites.geometry):
        if not geom.intersects(extent):
            warnings.warn(
                f'site "{name}" lies outside the grid: not on the maps, but '
                "assessed at its own points",
                AccuracyWarning,
                stacklevel=3,
            )


def _dispersion_settings(tables: Tables, options: RegionOptions) -> DispersionSettings:
    """The plume settings of the run: sigma scheme and wind exponents of the land type,
    depletion with the short-vegetation velocity if asked, an engine budget per worker."""

    vd = float(tables.deposition_velocities[LAND_COVER_GRID]["deposition_velocity_m_s"])
    workers = options.workers or os.cpu_count() or 1
    return DispersionSettings(
        scheme=sigma_scheme(tables.dispersion, options.land_type, "briggs"),
        wind_exponents=wind_exponents(tables.dispersion, options.land_type),
        depletion_velocity_m_s=vd if options.plume_depletion else None,
        memory_budget_mb=engine_budget_mb(options.memory_mb, workers),
        wind_below_anemometer=options.wind_below_anemometer,
        min_wind_speed_m_s=options.min_wind_speed_m_s,
    )


def _read_sites(
    habitats: Path,
    crs: str,
    tables: Tables,
    options: RegionOptions,
    layer: str | None,
    name_field: str,
    habitat_field: str,
    designation_field: str,
):
    """The habitat sites with their critical values, in ``crs`` (readers.habitats), read with
    the run's critical load end and review."""
    if not Path(habitats).exists():
        raise InputFileError(f"habitats layer {Path(habitats).name}: not found ({habitats})")
    section = HabitatsSection(
        file=Path(habitats),
        layer=layer,
        name_field=name_field,
        habitat_field=habitat_field,
        designation_field=designation_field,
    )
    return read_habitats(
        section, crs, tables, options.critical_load_end, options.critical_load_review
    )
