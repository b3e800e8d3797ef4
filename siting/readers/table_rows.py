"""The rows of the config/ lookup tables, as pydantic models (one per kind of row).

Each row model checks its keys: strict types (no text or boolean taken for a number, floats
accept whole numbers), never NaN or infinite, in range, ordered ranges, and a non-empty
``source``. Extra keys of a row (a description, a EUNIS code) are kept for people, unchecked.
The files' models, which hold lists of these rows, and the validation with its one-line
messages are in ``table_schema.py``.
"""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field, StringConstraints, model_validator

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
    """A [[factor]] row of emission_factors.toml: the ammonia emitted per animal place.

    Attributes
    ----------
    livestock, housing : str
        The animal category and housing system the factor is for (a unique pair).
    nh3_kg_per_place_yr : float
        Emission factor [kg NH3 place-1 yr-1], >= 0.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    livestock: Text
    housing: Text
    nh3_kg_per_place_yr: NonNegative


class Uncertainty(_Strict):
    """The [uncertainty] table of emission_factors.toml: the sensitivity's +-u on every factor.

    Attributes
    ----------
    emission_factor_percent : float
        Relative uncertainty of the factors [%], in (0, 100).
    source : str
        Where the figure comes from; never empty.
    """

    emission_factor_percent: Annotated[float, Field(gt=0, lt=100)]
    source: Text


class TechniqueRow(_Row):
    """A [[technique]] row of abatement.toml: an abatement technique and its published range.

    An older table's ``reduction_percent_default`` is read as ``reduction_percent_typical``;
    without either, the typical figure is the range's lower end.

    Attributes
    ----------
    id, name : str
        The technique's id (as a scenario names it) and its name in words.
    kind : {"scrubber", "housing_measure"}
        A scrubber (its removed ammonia ends in the effluent) or a housing measure.
    reduction_percent_min, reduction_percent_max : float
        The published range of the reduction [%], min <= max <= 100; the min is used when a
        scenario states no reduction.
    reduction_percent_typical : float, optional
        A typical figure [%], for information, within the range.
    effluent_kg_n_per_m3 : float, optional
        Nitrogen content of a scrubber's effluent [kg N m-3], >= 0.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

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
    """A [[habitat]] row of critical_loads.toml: a habitat type and its critical-load ranges.

    Attributes
    ----------
    id, name : str
        The habitat's id (as a habitat layer names it) and its name in words.
    critical_load_min_kg_n_ha_yr, critical_load_max_kg_n_ha_yr : float
        The 2011 review's range [kg N ha-1 yr-1], > 0, min <= max.
    land_cover : str
        Land cover (deposition_velocities.toml id) giving the site's deposition velocity.
    lichens_bryophytes : bool
        Whether lichens and bryophytes are important in the habitat (the level's wording only).
    critical_load_2022_min_kg_n_ha_yr, critical_load_2022_max_kg_n_ha_yr : float, optional
        The 2022 review's range [kg N ha-1 yr-1]; both with ``source_2022`` or none.
    source_2022 : str, optional
        The 2022 range's source.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

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
    """A [[level]] row of critical_levels.toml: an ammonia critical level.

    Attributes
    ----------
    id : str
        "lichens_bryophytes" or "higher_plants".
    critical_level_ug_m3 : float
        The annual-mean critical level [ug NH3 m-3], > 0.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    id: Text
    critical_level_ug_m3: Positive


class LandCoverRow(_Row):
    """A [[land_cover]] row of deposition_velocities.toml: a dry deposition velocity and its range.

    Attributes
    ----------
    id : str
        The land cover's id.
    deposition_velocity_m_s : float
        The screening value [m s-1], > 0.
    deposition_velocity_min_m_s, deposition_velocity_max_m_s : float
        The range the sensitivity looks across [m s-1], min <= value <= max.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

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
    """A [[tier]] row of thresholds.toml: a screening threshold and the designations it applies to.

    Attributes
    ----------
    id : str
        The tier's id ("international", "national", "local", ...).
    name : str, optional
        The tier in words.
    threshold_percent : float
        Screening threshold [% of the critical level or load], in (0, 100].
    designations : list of str
        Designation names found in habitat layers (matched case-insensitively); at least one.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    id: Text
    name: Text | None = None
    threshold_percent: Annotated[float, Field(gt=0, le=100)]
    designations: Annotated[list[Text], Field(min_length=1)]


class Coefficients(_Strict):
    """Briggs coefficients (a, b, c) of sigma = a x (1 + b x)^c, x in metres.

    Attributes
    ----------
    a, b, c : float
        a [-], b [m-1], c [-].
    """

    a: Number
    b: Number
    c: Number


class BriggsRow(_Row):
    """A [[briggs]] row of dispersion.toml: Briggs (1973) sigma coefficients for one class.

    Attributes
    ----------
    land_type : {"rural", "urban"}
        The land type the row is for.
    stability : {"A", "B", "C", "D", "E", "F"}
        The Pasquill class.
    sigma_y, sigma_z : Coefficients
        The lateral and vertical coefficients.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    land_type: Literal["rural", "urban"]
    stability: STABILITY
    sigma_y: Coefficients
    sigma_z: Coefficients


class PasquillSigmaY(_Strict):
    """Pasquill-Gifford sigma_y curve fit (c, d) of one class: theta = c - d ln(x [km]) [deg].

    Attributes
    ----------
    c : float
        [deg], > 0.
    d : float
        [deg].
    """

    c: Positive
    d: Number


class PasquillGiffordRow(_Row):
    """A [[pasquill_gifford]] row of dispersion.toml: the rural curve fits of one class.

    Attributes
    ----------
    stability : {"A", "B", "C", "D", "E", "F"}
        The Pasquill class.
    sigma_y : PasquillSigmaY
        The lateral curve fit.
    sigma_z_bands : list of list of float
        Bands of [upper end of the band's distance range [km], a, b] of sigma_z = a x^b [m],
        x [km]; at least one.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    stability: STABILITY
    sigma_y: PasquillSigmaY
    # each band: [upper end of the band's distance range in km, a, b] of sigma_z = a x^b
    sigma_z_bands: Annotated[
        list[Annotated[list[Positive], Field(min_length=3, max_length=3)]], Field(min_length=1)
    ]


class WindExponentRow(_Row):
    """A [[wind_exponent]] row of dispersion.toml: power-law wind-profile exponents of one class.

    Attributes
    ----------
    stability : {"A", "B", "C", "D", "E", "F"}
        The Pasquill class.
    rural, urban : float
        The exponent p [-] for each land type, 0..1.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people (a description, a EUNIS code): kept, not checked.
    """

    stability: STABILITY
    rural: Annotated[float, Field(ge=0, le=1)]
    urban: Annotated[float, Field(ge=0, le=1)]
