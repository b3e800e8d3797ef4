"""Speed of the site, hourly and regional runs against straightforward references (not a test).

    python bench/bench_runs.py [--case {site,hourly,regional,all}] [--quick] [--no-memory]
                               [--repeat 3] [--reference-hours 200]
                               [--reference-sources 2] [--direct-sources 20]

Three synthetic cases, built deterministically (seeded) and invented:

- site: 10 sources on a 200 x 200 grid of 10 m cells, a 12-sector x 6-speed x 6-class table;
- hourly: 10 sources on the same grid (40,000 receptors), an 8,760-hour record reported like a
  station does (directions in 10 deg steps, speeds in 0.5 m/s steps);
- regional: 2,000 sources on a 500 x 500 grid of 100 m cells, a table like the site's.

Sources are spread over the grid, release heights 3-10 m (in 0.5 m steps), a mix of plain
points, fan outlets with momentum rise (not in the regional case) and volume sources. Each case
runs the fast path (the package's engines; for the regional case ``siting.dispersion.convolution``:
``regional_deposition`` if it exists, else its building blocks composed here, else the direct
sum per source timed on a subset and extrapolated, each said in a note) and the
straightforward reference of ``bench/reference.py`` in the same process, and prints one table:
compute seconds (inputs built beforehand, nothing written), receptor x source x weather-class (or
hour) evaluations, evaluations per second, peak memory of the fast path (tracemalloc peak of a
second, untimed run), reference seconds (measured, or extrapolated linearly from a subset and
marked ~), the ratio, the largest deviation of the fast path from the reference where both were
computed, and the issue's target with PASS/MISS. The site case, a fraction of a second, is timed
as the best of ``--repeat`` runs (fast path and reference alike) so timer noise does not decide.
Nothing in the environment is changed; numpy's version and its BLAS and thread settings are
printed as found.
"""

from __future__ import annotations

import argparse
import functools
import os
import platform
import time
import tracemalloc
from dataclasses import dataclass, replace

import numpy as np
import reference  # bench/reference.py: the script's folder is first on sys.path

from siting.dispersion.hourly import HourlyWeather, source_hourly_mean_g_m3_per_g_s
from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.sector import source_concentration_g_m3_per_g_s
from siting.readers.tables import load_dispersion, sigma_scheme, wind_exponents

SEED = 20240611
HOURS_PER_YEAR = 8760
#: the issue's targets: seconds per case, and the speed-up over the reference for all
TARGET_S = {"site": 0.3, "hourly": 15.0, "regional": 10.0}
# the site case against the plain reference (bench/reference.py): 20x (issue 13); others 10x
TARGET_RATIO = {"site": 20.0, "hourly": 10.0, "regional": 10.0}


@dataclass
class Case:
    """One synthetic run: receptors, sources with emissions, weather and settings."""

    name: str
    cell_m: float
    receptor_x_m: np.ndarray
    receptor_y_m: np.ndarray
    elements: list
    emission_g_s: np.ndarray
    weather: object
    settings: DispersionSettings

    @property
    def n_weather(self) -> int:
        if isinstance(self.weather, HourlyWeather):
            return self.weather.n_hours
        return int(np.count_nonzero(self.weather.frequency_fraction))

    @property
    def evaluations(self) -> float:
        return float(self.receptor_x_m.size) * len(self.elements) * self.n_weather


@dataclass
class Row:
    """One line of the table."""

    case: str
    seconds: float
    seconds_note: str
    evaluations: float
    peak_mb: float | None
    reference_s: float
    reference_note: str
    deviation: float | None
    quick: bool
    notes: list


# --- building the cases --------------------------------------------------------------------------


def grid_receptors(n: int, cell_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Cell centres of an n x n grid with its south-west corner at (0, 0) [m], row 0 north."""
    centres = (np.arange(n) + 0.5) * cell_m
    x, y = np.meshgrid(centres, centres[::-1])
    return x, y


def make_sources(
    rng: np.random.Generator, n: int, extent_m: float, margin_m: float = 0.0, fans: bool = True
):
    """n sources spread over a square [margin, extent - margin]^2: points, fans, volume sources.

    Heights 3-10 m in 0.5 m steps. Volume sources: a house footprint of side 14-40 m (on a
    sqrt(2) ladder through 10 m, as ``siting.dispersion.kernels`` classes footprints) as
    sigma_y0 = side / 4.3 and sigma_z0 = height / 2.15, kept side / 2 (= 2.15 sigma_y0) from
    receptors ([EPA1992] initial dimensions, from memory). Fan outlets (with ``fans``):
    0.6-1.0 m diameter, 5-10 m/s exit velocity, momentum rise. Emissions 0.02-0.5 g/s (a few
    hundred to some thousands of places; invented).
    """
    x = rng.uniform(margin_m, extent_m - margin_m, n)
    y = rng.uniform(margin_m, extent_m - margin_m, n)
    height = np.round(rng.uniform(3.0, 10.0, n) * 2.0) / 2.0
    kind = rng.integers(0, 3, n) if fans else 2 * rng.integers(0, 2, n)  # 0 point, 1 fan, 2 volume
    sides_m = np.round(10.0 * np.sqrt(2.0) ** np.arange(1, 5), 6)  # 14.1, 20, 28.3, 40 m
    elements = []
    for i in range(n):
        if kind[i] == 2:
            side = float(rng.choice(sides_m))
            elements.append(
                ReleaseElement(
                    x[i],
                    y[i],
                    height[i],
                    sigma_y0_m=side / 4.3,
                    sigma_z0_m=height[i] / 2.15,
                    min_distance_m=side / 2,
                )
            )
        elif kind[i] == 1:
            elements.append(
                ReleaseElement(
                    x[i],
                    y[i],
                    height[i],
                    diameter_m=rng.uniform(0.6, 1.0),
                    exit_velocity_m_s=rng.uniform(5.0, 10.0),
                )
            )
        else:
            elements.append(ReleaseElement(x[i], y[i], height[i]))
    emission_g_s = np.exp(rng.uniform(np.log(0.02), np.log(0.5), n))
    return elements, emission_g_s


def make_table(rng: np.random.Generator) -> WeatherClasses:
    """A 12-sector x 6-speed x 6-class table, every class non-zero, south-westerly prevailing."""
    sectors = np.arange(12) * 30.0
    speeds_m_s = np.array([1.0, 2.0, 3.5, 5.0, 7.0, 10.0])
    sector_share = 1.0 + 0.8 * np.cos(np.deg2rad(sectors - 225.0))
    speed_share = np.array([0.10, 0.20, 0.25, 0.22, 0.15, 0.08])
    stability_share = np.array([0.03, 0.08, 0.15, 0.50, 0.14, 0.10])
    freq = (
        sector_share[:, None, None]
        * speed_share[None, :, None]
        * stability_share[None, None, :]
        * rng.uniform(0.5, 1.5, (12, 6, 6))
    )
    return WeatherClasses(sectors, speeds_m_s, freq / freq.sum())


def make_record(rng: np.random.Generator, n_hours: int = HOURS_PER_YEAR) -> HourlyWeather:
    """An hourly record as a station reports it: 10 deg directions, 0.5 m/s speeds.

    Directions prevail from the south-west; speeds Weibull (k 2, scale 5 m/s), at least 0.5 m/s;
    stability from speed and day or night in the spirit of Turner's scheme (low wind by day
    unstable, by night stable, strong wind neutral), with some scatter. Invented.
    """
    time_utc = (
        np.datetime64("2023-01-01T00:00:00") + np.arange(n_hours).astype("timedelta64[h]")
    ).astype("datetime64[s]")
    direction = np.where(
        rng.random(n_hours) < 0.6,
        rng.normal(225.0, 45.0, n_hours),
        rng.uniform(0.0, 360.0, n_hours),
    )
    direction_deg = (np.round(direction / 10.0) * 10.0) % 360.0
    speed_m_s = np.maximum(np.round(5.0 * rng.weibull(2.0, n_hours) * 2.0) / 2.0, 0.5)
    hour = np.arange(n_hours) % 24
    day = (hour >= 7) & (hour < 19)
    by_day = np.select(
        [speed_m_s < 2, speed_m_s < 3, speed_m_s < 5, speed_m_s < 6], [0, 1, 2, 2], default=3
    )
    by_night = np.select([speed_m_s < 2, speed_m_s < 3, speed_m_s < 5], [5, 4, 4], default=3)
    stability = np.where(day, by_day, by_night) + rng.integers(-1, 2, n_hours) * (
        rng.random(n_hours) < 0.2
    )
    return HourlyWeather(
        time_utc, direction_deg, speed_m_s, np.clip(stability, 0, 5), np.full(n_hours, np.nan)
    )


def settings_for_runs() -> DispersionSettings:
    """Briggs open-country sigmas, rural wind exponents, depletion at 0.02 m/s, no lid."""
    dispersion = load_dispersion()
    return DispersionSettings(
        scheme=sigma_scheme(dispersion, "rural", "briggs"),
        wind_exponents=wind_exponents(dispersion, "rural"),
        depletion_velocity_m_s=0.02,
    )


def build_case(name: str, quick: bool) -> Case:
    """The named synthetic case (smaller with quick), the same on every run."""
    rng = np.random.default_rng([SEED, ("site", "hourly", "regional").index(name)])
    settings = settings_for_runs()
    if name in ("site", "hourly"):
        n_grid, cell_m, n_sources = (50, 10.0, 3) if quick else (200, 10.0, 10)
    else:
        n_grid, cell_m, n_sources = (100, 100.0, 100) if quick else (500, 100.0, 2000)
    gx, gy = grid_receptors(n_grid, cell_m)
    # regional: no fan outlets (an inventory holds heights and footprints, and the
    # convolution's release classes have no rise), one cell clear of the edge (bilinear placing)
    regional = name == "regional"
    elements, emission_g_s = make_sources(
        rng, n_sources, n_grid * cell_m, margin_m=cell_m if regional else 0.0, fans=not regional
    )
    if name == "hourly":
        weather = make_record(rng, 1000 if quick else HOURS_PER_YEAR)
    else:
        weather = make_table(rng)
    return Case(name, cell_m, gx, gy, elements, emission_g_s, weather, settings)


# --- the fast paths ------------------------------------------------------------------------------


def fast_site(case: Case, elements=None, emission_g_s=None) -> np.ndarray:
    """Sum over sources of Q times the sector-averaged engine's per-unit concentration."""
    elements = case.elements if elements is None else elements
    emission_g_s = case.emission_g_s if emission_g_s is None else emission_g_s
    total = np.zeros(case.receptor_x_m.shape)
    for element, q in zip(elements, emission_g_s):
        total += q * source_concentration_g_m3_per_g_s(
            case.receptor_x_m, case.receptor_y_m, [element], case.weather, case.settings
        )
    return total


def fast_hourly(case: Case, weather=None) -> np.ndarray:
    """Sum over sources of Q times the hourly engine's per-unit mean."""
    weather = case.weather if weather is None else weather
    total = np.zeros(case.receptor_x_m.shape)
    for element, q in zip(case.elements, case.emission_g_s):
        total += q * source_hourly_mean_g_m3_per_g_s(
            case.receptor_x_m, case.receptor_y_m, [element], weather, case.settings
        )
    return total


def regional_fast_path():
    """How the regional case is run fast: (callable(case, elements, emissions), label, note).

    In this order, the first that exists: ``siting.dispersion.convolution.regional_deposition`` (or
    ``regional_concentration``); ``siting.runs.regional.compute_region`` (the ``siting region``
    pipeline, dask threads) on inputs built here from the case's arrays; the convolution
    module's building blocks composed here; else (None, "direct", why not).
    """
    try:
        from siting import dispersion as convolution  # its names: kernels, cells, convolution
    except ImportError as exc:
        return None, "direct", f"siting.dispersion.convolution not importable ({exc})"
    for name in ("regional_deposition", "regional_concentration"):
        function = getattr(convolution, name, None)
        if callable(function):
            return functools.partial(call_regional, function), f"convolution.{name}", ""
    try:
        from siting.runs import regional as region

        if callable(getattr(region, "compute_region", None)):
            why = (
                "siting.dispersion.convolution has no regional_deposition: timed siting.runs.regional."
                "compute_region (kernel per release class, FFT tiles, near-field "
                "correction, dask threads) on inputs built from the case's arrays"
            )
            return functools.partial(region_pipeline, region), "region.compute_region", why
    except ImportError:
        pass
    blocks = ("unit_kernel", "place_on_cells", "convolve_emissions", "near_field_correction")
    if all(hasattr(convolution, b) for b in blocks):
        why = (
            "siting.dispersion.convolution has no regional_deposition yet: its unit_kernel, "
            "place_on_cells, convolve_emissions and near_field_correction composed here "
            "(kernel per release class, bilinear placing, 10-cell near-field correction)"
        )
        return functools.partial(convolution_from_blocks, convolution), "convolution blocks", why
    return (
        None,
        "direct",
        "siting.dispersion.convolution has neither regional_deposition nor its blocks",
    )


def region_pipeline(region, case: Case, elements, emission_g_s) -> np.ndarray:
    """Concentration [g m-3] from siting.runs.regional.compute_region on this case's grid and farms.

    Each element becomes a farm of release class point or volume (side 4.3 sigma_y0; the
    case's sides already sit on the class ladder, so the classes are the elements).
    Raises ValueError for an element a release class cannot hold (plume rise).
    """
    import pandas as pd

    from siting.dispersion.grid import GridSpec
    from siting.dispersion.kernels import release_class
    from siting.physics.constants import UG_PER_G
    from siting.readers.tables import load_tables

    classes = []
    for element in elements:
        if element.exit_velocity_m_s > 0:
            raise ValueError("a release class has no plume rise")
        if element.sigma_y0_m > 0:
            side = 4.3 * element.sigma_y0_m
            classes.append(release_class("volume", element.release_height_m, side * side))
        else:
            classes.append(release_class("point", element.release_height_m))
    farms = pd.DataFrame(
        {
            "farm_id": [f"F{i}" for i in range(len(elements))],
            "x_m": [e.x_m for e in elements],
            "y_m": [e.y_m for e in elements],
            "emission_g_s": np.asarray(emission_g_s, dtype=float),
            "release_class": classes,
        }
    )
    n_rows, n_cols = case.receptor_x_m.shape
    grid = GridSpec(0.0, n_rows * case.cell_m, case.cell_m, n_cols, n_rows, "EPSG:32632")
    options = region.RegionOptions(spacing_m=case.cell_m, margin_m=case.cell_m)
    unique = sorted(set(classes), key=lambda c: (c.kind, c.release_height_m, c.footprint_side_m))
    inputs = region.RegionInputs(
        farms,
        unique,
        grid.crs,
        grid,
        case.weather,
        {},
        case.settings,
        None,
        load_tables(),
        options,
        {},
        [],
    )
    return region.compute_region(inputs).concentration_ug_m3 / UG_PER_G


def call_regional(function, case: Case, elements, emission_g_s) -> np.ndarray:
    """Call the convolution module's regional function on this case's grid (keyword guess).

    Raises TypeError when its signature is not one this script knows; the caller then falls back
    to the direct sum and says so.
    """
    return function(
        receptor_x_m=case.receptor_x_m,
        receptor_y_m=case.receptor_y_m,
        elements=list(elements),
        emission_g_s=np.asarray(emission_g_s),
        weather=case.weather,
        settings=case.settings,
    )


#: half width of the near-field window corrected to the direct sum [cells] (region.py default)
NEAR_FIELD_CELLS = 10


def convolution_from_blocks(convolution, case: Case, elements, emission_g_s) -> np.ndarray:
    """Regional field from the convolution's building blocks (siting.dispersion), one FFT per class."""
    n_rows, n_cols = case.receptor_x_m.shape
    cell_m = case.cell_m
    west_m, north_m = 0.0, n_rows * cell_m
    half_rows, half_cols = convolution.kernel_half_size(n_rows, n_cols, cell_m)
    groups: dict = {}
    for i, element in enumerate(elements):  # release class = the element moved to the origin
        groups.setdefault(replace(element, x_m=0.0, y_m=0.0), []).append(i)
    total = np.zeros((n_rows, n_cols))
    q_all = np.asarray(emission_g_s, dtype=float)
    for at_origin, members in groups.items():
        x = np.array([elements[i].x_m for i in members])
        y = np.array([elements[i].y_m for i in members])
        q = q_all[members]
        kernel = convolution.unit_kernel(
            [at_origin], case.weather, case.settings, cell_m, half_rows, half_cols
        )
        placed = convolution.place_on_cells(x, y, q, west_m, north_m, cell_m, n_rows, n_cols)
        total += convolution.convolve_emissions(placed.raster(), kernel)
        correction = convolution.near_field_correction(
            x,
            y,
            q,
            placed,
            kernel,
            [at_origin],
            case.weather,
            case.settings,
            west_m,
            north_m,
            NEAR_FIELD_CELLS,
        )
        np.add.at(total, (correction.rows, correction.cols), correction.values)
    return np.maximum(total, 0.0)


def release_class_count(elements) -> int:
    return len({replace(e, x_m=0.0, y_m=0.0) for e in elements})


# --- measuring -----------------------------------------------------------------------------------


def timed(function, *args, repeat: int = 1, **kwargs):
    """(result, seconds): the shortest wall-clock time of ``repeat`` calls."""
    best = float("inf")
    for _ in range(max(1, repeat)):
        start = time.perf_counter()
        result = function(*args, **kwargs)
        best = min(best, time.perf_counter() - start)
    return result, best


def traced_peak_mb(function, *args, **kwargs) -> float:
    """tracemalloc peak [MB] of one call (Python and numpy allocations; separate, untimed run)."""
    tracemalloc.start()
    try:
        function(*args, **kwargs)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak / 1e6


def deviation(fast: np.ndarray, ref: np.ndarray) -> float:
    """max |fast - ref| / max ref [-]."""
    scale = float(np.max(np.abs(ref)))
    return float(np.max(np.abs(fast - ref))) / scale if scale > 0 else 0.0


def subset_indices(n: int, k: int) -> np.ndarray:
    """k indices spread evenly over range(n)."""
    return np.unique(np.linspace(0, n - 1, min(k, n)).round().astype(int))


def run_site(case: Case, args) -> Row:
    # a run this short is timed as the best of --repeat runs, the reference likewise
    fast, seconds = timed(fast_site, case, repeat=args.repeat)
    peak = None if args.no_memory else traced_peak_mb(fast_site, case)
    ref, ref_s = timed(
        reference.reference_sector_average,
        case.receptor_x_m,
        case.receptor_y_m,
        case.elements,
        case.weather,
        case.settings,
        case.emission_g_s,
        repeat=args.repeat,
    )
    return Row(
        case.name,
        seconds,
        "",
        case.evaluations,
        peak,
        ref_s,
        "",
        deviation(fast, ref),
        args.quick,
        [],
    )


def sub_record(weather: HourlyWeather, idx: np.ndarray) -> HourlyWeather:
    return replace(
        weather,
        time_utc=weather.time_utc[idx],
        direction_deg=weather.direction_deg[idx],
        speed_m_s=weather.speed_m_s[idx],
        stability_index=weather.stability_index[idx],
        temperature_c=weather.temperature_c[idx],
    )


def run_hourly(case: Case, args) -> Row:
    _, seconds = timed(fast_hourly, case)
    peak = None if args.no_memory else traced_peak_mb(fast_hourly, case)
    n = case.weather.n_hours
    idx = subset_indices(n, args.reference_hours)
    sub = sub_record(case.weather, idx)
    ref, ref_sub_s = timed(
        reference.reference_hourly,
        case.receptor_x_m,
        case.receptor_y_m,
        case.elements,
        sub,
        case.settings,
        case.emission_g_s,
    )
    notes = []
    if idx.size < n:
        notes.append(
            f"hourly reference: {idx.size} of {n:,} hours (evenly spread) timed, "
            f"extrapolated x{n / idx.size:.1f}; max dev on those hours"
        )
    fast_sub = fast_hourly(case, sub)
    far = np.ones(ref.shape, dtype=bool)  # receptors clear of every source's near field
    for element in case.elements:
        far &= (
            np.hypot(case.receptor_x_m - element.x_m, case.receptor_y_m - element.y_m)
            > element.min_distance_m + 50.0
        )
    far &= ref > 0
    rel = np.abs(fast_sub - ref)[far] / ref[far]
    notes.append(
        f"hourly: receptors more than min_distance_m + 50 m from every source "
        f"({far.sum():,}) deviate by at most {rel.max():.1e} of their own value"
    )
    return Row(
        case.name,
        seconds,
        "",
        case.evaluations,
        peak,
        ref_sub_s * n / idx.size,
        "~" if idx.size < n else "",
        deviation(fast_sub, ref),
        args.quick,
        notes,
    )


def run_regional(case: Case, args) -> Row:
    n = len(case.elements)
    notes = []
    function, label, why = regional_fast_path()
    ref_idx = subset_indices(n, args.reference_sources)
    ref_elements = [case.elements[i] for i in ref_idx]
    ref, ref_sub_s = timed(
        reference.reference_sector_average,
        case.receptor_x_m,
        case.receptor_y_m,
        ref_elements,
        case.weather,
        case.settings,
        case.emission_g_s[ref_idx],
    )
    reference_s = ref_sub_s * n / ref_idx.size
    notes.append(
        f"regional reference: {ref_idx.size} of {n:,} sources timed, extrapolated "
        f"x{n / ref_idx.size:.0f}"
    )
    if why:
        notes.append(why)
    seconds_note, peak, dev = "", None, None
    if function is not None:
        try:
            _, seconds = timed(function, case, case.elements, case.emission_g_s)
            dev = deviation(function(case, ref_elements, case.emission_g_s[ref_idx]), ref)
            peak = (
                None
                if args.no_memory
                else traced_peak_mb(function, case, case.elements, case.emission_g_s)
            )
            notes.append(
                f"regional fast path: {label}, {release_class_count(case.elements)} "
                "release classes; max dev on the reference's sources alone"
            )
        except (TypeError, AttributeError, ValueError, KeyError) as exc:
            function = None  # an API in flux, or a case it cannot hold: say so, go direct
            notes.append(f"{label} failed here ({type(exc).__name__}: {exc})")
    if function is None:
        direct_idx = subset_indices(n, args.direct_sources)
        elements = [case.elements[i] for i in direct_idx]
        _, direct_s = timed(fast_site, case, elements, case.emission_g_s[direct_idx])
        seconds, seconds_note = direct_s * n / direct_idx.size, "~"
        peak = (
            None
            if args.no_memory
            else traced_peak_mb(fast_site, case, elements[:1], case.emission_g_s[direct_idx[:1]])
        )
        dev = deviation(fast_site(case, ref_elements, case.emission_g_s[ref_idx]), ref)
        notes.append(
            f"regional fast path: direct sum per source with the sector-averaged "
            f"engine (fallback), {direct_idx.size} of {n:,} sources timed, "
            f"extrapolated x{n / direct_idx.size:.0f}; peak memory of one source"
        )
    return Row(
        case.name,
        seconds,
        seconds_note,
        case.evaluations,
        peak,
        reference_s,
        "~",
        dev,
        args.quick,
        notes,
    )


# --- reporting -----------------------------------------------------------------------------------


def environment_lines() -> list[str]:
    """numpy version, BLAS and thread settings as found (nothing is set or unset)."""
    lines = [
        (
            f"python {platform.python_version()}, numpy {np.__version__}, "
            f"{os.cpu_count()} CPUs ({len(os.sched_getaffinity(0))} usable)"
        )
    ]
    try:
        blas = np.show_config(mode="dicts")["Build Dependencies"]["blas"]
        lines.append(f"numpy BLAS: {blas.get('name')} {blas.get('version', '')}".rstrip())
    except (TypeError, KeyError):  # numpy < 1.26 has no dict mode
        lines.append("numpy BLAS: not reported by this numpy")
    try:
        from threadpoolctl import threadpool_info

        for pool in threadpool_info():
            lines.append(
                f"threadpool: {pool.get('internal_api')} {pool.get('version')}, "
                f"{pool.get('num_threads')} threads"
            )
    except ImportError:
        lines.append("threadpoolctl not installed: thread pools not listed")
    threads = {
        k: os.environ[k]
        for k in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS")
        if k in os.environ
    }
    lines.append(f"thread variables: {threads or 'none set'}")
    return lines


def verdict(row: Row) -> tuple[str, str]:
    """(target text, PASS/MISS) against the issue's targets; quick runs are not judged."""
    target = f"<{TARGET_S[row.case]:g} s, >={TARGET_RATIO[row.case]:g}x"
    if row.quick:
        return target, "n/a (quick)"
    misses = []
    if row.seconds >= TARGET_S[row.case]:
        misses.append("time")
    if row.reference_s / row.seconds < TARGET_RATIO[row.case]:
        misses.append("ratio")
    return target, "PASS" if not misses else "MISS (" + ", ".join(misses) + ")"


def print_table(rows: list[Row]) -> None:
    header = (
        f"{'case':<9}{'seconds':>10}{'evaluations':>13}{'eval/s':>11}{'peak MB':>9}"
        f"{'ref s':>10}{'ratio':>8}{'max dev':>10}  {'target':<17}{'result'}"
    )
    print(header)
    print("-" * len(header))
    for row in rows:
        target, result = verdict(row)
        peak = "-" if row.peak_mb is None else f"{row.peak_mb:,.0f}"
        dev = "-" if row.deviation is None else f"{row.deviation:.1e}"
        ratio = row.reference_s / row.seconds
        print(
            f"{row.case:<9}{row.seconds_note + f'{row.seconds:.2f}':>10}"
            f"{row.evaluations:>13.3g}{row.evaluations / row.seconds:>11.3g}{peak:>9}"
            f"{row.reference_note + f'{row.reference_s:.1f}':>10}"
            f"{row.reference_note + f'{ratio:.0f}x':>8}{dev:>10}  {target:<17}{result}"
        )
    print("seconds: compute only (cases built beforehand, nothing written); ~ extrapolated;")
    print("         site: best of --repeat runs, fast path and reference alike; others: one run.")
    print("evaluations: receptors x sources x weather classes (non-zero table entries) or hours.")
    print("peak MB: tracemalloc peak of a second, untimed run of the fast path.")
    print("max dev: max |fast - reference| / max reference, where both were computed.")
    for row in rows:
        for note in row.notes:
            print(f"note: {note}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--case", choices=("site", "hourly", "regional", "all"), default="all")
    parser.add_argument("--quick", action="store_true", help="small cases, a smoke run")
    parser.add_argument("--no-memory", action="store_true", help="skip the tracemalloc run")
    parser.add_argument(
        "--repeat",
        type=int,
        default=3,
        help="site case: time the best of this many runs (default 3)",
    )
    parser.add_argument(
        "--reference-hours",
        type=int,
        default=200,
        help="hours the hourly reference is timed on (then extrapolated)",
    )
    parser.add_argument(
        "--reference-sources",
        type=int,
        default=2,
        help="sources the regional reference is timed on (then extrapolated)",
    )
    parser.add_argument(
        "--direct-sources",
        type=int,
        default=20,
        help="sources the regional direct fallback is timed on",
    )
    args = parser.parse_args()
    for line in environment_lines():
        print(line)
    names = ("site", "hourly", "regional") if args.case == "all" else (args.case,)
    runners = {"site": run_site, "hourly": run_hourly, "regional": run_regional}
    rows = []
    for name in names:
        case = build_case(name, args.quick)
        print(
            f"{name}: {case.receptor_x_m.size:,} receptors, {len(case.elements):,} sources, "
            f"{case.n_weather:,} {'hours' if name == 'hourly' else 'weather classes'}",
            flush=True,
        )
        rows.append(runners[name](case, args))
    print()
    print_table(rows)


if __name__ == "__main__":
    main()
