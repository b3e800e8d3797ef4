"""The shape of every config/ lookup table, as pydantic models (one validation system).

An adapter, like the scenario's models: each TOML table file is a model whose sections are
lists of row models. Rows are strict (no text or boolean taken for a number, floats accept
whole numbers), never NaN or infinite, in range, and carry a non-empty ``source``; a missing
section, row key or value of the wrong type is one :class:`~siting.errors.InputError` naming
the file, the row (number and id) and the key. Rows may carry extra keys for people (a
description, a EUNIS code): they are kept, not checked. No physics here.
"""

from __future__ import annotations

import difflib
from typing import Annotated, Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StringConstraints,
    ValidationError,
    model_validator,
)

from siting.errors import InputError, validation_wording

STABILITY = Literal["A", "B", "C", "D", "E", "F"]
Text = Annotated[str, StringConstraints(strip_whitespace=True, min_length=1)]
NonNegative = Annotated[float, Field(ge=0)]
Positive = Annotated[float, Field(gt=0)]
Percent = Annotated[float, Field(ge=0, le=100)]
Number = float


class _Strict(BaseModel):
    model_config = ConfigDict(strict=True, allow_inf_nan=False, extra="forbid")


class _Row(_Strict):
    """A table row: its source is required; extra keys (for people) are kept unchecked."""

    model_config = ConfigDict(extra="allow")
    source: Text


class FactorRow(_Row):
    livestock: Text
    housing: Text
    nh3_kg_per_place_yr: NonNegative


class Uncertainty(_Strict):
    emission_factor_percent: Annotated[float, Field(gt=0, lt=100)]
    source: Text


class TechniqueRow(_Row):
    id: Text
    name: Text
    kind: Literal["scrubber", "housing_measure"]
    reduction_percent_min: Percent
    reduction_percent_max: Percent
    reduction_percent_typical: Percent | None = None
    effluent_kg_n_per_m3: NonNegative | None = None

    @model_validator(mode="before")
    @classmethod
    def _older_name(cls, data):
        # older tables named the typical figure reduction_percent_default
        if isinstance(data, dict) and "reduction_percent_default" in data:
            data = dict(data)
            data.setdefault("reduction_percent_typical", data.pop("reduction_percent_default"))
        return data

    @model_validator(mode="after")
    def _ordered(self):
        if self.reduction_percent_typical is None:
            self.reduction_percent_typical = self.reduction_percent_min
        lo, mid, hi = (
            self.reduction_percent_min,
            self.reduction_percent_typical,
            self.reduction_percent_max,
        )
        if not lo <= mid <= hi:
            raise ValueError(f"need min <= typical <= max <= 100, got {lo:g}, {mid:g}, {hi:g}")
        return self


class HabitatRow(_Row):
    id: Text
    name: Text
    critical_load_min_kg_n_ha_yr: Positive
    critical_load_max_kg_n_ha_yr: Positive
    land_cover: Text
    lichens_bryophytes: bool
    critical_load_2022_min_kg_n_ha_yr: Positive | None = None
    critical_load_2022_max_kg_n_ha_yr: Positive | None = None
    source_2022: Text | None = None

    @model_validator(mode="after")
    def _ranges(self):
        if self.critical_load_min_kg_n_ha_yr > self.critical_load_max_kg_n_ha_yr:
            raise ValueError("critical_load_min_kg_n_ha_yr is above the max")
        review = {
            "critical_load_2022_min_kg_n_ha_yr": self.critical_load_2022_min_kg_n_ha_yr,
            "critical_load_2022_max_kg_n_ha_yr": self.critical_load_2022_max_kg_n_ha_yr,
            "source_2022": self.source_2022,
        }
        missing = sorted(k for k, v in review.items() if v is None)
        if missing and len(missing) < 3:  # the 2022 review's range: all three keys or none
            raise ValueError(
                f"missing key {', '.join(missing)} (the 2022 range needs its min, "
                "max and source_2022)"
            )
        if not missing and (
            self.critical_load_2022_min_kg_n_ha_yr > self.critical_load_2022_max_kg_n_ha_yr
        ):
            raise ValueError(
                "need critical_load_2022_min <= critical_load_2022_max, got "
                f"{self.critical_load_2022_min_kg_n_ha_yr:g}, "
                f"{self.critical_load_2022_max_kg_n_ha_yr:g}"
            )
        return self


class LevelRow(_Row):
    id: Text
    critical_level_ug_m3: Positive


class LandCoverRow(_Row):
    id: Text
    deposition_velocity_m_s: Positive
    deposition_velocity_min_m_s: Positive
    deposition_velocity_max_m_s: Positive

    @model_validator(mode="after")
    def _ordered(self):
        lo, mid, hi = (
            self.deposition_velocity_min_m_s,
            self.deposition_velocity_m_s,
            self.deposition_velocity_max_m_s,
        )
        if not lo <= mid <= hi:
            raise ValueError(
                f"need deposition_velocity_min_m_s <= deposition_velocity_m_s <= "
                f"deposition_velocity_max_m_s, got {lo:g}, {mid:g}, {hi:g}"
            )
        return self


class TierRow(_Row):
    id: Text
    name: Text | None = None
    threshold_percent: Annotated[float, Field(gt=0, le=100)]
    designations: Annotated[list[Text], Field(min_length=1)]


class Coefficients(_Strict):
    a: Number
    b: Number
    c: Number


class BriggsRow(_Row):
    land_type: Literal["rural", "urban"]
    stability: STABILITY
    sigma_y: Coefficients
    sigma_z: Coefficients


class PasquillSigmaY(_Strict):
    c: Positive
    d: Number


class PasquillGiffordRow(_Row):
    stability: STABILITY
    sigma_y: PasquillSigmaY
    # each band: [upper end of the band's distance range in km, a, b] of sigma_z = a x^b
    sigma_z_bands: Annotated[
        list[Annotated[list[Positive], Field(min_length=3, max_length=3)]], Field(min_length=1)
    ]


class WindExponentRow(_Row):
    stability: STABILITY
    rural: Annotated[float, Field(ge=0, le=1)]
    urban: Annotated[float, Field(ge=0, le=1)]


class EmissionFactorsFile(_Strict):
    factor: Annotated[list[FactorRow], Field(min_length=1)]
    uncertainty: Uncertainty | None = None


class AbatementFile(_Strict):
    technique: Annotated[list[TechniqueRow], Field(min_length=1)]


class CriticalLoadsFile(_Strict):
    habitat: Annotated[list[HabitatRow], Field(min_length=1)]


class CriticalLevelsFile(_Strict):
    level: Annotated[list[LevelRow], Field(min_length=1)]


class DepositionVelocitiesFile(_Strict):
    land_cover: Annotated[list[LandCoverRow], Field(min_length=1)]


class ThresholdsFile(_Strict):
    tier: Annotated[list[TierRow], Field(min_length=1)]


class DispersionFile(_Strict):
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
    """The table's data checked and normalised (rows as plain dicts, whole numbers as floats,
    optional keys that are absent left out), or an InputError naming file, row and key."""
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
