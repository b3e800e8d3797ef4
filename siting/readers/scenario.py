"""The scenario file: TOML -> validated :class:`Scenario`.

An adapter: reads the TOML, validates every key with pydantic (unknown keys, missing fields,
types, units and ranges), checks the CRS is projected in metres, resolves relative paths against
the scenario file's folder and checks that the files exist. Any problem becomes one
:class:`~siting.errors.InputError` naming the key (or file) before anything is computed or
written. No physics here.

The sections' models are in ``scenario_sections.py`` and the sources' in
``scenario_sources.py``; this module holds the whole file's model, the wording of its errors,
the CRS check and the loading (read, validate, check, resolve paths).
"""

from __future__ import annotations

import tomllib
from pathlib import Path

from pydantic import (
    BaseModel,
    Field,
    ValidationError,
    field_validator,
    model_validator,
)

from siting.errors import InputError, InputFileError, validation_wording
from siting.readers.scenario_appraisal import AppraisalSection
from siting.readers.scenario_options import OptionSpec, SourceChange, apply_option
from siting.readers.scenario_sections import (
    AssessmentSection,
    DepositionSection,
    FilePath,
    GridSection,
    HabitatsSection,
    HoldingSection,
    ProjectSection,
    ReceptorsSection,
    SeasonalSection,
    WeatherSection,
    _Section,
)
from siting.readers.scenario_sources import SourceSpec
from siting.readers.tables import suggest


class Scenario(_Section):
    """A whole scenario file, validated. Paths are absolute after :func:`load_scenario`.

    Attributes
    ----------
    title : str
        Title shown in every output.
    crs : str
        Projected CRS in metres; every x/y of the file is in it.
    project : ProjectSection, optional
        [project]: applicant, site, reference, author and date, for the report's cover.
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
    appraisal : AppraisalSection
        [appraisal]: the prices and interest rate of the abatement appraisal (invented
        placeholders where left out).
    sources, source : list of SourceSpec
        The [[source]] tables (attribute ``sources``; ``source`` in the file): the base
        scenario's, or an option's after :meth:`with_option`.
    option_sources : list of SourceSpec
        The [[source]] tables with ``options = [...]``: in those options only.
    options, option : list of OptionSpec
        The [[option]] tables (attribute ``options``; ``option`` in the file).
    option_name : str, optional
        The option these sources are (set by :meth:`with_option`); None for the base.
    option_base_sources : list of SourceSpec, optional
        The base's sources, on a scenario made by :meth:`with_option` (not in the file).
    path : Path, optional
        The scenario file.
    """

    title: str = Field(min_length=1, max_length=200)
    crs: str
    project: ProjectSection | None = None
    weather: WeatherSection
    grid: GridSection = GridSection()
    deposition: DepositionSection = DepositionSection()
    assessment: AssessmentSection = AssessmentSection()
    seasonal: SeasonalSection = SeasonalSection()
    habitats: HabitatsSection
    receptors: ReceptorsSection | None = None
    holding: HoldingSection | None = None
    appraisal: AppraisalSection = AppraisalSection()
    sources: list[SourceSpec] = Field(alias="source", min_length=1)
    option_sources: list[SourceSpec] = []
    options: list[OptionSpec] = Field([], alias="option")
    option_name: str | None = None
    path: FilePath | None = None
    # the base's sources, on a scenario made by with_option (not part of the file or its dump)
    option_base_sources: list[SourceSpec] | None = Field(None, exclude=True)

    @model_validator(mode="before")
    @classmethod
    def _split_option_sources(cls, raw):
        # a [[source]] with options = [...] exists in those options only, not in the base
        if not isinstance(raw, dict):
            return raw
        for key in ("option_sources", "option_name", "option_base_sources"):
            if key in raw:
                raise ValueError(f"unknown key {key}")
        listed = raw.get("source")
        if not isinstance(listed, list):
            return raw
        own = [s for s in listed if isinstance(s, dict) and "options" in s]
        if not own:
            return raw
        base = [s for s in listed if not (isinstance(s, dict) and "options" in s)]
        return {**raw, "source": base, "option_sources": own}

    @model_validator(mode="after")
    def _options_apply(self):
        names = [o.name for o in self.options]
        for name in names:
            if names.count(name) > 1:
                raise ValueError(f'duplicate option name "{name}"')
        seen = {s.id for s in self.sources}
        for src in self.option_sources:
            if src.id in seen:
                raise ValueError(f'duplicate source id "{src.id}"')
            seen.add(src.id)
            unknown = [n for n in src.options if n not in names]
            if unknown:
                raise ValueError(
                    f'source "{src.id}": options names no [[option]] "{unknown[0]}" '
                    f"(options: {', '.join(names) or 'none'})"
                )
        for option in self.options:
            if not apply_option(option, self.sources, self.option_sources):
                raise ValueError(f'option "{option.name}" leaves no source')
        return self

    def with_option(self, name: str) -> Scenario:
        """The scenario as option ``name`` has it: its sources changed, the rest unchanged.

        Parameters
        ----------
        name : str
            An [[option]]'s name.

        Returns
        -------
        Scenario
            ``sources`` are the option's (:func:`apply_option`), ``option_name`` is ``name``;
            the options themselves stay, so the grid still covers every option's sources.

        Raises
        ------
        KeyError
            No option of that name.
        """
        option = next((o for o in self.options if o.name == name), None)
        if option is None:
            raise KeyError(name)
        base = self.base_sources
        return self.model_copy(
            update={
                "sources": apply_option(option, base, self.option_sources),
                "option_name": name,
                "option_base_sources": base,
            }
        )

    @property
    def base_sources(self) -> list[SourceSpec]:
        """The base scenario's sources (also on a scenario made by :meth:`with_option`)."""
        return self.option_base_sources if self.option_name is not None else self.sources

    @property
    def layout_points(self) -> tuple[list[float], list[float]]:
        """x and y [m] of every source of the base and of every option (the grid covers all)."""
        points = [(s.x, s.y) for s in self.base_sources]
        for option in self.options:
            points += [
                (s.x, s.y) for s in apply_option(option, self.base_sources, self.option_sources)
            ]
        return [x for x, _ in points], [y for _, y in points]

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


#: Lists of tables in an error location: key -> (table in the file, label, naming key).
_LISTS = {
    "source": ("source", "source", "id"),
    "option_sources": ("source", "source", "id"),
    "option": ("option", "option", "name"),
}


def _entries(raw: dict, key: str) -> list[dict]:
    """The raw tables an error location's list ``key`` indexes (the base's [[source]] tables
    and those of options are two lists once validated: see Scenario._split_option_sources)."""
    listed = raw.get("option" if key == "option" else "source") or []
    tables = [t if isinstance(t, dict) else {} for t in listed]
    if key == "option":
        return tables
    return [t for t in tables if ("options" in t) == (key == "option_sources")]


def _where(loc: tuple, raw: dict) -> tuple[str, str]:
    """(section, key) of an error location, e.g. ('source "H2"', 'height_m')."""
    section, keys = [], []
    i = 0
    while i < len(loc):
        key = loc[i]
        if key in _LISTS and i + 1 < len(loc) and isinstance(loc[i + 1], int):
            table, label, name = _LISTS[key]
            entries = _entries(raw, key)
            idx = loc[i + 1]
            given = entries[idx].get(name) if idx < len(entries) else None
            section.append(f'{label} "{given}"' if given else f"[[{table}]] #{idx + 1}")
            i += 2
            continue
        if isinstance(key, str):
            (keys if section or keys or key not in _SECTIONS else section).append(key)
        elif isinstance(key, int) and (keys or section):  # a row of a list: #1, #2, ...
            target = keys if keys else section
            target[-1] += f" #{key + 1}"
        i += 1
    return ".".join(section), ".".join(keys)


_SECTIONS = (
    "project",
    "weather",
    "grid",
    "deposition",
    "assessment",
    "habitats",
    "receptors",
    "appraisal",
)


def _known_keys(loc: tuple) -> list[str]:
    """Field names allowed where an unknown key was found (for a suggestion)."""
    if len(loc) >= 2 and loc[0] == "option" and "change" in loc[:-1]:
        return list(SourceChange.model_fields)
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
        return f"{prefix}: {key + ': ' if key else ''}{msg}, got {_shown(got)}"
    return f"{prefix}: {key} {validation_wording(err)}"


#: Longest text of a refused value an error message repeats [characters]; a longer one is cut.
_SHOWN_MAX = 60


def _shown(value) -> str:
    """A refused value as an error message repeats it: its repr, a long text cut short."""
    if isinstance(value, str) and len(value) > _SHOWN_MAX:
        return f"{value[:_SHOWN_MAX]!r}... ({len(value)} characters)"
    return repr(value)


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


def _names_a_file(rules: str) -> bool:
    """Whether [assessment] rules names a file (a path) rather than a bundled rule set id."""
    return "/" in rules or "\\" in rules or rules.endswith(".toml")


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
    if _names_a_file(assessment.rules):
        rules = _resolve(Path(assessment.rules), folder, "assessment.rules", filename, moved)
        assessment = assessment.model_copy(update={"rules": str(rules)})
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


def named_files(path: str | Path) -> dict[str, str]:
    """The files a scenario file names, as written, by the key its run record gives each.

    The keys are those of run.json's ``inputs`` and of the package map (``weather``,
    ``weather_2``, ..., ``habitats``, ``receptors``, ``rules``, ``holding``, ``exclusion_1``,
    ...), and ``config_dir`` for its own tables folder; the values are the texts of the file,
    unresolved. ``siting verify`` uses them to find each packed copy wherever the scenario
    named the file (an absolute path included). Nothing is validated beyond the TOML itself.

    Parameters
    ----------
    path : str or Path
        The scenario file.

    Returns
    -------
    dict of str to str

    Raises
    ------
    InputFileError, InputError
        As :func:`load_scenario` raises them for a missing or unreadable file.
    """
    raw = _read_toml(Path(path))

    def table(value) -> dict:
        return value if isinstance(value, dict) else {}

    found: dict[str, object] = {}
    weather = table(raw.get("weather"))
    hourly = weather.get("hourly")
    records = hourly if isinstance(hourly, list) else [hourly or weather.get("frequency_table")]
    for i, record in enumerate(records, start=1):
        found["weather" if i == 1 else f"weather_{i}"] = record
    found["habitats"] = table(raw.get("habitats")).get("file")
    found["receptors"] = table(raw.get("receptors")).get("file")
    assessment = table(raw.get("assessment"))
    rules = assessment.get("rules")
    if isinstance(rules, str) and _names_a_file(rules):
        found["rules"] = rules
    found["config_dir"] = assessment.get("config_dir")
    holding = table(raw.get("holding"))
    found["holding"] = holding.get("file")
    exclusions = holding.get("exclusion")
    for i, exclusion in enumerate(exclusions if isinstance(exclusions, list) else [], start=1):
        found[f"exclusion_{i}"] = table(exclusion).get("file")
    return {key: value for key, value in found.items() if isinstance(value, str) and value}
