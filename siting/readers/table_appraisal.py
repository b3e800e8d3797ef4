"""The shape of config/abatement_appraisal.toml, as pydantic models (rows and file).

What a technique takes to build and run, and what a scrubber is sized for: ``[[scrubber]]``
rows (per m3/h of capacity), ``[[housing_measure]]`` rows (per animal place) and
``[[ventilation]]`` rows (maximum ventilation rate per place of a livestock category). Rows are
checked like those of the other tables (``table_rows.py``: strict types, finite, in range, a
non-empty ``source``, ordered ranges; extra keys kept for people); the file's model checks that
each id and each livestock appears once. Its validation and one-line messages are
``table_schema.validate_table``'s, the checks against abatement.toml and emission_factors.toml
``tables.py``'s. No physics here.
"""

from __future__ import annotations

from typing import Annotated

from pydantic import Field, model_validator

from siting.readers.table_rows import NonNegative, Positive, Text, _Row, _Strict

Fraction = Annotated[float, Field(ge=0, le=1)]
Life = Annotated[float, Field(gt=0, le=100)]
Upkeep = Annotated[float, Field(ge=0, le=100)]

#: The appraisal table's file name in a config folder.
APPRAISAL_FILE = "abatement_appraisal.toml"


def _ordered_capital(row, key: str):
    """Raise unless key_min <= key <= key_max."""
    lo, mid, hi = getattr(row, f"{key}_min"), getattr(row, key), getattr(row, f"{key}_max")
    if not lo <= mid <= hi:
        raise ValueError(f"need {key}_min <= {key} <= {key}_max, got {lo:g}, {mid:g}, {hi:g}")
    return row


class ScrubberCostRow(_Row):
    """A [[scrubber]] row of abatement_appraisal.toml: a scrubber's cost and use per capacity.

    Attributes
    ----------
    id : str
        The technique's id in abatement.toml (kind "scrubber").
    capital_eur_per_m3_h, capital_eur_per_m3_h_min, capital_eur_per_m3_h_max : float
        Investment per m3/h of capacity [EUR (m3 h-1)-1], >= 0: the figure used and its range
        (min <= figure <= max).
    life_years : float
        Life of the installation [yr], (0, 100].
    maintenance_percent_of_capital_yr : float
        Upkeep per year [% of the capital], 0..100.
    electricity_kwh_per_m3_h_yr : float
        Electricity per year per m3/h of capacity [kWh (m3 h-1)-1 yr-1], >= 0.
    evaporation_m3_per_m3_h_yr : float
        Water evaporated per year per m3/h of capacity [m3 (m3 h-1)-1 yr-1], >= 0.
    acid_captured_fraction : float
        Share of the captured ammonia bound by sulphuric acid [-], 0..1.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people: kept, not checked.
    """

    id: Text
    capital_eur_per_m3_h: NonNegative
    capital_eur_per_m3_h_min: NonNegative
    capital_eur_per_m3_h_max: NonNegative
    life_years: Life
    maintenance_percent_of_capital_yr: Upkeep
    electricity_kwh_per_m3_h_yr: NonNegative
    evaporation_m3_per_m3_h_yr: NonNegative
    acid_captured_fraction: Fraction

    @model_validator(mode="after")
    def _ordered(self):
        return _ordered_capital(self, "capital_eur_per_m3_h")


class HousingMeasureCostRow(_Row):
    """A [[housing_measure]] row of abatement_appraisal.toml: a measure's cost per animal place.

    Attributes
    ----------
    id : str
        The technique's id in abatement.toml (kind "housing_measure").
    capital_eur_per_place, capital_eur_per_place_min, capital_eur_per_place_max : float
        Investment per animal place [EUR place-1], >= 0: the figure used and its range.
    life_years : float
        Life of the investment [yr], (0, 100].
    maintenance_percent_of_capital_yr : float
        Upkeep per year [% of the capital], 0..100.
    electricity_kwh_per_place_yr : float
        Electricity [kWh place-1 yr-1], >= 0.
    water_m3_per_place_yr : float
        Fresh water [m3 place-1 yr-1], >= 0 (default 0).
    running_eur_per_place_yr : float
        Other running costs, e.g. a dearer feed [EUR place-1 yr-1], >= 0 (default 0).
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people: kept, not checked.
    """

    id: Text
    capital_eur_per_place: NonNegative
    capital_eur_per_place_min: NonNegative
    capital_eur_per_place_max: NonNegative
    life_years: Life
    maintenance_percent_of_capital_yr: Upkeep
    electricity_kwh_per_place_yr: NonNegative
    water_m3_per_place_yr: NonNegative = 0.0
    running_eur_per_place_yr: NonNegative = 0.0

    @model_validator(mode="after")
    def _ordered(self):
        return _ordered_capital(self, "capital_eur_per_place")


class VentilationRow(_Row):
    """A [[ventilation]] row of abatement_appraisal.toml: what a scrubber is sized for.

    Attributes
    ----------
    livestock : str
        A livestock id of emission_factors.toml.
    max_ventilation_m3_h_per_place : float
        Maximum (summer) ventilation rate per animal place [m3 h-1 place-1], > 0.
    source : str
        The publication (short key, table or page) and its status; never empty.
    **extra_data
        Other keys of the row, for people: kept, not checked.
    """

    livestock: Text
    max_ventilation_m3_h_per_place: Positive


class AbatementAppraisalFile(_Strict):
    """abatement_appraisal.toml: the techniques' costs and uses, and the ventilation rates.

    Attributes
    ----------
    scrubber : list of ScrubberCostRow
        One or more rows, one per scrubber technique.
    housing_measure : list of HousingMeasureCostRow
        One or more rows, one per housing measure.
    ventilation : list of VentilationRow
        One or more rows, one per livestock category.
    """

    scrubber: Annotated[list[ScrubberCostRow], Field(min_length=1)]
    housing_measure: Annotated[list[HousingMeasureCostRow], Field(min_length=1)]
    ventilation: Annotated[list[VentilationRow], Field(min_length=1)]

    @model_validator(mode="after")
    def _once_each(self):
        seen: dict[str, str] = {}
        for section in ("scrubber", "housing_measure"):
            for i, row in enumerate(getattr(self, section), start=1):
                if row.id in seen:
                    raise ValueError(
                        f'[[{section}]] row {i} ("{row.id}"): id "{row.id}" appears twice '
                        f"(also in [[{seen[row.id]}]]); each technique needs one row"
                    )
                seen[row.id] = section
        livestock: set[str] = set()
        for i, row in enumerate(self.ventilation, start=1):
            if row.livestock in livestock:
                raise ValueError(
                    f'[[ventilation]] row {i} ("{row.livestock}"): livestock appears twice; '
                    "each category needs one row"
                )
            livestock.add(row.livestock)
        return self
