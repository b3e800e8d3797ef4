"""Many farms over a region: in-combination concentration and deposition, tiled, on dask.

The Python API behind ``siting region``. A farms layer (points or polygons, one feature per
farm, with an annual ammonia emission or the livestock, housing and places to derive one)
becomes a list of sources, each in a *release class* (kind, release height rounded to
0.5 m, footprint side rounded to a sqrt(2) ladder; ``convolution.release_class``). Then:

- **Grid.** For each class the unit-source kernel (``convolution.unit_kernel``) is convolved
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

Tasks (kernels, near-field corrections, tiles, chunks of site points) run on dask: threads on
this machine by default, a dask.distributed cluster with a scheduler address, or with no dask at
all (``scheduler=None``). The tasks and their order of summation are the same in every case, so
the results are identical whichever runs them.

What is not here: the kernel and convolution arithmetic (``convolution.py``), the plume
(``longterm.py``), hourly weather (a regional run needs a frequency table; ``siting weather``
makes one from an hourly record).
"""

from __future__ import annotations

import math
import os
import time
import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.convolution import (
    ReleaseClass,
    kernel_half_size,
    near_field_correction,
    offset_concentration_g_m3_per_g_s,
    offset_lattice,
    place_on_cells,
    release_class,
    tile_concentration,
    tile_working_bytes,
    unit_kernel,
)
from siting.dispersion.grid import GridSpec, grid_around
from siting.dispersion.sector import DispersionSettings
from siting.errors import (
    AccuracyWarning,
    InputError,
    InputFileError,
    InputWarning,
    SitingError,
    collecting_warnings,
)
from siting.output.records import _layer_files
from siting.physics import assess
from siting.physics.constants import UG_PER_G, deposition_kg_n_ha_yr, kg_per_year_to_g_s
from siting.physics.emissions import derive_emission
from siting.readers.frequency_table import read_frequency_table
from siting.readers.habitats import (
    read_habitats,
    read_vector_layer,
    site_boundary_points,
    site_sample_points,
)
from siting.readers.scenario import HabitatsSection, projected_crs
from siting.readers.tables import (
    Tables,
    default_reduction_percent,
    load_tables,
    sigma_scheme,
    suggest,
    wind_exponents,
)

#: Release height of a farm whose layer gives none [m], by kind (common practice, no source):
#: a roof or ridge outlet of a fan-ventilated house for points, about half the ridge height of
#: a naturally ventilated house (its volume) for polygons.
DEFAULT_RELEASE_HEIGHT_M = {"point": 6.0, "volume": 4.0}
LAND_COVER_GRID = "short_vegetation"  # deposition velocity of grid cells and plume depletion
NEAR_FIELD_CELLS = 10  # cells around each farm made exact by the near-field correction
TILE_SIZES = (2048, 1024, 512, 256, 128, 64)  # candidates when the grid is not one tile
BOUNDARY_SPACING_M = 25.0  # site boundaries sampled at least this densely
SCHEDULER_CONNECT_TIMEOUT_S = 10.0  # how long to wait for a dask.distributed scheduler
PAIRS_PER_TASK = 262_144  # farm x site-point pairs per task
DERIVATION_FIELDS = ("livestock", "housing", "places")

CAUTIONS = [
    "Screening estimate of many farms together: flat terrain, no building wake, long-term "
    "annual means from a sector-averaged Gaussian plume; each farm is one point or one square "
    "volume source with its release height rounded to 0.5 m.",
    "Grid cells use the short-vegetation deposition velocity; habitat sites their own land "
    "cover. Site figures come from each site's own points, not from the grid.",
    "Emission figures and deposition velocities carry wide uncertainty. Local rules and the "
    "competent authority decide; for borderline results seek detailed modelling.",
]


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
        "bilinear" or "nearest" (how farms go onto cell centres; convolution.place_on_cells).
    near_field_cells : int
        Half width of the window around each farm made exact (0: none).
    critical_load_end : str
        "lower", "middle" or "upper" end of each habitat's critical load range.
    critical_load_review : str
        "2022" (default) or "2011": which review's critical load ranges.
    wind_below_anemometer : str
        "power_law" (default) or "unchanged", as in a scenario's [weather].
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


@dataclass(frozen=True)
class FarmFields:
    """Which attribute of the farms layer holds what (None: the default name if present).

    Attributes
    ----------
    id_field : str, optional
        The farm's id (default ``id``; else the feature number).
    emission_field : str, optional
        Annual emission before abatement [kg NH3 yr-1] (default ``nh3_kg_per_year``).
    height_field : str, optional
        Release height [m] (default ``height_m``).
    layer : str, optional
        The layer of a multi-layer file.
    """

    id_field: str | None = None
    emission_field: str | None = None
    height_field: str | None = None
    layer: str | None = None


# --- reading --------------------------------------------------------------------------------


_CRS_FIX = (
    "give crs with a projected CRS in metres, e.g. the UTM zone of the region (EPSG:326xx north)"
)


def _numbers(
    frame, column: str, name: str, ids, low: float, high: float | None, allow_missing: bool
) -> np.ndarray:
    """A numeric attribute, checked per farm; missing values are NaN where allowed."""
    missing = pd.isna(frame[column]).to_numpy()
    values = pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)
    with np.errstate(invalid="ignore"):
        bad = (
            ~np.isfinite(values)
            | (values < low)
            | (values > (high if high is not None else np.inf))
        )
    if allow_missing:
        bad &= ~missing
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        limit = f">= {low:g}" + (f" and <= {high:g}" if high is not None else "")
        raise InputError(
            f'{name}, farm "{ids[i]}": {column} must be a number {limit}, got '
            f"{frame[column].iloc[i]!r}"
        )
    return values


def read_farms(
    path: Path, tables: Tables, fields: FarmFields = FarmFields(), crs: str | None = None
) -> tuple[pd.DataFrame, str]:
    """Read the farms layer: one source per feature, with its emission and release class.

    Parameters
    ----------
    path : Path
        Any vector layer geopandas reads. Points are point sources; polygons are volume sources
        of the polygon's area, at its centroid.
    tables : Tables
        Lookup tables (emission factors and abatement, for farms given as livestock).
    fields : FarmFields
        Attribute names. Emission: ``emission_field`` (default ``nh3_kg_per_year``) [kg NH3
        yr-1]; where it is absent or empty, ``livestock``, ``housing``, ``places`` (+ optional
        ``abatement``, at its default reduction) looked up in config/emission_factors.toml and
        abatement.toml. Height: ``height_field`` (default
        ``height_m``) [m]; missing values take DEFAULT_RELEASE_HEIGHT_M of the kind. Id:
        ``id_field`` (default ``id``; else the feature number).
    crs : str, optional
        Projected CRS in metres to work in; default the layer's own (which must then be one).

    Returns
    -------
    farms : DataFrame
        farm_id, kind, x_m, y_m, release_height_m, footprint_area_m2, nh3_kg_yr, emission_g_s,
        emission_from, release_class (a ReleaseClass).
    crs : str

    Warns
    -----
    InputWarning
        The layer has no id field (farms are named by feature number).

    Raises
    ------
    InputFileError, InputError
        Missing or unreadable file; no CRS or a geographic one; no emission field; a value out
        of range, an unknown livestock, a duplicate id or an unusable geometry (named by farm).
    """
    path = Path(path)
    name = f"farms layer {path.name}"
    gdf, crs = _open_farms(path, name, fields.layer, crs)
    columns = [c for c in gdf.columns if c != "geometry"]
    # the checks run in this order, so the first fault reported stays the same
    id_col = _field_name(name, columns, "id_field", fields.id_field, "id")
    ids = _farm_ids(gdf, id_col, name)
    frame = _farm_positions(gdf, ids, name)
    nh3_kg_yr, emission_from = _farm_emissions(gdf, ids, name, columns, tables, fields)
    frame["nh3_kg_yr"] = nh3_kg_yr
    frame["emission_from"] = emission_from
    frame["emission_g_s"] = kg_per_year_to_g_s(frame["nh3_kg_yr"].to_numpy(float))
    height_col = _field_name(name, columns, "height_field", fields.height_field, "height_m")
    heights = _release_heights(gdf, frame["kind"], ids, name, height_col)
    frame["release_height_m"] = heights
    frame["release_class"] = [
        release_class(k, h, a)
        for k, h, a in zip(frame["kind"], heights, frame["footprint_area_m2"])
    ]
    return frame, crs


def _open_farms(path: Path, name: str, layer: str | None, crs: str | None):
    """The farms layer as read, in its working CRS: (GeoDataFrame, CRS).

    The CRS is the one given (the layer is reprojected to it) or else the layer's own; either
    must be projected, in metres (InputError with the fix otherwise).
    """
    if not path.exists():
        raise InputFileError(f"{name}: not found ({path})")
    gdf = read_vector_layer(path, layer, "farms layer")
    if crs is None:
        crs = projected_crs(gdf.crs, name, _CRS_FIX, key="CRS", parameters=("crs",))
    else:
        crs = projected_crs(crs, "crs", _CRS_FIX, key="CRS", parameters=("crs",))
        gdf = gdf.to_crs(crs)
    return gdf, crs


def _field_name(
    name: str, columns: list[str], option: str, given: str | None, default: str
) -> str | None:
    """The layer field an option (a FarmFields parameter) names (InputError if there is no
    such field), else the default name where the layer has it, else None."""
    if given is not None and given not in columns:
        raise InputError(
            f'{name}: {option} "{given}": no such field{suggest(given, columns)} '
            f"(fields: {', '.join(columns) or 'none'})",
            parameters=(option,),
        )
    return given if given is not None else (default if default in columns else None)


def _farm_ids(gdf, id_col: str | None, name: str) -> list[str]:
    """Each farm's id (from ``id_col``, else F1, F2, ... with an InputWarning).

    Raises InputError for an id used twice.
    """
    if id_col is None:
        ids = [f"F{i}" for i in range(1, len(gdf) + 1)]
        warnings.warn(
            f'{name}: no "id" field; farms are named by feature number (F1, F2, ...)',
            InputWarning,
            stacklevel=3,
        )
    else:
        ids = [str(v) for v in gdf[id_col]]
        seen: set[str] = set()
        for farm_id in ids:
            if farm_id in seen:
                raise InputError(f'{name}: duplicate farm id "{farm_id}" in field {id_col}')
            seen.add(farm_id)
    return ids


def _farm_positions(gdf, ids: list[str], name: str) -> pd.DataFrame:
    """The farms' frame so far: farm_id, kind, x_m, y_m, footprint_area_m2 (geometry -> kind,
    position, footprint), checked farm by farm in the layer's order."""
    kinds, xs, ys, areas = [], [], [], []
    for farm_id, geom in zip(ids, gdf.geometry):
        kind, x, y, area = _farm_position(geom, name, farm_id)
        kinds.append(kind)
        xs.append(x)
        ys.append(y)
        areas.append(area)
    return pd.DataFrame(
        {"farm_id": ids, "kind": kinds, "x_m": xs, "y_m": ys, "footprint_area_m2": areas}
    )


def _farm_position(geom, name: str, farm_id: str) -> tuple[str, float, float, float]:
    """One farm's kind ("point" or "volume"), position x, y [m] and footprint area [m2].

    A point is itself with no area; a polygon (repaired if invalid) is its centroid and area.
    Raises InputError for an empty geometry, a polygon of no area or another geometry type.
    """
    import shapely

    if geom is None or geom.is_empty:
        raise InputError(f'{name}, farm "{farm_id}": empty geometry')
    if geom.geom_type == "Point":
        return "point", geom.x, geom.y, 0.0
    if geom.geom_type in ("Polygon", "MultiPolygon"):
        if not geom.is_valid:
            geom = shapely.make_valid(geom)
        if geom.area <= 0:
            raise InputError(f'{name}, farm "{farm_id}": the polygon encloses no area')
        c = geom.centroid
        return "volume", c.x, c.y, geom.area
    raise InputError(
        f'{name}, farm "{farm_id}": geometry is a {geom.geom_type}; farms '
        "must be points (point sources) or polygons (house footprints)"
    )


def _farm_emissions(
    gdf, ids: list[str], name: str, columns: list[str], tables: Tables, fields: FarmFields
) -> tuple[np.ndarray, list[str]]:
    """Each farm's emission [kg NH3 yr-1] and where it came from.

    The emission field, else (per farm, where it is empty) livestock x places, less the
    abatement's default reduction (:func:`_derived_emission`). Raises InputError when the layer
    has neither, or a farm has no emission, or a value is out of range.
    """
    emission_col = _field_name(
        name, columns, "emission_field", fields.emission_field, "nh3_kg_per_year"
    )
    can_derive = all(f in columns for f in DERIVATION_FIELDS)
    if emission_col is None and not can_derive:
        raise InputError(
            f'{name}: no emission field "{fields.emission_field or "nh3_kg_per_year"}"'
            " and no livestock, housing and places fields to derive one; give "
            "emission_field (kg NH3 per year) "
            f"(fields: {', '.join(columns) or 'none'})",
            parameters=("emission_field",),
        )
    given = (
        _numbers(gdf, emission_col, name, ids, 0.0, None, True)
        if emission_col is not None
        else np.full(len(gdf), np.nan)
    )
    emissions, emission_from = [], []
    for i, farm_id in enumerate(ids):
        if not np.isnan(given[i]):
            emissions.append(given[i])
            emission_from.append(f"field {emission_col}")
            continue
        where = f'{name}, farm "{farm_id}"'
        row = gdf.iloc[i]
        if not can_derive or any(pd.isna(row[f]) for f in DERIVATION_FIELDS):
            raise InputError(
                f"{where}: no emission: give {emission_col or 'nh3_kg_per_year'} "
                "(kg NH3 per year) or livestock, housing and places"
            )
        nh3_kg_yr, source = _derived_emission(gdf, i, row, farm_id, name, columns, tables)
        emissions.append(nh3_kg_yr)
        emission_from.append(source)
    return np.asarray(emissions, dtype=float), emission_from


def _derived_emission(
    gdf, i: int, row, farm_id: str, name: str, columns: list[str], tables: Tables
) -> tuple[float, str]:
    """One farm's emission [kg NH3 yr-1] from its livestock, housing and places (row ``i``),
    less its abatement's default reduction, and the text saying so (emission_from)."""
    where = f'{name}, farm "{farm_id}"'
    factor = tables.factor(str(row["livestock"]), str(row["housing"]), where)
    places = _numbers(gdf.iloc[[i]], "places", name, [farm_id], 0.0, None, False)[0]
    reduction, technique = 0.0, None
    if "abatement" in columns and isinstance(row["abatement"], str) and row["abatement"]:
        technique = tables.technique(row["abatement"], where)
        reduction = default_reduction_percent(technique)
    d = derive_emission(
        factor_nh3_kg_per_place_yr=factor["nh3_kg_per_place_yr"],
        places=places,
        reduction_percent=reduction,
    )
    return d.nh3_kg_yr, (
        f"{places:g} {row['livestock']} places x "
        f"{factor['nh3_kg_per_place_yr']:g} kg/place/yr ({factor['source']})"
        + (f" less {technique['id']} {reduction:g} %" if technique else "")
    )


def _release_heights(gdf, kinds: pd.Series, ids: list[str], name: str, height_col: str | None):
    """Each farm's release height [m]: the height field, 0..100 m; where that is absent or
    empty, DEFAULT_RELEASE_HEIGHT_M of the farm's kind."""
    default_h = kinds.map(DEFAULT_RELEASE_HEIGHT_M).to_numpy(float)
    if height_col is None:
        return default_h
    given = _numbers(gdf, height_col, name, ids, 0.0, 100.0, True)
    return np.where(np.isnan(given), default_h, given)


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


# --- planning -------------------------------------------------------------------------------


@dataclass(frozen=True)
class TilePlan:
    """How the grid is cut and what that needs in memory [bytes].

    Attributes
    ----------
    tile_rows, tile_cols : int
        Size of a tile [cells].
    n_tiles : int
        Tiles of the grid.
    concurrent : int
        Tasks running at once.
    held_bytes : int
        Held through the run: kernels, offset lattice, near-field corrections [bytes].
    grid_bytes : int
        One concentration grid, float64 [bytes].
    tile_bytes : int
        Working memory of one tile task [bytes].
    task_bytes : int
        Working memory of one kernel or site-point task [bytes].
    """

    tile_rows: int
    tile_cols: int
    n_tiles: int
    concurrent: int
    held_bytes: int
    grid_bytes: int
    tile_bytes: int
    task_bytes: int

    @property
    def peak_bytes(self) -> int:
        """Upper estimate of the run's peak: what is held, the grid twice, and per task at once
        the larger of a tile's FFT working set and a kernel or site-point task."""
        return (
            self.held_bytes
            + 2 * self.grid_bytes
            + self.concurrent * max(self.tile_bytes, self.task_bytes)
        )


def engine_budget_mb(memory_mb: float, concurrent: int) -> float:
    """Working memory of one engine call [MB] (DispersionSettings.memory_budget_mb).

    A tenth of the budget shared by the tasks running at once, between 1 and 256 MB.

    Parameters
    ----------
    memory_mb : float
        The run's memory budget [MB].
    concurrent : int
        Tasks running at once.

    Returns
    -------
    float
        [MB].
    """
    return float(min(256.0, max(1.0, memory_mb / (10 * max(1, concurrent)))))


def plan_tiles(
    n_rows: int,
    n_cols: int,
    n_kernels: int,
    half_rows: int,
    half_cols: int,
    budget_bytes: float,
    concurrent: int,
    engine_bytes: float,
    tile_size: int | None = None,
    n_farms: int = 0,
    window_cells: int = 0,
) -> TilePlan:
    """Pick the tile size that fits the memory budget (pure arithmetic).

    Held through the run: every class's kernel ((2 half_rows + 1) x (2 half_cols + 1) float64),
    the offset lattice (16 bytes per offset) and the near-field corrections
    (n_farms x (2 window)^2 entries of 32 bytes). Per task
    running at once, the larger of a tile's FFT working set (``convolution.tile_working_bytes``,
    blocks of farms the size of a tile) and a kernel or site-point task (the kernel's quadrant
    tables and profiles, about one float64 per offset, plus twice ``engine_bytes``, the engine
    call and our own arrays). In the tile phase the concentration grid is held twice (tiles as
    returned, assembled grid). The whole grid is one tile when it fits; else the largest of
    TILE_SIZES that fits.

    Parameters
    ----------
    n_rows, n_cols : int
        Size of the grid [cells].
    n_kernels : int
        Release classes (one kernel each).
    half_rows, half_cols : int
        Half sizes of a kernel [cells].
    budget_bytes : float
        The run's memory budget [bytes].
    concurrent : int
        Tasks running at once.
    engine_bytes : float
        Working memory of one engine call [bytes].
    tile_size : int, optional
        A tile side asked for [cells]; None picks one.
    n_farms : int
        Farms (their near-field corrections are held).
    window_cells : int
        Half width of each farm's near-field window [cells].

    Returns
    -------
    TilePlan
        The tile size and the memory figures.

    Raises
    ------
    InputError
        When no tile size fits; the message gives the figures and what to change.
    """
    n_offsets = (2 * half_rows + 1) * (2 * half_cols + 1)
    held = (
        n_kernels * 8 * n_offsets
        + 16 * n_offsets  # kernels, offset lattice
        + n_farms * (2 * window_cells) ** 2 * 32
    )  # near-field corrections
    grid = 8 * n_rows * n_cols
    task = int(8 * n_offsets + 2 * engine_bytes)
    if tile_size is not None:
        sizes = [(min(tile_size, n_rows), min(tile_size, n_cols))]
    else:
        sizes = [(n_rows, n_cols)] + [
            (min(t, n_rows), min(t, n_cols)) for t in TILE_SIZES if t < max(n_rows, n_cols)
        ]
    plan = None
    for rows, cols in sizes:
        n_tiles = math.ceil(n_rows / rows) * math.ceil(n_cols / cols)
        plan = TilePlan(
            rows,
            cols,
            n_tiles,
            max(1, concurrent),
            held,
            grid,
            tile_working_bytes(rows, cols, rows, cols),
            task,
        )
        if plan.peak_bytes <= budget_bytes:
            return plan
    mb = 1e6
    raise InputError(
        f"memory_mb {budget_bytes / mb:g} is too small for this grid ({n_cols} x {n_rows} "
        f"cells, {n_kernels} release class(es)): kernels and corrections {held / mb:.0f} MB, "
        f"grid {2 * grid / mb:.0f} MB, and {plan.concurrent} task(s) at once of "
        f"{max(plan.tile_bytes, plan.task_bytes) / mb:.0f} MB each (tiles of "
        f"{plan.tile_rows} x {plan.tile_cols} cells); need about {plan.peak_bytes / mb:.0f} "
        "MB. Raise memory_mb, use a coarser spacing_m, fewer workers, or reach_m to "
        "shorten the kernels",
        parameters=("memory_mb", "spacing_m", "workers", "reach_m"),
    )


# --- the run --------------------------------------------------------------------------------


@dataclass
class RegionInputs:
    """Everything read and checked before any dispersion.

    Attributes
    ----------
    farms : pandas.DataFrame
        One row per farm (:func:`read_farms`).
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
        Each site's figures (max and mean concentration and deposition, % of critical level
        and load, verdict); None without a habitat layer.
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
def prepare_region(
    farms_path: str | Path,
    weather_path: str | Path,
    habitats_path: str | Path | None = None,
    options: RegionOptions = RegionOptions(),
    fields: FarmFields = FarmFields(),
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
        An option out of range, or a fault in the farms, weather or habitat layer (named).
    """

    options.check()
    tables = tables if tables is not None else load_tables()
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
        files,
        [],  # filled by @collecting_warnings
    )


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


# tasks: plain functions of arrays, so dask (or a loop) can run them anywhere


def _task_kernel(cls: ReleaseClass, weather, settings, lattice, reach_m):
    return unit_kernel(
        cls.elements(),
        weather,
        settings,
        lattice.cell_m,
        lattice.half_rows,
        lattice.half_cols,
        reach_m=reach_m,
        lattice=lattice,
    )


def _task_correction(
    kernel, cls: ReleaseClass, x, y, q, placed, weather, settings, west_m, north_m, window
):
    per_batch = max(1, settings.chunk_receptors // (2 * window) ** 2)
    return near_field_correction(
        x,
        y,
        q,
        placed,
        kernel,
        cls.elements(),
        weather,
        settings,
        west_m,
        north_m,
        window,
        per_batch,
    )


def _task_tile(kernels, placed, corrections, row_range, col_range, block):
    out = np.zeros((row_range[1] - row_range[0], col_range[1] - col_range[0]))
    for kernel, cells, correction in zip(kernels, placed, corrections):
        out += tile_concentration(
            cells, kernel, row_range, col_range, block[0], block[1], correction
        )
    return out * UG_PER_G


def _pair_values(cls: ReleaseClass, fx, fy, q, px, py, weather, settings, reach_m):
    """Concentration [ug m-3] of each farm (rows) at each point (columns)."""
    dx = px[None, :] - fx[:, None]
    dy = py[None, :] - fy[:, None]
    unit = offset_concentration_g_m3_per_g_s(dx, dy, cls.elements(), weather, settings)
    if reach_m is not None:
        unit = np.where(np.hypot(dx, dy) <= reach_m, unit, 0.0)
    return q[:, None] * unit * UG_PER_G


def _task_site_sum(cls, fx, fy, q, px, py, weather, settings, reach_m):
    return _pair_values(cls, fx, fy, q, px, py, weather, settings, reach_m).sum(axis=0)


class _Runner:
    """Runs lists of task calls with dask (threads, synchronous, a cluster) or a plain loop."""

    def __init__(self, scheduler: str | None, workers: int):
        self.scheduler = scheduler
        self.workers = workers
        self.client = None
        if scheduler not in (None, "none", "threads", "synchronous", "sync"):
            try:
                from distributed import Client
            except ImportError as exc:
                raise SitingError(
                    "scheduler with an address needs dask.distributed: "
                    "pip install 'siting[region]'",
                    parameters=("scheduler",),
                ) from exc
            try:
                self.client = Client(
                    scheduler, set_as_default=False, timeout=f"{SCHEDULER_CONNECT_TIMEOUT_S}s"
                )
            except Exception as exc:  # OSError, TimeoutError...
                raise InputError(
                    f"scheduler {scheduler}: cannot reach a dask scheduler there ({exc})",
                    parameters=("scheduler",),
                ) from exc

    @property
    def lazy(self) -> bool:
        return self.scheduler not in (None, "none")

    def call(self, fn, *args):
        if not self.lazy:
            return fn(*args)
        import dask

        return dask.delayed(fn, pure=False)(*args)

    def compute(self, nodes: list) -> list:
        if not self.lazy:
            return list(nodes)
        import dask

        if self.client is not None:
            return list(self.client.compute(list(nodes), sync=True))
        scheduler = "synchronous" if self.scheduler in ("sync", "synchronous") else "threads"
        return list(dask.compute(*nodes, scheduler=scheduler, num_workers=self.workers))

    def close(self):
        if self.client is not None:
            self.client.close()


def _concurrent(options: RegionOptions, workers: int) -> int:
    """Tasks that may run at once: 1 without dask or with its synchronous scheduler."""
    return 1 if options.scheduler in (None, "none", "sync", "synchronous") else workers


def _site_points(sites, spacing_m: float):

    b_index, bx, by = site_boundary_points(sites.geometry, min(spacing_m, BOUNDARY_SPACING_M))
    s_index, sx, sy, interior = site_sample_points(sites.geometry, [], [], spacing_m)
    return (
        np.concatenate([s_index, b_index]),
        np.concatenate([sx, bx]),
        np.concatenate([sy, by]),
        np.concatenate([interior, np.zeros(b_index.size, bool)]),
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


@dataclass(frozen=True)
class _FarmArrays:
    """The farms as task arguments: positions [m], emissions [g s-1] and the farms of each
    release class (indices into the farms frame, one array per class of inputs.classes)."""

    x_m: np.ndarray
    y_m: np.ndarray
    emission_g_s: np.ndarray
    members: list[np.ndarray]

    def at(self, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """x [m], y [m] and emission [g s-1] of the farms ``idx``."""
        return self.x_m[idx], self.y_m[idx], self.emission_g_s[idx]


@dataclass(frozen=True)
class _SitePoints:
    """Every site's receptor points: site (row of inputs.sites), x, y [m], interior or not."""

    site_index: np.ndarray
    x_m: np.ndarray
    y_m: np.ndarray
    interior: np.ndarray


def _farm_arrays(inputs: RegionInputs) -> _FarmArrays:
    """The farms' positions, emissions and release classes as arrays."""
    farms = inputs.farms
    x_m, y_m = farms["x_m"].to_numpy(float), farms["y_m"].to_numpy(float)
    emission_g_s = farms["emission_g_s"].to_numpy(float)
    class_of = {c: i for i, c in enumerate(inputs.classes)}
    farm_class = np.array([class_of[c] for c in farms["release_class"]])
    members = [np.flatnonzero(farm_class == i) for i in range(len(inputs.classes))]
    return _FarmArrays(x_m, y_m, emission_g_s, members)


def _all_site_points(inputs: RegionInputs) -> _SitePoints:
    """The sites' receptor points (:func:`_site_points`); none without a habitats layer."""
    if inputs.sites is None:
        return _SitePoints(np.zeros(0, int), np.zeros(0), np.zeros(0), np.zeros(0, bool))
    return _SitePoints(*_site_points(inputs.sites, inputs.grid.cell_m))


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


def _class_tasks(runner: _Runner, inputs: RegionInputs, settings, lattice, farm, px, py):
    """Class by class: the kernel task, the farms placed on the cells, the near-field
    correction task (None without one) and the site-point sum tasks (one list of all classes').

    The tasks are made in this order whatever runs them (without dask ``runner.call`` runs each
    at once), so the sums are the same in every case.
    """
    opt, grid = inputs.options, inputs.grid
    kernels, placed, corrections, site_parts = [], [], [], []
    for cls, idx in zip(inputs.classes, farm.members):
        kernel = runner.call(_task_kernel, cls, inputs.weather, settings, lattice, opt.reach_m)
        cells = place_on_cells(
            *farm.at(idx),
            grid.west_m,
            grid.north_m,
            grid.cell_m,
            grid.n_rows,
            grid.n_cols,
            opt.placement,
        )
        kernels.append(kernel)
        placed.append(cells)
        corrections.append(
            _correction_task(runner, inputs, settings, kernel, cls, farm.at(idx), cells)
        )
        site_parts += _site_sum_tasks(runner, inputs, settings, cls, idx, farm, px, py)
    return kernels, placed, corrections, site_parts


def _correction_task(runner: _Runner, inputs: RegionInputs, settings, kernel, cls, xyq, cells):
    """The near-field correction task of one class's farms (x, y, q), or None when the
    near-field window is 0 cells."""
    grid, window = inputs.grid, inputs.options.near_field_cells
    if window <= 0:
        return None
    return runner.call(
        _task_correction,
        kernel,
        cls,
        *xyq,
        cells,
        inputs.weather,
        settings,
        grid.west_m,
        grid.north_m,
        window,
    )


def _site_sum_tasks(runner: _Runner, inputs: RegionInputs, settings, cls, idx, farm, px, py):
    """One class's farms (``idx``) summed at every site point, in tasks of up to
    PAIRS_PER_TASK farm x point pairs (none without site points)."""
    per_task = max(1, min(PAIRS_PER_TASK, settings.chunk_receptors) // max(1, px.size))
    tasks = []
    for start in range(0, idx.size, per_task) if px.size else ():
        part = idx[start : start + per_task]
        tasks.append(
            runner.call(
                _task_site_sum,
                cls,
                *farm.at(part),
                px,
                py,
                inputs.weather,
                settings,
                inputs.options.reach_m,
            )
        )
    return tasks


def _tile_tasks(runner: _Runner, grid: GridSpec, plan: TilePlan, kernels, placed, corrections):
    """One task per tile of the plan, row by row: (tasks, their (row, col) ranges)."""
    tiles, ranges = [], []
    tr, tc = plan.tile_rows, plan.tile_cols
    for r0 in range(0, grid.n_rows, tr):
        for c0 in range(0, grid.n_cols, tc):
            rr, cc = (r0, min(r0 + tr, grid.n_rows)), (c0, min(c0 + tc, grid.n_cols))
            ranges.append((rr, cc))
            tiles.append(runner.call(_task_tile, kernels, placed, corrections, rr, cc, (tr, tc)))
    return tiles, ranges


def _gather(grid: GridSpec, ranges, done: list, n_points: int):
    """The concentration grid [ug m-3] from the tiles (the first ``len(ranges)`` of ``done``,
    which are dropped from it) and the site points' total [ug m-3], parts summed in order."""
    concentration = np.empty((grid.n_rows, grid.n_cols))
    for (rr, cc), tile in zip(ranges, done[: len(ranges)]):
        concentration[rr[0] : rr[1], cc[0] : cc[1]] = tile
    del done[: len(ranges)]
    point_conc = np.zeros(n_points)
    for part in done:
        point_conc += part
    return concentration, point_conc


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


def _farms_at_points(runner: _Runner, inputs: RegionInputs, settings, farm, points_xy):
    """Each farm's own concentration [ug m-3] (rows) at each point (columns; ``points_xy`` is
    (n, 2) x, y [m]), one task per release class."""
    nodes = []
    for cls, idx in zip(inputs.classes, farm.members):
        nodes.append(
            runner.call(
                _pair_values,
                cls,
                *farm.at(idx),
                points_xy[:, 0],
                points_xy[:, 1],
                inputs.weather,
                settings,
                inputs.options.reach_m,
            )
        )
    by_class = runner.compute(nodes)
    values_ug_m3 = np.zeros((len(inputs.farms), len(points_xy)))
    for idx, values in zip(farm.members, by_class):
        values_ug_m3[idx] = values
    return values_ug_m3


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


@collecting_warnings
def region(
    farms_path,
    weather_path,
    habitats_path=None,
    options: RegionOptions = RegionOptions(),
    fields: FarmFields = FarmFields(),
    crs: str | None = None,
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
        An option out of range, a fault in an input (named), or no tile size fits.
    """
    return compute_region(
        prepare_region(
            farms_path, weather_path, habitats_path, options, fields, crs, **habitat_fields
        )
    )
