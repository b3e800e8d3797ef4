"""The scenario file's sections other than its sources, as pydantic models.

[project] (who and what the report is for), [weather], [seasonal], [grid], [deposition],
[assessment], [habitats], [receptors] and [holding] (with its [[holding.exclusion]] layers):
each model checks its keys (unknown keys, types, units, ranges) and the rules between them.
The [[source]] tables are in ``scenario_sources.py``; the whole file, its error messages and
its paths in ``scenario.py``.
"""

from __future__ import annotations

import datetime
import re
import unicodedata
from pathlib import Path
from typing import Annotated, Literal

from pydantic import (
    AfterValidator,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    StrictBool,
    StringConstraints,
    model_validator,
)

from siting.errors import SitingError
from siting.readers.weather_formats import parse_column_map, source_of

FilePath = Annotated[Path, Field(strict=False)]

#: Line breaks and tabs in a [project] text, with the spaces round them: each run becomes one
#: space (the text is shown on one line).
_LINE_BREAKS = re.compile(r"\s*[\t\n\r\v\f\x85\u2028\u2029]+\s*")


def _one_line(value):
    """A [project] text as shown: line breaks and tabs become a space, every other control or
    format character (Unicode categories Cc, Cf: escapes, bidirectional overrides) is dropped,
    and the ends are stripped. Anything but a string is left to the type check."""
    if not isinstance(value, str):
        return value
    value = _LINE_BREAKS.sub(" ", value)
    kept = "".join(c for c in value if unicodedata.category(c) not in ("Cc", "Cf"))
    return kept.strip()


def _project_text(max_length: int):
    """A [project] text: cleaned by :func:`_one_line`, then 1..max_length characters."""

    def length(value: str) -> str:
        if not value:
            raise ValueError("must not be blank")
        if len(value) > max_length:
            raise ValueError(f"must be at most {max_length} characters")
        return value

    return Annotated[str, BeforeValidator(_one_line), AfterValidator(length)]


def _iso_date(value):
    """A [project] date: a TOML date as it is, an ISO date text (YYYY-MM-DD) read; a TOML
    date and time, or any other value, refused in words."""
    if isinstance(value, datetime.datetime):  # a subclass of date: refused, not truncated
        raise ValueError("must be a date without a time, e.g. 2025-03-14")
    if isinstance(value, datetime.date):
        return value
    if isinstance(value, str):
        try:
            return datetime.date.fromisoformat(value.strip())
        except ValueError:
            pass
    raise ValueError("must be an ISO date YYYY-MM-DD, e.g. 2025-03-14")


class _Section(BaseModel):
    # strict: a TOML string or boolean is never taken for a number; floats accept integers.
    # Paths are given as text, so path fields relax strictness (FilePath below).
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


class ProjectSection(_Section):
    """[project]: who and what the report is for, shown on its cover and in run.json (optional).

    Every key is optional text (the date an ISO date). Line breaks and tabs become spaces,
    other control characters are dropped, and the ends are stripped before the length is
    checked. Nothing here enters a computation.

    Attributes
    ----------
    applicant : str, optional
        Who applies (a person or a business), at most 200 characters.
    site : str, optional
        The site's address or description, at most 300 characters.
    reference : str, optional
        The application's or job's reference, at most 100 characters; shown in the report's
        running header.
    author : str, optional
        Who prepared the screening, at most 200 characters.
    date : datetime.date, optional
        The report's date: a TOML date (``2025-03-14``) or an ISO date text.
    """

    applicant: _project_text(200) | None = None
    site: _project_text(300) | None = None
    reference: _project_text(100) | None = None
    author: _project_text(200) | None = None
    # a TOML date literal arrives as datetime.date; an ISO text is read by _iso_date
    date: Annotated[datetime.date, BeforeValidator(_iso_date)] | None = None


def _code_text(value):
    """A missing code or flag as text: TOML numbers (-999) are read as they are written."""
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise ValueError("a code must be a text or a number")
    return str(value)


class WeatherSection(_Section):
    """[weather]: the weather behind the long-term means.

    Attributes
    ----------
    frequency_table : Path, optional
        A joint frequency table CSV (give it or ``hourly``, not both).
    hourly : Path or list of Path, optional
        One or more hourly station records (CSV).
    utc_offset_h : float, optional
        UTC offset of naive times in the hourly record [h], -14..14.
    calm_threshold_m_s : float
        Hours below this speed are calms [m s-1], 0..3 (default 0.5).
    max_missing_percent : float
        Most missing hours allowed [%] (default 10).
    anemometer_height_m : float
        Height of the wind measurement [m], (0, 300] (default 10).
    land_type : {"rural", "urban"}
        Dispersion coefficients of Briggs (1973) for open country or towns.
    sigma_scheme : {"briggs", "pasquill_gifford"}
        The dispersion-coefficient formulas (Pasquill-Gifford rural only).
    mixing_height_m : float, optional
        Height of a reflecting lid [m], (10, 5000]; None for none.
    min_wind_speed_m_s : float
        Lighter winds are raised to this [m s-1], (0, 5] (default 1).
    station_latitude_deg, station_longitude_deg : float, optional
        The weather station's position [deg], for its distance in ``siting verify``.
    wind_below_anemometer : {"power_law", "unchanged"}
        The wind at a release height below the anemometer: power law (cautious) or as measured.
    wind_profile_min_height_m : float
        Lowest height the power law is taken down to [m], (0, 10] (default 1).
    direction_step_deg : float, optional
        The step hourly directions were reported in [deg], 0..45; None infers it, 0 is exact.
    format : {"auto", "csv", "isd-lite", "netcdf"}
        The hourly files' format (default: detected from the content).
    columns : dict of str to str
        A CSV's column map (time, direction, speed, cloud or stability, ceiling, temperature,
        <name>_flag) or a NetCDF file's variables (u, v, cloud, ceiling, temperature).
    speed_unit, direction_unit, cloud_unit, ceiling_unit : str
        Units of a mapped CSV: m/s, knots or km/h; deg or tens; oktas, fraction or percent;
        ft or m.
    time_format : str, optional
        A mapped CSV's time format (strptime); None reads ISO 8601.
    missing_codes, flags_ok : list of str
        A mapped CSV's missing-value codes, and the quality flags that accept a value.
    grid_point : {"nearest", "bilinear"}
        A NetCDF grid's value at the site.
    screen_by : {"all_years", "worst_year"}
        An hourly record of several years: the worst single year at each point (default,
        cautious: each point takes the year that gives it the highest judged contribution;
        each site's year is reported), or the long-term mean of all the years.
    """

    frequency_table: FilePath | None = None
    hourly: FilePath | list[FilePath] | None = None
    utc_offset_h: float | None = Field(None, ge=-14, le=14)
    calm_threshold_m_s: float = Field(0.5, ge=0, le=3)
    max_missing_percent: float = Field(10.0, ge=0, le=100)
    anemometer_height_m: float = Field(10.0, gt=0, le=300)
    land_type: Literal["rural", "urban"] = "rural"
    sigma_scheme: Literal["briggs", "pasquill_gifford"] = "briggs"
    mixing_height_m: float | None = Field(None, gt=10, le=5000)
    min_wind_speed_m_s: float = Field(1.0, gt=0, le=5)
    station_latitude_deg: float | None = Field(None, ge=-90, le=90)
    station_longitude_deg: float | None = Field(None, ge=-180, le=180)
    # below the anemometer: "power_law" (default, cautious) or "unchanged" (the measured speed)
    wind_below_anemometer: Literal["power_law", "unchanged"] = "power_law"
    wind_profile_min_height_m: float = Field(1.0, gt=0, le=10)
    # hourly records: the step the directions were reported in [deg]; None = inferred
    direction_step_deg: float | None = Field(None, ge=0, le=45)
    # the hourly files' format and, for a CSV by a column map or NetCDF, the map and units
    format: Literal["auto", "csv", "isd-lite", "netcdf"] = "auto"
    columns: dict[str, str] = Field(default_factory=dict)
    speed_unit: Literal["m/s", "knots", "km/h"] = "m/s"
    direction_unit: Literal["deg", "tens"] = "deg"
    cloud_unit: Literal["oktas", "fraction", "percent"] = "oktas"
    ceiling_unit: Literal["ft", "m"] = "ft"
    time_format: str | None = Field(None, min_length=2, max_length=100)
    missing_codes: list[Annotated[str, BeforeValidator(_code_text)]] = Field(default_factory=list)
    flags_ok: list[Annotated[str, BeforeValidator(_code_text)]] = Field(default_factory=list)
    grid_point: Literal["nearest", "bilinear"] = "nearest"
    # several years: the worst single year at each point (cautious) or their long-term mean
    screen_by: Literal["all_years", "worst_year"] = "worst_year"

    def source(self):
        """The hourly files' format options.

        Returns
        -------
        WeatherSource
            The checked options (``siting.readers.weather_formats``).
        """
        return source_of(self)

    @model_validator(mode="after")
    def _one_record(self):
        if (self.frequency_table is None) == (self.hourly is None):
            raise ValueError("give exactly one of frequency_table or hourly")
        if self.columns:
            try:
                parse_column_map(",".join(f"{k}={v}" for k, v in self.columns.items()))
            except SitingError as exc:
                raise ValueError(str(exc)) from None
        if self.sigma_scheme == "pasquill_gifford" and self.land_type == "urban":
            raise ValueError(
                "the Pasquill-Gifford curve fits are rural only; use "
                'sigma_scheme = "briggs" with land_type = "urban"'
            )
        return self


class SeasonalSection(_Section):
    """[seasonal]: hour-by-hour emission weights and ventilation (hourly records only).

    The defaults are common practice with no published source (siting/physics/seasonal.py);
    replace them with the house's own figures where known.

    Attributes
    ----------
    temperature_dependent_emission : bool, optional
        None (default): on for sources with a scrubber_design_share, off for the others;
        True / False: for every source.
    emission_coefficient_per_k : float
        Relative change of emission per kelvin [K-1], 0..0.3 (default 0.05).
    min_ventilation_fraction : float
        Winter minimum ventilation / maximum rate [-], (0, 1] (default 0.1).
    ventilation_ramp_start_c, ventilation_ramp_end_c : float
        Temperatures between which ventilation rises to its maximum [deg C] (default 10, 25).
    """

    # None (default): on for sources with a scrubber_design_share (their treated share is a
    # share of the year's ammonia), off for the others; true / false: for every source
    temperature_dependent_emission: StrictBool | None = None
    emission_coefficient_per_k: float = Field(0.05, ge=0, le=0.3)
    min_ventilation_fraction: float = Field(0.1, gt=0, le=1)
    ventilation_ramp_start_c: float = Field(10.0, ge=-30, le=40)
    ventilation_ramp_end_c: float = Field(25.0, ge=-30, le=45)

    @model_validator(mode="after")
    def _ramp(self):
        if self.ventilation_ramp_end_c <= self.ventilation_ramp_start_c:
            raise ValueError("ventilation_ramp_end_c must be above ventilation_ramp_start_c")
        return self


class GridSection(_Section):
    """[grid]: the regular receptor grid around the sources.

    Attributes
    ----------
    spacing_m : float
        Cell size [m], (0, 1000] (default 25).
    margin_m : float
        Distance added round the sources' bounding box [m], 0..50,000 (default 3000).
    memory_mb : float
        Working memory of the engines [MB], 16..65,536 (default 256).
    """

    spacing_m: float = Field(25.0, gt=0, le=1000)
    margin_m: float = Field(3000.0, ge=0, le=50_000)
    memory_mb: float = Field(256.0, ge=16, le=65_536)  # working memory of the engines


class DepositionSection(_Section):
    """[deposition]: dry deposition settings.

    Attributes
    ----------
    plume_depletion : bool
        Deplete the plume by what it deposits upwind (default off: the cautious choice).
    depletion_land_cover : str
        Land cover (deposition_velocities.toml id) whose velocity depletes the plume.
    """

    plume_depletion: StrictBool = False  # off by default: no depletion is the cautious choice
    depletion_land_cover: str = "short_vegetation"


class AssessmentSection(_Section):
    """[assessment]: how figures are judged (our own optional section).

    Attributes
    ----------
    critical_load_end : {"lower", "middle", "upper"}
        Which end of each critical-load range is used (default lower).
    critical_load_review : {"2022", "2011"}
        Which review's empirical critical loads (default 2022).
    config_dir : Path, optional
        A folder with the user's own copy of the lookup tables.
    rules : str
        The rule set the sites are judged by: a bundled id (``siting rules`` lists them) or a
        path to a rule set file (relative to the scenario's folder); default "plain".
    """

    critical_load_end: Literal["lower", "middle", "upper"] = "lower"
    # which review's empirical critical loads: "2022" (Bobbink et al. 2022, default) or "2011"
    critical_load_review: Literal["2022", "2011"] = "2022"
    config_dir: FilePath | None = None
    rules: Annotated[str, StringConstraints(strip_whitespace=True, min_length=1)] = "plain"


class HabitatsSection(_Section):
    """[habitats]: the protected-site layer and which attribute holds what.

    Attributes
    ----------
    file : Path
        The habitat layer (any vector format geopandas reads).
    layer : str, optional
        Its layer, in a multi-layer file.
    name_field, habitat_field, designation_field : str
        Fields holding each site's name, habitat (critical_loads.toml id or name) and
        designation (matched to thresholds.toml).
    critical_level_field, critical_load_field : str, optional
        Fields overriding the critical level [ug m-3] and load [kg N ha-1 yr-1] per site.
    background_deposition_field, background_concentration_field : str, optional
        Fields of the background [kg N ha-1 yr-1, ug m-3], for the predicted environmental total.
    lichens_bryophytes_field : str, optional
        Field stating lichens and bryophytes present or absent per site.
    lichens_bryophytes_absent : list of str
        Sites stated free of lichens and bryophytes (else 1 ug m-3 everywhere).
    """

    file: FilePath
    layer: str | None = None
    name_field: str = "name"
    habitat_field: str = "habitat"
    designation_field: str = "designation"
    critical_level_field: str | None = None
    critical_load_field: str | None = None
    background_deposition_field: str | None = None
    background_concentration_field: str | None = None
    # lichens and bryophytes: every site gets the 1 ug/m3 critical level unless this field says
    # they are absent (absent/no/false/0), or the site is named in lichens_bryophytes_absent
    lichens_bryophytes_field: str | None = None
    lichens_bryophytes_absent: list[str] = []


class ReceptorsSection(_Section):
    """[receptors]: named points, CSV with id,x,y[,land_cover].

    Attributes
    ----------
    file : Path
        The CSV (coordinates in the scenario's CRS [m]).
    """

    file: FilePath


class ExclusionSpec(_Section):
    """[[holding.exclusion]]: a layer of places the new house must keep away from.

    Attributes
    ----------
    file : Path
        The layer (points, lines or polygons).
    layer : str, optional
        Its layer, in a multi-layer file.
    buffer_m : float
        Distance the house keeps from its features [m], 0..5000.
    name : str, optional
        What the layer is, in words (at most 80 characters).
    """

    file: FilePath
    layer: str | None = None
    buffer_m: float = Field(0.0, ge=0, le=5000)
    name: str | None = Field(None, max_length=80)


class HoldingSection(_Section):
    """[holding]: where on the farm a new house could go (``siting place``).

    Attributes
    ----------
    file : Path
        The holding boundary (a polygon layer).
    layer : str, optional
        Its layer, in a multi-layer file.
    spacing_m : float
        Spacing of the candidate positions [m], (0, 500] (default 10).
    boundary_buffer_m : float
        Distance the house keeps inside the boundary [m], 0..1000.
    min_distance_to_existing_m : float
        Distance the house keeps from the other sources [m], 0..5000.
    in_combination : bool
        No longer used (accepted for old scenarios, with a warning when true): the rule
        set's basis and in-combination rules say which sources join the house.
    exclusion : list of ExclusionSpec
        Layers of places to keep away from.
    """

    file: FilePath
    layer: str | None = None
    spacing_m: float = Field(10.0, gt=0, le=500)
    boundary_buffer_m: float = Field(0.0, ge=0, le=1000)
    min_distance_to_existing_m: float = Field(0.0, ge=0, le=5000)
    in_combination: StrictBool = False
    exclusion: list[ExclusionSpec] = []
