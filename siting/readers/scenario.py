"""The scenario file: TOML -> validated :class:`Scenario`.

An adapter: reads the TOML, validates every key with pydantic (unknown keys, missing fields,
types, units and ranges), checks the CRS is projected in metres, resolves relative paths against
the scenario file's folder and checks that the files exist. Any problem becomes one
:class:`~siting.errors.InputError` naming the key (or file) before anything is computed or
written. No physics here.
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Annotated, Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StrictBool,
    ValidationError,
    field_validator,
    model_validator,
)

from siting.errors import InputError, InputFileError, validation_wording
from siting.readers.tables import suggest

FilePath = Annotated[Path, Field(strict=False)]

ROLES = ("proposed", "existing", "removed", "other")


class _Section(BaseModel):
    # strict: a TOML string or boolean is never taken for a number; floats accept integers.
    # Paths are given as text, so path fields relax strictness (FilePath below).
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


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

    @model_validator(mode="after")
    def _one_record(self):
        if (self.frequency_table is None) == (self.hourly is None):
            raise ValueError("give exactly one of frequency_table or hourly")
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
    """

    critical_load_end: Literal["lower", "middle", "upper"] = "lower"
    # which review's empirical critical loads: "2022" (Bobbink et al. 2022, default) or "2011"
    critical_load_review: Literal["2022", "2011"] = "2022"
    config_dir: FilePath | None = None


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
        Add the other sources' contribution at each site.
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


class SourceSpec(_Section):
    """One [[source]]: where and how ammonia is released, and how much.

    Attributes
    ----------
    id : str
        Unique name of the source (1 to 80 characters).
    kind : {"point", "volume", "area"}
        A point outlet, a volume (a naturally ventilated house) or an area.
    x, y : float
        Position [m] in the scenario's CRS (the centre of a volume or area).
    height_m : float
        Release height [m], 0..100.
    role : {"proposed", "existing", "removed", "other"}
        Whose the source is: the installation's new or existing, removed, or another farm's.
    diameter_m, exit_velocity_m_s : float, optional
        Outlet diameter [m] and exit velocity [m s-1] of a point source.
    width_m, length_m : float, optional
        Footprint of a volume or area source [m].
    angle_deg : float
        Direction of the length axis [deg clockwise from north].
    building_height_m, building_width_m : float, optional
        The building's height and width [m]: plume rise only for an outlet clear of its wake.
    nh3_kg_per_year : float, optional
        Direct annual emission before abatement [kg NH3 yr-1] (instead of livestock/places).
    livestock, housing : str, optional
        Row of emission_factors.toml.
    places : float, optional
        Animal places.
    abatement : str, optional
        Technique id of abatement.toml.
    reduction_percent : float, optional
        A claimed reduction [%] (else the lower end of the technique's range).
    reduction_basis : str, optional
        What supports the claimed reduction.
    treated_air_fraction : float, optional
        Share of the house's air the technique treats [-], 0..1.
    scrubber_design_share : float, optional
        Scrubber capacity / maximum ventilation [-], 0..1 (hourly records).
    """

    id: str = Field(min_length=1, max_length=80)
    kind: Literal["point", "volume", "area"] = "point"
    x: float
    y: float
    height_m: float = Field(ge=0, le=100)
    role: Literal["proposed", "existing", "removed", "other"] = "proposed"
    diameter_m: float | None = Field(None, gt=0, le=10)
    exit_velocity_m_s: float | None = Field(None, ge=0, le=40)
    width_m: float | None = Field(None, gt=0, le=2000)
    length_m: float | None = Field(None, gt=0, le=2000)
    angle_deg: float = Field(0.0, ge=-360, le=360)
    building_height_m: float | None = Field(None, gt=0, le=100)
    building_width_m: float | None = Field(None, gt=0, le=500)
    nh3_kg_per_year: float | None = Field(None, ge=0)
    livestock: str | None = None
    housing: str | None = None
    places: float | None = Field(None, ge=0)
    abatement: str | None = None
    reduction_percent: float | None = Field(None, ge=0, le=100)
    reduction_basis: str | None = Field(None, min_length=1, max_length=300)
    treated_air_fraction: float | None = Field(None, ge=0, le=1)
    scrubber_design_share: float | None = Field(None, ge=0, le=1)

    @model_validator(mode="after")
    def _consistent(self):
        derived = [k for k in ("livestock", "housing", "places") if getattr(self, k) is not None]
        if self.nh3_kg_per_year is not None and derived:
            raise ValueError("give either nh3_kg_per_year or livestock/housing/places, not both")
        if self.nh3_kg_per_year is None and len(derived) != 3:
            missing = [k for k in ("livestock", "housing", "places") if k not in derived]
            raise ValueError(
                "needs nh3_kg_per_year, or livestock, housing and places "
                f"(missing: {', '.join(missing)})"
            )
        if self.kind in ("volume", "area") and (self.width_m is None or self.length_m is None):
            raise ValueError(f"a {self.kind} source needs width_m and length_m")
        if self.kind == "point" and (self.width_m is not None or self.length_m is not None):
            raise ValueError(
                'width_m/length_m apply to volume and area sources; set kind = "volume" or "area"'
            )
        if self.kind != "point" and (self.diameter_m or self.exit_velocity_m_s):
            raise ValueError("diameter_m/exit_velocity_m_s apply to point sources only")
        if self.exit_velocity_m_s and not self.diameter_m:
            raise ValueError("exit_velocity_m_s needs diameter_m (plume rise uses both)")
        if (
            self.reduction_percent is not None
            or self.treated_air_fraction is not None
            or self.scrubber_design_share is not None
            or self.reduction_basis is not None
        ) and self.abatement is None:
            raise ValueError(
                "reduction_percent/reduction_basis/treated_air_fraction/"
                "scrubber_design_share need an abatement technique"
            )
        if self.reduction_basis is not None and self.reduction_percent is None:
            raise ValueError(
                "reduction_basis states the basis of a reduction_percent; "
                "give the reduction_percent it supports"
            )
        if self.building_width_m is not None and self.building_height_m is None:
            raise ValueError(
                "building_width_m needs building_height_m (the wake height depends on both)"
            )
        if self.treated_air_fraction is not None and self.scrubber_design_share is not None:
            raise ValueError(
                "give treated_air_fraction or scrubber_design_share (from which the "
                "treated share is computed over the hourly record), not both"
            )
        return self


class Scenario(_Section):
    """A whole scenario file, validated. Paths are absolute after :func:`load_scenario`.

    Attributes
    ----------
    title : str
        Title shown in every output.
    crs : str
        Projected CRS in metres; every x/y of the file is in it.
    weather : WeatherSection
        [weather].
    grid : GridSection
        [grid].
    deposition : DepositionSection
        [deposition].
    assessment : AssessmentSection
        [assessment].
    seasonal : SeasonalSection
        [seasonal].
    habitats : HabitatsSection
        [habitats].
    receptors : ReceptorsSection, optional
        [receptors].
    holding : HoldingSection, optional
        [holding] (``siting place``).
    sources, source : list of SourceSpec
        The [[source]] tables (attribute ``sources``; ``source`` in the file).
    path : Path, optional
        The scenario file.
    """

    title: str = Field(min_length=1, max_length=200)
    crs: str
    weather: WeatherSection
    grid: GridSection = GridSection()
    deposition: DepositionSection = DepositionSection()
    assessment: AssessmentSection = AssessmentSection()
    seasonal: SeasonalSection = SeasonalSection()
    habitats: HabitatsSection
    receptors: ReceptorsSection | None = None
    holding: HoldingSection | None = None
    sources: list[SourceSpec] = Field(alias="source", min_length=1)
    path: FilePath | None = None

    @field_validator("sources")
    @classmethod
    def _unique_ids(cls, sources):
        seen = set()
        for s in sources:
            if s.id in seen:
                raise ValueError(f'duplicate source id "{s.id}"')
            seen.add(s.id)
        return sources

    @property
    def folder(self) -> Path:
        """The scenario file's folder (the current folder when there is no file)."""
        return self.path.parent if self.path else Path.cwd()

    @property
    def name(self) -> str:
        """Short name for the default output folder (the scenario file's stem)."""
        return self.path.stem if self.path else "scenario"


def _where(loc: tuple, raw: dict) -> tuple[str, str]:
    """(section, key) of an error location, e.g. ('source "H2"', 'height_m')."""
    section, keys = [], []
    i = 0
    while i < len(loc):
        key = loc[i]
        if key == "source" and i + 1 < len(loc) and isinstance(loc[i + 1], int):
            idx = loc[i + 1]
            sources = raw.get("source") or []
            sid = (
                sources[idx].get("id")
                if idx < len(sources) and isinstance(sources[idx], dict)
                else None
            )
            section.append(f'source "{sid}"' if sid else f"[[source]] #{idx + 1}")
            i += 2
            continue
        if isinstance(key, str):
            (keys if section or keys or key not in _SECTIONS else section).append(key)
        elif isinstance(key, int) and (keys or section):  # a row of a list: #1, #2, ...
            target = keys if keys else section
            target[-1] += f" #{key + 1}"
        i += 1
    return ".".join(section), ".".join(keys)


_SECTIONS = ("weather", "grid", "deposition", "assessment", "habitats", "receptors")


def _known_keys(loc: tuple) -> list[str]:
    """Field names allowed where an unknown key was found (for a suggestion)."""
    model = Scenario
    for key in loc[:-1]:
        if isinstance(key, int):
            continue
        field = model.model_fields.get("sources" if key == "source" else key)
        if field is None:
            return []
        ann = field.annotation
        for candidate in getattr(ann, "__args__", ()) or (ann,):
            if isinstance(candidate, type) and issubclass(candidate, BaseModel):
                model = candidate
                break
        else:
            return []
    return [("source" if n == "sources" else n) for n in model.model_fields if n != "path"]


def _format_error(exc: ValidationError, raw: dict, filename: str) -> str:
    errors = sorted(exc.errors(), key=lambda e: e["type"] != "extra_forbidden")
    err = errors[0]
    loc = tuple(k for k in err["loc"] if not (isinstance(k, str) and "[" in k))
    section, key = _where(loc, raw)
    prefix = f"{filename}, {section}" if section else filename
    kind, got = err["type"], err.get("input")
    if kind == "extra_forbidden":
        hint = suggest(loc[-1], _known_keys(loc)) if loc else ""
        return (
            f"{prefix}: unknown key {key}{hint or ' (check the spelling; see the demo scenario)'}"
        )
    if kind == "missing":
        return f"{prefix}: missing key {key}"
    if kind not in _PLAIN_TYPES:
        msg = err["msg"].removeprefix("Value error, ")
        if isinstance(got, (dict, list)):
            return f"{prefix}: {key + ': ' if key else ''}{msg}"
        return f"{prefix}: {key + ': ' if key else ''}{msg}, got {got!r}"
    return f"{prefix}: {key} {validation_wording(err)}"


#: pydantic error types worded by errors.validation_wording (others keep pydantic's message)
_PLAIN_TYPES = (
    "greater_than_equal",
    "greater_than",
    "less_than_equal",
    "less_than",
    "float_parsing",
    "float_type",
    "int_parsing",
    "bool_type",
    "bool_parsing",
    "string_type",
    "literal_error",
    "too_short",
    "finite_number",
)


_CRS_FIX = "give a projected CRS in metres, e.g. the UTM zone of the site (EPSG:326xx north)"


def projected_crs(
    crs, where: str, fix: str = _CRS_FIX, *, key: str = "crs", parameters: tuple[str, ...] = ()
) -> str:
    """The CRS as text if it is projected in metres, else an InputError naming ``where``.

    Parameters
    ----------
    crs : str or object
        Anything pyproj's ``CRS.from_user_input`` takes ("EPSG:32632", WKT, a CRS).
    where : str
        Names the input in messages.
    fix : str
        The advice given when the CRS is geographic (degrees).
    key : str
        What the message calls the CRS before its value (default "crs", the scenario key).
    parameters : tuple of str
        The Python parameters the messages name (the error's ``parameters``).

    Returns
    -------
    str
        The CRS as pyproj writes it.

    Raises
    ------
    InputError
        The CRS is unknown, geographic, or not in metres.
    """
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    try:
        parsed = CRS.from_user_input(crs)
    except CRSError as exc:
        raise InputError(
            f'{where}: {key} "{crs}" is not a CRS pyproj knows: {exc}', parameters=parameters
        ) from exc
    label = parsed.to_string()
    if not parsed.is_projected:
        raise InputError(
            f'{where}: {key} "{label}" is geographic (degrees); {fix}', parameters=parameters
        )
    units = {axis.unit_name for axis in parsed.axis_info}
    if units - {"metre", "meter"}:
        raise InputError(
            f'{where}: {key} "{label}" has units {sorted(units)}; need metres',
            parameters=parameters,
        )
    return label


def _resolve(
    path: Path | None, folder: Path, key: str, filename: str, moved: dict[str, Path] | None = None
) -> Path | None:
    if path is None:
        return None
    full = (folder / path).resolve() if not path.is_absolute() else path
    if moved and str(full) in moved:
        full = Path(moved[str(full)])
    if not full.exists():
        raise InputFileError(f'{filename}: {key} = "{path}": file not found ({full})')
    return full


def load_scenario(path: str | Path, moved: dict[str, Path] | None = None) -> Scenario:
    """Read, validate and resolve a scenario file.

    Parameters
    ----------
    path : str or Path
        The scenario TOML file.
    moved : dict of str to Path, optional
        A file's original absolute path -> where it is now (a packed submission whose
        scenario named files outside its own folder); other paths resolve as written.

    Returns
    -------
    Scenario
        Every key checked, every path absolute and existing.

    Raises
    ------
    InputFileError
        The scenario or a file it names does not exist.
    InputError
        Any key is unknown, missing, of the wrong type or out of range; the CRS is not
        projected in metres.
    """
    path = Path(path)
    raw = _read_toml(path)
    scenario = _validate(raw, path.name)
    _check_needs_hourly(scenario, path.name)
    folder = path.resolve().parent
    return scenario.model_copy(
        update={**_resolved_sections(scenario, folder, path.name, moved), "path": path.resolve()}
    )


def _read_toml(path: Path) -> dict:
    """Step 1 of :func:`load_scenario`: the scenario file's TOML as a dict.

    Raises InputFileError if the file does not exist, InputError if it is not UTF-8 TOML or
    sets the reserved key ``path``.
    """
    if not path.is_file():
        raise InputFileError(f"{path}: scenario file not found")
    try:
        raw = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{path.name}: not valid TOML: {exc}") from exc
    if "path" in raw:
        raise InputError(f"{path.name}: unknown key path")
    return raw


def _validate(raw: dict, filename: str) -> Scenario:
    """Step 2 of :func:`load_scenario`: the pydantic model, and a projected CRS in metres.

    Raises InputError with the first validation error worded by :func:`_format_error`.
    """
    try:
        scenario = Scenario.model_validate(raw)
    except ValidationError as exc:
        raise InputError(_format_error(exc, raw, filename)) from None
    projected_crs(scenario.crs, filename)
    return scenario


def _check_needs_hourly(scenario: Scenario, filename: str) -> None:
    """Step 3 of :func:`load_scenario`: settings that need an hourly record have one.

    Without weather.hourly, a scrubber_design_share, a temperature-dependent emission or a
    weather.direction_step_deg raises InputError.
    """
    hourly_needed = [s.id for s in scenario.sources if s.scrubber_design_share is not None]
    if scenario.weather.hourly is None:
        if hourly_needed or scenario.seasonal.temperature_dependent_emission:
            what = (
                f'source "{hourly_needed[0]}": scrubber_design_share'
                if hourly_needed
                else "seasonal.temperature_dependent_emission"
            )
            raise InputError(
                f"{filename}: {what} needs an hourly weather record with "
                "temperature_c (weather.hourly)"
            )
        if scenario.weather.direction_step_deg is not None:
            raise InputError(
                f"{filename}: weather.direction_step_deg applies to an hourly "
                "record (weather.hourly); a frequency table's sectors set its own"
            )


def _resolved_sections(
    scenario: Scenario, folder: Path, filename: str, moved: dict[str, Path] | None
) -> dict:
    """Step 4 of :func:`load_scenario`: the sections naming files, with absolute paths.

    Files are resolved against ``folder`` (see :func:`_resolve`) in the order weather,
    habitats, receptors, assessment, holding, so the first missing file is the one reported.
    """
    weather = _resolved_weather(scenario.weather, folder, filename, moved)
    habitats = scenario.habitats.model_copy(
        update={"file": _resolve(scenario.habitats.file, folder, "habitats.file", filename, moved)}
    )
    receptors = scenario.receptors
    if receptors is not None:
        receptors = receptors.model_copy(
            update={"file": _resolve(receptors.file, folder, "receptors.file", filename, moved)}
        )
    assessment = scenario.assessment
    if assessment.config_dir is not None:
        assessment = assessment.model_copy(
            update={
                "config_dir": _resolve(
                    assessment.config_dir, folder, "assessment.config_dir", filename, moved
                )
            }
        )
    holding = scenario.holding
    if holding is not None:
        holding = _resolved_holding(holding, folder, filename, moved)
    return {
        "weather": weather,
        "habitats": habitats,
        "receptors": receptors,
        "assessment": assessment,
        "holding": holding,
    }


def _resolved_weather(
    weather: WeatherSection, folder: Path, filename: str, moved: dict[str, Path] | None
) -> WeatherSection:
    """[weather] with its hourly files (always a list) and frequency table resolved.

    Raises InputError if weather.hourly is an empty list, InputFileError if a file is missing.
    """
    hourly = weather.hourly
    if hourly is not None:
        files = hourly if isinstance(hourly, list) else [hourly]
        if not files:
            raise InputError(f"{filename}: weather.hourly: give at least one file")
        hourly = [_resolve(f, folder, "weather.hourly", filename, moved) for f in files]
    return weather.model_copy(
        update={
            "frequency_table": _resolve(
                weather.frequency_table,
                folder,
                "weather.frequency_table",
                filename,
                moved,
            ),
            "hourly": hourly,
        }
    )


def _resolved_holding(
    holding: HoldingSection, folder: Path, filename: str, moved: dict[str, Path] | None
) -> HoldingSection:
    """[holding] with its exclusion layers (first) and its own file resolved."""
    exclusions = [
        e.model_copy(
            update={
                "file": _resolve(e.file, folder, f"holding.exclusion #{i} file", filename, moved)
            }
        )
        for i, e in enumerate(holding.exclusion, start=1)
    ]
    return holding.model_copy(
        update={
            "file": _resolve(holding.file, folder, "holding.file", filename, moved),
            "exclusion": exclusions,
        }
    )
