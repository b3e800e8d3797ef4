"""The shape of every config/ lookup table, as pydantic models (one validation system).

An adapter, like the scenario's models: each TOML table file is a model whose sections are
lists of row models. Rows are strict (no text or boolean taken for a number, floats accept
whole numbers), never NaN or infinite, in range, and carry a non-empty ``source``; a missing
section, row key or value of the wrong type is one :class:`~siting.errors.InputError` naming
the file, the row (number and id) and the key. Rows may carry extra keys for people (a
description, a EUNIS code): they are kept, not checked. No physics here.

The row models are in ``table_rows.py`` (abatement_appraisal.toml's rows and file in
``table_appraisal.py``); this module holds the files' models (their sections
and the rules across rows), ``SCHEMAS`` and :func:`validate_table` with its messages.
"""

from __future__ import annotations

import difflib
from typing import Annotated

from pydantic import BaseModel, Field, ValidationError, model_validator

from siting.errors import InputError, validation_wording
from siting.readers.table_appraisal import APPRAISAL_FILE, AbatementAppraisalFile
from siting.readers.table_rows import (
    STABILITY,
    BriggsRow,
    FactorRow,
    HabitatRow,
    LandCoverRow,
    LevelRow,
    PasquillGiffordRow,
    TechniqueRow,
    TierRow,
    Uncertainty,
    WindExponentRow,
    _Strict,
)


class EmissionFactorsFile(_Strict):
    """emission_factors.toml: the emission factors and their uncertainty.

    Attributes
    ----------
    factor : list of FactorRow
        One or more rows; each livestock and housing pair once.
    uncertainty : Uncertainty, optional
        The factors' relative uncertainty, for the sensitivity.
    """

    factor: Annotated[list[FactorRow], Field(min_length=1)]
    uncertainty: Uncertainty | None = None


class AbatementFile(_Strict):
    """abatement.toml: the abatement techniques.

    Attributes
    ----------
    technique : list of TechniqueRow
        One or more rows, unique ids.
    """

    technique: Annotated[list[TechniqueRow], Field(min_length=1)]


class CriticalLoadsFile(_Strict):
    """critical_loads.toml: the habitat types and their critical loads.

    Attributes
    ----------
    habitat : list of HabitatRow
        One or more rows, unique ids.
    """

    habitat: Annotated[list[HabitatRow], Field(min_length=1)]


class CriticalLevelsFile(_Strict):
    """critical_levels.toml: the ammonia critical levels.

    Attributes
    ----------
    level : list of LevelRow
        One or more rows, unique ids.
    """

    level: Annotated[list[LevelRow], Field(min_length=1)]


class DepositionVelocitiesFile(_Strict):
    """deposition_velocities.toml: the dry deposition velocities by land cover.

    Attributes
    ----------
    land_cover : list of LandCoverRow
        One or more rows, unique ids.
    """

    land_cover: Annotated[list[LandCoverRow], Field(min_length=1)]


class ThresholdsFile(_Strict):
    """thresholds.toml: the screening thresholds by designation tier.

    Attributes
    ----------
    tier : list of TierRow
        One or more rows, unique ids.
    """

    tier: Annotated[list[TierRow], Field(min_length=1)]


class DispersionFile(_Strict):
    """dispersion.toml: dispersion coefficients and wind-profile exponents.

    Every section covers the six classes A-F (the Briggs rows for both land types).

    Attributes
    ----------
    briggs : list of BriggsRow
        Briggs (1973) coefficients, rural and urban.
    pasquill_gifford : list of PasquillGiffordRow
        Pasquill-Gifford curve fits (rural).
    wind_exponent : list of WindExponentRow
        Wind-profile exponents.
    """

    briggs: Annotated[list[BriggsRow], Field(min_length=1)]
    pasquill_gifford: Annotated[list[PasquillGiffordRow], Field(min_length=1)]
    wind_exponent: Annotated[list[WindExponentRow], Field(min_length=1)]

    @model_validator(mode="after")
    def _cover_all_classes(self):
        wanted = set(STABILITY.__args__)
        for land_type in ("rural", "urban"):
            have = {r.stability for r in self.briggs if r.land_type == land_type}
            if have != wanted:
                raise ValueError(
                    f"Briggs {land_type} rows must cover classes A-F, got "
                    f"{''.join(sorted(have)) or 'none'}"
                )
        for name, rows in (
            ("pasquill_gifford", self.pasquill_gifford),
            ("wind_exponent", self.wind_exponent),
        ):
            have = {r.stability for r in rows}
            if have != wanted:
                raise ValueError(
                    f"[[{name}]] rows must cover classes A-F, got {''.join(sorted(have)) or 'none'}"
                )
        return self


#: table name -> (file name, model of the file, the id key of its rows or None)
SCHEMAS: dict[str, tuple[str, type[_Strict], str | None]] = {
    "emission_factors": ("emission_factors.toml", EmissionFactorsFile, None),
    "abatement": ("abatement.toml", AbatementFile, "id"),
    "critical_loads": ("critical_loads.toml", CriticalLoadsFile, "id"),
    "critical_levels": ("critical_levels.toml", CriticalLevelsFile, "id"),
    "deposition_velocities": ("deposition_velocities.toml", DepositionVelocitiesFile, "id"),
    "thresholds": ("thresholds.toml", ThresholdsFile, "id"),
    "dispersion": ("dispersion.toml", DispersionFile, None),
    # ids and livestock checked once each by the file's model (its rows have either key)
    "abatement_appraisal": (APPRAISAL_FILE, AbatementAppraisalFile, None),
}


def _row_label(raw: dict, section: str, index: int) -> str:
    rows = raw.get(section)
    row = rows[index] if isinstance(rows, list) and index < len(rows) else None
    label = f"[[{section}]] row {index + 1}"
    if isinstance(row, dict):
        name = row.get("id", row.get("livestock"))
        if name is not None:
            label += f' ("{name}"' + (f', "{row["housing"]}")' if "housing" in row else ")")
        elif "stability" in row:
            label += f" (class {row['stability']}" + (
                f", {row['land_type']})" if "land_type" in row else ")"
            )
    return label


def _key(parts) -> str:
    """A key path in words: sigma_y.a, sigma_z_bands item 2 (items counted from 1)."""
    text = ""
    for part in parts:
        text += f" item {part + 1}" if isinstance(part, int) else (f".{part}" if text else part)
    return text


def _message(exc: ValidationError, raw: dict, filename: str, model: type[BaseModel]) -> str:
    """One line naming file, section, row and key of the first error."""
    errors = sorted(exc.errors(), key=lambda e: e["type"] != "missing")
    err = errors[0]
    loc = [
        k
        for k in err["loc"]
        if not (isinstance(k, str) and ("[" in k or k.startswith("function-")))
    ]
    kind = err["type"]
    if not loc:
        return f"{filename}: {err['msg'].removeprefix('Value error, ')}"
    section = str(loc[0])
    if len(loc) == 1:
        if kind == "missing":
            return f"{filename}: missing section [[{section}]] (one or more rows)"
        if kind == "extra_forbidden":
            close = difflib.get_close_matches(section, list(model.model_fields), n=1)
            hint = f'; did you mean "{close[0]}"?' if close else ""
            return f"{filename}: unknown section {section}{hint}"
        if kind in ("list_type", "too_short"):
            return f"{filename}: expected one or more [[{section}]] rows"
        return f"{filename}, [{section}]: {validation_wording(err)}"
    where = (
        f"{filename}, {_row_label(raw, section, loc[1])}"
        if isinstance(loc[1], int)
        else f"{filename}, [{section}]"
    )
    key = _key(loc[2:] if isinstance(loc[1], int) else loc[1:])
    if kind == "missing":
        return f"{where}: missing key {key}"
    if kind == "extra_forbidden":
        return f"{where}: unknown key {key}"
    if kind == "model_type" and not key:
        return f"{where}: must be a table of keys, got {err.get('input')!r}"
    if key == "source" or (kind == "string_too_short" and key.endswith("source")):
        return f"{where}: every row needs a non-empty source"
    return f"{where}: {key + ' ' if key else ''}{validation_wording(err)}"


def _first_repeat(keys) -> int | None:
    """Position of the first key that came before, or None when all differ."""
    seen = set()
    for i, key in enumerate(keys):
        if key in seen:
            return i
        seen.add(key)
    return None


def validate_table(name: str, raw: dict, filename: str) -> dict:
    """The table's data checked and normalised, or an InputError naming file, row and key.

    Rows come back as plain dicts, whole numbers as floats, optional keys that are absent left
    out.

    Parameters
    ----------
    name : str
        The table's name, a key of ``SCHEMAS`` ("emission_factors", "abatement", ...).
    raw : dict
        The table as read from its TOML file.
    filename : str
        The file's name, for messages.

    Returns
    -------
    dict
        Section name -> list of rows (or a table), as the model dumps it.

    Raises
    ------
    InputError
        A missing section, row or key, a wrong type, NaN or inf, a value out of range, an
        empty source, or a repeated id (or livestock and housing pair).
    """
    _, model, id_key = SCHEMAS[name]
    try:
        table = model.model_validate(raw)
    except ValidationError as exc:
        raise InputError(_message(exc, raw, filename, model)) from None
    data = table.model_dump(exclude_none=True)
    if id_key:
        for section, rows in data.items():
            if not isinstance(rows, list):
                continue
            i = _first_repeat(row[id_key] for row in rows)
            if i is not None:
                raise InputError(
                    f"{filename}, {_row_label(raw, section, i)}: id "
                    f'"{rows[i][id_key]}" appears twice; each row needs its own'
                )
    if name == "emission_factors":
        i = _first_repeat((row["livestock"], row["housing"]) for row in data["factor"])
        if i is not None:
            raise InputError(
                f"{filename}, {_row_label(raw, 'factor', i)}: this livestock "
                "and housing appear twice; each pair needs one row"
            )
    return data
