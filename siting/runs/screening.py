"""The screening run: scenario -> process contribution at every habitat site.

This is the Python API behind ``siting screen``. It wires the adapters (scenario, tables,
weather, habitats, receptors) to the physics (emissions, long-term plume, deposition) and the
assessment arithmetic, and returns a :class:`ScreenResult`; writing files is ``outputs.py``'s job.

Roles: the installation's process contribution (PC) is proposed + existing sources; the net
change is proposed - removed; the in-combination total is PC + other; the predicted
environmental total is background + PC where the habitat layer gives a background.
"""

from __future__ import annotations

import dataclasses
import math
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.grid import GridSpec, grid_around
from siting.dispersion.hourly import HourlyWeather, source_hourly_mean_g_m3_per_g_s
from siting.dispersion.sector import (
    DispersionSettings,
    ReleaseElement,
    rectangle_elements,
    source_concentration_g_m3_per_g_s,
)
from siting.errors import (
    AccuracyWarning,
    InputError,
    InputWarning,
    collect_warnings,
    collecting_warnings,
)
from siting.physics import assess
from siting.physics.constants import KEQ_PER_KG_N, UG_PER_G, deposition_kg_n_ha_yr, kg_n_to_mol_n
from siting.physics.emissions import derive_emission
from siting.physics.plume import gep_stack_height_m
from siting.physics.seasonal import (
    temperature_emission_weights,
    treated_ammonia_share,
    ventilation_fraction,
)
from siting.readers.frequency_table import read_frequency_table
from siting.readers.habitats import (
    coarsened_sites,
    grid_nodes_in_sites,
    read_habitats,
    site_boundary_points,
    site_sample_points,
)
from siting.readers.hourly_record import read_hourly_record
from siting.readers.scenario import ROLES, Scenario, SourceSpec, load_scenario
from siting.readers.tables import (
    Tables,
    default_reduction_percent,
    is_claimed_reduction,
    load_tables,
)
from siting.runs.run_cache import RunCache
from siting.runs.sensitivity import sensitivity as two_sided

MAX_GRID_CELLS = 2_000_000
AREA_MAX_ELEMENTS = 100
BOUNDARY_SPACING_M = 10.0  # site boundaries are sampled at least this densely

CAUTIONS = [
    "Screening estimate from a simplified model: flat terrain, no building wake, long-term "
    "annual means from a Gaussian plume; not a substitute for detailed modelling.",
    "Emission factors and deposition velocities carry wide uncertainty; results depend on the "
    "weather data and emission figures supplied.",
    "Screening thresholds here are defaults; local regulations and the competent authority "
    "decide. For borderline results seek detailed modelling by qualified practitioners.",
]


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

    @property
    def cautions(self) -> list[str]:
        """The cautions every output of a screening run carries."""
        return list(CAUTIONS)


def outlet_rise(src: SourceSpec) -> tuple[bool, str]:
    """Whether a point source's outlet gets momentum plume rise, and why, in words.

    Rise only for an outlet that stands clear of the building wake: at or above the good-
    engineering-practice height of the building it is on or beside (plume.gep_stack_height_m,
    from ``building_height_m`` and ``building_width_m``; with the height alone the width is
    taken no smaller than the height). Without building dimensions an outlet is taken to be a
    fan or scrubber outlet on or beside a house roof, in its wake: no rise (cautious).

    Parameters
    ----------
    src : SourceSpec
        The source.

    Returns
    -------
    rise : bool
        Whether momentum rise is added.
    why : str
        The reason in words ("" for a volume or area source).
    """
    if src.kind != "point":
        return False, ""
    if not src.exit_velocity_m_s or not src.diameter_m:
        return False, "no exit velocity given: no rise"
    if src.building_height_m is None:
        return False, (
            "no building dimensions given (building_height_m): taken to be in the "
            "wake of the house it serves, no rise"
        )
    wake_m = gep_stack_height_m(src.building_height_m, src.building_width_m)
    width = (
        f"{src.building_width_m:g} m wide"
        if src.building_width_m is not None
        else "width taken as its height"
    )
    building = f"building {src.building_height_m:g} m high, {width}"
    if src.height_m >= wake_m:
        return True, (
            f"outlet {src.height_m:g} m is at or above the wake height {wake_m:g} m "
            f"({building}): momentum rise"
        )
    return False, (
        f"outlet {src.height_m:g} m is below the wake height {wake_m:g} m "
        f"({building}): in the building wake, no rise"
    )


def _source_elements(src: SourceSpec) -> tuple[list[ReleaseElement], object]:
    """Release elements of a source and its footprint geometry (shapely)."""
    import shapely
    from shapely import affinity

    if src.kind == "point":
        rise, _ = outlet_rise(src)
        return (
            [
                ReleaseElement(
                    src.x,
                    src.y,
                    src.height_m,
                    diameter_m=src.diameter_m or 0.0,
                    exit_velocity_m_s=src.exit_velocity_m_s or 0.0,
                    plume_rise=rise,
                    stack_tip_downwash=bool(src.diameter_m),
                )
            ],
            shapely.Point(src.x, src.y),
        )
    rect = shapely.box(
        src.x - src.width_m / 2,
        src.y - src.length_m / 2,
        src.x + src.width_m / 2,
        src.y + src.length_m / 2,
    )
    footprint = affinity.rotate(rect, -src.angle_deg, origin=(src.x, src.y))
    if src.kind == "area":
        size = max(5.0, math.sqrt(src.width_m * src.length_m / AREA_MAX_ELEMENTS))
        return (
            rectangle_elements(
                src.x,
                src.y,
                src.width_m,
                src.length_m,
                src.angle_deg,
                src.height_m,
                element_size_m=size,
            ),
            footprint,
        )
    # volume: a line of adjacent volumes along the length axis, each roughly square;
    # sigma_y0 = side / 4.3, sigma_z0 = building height / 2.15 (EPA1992 initial dimensions)
    n = max(1, int(round(src.length_m / src.width_m)))
    side = math.sqrt(src.width_m * src.length_m / n)
    building_m = src.building_height_m or src.height_m
    a = math.radians(src.angle_deg)
    offsets = (np.arange(n) + 0.5) * src.length_m / n - src.length_m / 2
    return (
        [
            ReleaseElement(
                src.x + t * math.sin(a),
                src.y + t * math.cos(a),
                src.height_m,
                sigma_y0_m=side / 4.3,
                sigma_z0_m=building_m / 2.15,
                share_fraction=1.0 / n,
                min_distance_m=side / 2,
            )
            for t in offsets
        ],
        footprint,
    )


def reduction_basis(src: SourceSpec, technique: dict) -> tuple[str, str]:
    """Where a source's reduction comes from, in words, and a warning for an unsupported claim.

    No reduction_percent: the lower end of the technique's published range. A figure above it
    is the user's claim: accepted, with its stated ``reduction_basis`` (certificate,
    measurement) shown; without one it is accepted with a warning. ``siting verify`` raises
    either as a finding to check.

    Parameters
    ----------
    src : SourceSpec
        The source.
    technique : dict
        Its technique's row of abatement.toml.

    Returns
    -------
    basis : str
        The reduction's basis in words.
    warning : str
        A warning for a claim without a basis, else "".
    """
    lo = default_reduction_percent(technique)
    if src.reduction_percent is None:
        return f"lower end of the published range ({lo:g} %)", ""
    if not is_claimed_reduction(src.reduction_percent, technique):
        return src.reduction_basis or f"stated in the scenario ({src.reduction_percent:g} %)", ""
    if src.reduction_basis:
        return f"claimed: {src.reduction_basis}", ""
    return (
        "claimed, no basis stated",
        f"reduction {src.reduction_percent:g} % is above the "
        f"lower end {lo:g} % of the published range with no reduction_basis "
        "(certificate, measurement); it is used as claimed",
    )


@dataclass
class _Abatement:
    """A source's abatement as used: the technique row (or None), the reduction [%] and its
    basis, the treated share of its ammonia [-] and a flag when outside the published range."""

    technique: dict | None = None
    reduction_percent: float = 0.0
    treated: float = 1.0
    basis: str = ""
    flag: str = ""


def _abatement_of(src: SourceSpec, tables: Tables, treated_shares: dict, where: str) -> _Abatement:
    """The reduction a source's abatement gives: the stated figure or the range's lower end,
    over the treated share (the hourly record's for a partial scrubber); an InputWarning for
    a claimed figure without basis and for one outside the published range."""
    if not src.abatement:
        return _Abatement()
    technique = tables.technique(src.abatement, where)
    reduction = (
        src.reduction_percent
        if src.reduction_percent is not None
        else default_reduction_percent(technique)
    )
    basis, claim_warning = reduction_basis(src, technique)
    if claim_warning:
        warnings.warn(f"{where}: {claim_warning}", InputWarning, stacklevel=2)
    treated = src.treated_air_fraction if src.treated_air_fraction is not None else 1.0
    if src.scrubber_design_share is not None:
        if technique["kind"] != "scrubber":
            raise InputError(
                f"{where}: scrubber_design_share applies to scrubbers; "
                f'"{src.abatement}" is a {technique["kind"]}'
            )
        treated = treated_shares[src.id]
    flag = ""
    lo, hi = technique["reduction_percent_min"], technique["reduction_percent_max"]
    if not lo <= reduction <= hi:
        flag = (
            f"reduction {reduction:g} % is outside the published range "
            f"{lo:g}-{hi:g} % for {technique['name']}"
        )
        warnings.warn(f"{where}: {flag}", InputWarning, stacklevel=2)
    return _Abatement(technique, reduction, treated, basis, flag)


def _nan_if_none(value):
    return value if value is not None else np.nan


def _source_row(src: SourceSpec, factor_row: dict | None, ab: _Abatement, d) -> dict:
    """One row of sources.csv: the source, its factor, its abatement and the derivation."""
    technique = ab.technique
    rise, rise_basis = outlet_rise(src)
    return {
        "source_id": src.id,
        "kind": src.kind,
        "role": src.role,
        "x_m": src.x,
        "y_m": src.y,
        "height_m": src.height_m,
        "plume_rise": ("yes" if rise else "no") if src.kind == "point" else "",
        "plume_rise_basis": rise_basis,
        "livestock": src.livestock or "",
        "housing": src.housing or "",
        "places": src.places,
        "factor_nh3_kg_per_place_yr": d.factor_nh3_kg_per_place_yr,
        "factor_source": factor_row["source"] if factor_row else "given in scenario",
        "nh3_unabated_kg_yr": d.nh3_unabated_kg_yr,
        "abatement": src.abatement or "",
        "reduction_percent": d.reduction_percent if src.abatement else np.nan,
        "reduction_range_percent": (
            f"{technique['reduction_percent_min']:g}-{technique['reduction_percent_max']:g}"
            if technique
            else ""
        ),
        "reduction_source": technique["source"] if technique else "",
        "reduction_basis": ab.basis,
        "reduction_flag": ab.flag,
        "scrubber_design_share": _nan_if_none(src.scrubber_design_share),
        "treated_air_fraction": d.treated_air_fraction if src.abatement else np.nan,
        "effective_reduction_percent": d.effective_reduction_percent,
        "nh3_kg_yr": d.nh3_kg_yr,
        "emission_g_s": d.emission_g_s,
        "nh3_removed_kg_yr": d.nh3_removed_kg_yr,
        "n_captured_kg_yr": _nan_if_none(d.n_captured_kg_yr),
        "effluent_m3_yr": _nan_if_none(d.effluent_m3_yr),
    }


def derive_sources(
    scenario: Scenario, tables: Tables, treated_shares: dict[str, float] | None = None
) -> pd.DataFrame:
    """One row per source: the emission derivation down to g/s, with range flags.

    A reduction claimed without a basis, or outside the technique's published range, is used
    with an InputWarning.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    tables : Tables
        The lookup tables (emission factors, abatement).
    treated_shares : dict of str to float, optional
        For sources with a scrubber_design_share, the share of the year's ammonia the scrubber
        treats [-], computed over the hourly record (seasonal.treated_ammonia_share).

    Returns
    -------
    pandas.DataFrame
        The columns of sources.csv (factor, places, reduction [%] and its basis, kg NH3 yr-1,
        g s-1, N captured [kg N yr-1], ...).

    Raises
    ------
    InputError
        An unknown livestock, housing or technique.
    """
    rows = []
    treated_shares = treated_shares or {}
    for src in scenario.sources:
        where = f'source "{src.id}"'
        factor_row = None
        if src.nh3_kg_per_year is None:
            factor_row = tables.factor(src.livestock, src.housing, where)
        ab = _abatement_of(src, tables, treated_shares, where)
        technique = ab.technique
        d = derive_emission(
            nh3_unabated_kg_yr=src.nh3_kg_per_year,
            factor_nh3_kg_per_place_yr=factor_row["nh3_kg_per_place_yr"] if factor_row else None,
            places=src.places if factor_row else None,
            reduction_percent=ab.reduction_percent,
            treated_air_fraction=ab.treated,
            effluent_kg_n_per_m3=technique.get("effluent_kg_n_per_m3") if technique else None,
            captures_in_effluent=bool(technique) and technique["kind"] == "scrubber",
        )
        rows.append(_source_row(src, factor_row, ab, d))
    return pd.DataFrame(rows)


def site_lat_lon(scenario: Scenario) -> tuple[float, float]:
    """Latitude and longitude [deg] of the sources' centre, from the scenario CRS.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its sources and CRS).

    Returns
    -------
    latitude_deg, longitude_deg : float
        WGS 84 [deg].
    """
    from pyproj import Transformer

    x = float(np.mean([src.x for src in scenario.sources]))
    y = float(np.mean([src.y for src in scenario.sources]))
    lon, lat = Transformer.from_crs(scenario.crs, "EPSG:4326", always_xy=True).transform(x, y)
    return float(lat), float(lon)


def _read_hourly(scenario: Scenario):

    lat, lon = site_lat_lon(scenario)
    w = scenario.weather
    return read_hourly_record(
        w.hourly,
        lat,
        lon,
        anemometer_height_m=w.anemometer_height_m,
        utc_offset_h=w.utc_offset_h,
        calm_threshold_m_s=w.calm_threshold_m_s,
        min_wind_speed_m_s=w.min_wind_speed_m_s,
        max_missing_percent=w.max_missing_percent,
        direction_step_deg=w.direction_step_deg,
    )


def _hourly_emission_weights(scenario: Scenario, tables: Tables, weather, summary: dict):
    """Per-source hourly emission weights (mean 1) and annual treated shares of scrubbers.

    Weights follow air temperature when [seasonal] temperature_dependent_emission is on; a
    source with scrubber_design_share has its hourly emission lowered by reduction x the share
    of that hour's air the scrubber takes, and the annual treated share becomes its
    treated_air_fraction (so the annual total in sources.csv matches the hourly weights).
    """

    cfg = scenario.seasonal
    temperature_c = weather.temperature_c
    partial = [s for s in scenario.sources if s.scrubber_design_share is not None]
    needs_temperature = bool(cfg.temperature_dependent_emission) or (
        bool(partial) and cfg.temperature_dependent_emission is not False
    )
    if needs_temperature and not np.isfinite(temperature_c).all():
        missing = ~np.isfinite(temperature_c)
        first = str(np.asarray(weather.time_utc)[np.flatnonzero(missing)[0]]).replace("T", " ")
        files = ", ".join(Path(p).name for p in scenario.weather.hourly or [])
        raise InputError(
            f"weather.hourly {files}: {int(missing.sum())} hour(s) have no "
            f"temperature_c (the first at {first} UTC), which [seasonal] emission "
            "or scrubber_design_share need"
        )
    flat = np.ones(weather.n_hours)
    varying = (
        temperature_emission_weights(temperature_c, cfg.emission_coefficient_per_k)
        if needs_temperature
        else flat
    )
    base = varying if cfg.temperature_dependent_emission else flat
    weights, treated = {}, {}
    for src in scenario.sources:
        if src.scrubber_design_share is None:
            weights[src.id] = base
            continue
        # the treated share is a share of the year's AMMONIA: hours weighted by their emission
        # (temperature dependent unless switched off), so warm, high-emission hours at full
        # ventilation, when a part-sized scrubber treats the smallest share, count most
        own = flat if cfg.temperature_dependent_emission is False else varying
        technique = tables.technique(src.abatement, f'source "{src.id}"')
        reduction = (
            src.reduction_percent
            if src.reduction_percent is not None
            else default_reduction_percent(technique)
        ) / 100.0
        r = ventilation_fraction(
            temperature_c,
            cfg.min_ventilation_fraction,
            cfg.ventilation_ramp_start_c,
            cfg.ventilation_ramp_end_c,
        )
        treated[src.id] = treated_ammonia_share(r, src.scrubber_design_share, own)
        hourly_treated = np.minimum(r, src.scrubber_design_share) / r
        after = own * (1.0 - reduction * hourly_treated)
        weights[src.id] = after / after.mean() if after.mean() > 0 else own
        summary.setdefault("scrubber_treated_share", {})[src.id] = {
            "design_share": src.scrubber_design_share,  # of the maximum ventilation rate
            "treated_share": treated[src.id],  # of the year's ammonia
            "treated_share_of_hours": treated_ammonia_share(r, src.scrubber_design_share),
            "hours_weighted_by": (
                "emission, temperature dependent"
                if own is varying
                else "nothing (flat emission: switched off)"
            ),
        }
    profile = (
        f"temperature dependent, exp({cfg.emission_coefficient_per_k:g} x (T - mean T)),"
        " normalised to the annual total"
    )
    if cfg.temperature_dependent_emission:
        summary["emission_profile"] = profile
    elif needs_temperature:
        summary["emission_profile"] = (
            f"{profile}, for the partly scrubbed source(s) {', '.join(s.id for s in partial)} "
            "(their treated share is a share of the year's ammonia); flat for the others"
        )
    return weights, treated


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


def _progress(enabled: bool):
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


def _habitats_key(scenario: Scenario, tables: Tables) -> tuple:
    """Everything read_habitats depends on (the layer file by size and modification time)."""
    stat = scenario.habitats.file.stat()
    return (
        "habitats",
        scenario.habitats.model_dump_json(),
        scenario.crs,
        stat.st_size,
        stat.st_mtime_ns,
        tables.critical_loads,
        tables.critical_levels,
        tables.thresholds,
        tables.deposition_velocities,
        scenario.assessment.critical_load_end,
        scenario.assessment.critical_load_review,
    )


@dataclass
class Prepared:
    """What every run of a scenario needs before any dispersion: inputs read and checked.

    Attributes
    ----------
    scenario : Scenario
        The scenario.
    tables : Tables
        The lookup tables.
    weather : WeatherClasses or HourlyWeather
        The weather.
    weather_summary : dict
        Its summary.
    hour_weights : dict
        Hourly emission weights by source id [-] (hourly records with [seasonal]).
    sources : pandas.DataFrame
        The sources' emission derivation (:func:`derive_sources`).
    sites : geopandas.GeoDataFrame
        The habitat sites with their critical values and thresholds.
    settings : DispersionSettings
        Dispersion settings.
    warnings : list of str
        Legal but doubtful input.
    cache : RunCache, optional
        Shared by the re-runs of one scenario (a sensitivity).
    """

    scenario: Scenario
    tables: Tables
    weather: object  # WeatherClasses or HourlyWeather
    weather_summary: dict
    hour_weights: dict
    sources: pd.DataFrame
    sites: object  # GeoDataFrame
    settings: DispersionSettings
    warnings: list[str]
    cache: RunCache | None = None

    @property
    def cautions(self) -> list[str]:
        """The cautions every output of a screening run carries."""
        return list(CAUTIONS)

    @property
    def default_deposition_velocity_m_s(self) -> float:
        """Deposition velocity of the depletion land cover [m s-1] (grid cells and named points)."""
        land_cover = self.scenario.deposition.depletion_land_cover
        return self.tables.deposition_velocities[land_cover]["deposition_velocity_m_s"]

    def unit_concentration_ug_m3(
        self,
        source_id: str,
        elements,
        receptor_x_m,
        receptor_y_m,
        settings: DispersionSettings | None = None,
    ) -> np.ndarray:
        """Annual mean concentration [ug m-3] per 1 g s-1 (annual mean) of one source.

        Parameters
        ----------
        source_id : str
            The source (its hourly emission weights, and the cache key).
        elements : list of ReleaseElement
            Its release elements.
        receptor_x_m, receptor_y_m : ndarray
            Receptor coordinates [m].
        settings : DispersionSettings, optional
            Replaces the run's dispersion settings (the undepleted twin of a run with depletion).

        Returns
        -------
        ndarray
            [ug m-3 per g s-1], the receptors' shape.
        """
        settings = settings or self.settings
        if self.cache is not None:
            key = (
                "unit",
                source_id,
                elements,
                settings,
                self.weather,
                self.hour_weights.get(source_id),
                np.asarray(receptor_x_m),
                np.asarray(receptor_y_m),
            )
            return self.cache.get(
                key,
                lambda: Prepared.unit_concentration_ug_m3(
                    dataclasses.replace(self, cache=None),
                    source_id,
                    elements,
                    receptor_x_m,
                    receptor_y_m,
                    settings,
                ),
            )
        if isinstance(self.weather, HourlyWeather):
            unit = source_hourly_mean_g_m3_per_g_s(
                receptor_x_m,
                receptor_y_m,
                elements,
                self.weather,
                settings,
                self.hour_weights.get(source_id),
            )
        else:
            unit = source_concentration_g_m3_per_g_s(
                receptor_x_m, receptor_y_m, elements, self.weather, settings
            )
        return unit * UG_PER_G

    def concentration_by_role_ug_m3(
        self,
        elements_of_sources,
        receptor_x_m,
        receptor_y_m,
        settings: DispersionSettings | None = None,
        advance=None,
    ) -> dict[str, np.ndarray]:
        """Annual mean concentration [ug m-3] of each role's sources at the receptors.

        Parameters
        ----------
        elements_of_sources : list of list of ReleaseElement
            Each source's elements, in the scenario's order.
        receptor_x_m, receptor_y_m : ndarray
            Receptor coordinates [m].
        settings : DispersionSettings, optional
            Replaces the run's dispersion settings.
        advance : callable, optional
            Called after each source (a progress bar).

        Returns
        -------
        dict of str to ndarray
            Role ("proposed", "existing", "removed", "other") -> concentration [ug m-3].
        """
        by_role = {role: np.zeros(np.size(receptor_x_m)) for role in ROLES}
        for src, elements, emission_g_s in zip(
            self.scenario.sources, elements_of_sources, self.sources["emission_g_s"]
        ):
            if emission_g_s > 0:
                by_role[src.role] += emission_g_s * self.unit_concentration_ug_m3(
                    src.id, elements, receptor_x_m, receptor_y_m, settings
                )
            if advance:
                advance()
        return by_role


@collecting_warnings
def prepare(
    scenario: Scenario | str | Path, tables: Tables | None = None, cache: RunCache | None = None
) -> Prepared:
    """Read and check a scenario's tables, weather, sources and habitats (no dispersion).

    ``tables`` replaces the lookup tables the scenario names (a sensitivity run); ``cache``
    is shared by the re-runs of one scenario (see RunCache). The warnings the reading raised
    are on the result (``Prepared.warnings``) and issued on.

    Parameters
    ----------
    scenario : Scenario, str or Path
        A loaded scenario or its file.
    tables : Tables, optional
        Replaces the scenario's lookup tables.
    cache : RunCache, optional
        Shared by the re-runs of one scenario.

    Returns
    -------
    Prepared
        The inputs, read and checked.

    Raises
    ------
    InputFileError
        A file the scenario names does not exist.
    InputError
        A fault in the scenario, a table, the weather or the habitat layer (named).
    """
    if not isinstance(scenario, Scenario):
        scenario = load_scenario(scenario)
    if tables is None:
        tables = load_tables(scenario.assessment.config_dir)
    if scenario.deposition.depletion_land_cover not in tables.deposition_velocities:
        raise InputError(
            f'deposition.depletion_land_cover "{scenario.deposition.depletion_land_cover}"'
            f" is not in deposition_velocities.toml"
        )
    if scenario.weather.hourly is None:
        weather, weather_summary = read_frequency_table(
            scenario.weather.frequency_table,
            scenario.weather.anemometer_height_m,
            scenario.weather.min_wind_speed_m_s,
        )
        hour_weights = treated_shares = {}
    else:
        weather, weather_summary = _read_hourly(scenario)
        hour_weights, treated_shares = _hourly_emission_weights(
            scenario, tables, weather, weather_summary
        )
    sources = derive_sources(scenario, tables, treated_shares)

    def habitats():
        # the layer's warnings are kept with it in the cache and issued on every use
        with collect_warnings(reissue=False) as raised:
            sites = read_habitats(
                scenario.habitats,
                scenario.crs,
                tables,
                scenario.assessment.critical_load_end,
                scenario.assessment.critical_load_review,
            )
        return sites, raised

    sites, raised = (
        cache.get(_habitats_key(scenario, tables), habitats) if cache is not None else habitats()
    )
    raised.reissue()
    default_vd = tables.deposition_velocities[scenario.deposition.depletion_land_cover][
        "deposition_velocity_m_s"
    ]
    settings = DispersionSettings(
        scheme=tables.sigma_scheme(scenario.weather.land_type, scenario.weather.sigma_scheme),
        wind_exponents=tables.wind_exponents(scenario.weather.land_type),
        mixing_height_m=scenario.weather.mixing_height_m,
        depletion_velocity_m_s=default_vd if scenario.deposition.plume_depletion else None,
        memory_budget_mb=scenario.grid.memory_mb,
        wind_below_anemometer=scenario.weather.wind_below_anemometer,
        wind_profile_min_height_m=scenario.weather.wind_profile_min_height_m,
        min_wind_speed_m_s=scenario.weather.min_wind_speed_m_s,
    )
    return Prepared(
        scenario,
        tables,
        weather,
        weather_summary,
        hour_weights,
        sources,
        sites,
        settings,
        [],  # filled by @collecting_warnings
        cache,
    )


def _site_stats(conc_ug_m3, vd_m_s, member_receptor, member_site, member_interior, n_sites):
    """Per-site (max, mean) of concentration [ug m-3] and deposition [kg N ha-1 yr-1]."""
    dep = deposition_kg_n_ha_yr(conc_ug_m3[member_receptor], vd_m_s[member_receptor])
    c_max, c_mean = assess.site_max_and_mean(
        conc_ug_m3[member_receptor], member_site, member_interior, n_sites
    )
    d_max, d_mean = assess.site_max_and_mean(dep, member_site, member_interior, n_sites)
    return c_max, c_mean, d_max, d_mean


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


def _screen_grid(scenario: Scenario) -> GridSpec:
    """The receptor grid around the sources, refused if it has too many cells."""
    grid = grid_around(
        [s.x for s in scenario.sources],
        [s.y for s in scenario.sources],
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
        [s.x for s in scenario.sources],
        [s.y for s in scenario.sources],
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


def _disperse(prep: Prepared, element_lists, rec: _Receptors, with_grid: bool, progress: bool):
    """(concentration by role [ug m-3], undepleted PC or None) at every receptor.

    With depletion the same run without it is made at the sites' points (and grid nodes inside
    sites) only, to show what depletion took off; without the grid at every point, the same
    points as a run without depletion, so a sensitivity's re-runs share it through the cache.
    """
    depleted = prep.settings.depletion_velocity_m_s is not None
    bar = _progress(progress)
    task = (
        bar.add_task("dispersion", total=len(element_lists) * (2 if depleted else 1))
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
    totals, distance from the installation and the verdict (blank where not assessed)."""
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
    out["assessed"] = assessed
    out["verdict"] = assess.verdict(
        out["pc_pct_level"].to_numpy(),
        out["pc_pct_load"].to_numpy(),
        out["threshold_percent"].to_numpy(),
        assessed,
    )
    for col in [c for c in out.columns if c.startswith(("pc_", "net_", "incomb_", "pec_"))]:
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


@collecting_warnings
def screen(
    scenario: Scenario | str | Path,
    *,
    progress: bool = False,
    tables: Tables | None = None,
    with_grid: bool = True,
    sensitivity: bool = True,
    cache: RunCache | None = None,
) -> ScreenResult:
    """Run a full screening assessment of a scenario (a file path or a loaded Scenario).

    The Python call behind ``siting screen``; write its files with
    :func:`siting.output.screen.write_outputs`.

    The steps: read and check the inputs (:func:`prepare`), place the receptors
    (:func:`_receptors`), disperse (:func:`_disperse`), combine the roles, and tabulate the
    sites (:func:`_site_table`) and the named points (:func:`_named_point_table`).
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
    import geopandas as gpd

    clock = {"start": time.perf_counter()}
    prep = prepare(scenario, tables, cache)
    scenario = prep.scenario
    named = _read_named_receptors(scenario, prep.tables)
    grid = _screen_grid(scenario)
    assessed = _assessed_sites(prep.sites, grid)
    rec = _receptors(prep, grid, named, assessed, with_grid)
    elements_and_shapes = [_source_elements(s) for s in scenario.sources]
    element_lists = [elements for elements, _ in elements_and_shapes]
    source_shapes = [shape for _, shape in elements_and_shapes]
    clock["inputs"] = time.perf_counter()

    conc_by_role, undepleted_pc = _disperse(prep, element_lists, rec, with_grid, progress)
    clock["dispersion"] = time.perf_counter()

    combos = {
        "pc": conc_by_role["proposed"] + conc_by_role["existing"],
        "net": conc_by_role["proposed"] - conc_by_role["removed"],
    }
    combos["incomb"] = combos["pc"] + conc_by_role["other"]
    dep = {k: deposition_kg_n_ha_yr(v, rec.vd_m_s) for k, v in combos.items()}
    out = _site_table(prep, combos, undepleted_pc, rec, source_shapes, assessed)
    receptors = _named_point_table(named, combos, dep, rec)
    shape = (grid.n_rows, grid.n_cols) if with_grid else (0, 0)
    fields = {
        "pc_conc_ug_m3": combos["pc"][: rec.n_grid].reshape(shape),
        "pc_dep_kg_n_ha_yr": dep["pc"][: rec.n_grid].reshape(shape),
        "incomb_dep_kg_n_ha_yr": dep["incomb"][: rec.n_grid].reshape(shape),
        "net_dep_kg_n_ha_yr": dep["net"][: rec.n_grid].reshape(shape),
    }
    clock["assessment"] = time.perf_counter()
    timings = {
        "inputs_s": clock["inputs"] - clock["start"],
        "dispersion_s": clock["dispersion"] - clock["inputs"],
        "assessment_s": clock["assessment"] - clock["dispersion"],
        "receptors": int(rec.x_m.size),
    }
    result = ScreenResult(
        scenario,
        prep.tables,
        grid,
        prep.weather_summary,
        prep.sources,
        source_shapes,
        gpd.GeoDataFrame(out, geometry="geometry", crs=scenario.crs),
        receptors,
        fields,
        [],  # filled by @collecting_warnings
        timings,
        prep.weather,
    )
    if sensitivity and with_grid:
        result.sensitivity, result.sensitivity_summary = two_sided(scenario, result, run=screen)
        timings["sensitivity_s"] = time.perf_counter() - clock["assessment"]
    return result
