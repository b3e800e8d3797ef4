"""The scenario file's optional [appraisal] table: the user's prices and interest rate.

The abatement appraisal (sources.csv: capital, annual cost, cost per kg of ammonia abated)
takes what a technique uses from config/abatement_appraisal.toml and prices it here. Prices
are the user's own, so they are scenario keys, not table rows. Without an [appraisal] table
(or for a key left out) the defaults below are used: they are INVENTED placeholders of a
plausible order, not market prices, and sources.csv says so beside the costs
(``appraisal_note``). No physics here.
"""

from __future__ import annotations

from pydantic import Field

from siting.readers.scenario_sections import _Section

#: The price keys of [appraisal] (each a placeholder unless the scenario sets it).
PRICE_KEYS = (
    "electricity_eur_per_kwh",
    "water_eur_per_m3",
    "acid_eur_per_kg",
    "effluent_eur_per_m3",
    "interest_percent",
)


class AppraisalSection(_Section):
    """[appraisal]: the prices and interest rate the abatement appraisal uses.

    Every default is an invented placeholder (no source, no market), used only so that an
    appraisal can be shown before the user's prices are in; sources.csv names the
    placeholders a run used.

    Attributes
    ----------
    electricity_eur_per_kwh : float
        Price of electricity [EUR kWh-1], 0..10 (placeholder 0.25).
    water_eur_per_m3 : float
        Price of fresh water [EUR m-3], 0..100 (placeholder 1.5).
    acid_eur_per_kg : float
        Price of sulphuric acid, per kg of 100 % H2SO4 [EUR kg-1], 0..100 (placeholder 0.25).
    effluent_eur_per_m3 : float
        Cost of storing and disposing of a scrubber's effluent [EUR m-3], 0..1000
        (placeholder 8).
    interest_percent : float
        Interest rate of the capital [% yr-1], 0..50 (placeholder 4).
    life_years : float, optional
        Life of every technique's investment [yr], (0, 100]; None (default) takes each
        technique's life from abatement_appraisal.toml.
    margin_eur_per_place_yr : float
        What an animal place not kept costs a year, the margin lost [EUR place-1 yr-1],
        0..10,000 (placeholder 60): the price of "fewer places" when ``siting place`` looks
        for the cheapest way to pass.
    """

    electricity_eur_per_kwh: float = Field(0.25, ge=0, le=10)  # invented placeholder
    water_eur_per_m3: float = Field(1.5, ge=0, le=100)  # invented placeholder
    acid_eur_per_kg: float = Field(0.25, ge=0, le=100)  # invented placeholder
    effluent_eur_per_m3: float = Field(8.0, ge=0, le=1000)  # invented placeholder
    interest_percent: float = Field(4.0, ge=0, le=50)  # invented placeholder
    life_years: float | None = Field(None, gt=0, le=100)
    margin_eur_per_place_yr: float = Field(60.0, ge=0, le=10_000)  # invented placeholder

    @property
    def placeholder_keys(self) -> list[str]:
        """The price keys the scenario left out, whose invented placeholders are used."""
        return [k for k in PRICE_KEYS if k not in self.model_fields_set]
