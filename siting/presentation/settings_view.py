"""The scenario's settings as the report lists them: a label in words with its unit for every
key, only the settings that apply to the run, and which were left at their defaults.

One table, :data:`SETTINGS`, names every key a run record's ``parameters`` can hold (the
scenario model's fields, section by section, ``weather.utc_offset_h``) with its label, when it
applies and, for a key whose default is "none", what that none means. :func:`settings_groups`
turns a run's parameters into the rows of section 2's settings table: a key that does not apply
to the run (an hourly-only setting in a frequency-table run, the placement search's [holding]
in a screening) is left out; one left at its default shows that default marked "(default)".
The defaults are read from the scenario model itself (:mod:`siting.readers.scenario`), so the
two cannot drift apart. The sources, options, title and [project] are shown elsewhere in the
report (:data:`SHOWN_ELSEWHERE`). Formatting only; the template ``report_inputs.html`` lays
the rows out.
"""

from __future__ import annotations

import types
import typing
from collections.abc import Mapping
from typing import Any, NamedTuple

from pydantic import BaseModel

from siting.presentation.html_parts import MiniTable, display_value, text
from siting.readers.scenario import Scenario

__all__ = ["SETTINGS", "SHOWN_ELSEWHERE", "Setting", "setting_label", "settings_groups"]

#: Top-level keys of the parameters not listed among the settings: shown elsewhere in the
#: report (the title and [project] on the cover, the sources in the emission derivation, the
#: options side by side in the summary).
SHOWN_ELSEWHERE = frozenset(
    {"title", "project", "source", "sources", "option", "options", "option_sources", "option_name"}
)

#: When a setting applies to a run: always, with an hourly record or a frequency table only,
#: with plume depletion on, in a placement search only, or only when the scenario gives it.
Applies = typing.Literal["always", "hourly", "table", "depletion", "place", "given"]


class Setting(NamedTuple):
    """One setting as the report shows it: its label (words and unit), when it applies, and
    what a value of none means (None when none is not a value it takes)."""

    label: str
    applies: Applies = "always"
    none: str | None = None
    #: said after a value left at its default, instead of "default"
    default_words: str = "default"


_PLACEHOLDER = "default: an invented placeholder, not a price"

#: Every key the parameters can hold, by its dotted name (``section.key``; a key of the whole
#: file alone), with its setting. tests/test_settings_view.py reads the keys from the scenario
#: model and checks each has a label here.
SETTINGS: dict[str, Setting] = {
    "crs": Setting("Coordinate reference system (projected, in metres)"),
    "path": Setting("Scenario file"),
    # [weather]
    "weather": Setting("Weather and dispersion"),
    "weather.frequency_table": Setting("Weather frequency table (file)", "table"),
    "weather.hourly": Setting("Hourly weather record (file or files)", "hourly"),
    "weather.utc_offset_h": Setting(
        "UTC offset of the record's times [h]", "hourly", "none: the times carry their own offset"
    ),
    "weather.calm_threshold_m_s": Setting("Calm: wind speed below [m/s]", "hourly"),
    "weather.max_missing_percent": Setting("Most missing hours allowed [% of hours]", "hourly"),
    "weather.anemometer_height_m": Setting("Height of the wind measurement (anemometer) [m]"),
    "weather.land_type": Setting("Land type of the dispersion coefficients"),
    "weather.sigma_scheme": Setting("Formulas of the dispersion coefficients"),
    "weather.mixing_height_m": Setting("Mixing height: a reflecting lid [m]", none="none: no lid"),
    "weather.min_wind_speed_m_s": Setting("Lightest wind speed used [m/s]"),
    "weather.station_latitude_deg": Setting("Weather station latitude [°]", "given"),
    "weather.station_longitude_deg": Setting("Weather station longitude [°]", "given"),
    "weather.wind_below_anemometer": Setting("Wind speed below the anemometer height"),
    "weather.wind_profile_min_height_m": Setting("Lowest height of the wind profile [m]"),
    "weather.direction_step_deg": Setting(
        "Step of the hourly wind directions as reported [°]",
        "hourly",
        "none: inferred from the record",
    ),
    "weather.format": Setting("Format of the hourly files", "hourly", "detected from the content"),
    "weather.columns": Setting("Column map of the hourly files", "hourly"),
    "weather.speed_unit": Setting("Unit of the mapped wind speed", "hourly"),
    "weather.direction_unit": Setting("Unit of the mapped wind direction", "hourly"),
    "weather.cloud_unit": Setting("Unit of the mapped cloud cover", "hourly"),
    "weather.ceiling_unit": Setting("Unit of the mapped ceiling", "hourly"),
    "weather.time_format": Setting("Time format of the mapped CSV", "hourly", "none: ISO 8601"),
    "weather.missing_codes": Setting("Missing-value codes of the mapped CSV", "hourly"),
    "weather.flags_ok": Setting("Quality flags that accept a value", "hourly"),
    "weather.grid_point": Setting("Reanalysis grid: value at the site from", "hourly"),
    "weather.screen_by": Setting("Several weather years: screened by", "hourly"),
    # [seasonal]
    "seasonal": Setting("Hour-by-hour emission"),
    "seasonal.temperature_dependent_emission": Setting(
        "Emission following the air temperature, hour by hour",
        "hourly",
        "only for sources given a scrubber design share",
    ),
    "seasonal.emission_coefficient_per_k": Setting(
        "Change of emission per degree of air temperature [1/K]", "hourly"
    ),
    "seasonal.min_ventilation_fraction": Setting(
        "Winter minimum ventilation [% of the maximum rate]", "hourly"
    ),
    "seasonal.ventilation_ramp_start_c": Setting("Ventilation ramp start [°C]", "hourly"),
    "seasonal.ventilation_ramp_end_c": Setting("Ventilation ramp end [°C]", "hourly"),
    # [grid]
    "grid": Setting("Receptor grid"),
    "grid.spacing_m": Setting("Grid spacing [m]"),
    "grid.margin_m": Setting("Grid margin round the sources [m]"),
    "grid.memory_mb": Setting("Memory limit of the computation [MB]"),
    # [deposition]
    "deposition": Setting("Dry deposition"),
    "deposition.plume_depletion": Setting("Plume depleted by what it deposits"),
    "deposition.depletion_land_cover": Setting(
        "Land cover whose deposition velocity depletes the plume", "depletion"
    ),
    # [assessment]
    "assessment": Setting("Assessment of the sites"),
    "assessment.critical_load_end": Setting("End of each critical load range used"),
    "assessment.critical_load_review": Setting("Review of the empirical critical loads"),
    "assessment.config_dir": Setting(
        "Own folder of lookup tables", none="none: the tables bundled with siting"
    ),
    "assessment.rules": Setting("Rule set judging the sites"),
    # [habitats]
    "habitats": Setting("Habitat sites"),
    "habitats.file": Setting("Habitat sites layer (file)"),
    "habitats.layer": Setting("Layer of the file", none="none: the file's first layer"),
    "habitats.name_field": Setting("Field holding the site's name"),
    "habitats.habitat_field": Setting("Field holding the habitat"),
    "habitats.designation_field": Setting("Field holding the designation"),
    "habitats.critical_level_field": Setting(
        "Field overriding the critical level", none="none: the level of the habitat"
    ),
    "habitats.critical_load_field": Setting(
        "Field overriding the critical load", none="none: the load of the habitat"
    ),
    "habitats.background_deposition_field": Setting(
        "Field holding the background deposition", none="none: no background"
    ),
    "habitats.background_concentration_field": Setting(
        "Field holding the background concentration", none="none: no background"
    ),
    "habitats.lichens_bryophytes_field": Setting(
        "Field saying whether lichens and bryophytes are present", none="none"
    ),
    "habitats.lichens_bryophytes_absent": Setting(
        "Sites stated free of lichens and bryophytes", none="none"
    ),
    # [receptors]
    "receptors": Setting("Named receptor points"),
    "receptors.file": Setting("Receptor points (file)"),
    # [holding]: the placement search's (siting place)
    "holding": Setting("Holding (placement search)", "place"),
    "holding.file": Setting("Holding boundary (file)", "place"),
    "holding.layer": Setting("Layer of the file", "place", "none: the file's first layer"),
    "holding.spacing_m": Setting("Spacing of the candidate house positions [m]", "place"),
    "holding.boundary_buffer_m": Setting("Distance kept inside the boundary [m]", "place"),
    "holding.min_distance_to_existing_m": Setting(
        "Distance kept from the other sources [m]", "place"
    ),
    "holding.in_combination": Setting("In combination (no longer used)", "given"),
    "holding.exclusion": Setting("Layers the house keeps away from", "place", "none"),
    "holding.exclusion.file": Setting("File of the layer"),
    "holding.exclusion.layer": Setting("Layer of the file", none="the first"),
    "holding.exclusion.buffer_m": Setting("Distance kept [m]"),
    "holding.exclusion.name": Setting("What it is", none="–"),
    # [appraisal]
    "appraisal": Setting("Abatement appraisal: prices"),
    "appraisal.electricity_eur_per_kwh": Setting(
        "Price of electricity [EUR/kWh]", default_words=_PLACEHOLDER
    ),
    "appraisal.water_eur_per_m3": Setting(
        "Price of fresh water [EUR/m³]", default_words=_PLACEHOLDER
    ),
    "appraisal.acid_eur_per_kg": Setting(
        "Price of sulphuric acid, as 100 % H2SO4 [EUR/kg]", default_words=_PLACEHOLDER
    ),
    "appraisal.effluent_eur_per_m3": Setting(
        "Cost of storing and disposing of scrubber effluent [EUR/m³]",
        default_words=_PLACEHOLDER,
    ),
    "appraisal.interest_percent": Setting(
        "Interest rate of the capital [% per year]", default_words=_PLACEHOLDER
    ),
    "appraisal.life_years": Setting(
        "Life of every technique's investment [years]",
        none="none: each technique's own life (abatement_appraisal.toml)",
    ),
    "appraisal.margin_eur_per_place_yr": Setting(
        "Margin lost per animal place not kept [EUR/place/yr]", default_words=_PLACEHOLDER
    ),
}


def setting_label(key: str) -> str:
    """The label of a dotted setting key (``"weather.utc_offset_h"``): words and unit.

    Parameters
    ----------
    key : str
        A key of :data:`SETTINGS`.

    Returns
    -------
    str
        Its label; a key the table lacks gets its last part, as written (tests keep the table
        complete).
    """
    setting = SETTINGS.get(key)
    return setting.label if setting is not None else key.rsplit(".", 1)[-1]


def _model_of(annotation: Any) -> type[BaseModel] | None:
    """The pydantic model a field holds (through ``X | None`` and ``list[X]``), else None."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    if typing.get_origin(annotation) in (typing.Union, types.UnionType, list):
        for argument in typing.get_args(annotation):
            model = _model_of(argument)
            if model is not None:
                return model
    return None


def _defaults(model: type[BaseModel]) -> dict[str, Any]:
    """Each field's default as run.json records it (JSON values), by the field's name."""
    defaults = {}
    for name, field in model.model_fields.items():
        if field.is_required():
            continue
        default = field.get_default(call_default_factory=True)
        defaults[name] = [] if isinstance(default, (list, tuple)) and not default else default
    return defaults


def _applies(setting: Setting, value: Any, run: Mapping[str, bool]) -> bool:
    """Whether a setting applies to the run (``run``: hourly, depletion, place)."""
    if setting.applies == "always":
        return True
    if setting.applies == "given":
        return value is not None and value is not False
    if setting.applies == "table":
        return not run["hourly"]
    return bool(run[setting.applies])


def _shown(key: str, value: Any, setting: Setting) -> Any:
    """A setting's value as shown: its none words, a table of records (exclusion layers)
    with labelled columns, or the value formatted by its key."""
    if value is None or (isinstance(value, list) and not value and setting.none is not None):
        return setting.none if setting.none is not None else text(value)
    name = key.rsplit(".", 1)[-1]
    if isinstance(value, list) and value and all(isinstance(v, Mapping) for v in value):
        columns = list(dict.fromkeys(k for row in value for k in row))
        return MiniTable(
            head=tuple(setting_label(f"{key}.{c}") for c in columns),
            rows=tuple(
                tuple(
                    _shown(f"{key}.{c}", row.get(c), SETTINGS.get(f"{key}.{c}", Setting(c)))
                    for c in columns
                )
                for row in value
            ),
        )
    return display_value(name, value)


def settings_groups(
    parameters: Mapping[str, Any], command: str = "screen"
) -> list[tuple[str, list[tuple[str, Any, str | None]]]]:
    """The settings table of a run: groups of (label, value as shown, default words or None).

    Parameters
    ----------
    parameters : mapping
        run.json's ``parameters`` (the scenario as validated, defaults filled in).
    command : str
        The command that made the run: the [holding] settings apply to ``"place"`` only.

    Returns
    -------
    list of (heading, rows)
        "General" first (the file's own keys), then one group per section present, in the
        file's order; each row (label, shown, words) where ``words`` is what to say after a
        value left at its default ("default") and None for a value the scenario set. A
        setting that does not apply to the run is left out, and so is a group left empty.
    """
    weather = parameters.get("weather") or {}
    deposition = parameters.get("deposition") or {}
    run = {
        "hourly": weather.get("hourly") is not None,
        "depletion": bool(deposition.get("plume_depletion")),
        "place": command == "place",
    }
    general: list[tuple[str, Any, str | None]] = []
    groups: list[tuple[str, list[tuple[str, Any, str | None]]]] = [("General", general)]
    top_defaults = _defaults(Scenario)
    for key, value in parameters.items():
        if key in SHOWN_ELSEWHERE:
            continue
        field = Scenario.model_fields.get(key)
        model = _model_of(field.annotation) if field is not None else None
        if isinstance(value, Mapping) and model is not None:
            section = SETTINGS.get(key, Setting(key))
            if not _applies(section, value, run):
                continue
            defaults = _defaults(model)
            rows = [_row(f"{key}.{name}", v, defaults, name, run) for name, v in value.items()]
            groups.append((section.label, [r for r in rows if r is not None]))
        elif not isinstance(value, (Mapping, list)) or not any(
            isinstance(v, Mapping) for v in value
        ):
            row = _row(key, value, top_defaults, key, run)
            if row is not None:
                general.append(row)
    return [(heading, rows) for heading, rows in groups if rows]


def _row(
    key: str, value: Any, defaults: Mapping[str, Any], name: str, run: Mapping[str, bool]
) -> tuple[str, Any, str | None] | None:
    """One row of the settings table, or None when the setting does not apply to the run."""
    setting = SETTINGS.get(key, Setting(key))
    if not _applies(setting, value, run):
        return None
    at_default = name in defaults and value == defaults[name]
    return setting.label, _shown(key, value, setting), setting.default_words if at_default else None
