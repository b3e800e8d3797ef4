"""The inputs of a screening run: :func:`prepare` reads and checks them into a :class:`Prepared`.

:func:`prepare` is the first step of every run (``screen``, ``place``, ``verify`` and the
sensitivity's re-runs), a short sequence of named steps: the scenario and the lookup tables,
the weather (a frequency table, or an hourly record with its emission weights), the sources'
emission derivation (``screening_sources.py``), the habitat sites (cached across re-runs) and
the dispersion settings. :class:`Prepared` also holds the calls of the dispersion engines per
source (:meth:`Prepared.unit_concentration_ug_m3`), so every run computes through one place.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.hourly import HourlyWeather, source_hourly_mean_g_m3_per_g_s
from siting.dispersion.inputs import DispersionSettings
from siting.dispersion.sector import source_concentration_g_m3_per_g_s
from siting.errors import InputError, collect_warnings, collecting_warnings
from siting.physics.constants import UG_PER_G
from siting.readers.frequency_table import read_frequency_table
from siting.readers.habitats import read_habitats
from siting.readers.hourly_record import read_hourly_record, record_position
from siting.readers.rules import RuleSet, load_rule_set
from siting.readers.scenario import Scenario, load_scenario
from siting.readers.scenario_sources import ROLES
from siting.readers.tables import Tables, load_tables
from siting.runs.appraisal import appraise_sources
from siting.runs.run_cache import RunCache
from siting.runs.screening_sources import (
    _hourly_emission_weights,
    derive_sources,
    hourly_temperature_needed,
)
from siting.runs.weather_years import screened_years, worst_year_by_role

CAUTIONS = [
    "Screening estimate from a simplified model: flat terrain, no building wake, long-term "
    "annual means from a Gaussian plume; not a substitute for detailed modelling.",
    "Emission factors and deposition velocities carry wide uncertainty; results depend on the "
    "weather data and emission figures supplied.",
    "Screening thresholds here are defaults; local regulations and the competent authority "
    "decide. For borderline results seek detailed modelling by qualified practitioners.",
]


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
        The sources' emission derivation (:func:`derive_sources`) with their abatement
        appraisal (:func:`siting.runs.appraisal.appraise_sources`).
    sites : geopandas.GeoDataFrame
        The habitat sites with their critical values and thresholds.
    settings : DispersionSettings
        Dispersion settings.
    warnings : list of str
        Legal but doubtful input.
    cache : RunCache, optional
        Shared by the re-runs of one scenario (a sensitivity).
    rules : RuleSet, optional
        The rule set the sites are judged by ([assessment] rules, or the caller's).
    weather_years : tuple of int
        With ``[weather] screen_by = "worst_year"``: the years dispersed one by one, each
        receptor taking its worst (``weather_years.py``); empty for all years together.
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
    rules: RuleSet | None = None
    weather_years: tuple[int, ...] = ()

    def of_year(self, year: int) -> Prepared:
        """The same inputs with the hours of one calendar year only; each source's hourly
        emission weights renormalised to a mean of 1 over that year (the annual emission
        stays the annual emission).

        Parameters
        ----------
        year : int
            The calendar year.

        Returns
        -------
        Prepared
            The inputs of a run over that year alone (``weather_years`` empty).
        """
        mine = self.weather.years == int(year)
        weights = {
            key: (None if w is None else np.asarray(w)[mine] / np.asarray(w)[mine].mean())
            for key, w in self.hour_weights.items()
        }
        return dataclasses.replace(
            self, weather=self.weather.of_year(year), hour_weights=weights, weather_years=()
        )

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
            [ug m-3 per g s-1], the receptors' shape; with ``weather_years``, the highest of
            the single years' at each receptor (the placement search adds these: a sum of
            each source's worst year, never below the worst single year of the sum).
        """
        settings = settings or self.settings
        if self.weather_years:  # each year on its own, the highest at each receptor
            return np.max(
                [
                    self.of_year(year).unit_concentration_ug_m3(
                        source_id, elements, receptor_x_m, receptor_y_m, settings
                    )
                    for year in self.weather_years
                ],
                axis=0,
            )
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
            Role ("proposed", "existing", "removed", "other") -> concentration [ug m-3]; with
            ``weather_years``, each receptor's worst year's (``year_pick`` on the dict: the
            year taken at each receptor, an index into ``weather_years``).
        """
        if self.weather_years:
            by_role, pick = worst_year_by_role(
                self, elements_of_sources, receptor_x_m, receptor_y_m, settings, advance
            )
            return RoleConcentrations(by_role, year_pick=pick)
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
        return RoleConcentrations(by_role)


class RoleConcentrations(dict):
    """Role -> concentration [ug m-3] at the receptors, and the worst year's choice.

    Parameters
    ----------
    by_role : dict of str to ndarray
        Role -> concentration [ug m-3].
    year_pick : ndarray of int, optional
        With the worst single year, the year taken at each receptor (an index into
        ``Prepared.weather_years``); None otherwise.
    """

    def __init__(self, by_role: dict, year_pick: np.ndarray | None = None) -> None:
        super().__init__(by_role)
        self.year_pick = year_pick


@collecting_warnings
def prepare(
    scenario: Scenario | str | Path,
    tables: Tables | None = None,
    cache: RunCache | None = None,
    rules: RuleSet | str | Path | None = None,
) -> Prepared:
    """Read and check a scenario's tables, weather, sources and habitats (no dispersion).

    ``tables`` replaces the lookup tables the scenario names (a sensitivity run); ``cache``
    is shared by the re-runs of one scenario (see RunCache). The warnings the reading raised
    are on the result (``Prepared.warnings``) and issued on.

    The steps: load the scenario and its tables, check the depletion land cover, read the
    weather (:func:`_read_weather`), derive the sources (:func:`derive_sources`) and appraise
    their abatement (:func:`appraise_sources`), read the sites (:func:`_read_sites`) and set
    the dispersion (:func:`_dispersion_settings`).

    Parameters
    ----------
    scenario : Scenario, str or Path
        A loaded scenario or its file.
    tables : Tables, optional
        Replaces the scenario's lookup tables.
    cache : RunCache, optional
        Shared by the re-runs of one scenario.
    rules : RuleSet, str or Path, optional
        Replaces the scenario's rule set ([assessment] rules): a RuleSet, a bundled id or a
        rule set file.

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
    _check_depletion_land_cover(scenario, tables)
    weather, weather_summary, hour_weights, treated_shares = _read_weather(scenario, tables)
    sources = derive_sources(scenario, tables, treated_shares)
    sources = appraise_sources(scenario, tables, sources)  # + the abatement appraisal
    sites = _read_sites(scenario, tables, cache)
    settings = _dispersion_settings(scenario, tables)
    if not isinstance(rules, RuleSet):
        tier_ids = [tier["id"] for tier in tables.thresholds]
        rules = load_rule_set(scenario.assessment.rules if rules is None else rules, tier_ids)
    years = (
        screened_years(weather, weather_summary, scenario.weather.screen_by)
        if isinstance(weather, HourlyWeather)
        else ()
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
        rules,
        years,
    )


def _check_depletion_land_cover(scenario: Scenario, tables: Tables) -> None:
    """Raise unless the scenario's depletion land cover is in deposition_velocities.toml."""
    if scenario.deposition.depletion_land_cover not in tables.deposition_velocities:
        raise InputError(
            f'deposition.depletion_land_cover "{scenario.deposition.depletion_land_cover}"'
            f" is not in deposition_velocities.toml"
        )


def _read_weather(scenario: Scenario, tables: Tables) -> tuple[object, dict, dict, dict]:
    """The weather, its summary, the hourly emission weights by source id and the treated
    shares of partial scrubbers (both empty for a frequency table)."""
    if scenario.weather.hourly is None:
        weather, weather_summary = read_frequency_table(
            scenario.weather.frequency_table,
            scenario.weather.anemometer_height_m,
            scenario.weather.min_wind_speed_m_s,
        )
        weather_summary["record_position"] = record_position(
            *site_lat_lon(scenario),
            scenario.weather.station_latitude_deg,
            scenario.weather.station_longitude_deg,
        )
        hour_weights = treated_shares = {}
    else:
        weather, weather_summary = _read_hourly(scenario)
        hour_weights, treated_shares = _hourly_emission_weights(
            scenario, tables, weather, weather_summary
        )
    return weather, weather_summary, hour_weights, treated_shares


def _read_sites(scenario: Scenario, tables: Tables, cache: RunCache | None):
    """The habitat sites with their critical values (read_habitats), from the cache when one
    is given; the layer's warnings are issued on every use, cached or not."""

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
    return sites


def _dispersion_settings(scenario: Scenario, tables: Tables) -> DispersionSettings:
    """The run's dispersion settings: sigma scheme and wind exponents of the land type, the
    depletion velocity of the depletion land cover (if depleted), the weather's limits."""
    default_vd = tables.deposition_velocities[scenario.deposition.depletion_land_cover][
        "deposition_velocity_m_s"
    ]
    return DispersionSettings(
        scheme=tables.sigma_scheme(scenario.weather.land_type, scenario.weather.sigma_scheme),
        wind_exponents=tables.wind_exponents(scenario.weather.land_type),
        mixing_height_m=scenario.weather.mixing_height_m,
        depletion_velocity_m_s=default_vd if scenario.deposition.plume_depletion else None,
        memory_budget_mb=scenario.grid.memory_mb,
        wind_below_anemometer=scenario.weather.wind_below_anemometer,
        wind_profile_min_height_m=scenario.weather.wind_profile_min_height_m,
        min_wind_speed_m_s=scenario.weather.min_wind_speed_m_s,
    )


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
    """The scenario's hourly record and its summary (read_hourly_record), at the sources'
    latitude and longitude, with the [weather] options."""
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
        source=w.source(),
        temperature_required=hourly_temperature_needed(scenario),
        station_latitude_deg=w.station_latitude_deg,
        station_longitude_deg=w.station_longitude_deg,
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
