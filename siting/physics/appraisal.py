"""The arithmetic of an abatement appraisal: scrubber size, acid, annuity, running cost, EUR/kg.

Pure functions on floats and numpy arrays (they broadcast): the figures come from the lookup
table ``config/abatement_appraisal.toml`` and the scenario's ``[appraisal]`` prices, looked up
by the caller (``siting/runs/appraisal.py``); nothing here reads a table or knows a source.

* :func:`scrubber_capacity_m3_h` -- a scrubber sized for the summer maximum ventilation rate.
* :func:`sulphuric_acid_kg_yr` -- the acid an acid scrubber binds, from the stoichiometry of
  ammonium sulphate, 2 NH3 + H2SO4 -> (NH4)2SO4.
* :func:`annuity_factor_per_yr`, :func:`annuity_eur_yr` -- capital spread over its life.
* :func:`running_cost_eur_yr` -- electricity, water, acid, effluent disposal and upkeep.
* :func:`cost_eur_per_kg_nh3` -- annual cost over the ammonia abated.
"""

from __future__ import annotations

import numpy as np

from siting.physics.constants import H2SO4_PER_NH3_MASS_RATIO


def scrubber_capacity_m3_h(max_ventilation_m3_h_per_place, places, design_share_fraction=1.0):
    """Air a scrubber is sized to take [m3 h-1]: maximum ventilation x places x design share.

    A scrubber is sized for the house's summer maximum ventilation rate, the total maximum
    ventilation requirement of its animals [1]; one sized for part of it takes that share.

    Parameters
    ----------
    max_ventilation_m3_h_per_place : float or ndarray
        Maximum (summer) ventilation rate per animal place [m3 h-1 place-1], >= 0.
    places : float or ndarray
        Animal places, >= 0.
    design_share_fraction : float or ndarray
        Capacity as a share of the maximum ventilation rate [-], 0..1 (default 1).

    Returns
    -------
    capacity_m3_h : float or ndarray
        The scrubber's capacity [m3 h-1]; NaN where an input is NaN.

    Raises
    ------
    ValueError
        If a rate or places is negative, or the share is outside 0..1.

    References
    ----------
    .. [1] InfoMil2024 (Dutch government knowledge centre), "Maximale ventilatiebehoefte":
       the capacity of a scrubber at least the total maximum ventilation requirement, the
       number of animals x the maximum ventilation requirement per animal.
    """
    rate = np.asarray(max_ventilation_m3_h_per_place, dtype=float)
    n = np.asarray(places, dtype=float)
    share = np.asarray(design_share_fraction, dtype=float)
    if np.any(rate < 0) or np.any(n < 0):
        raise ValueError("ventilation rate and places must be >= 0")
    if np.any((share < 0) | (share > 1)):
        raise ValueError(f"design_share_fraction must be in 0..1, got {design_share_fraction}")
    return rate * n * share  # [1]


def sulphuric_acid_kg_yr(nh3_captured_kg_yr, acid_captured_fraction=1.0):
    """Sulphuric acid bound by the captured ammonia [kg H2SO4 yr-1], as 100 % H2SO4.

    2 NH3 + H2SO4 -> (NH4)2SO4: each kg of NH3 bound as ammonium sulphate takes
    M(H2SO4) / (2 M(NH3)) = 2.879 kg of acid (molar masses from the standard atomic weights,
    siting/physics/constants.py). This is the stoichiometric amount; a scrubber run at low pH
    doses somewhat more (acid leaves in the effluent unreacted), which this does not count.

    Parameters
    ----------
    nh3_captured_kg_yr : float or ndarray
        Ammonia captured by the scrubber [kg NH3 yr-1], >= 0.
    acid_captured_fraction : float or ndarray
        Share of it bound by sulphuric acid [-], 0..1 (1 for an acid scrubber, 0 for a
        biological one).

    Returns
    -------
    acid_kg_yr : float or ndarray
        Acid used [kg H2SO4 yr-1] (as 100 % H2SO4).

    Raises
    ------
    ValueError
        If the ammonia is negative or the share is outside 0..1.
    """
    nh3 = np.asarray(nh3_captured_kg_yr, dtype=float)
    share = np.asarray(acid_captured_fraction, dtype=float)
    if np.any(nh3 < 0):
        raise ValueError(f"nh3_captured_kg_yr must be >= 0, got {nh3_captured_kg_yr}")
    if np.any((share < 0) | (share > 1)):
        raise ValueError(f"acid_captured_fraction must be in 0..1, got {acid_captured_fraction}")
    return nh3 * share * H2SO4_PER_NH3_MASS_RATIO


def annuity_factor_per_yr(interest_percent, life_years):
    """Share of a capital paid back each year over its life, interest included [yr-1].

    A = C r / (1 - (1 + r)^-n), r the interest rate per year, n the life in years; with no
    interest (r = 0) it is 1 / n, the limit of the formula.

    Parameters
    ----------
    interest_percent : float or ndarray
        Interest rate [% yr-1], >= 0.
    life_years : float or ndarray
        Life of the investment [yr], > 0.

    Returns
    -------
    factor_per_yr : float or ndarray
        A / C [yr-1].

    Raises
    ------
    ValueError
        If the interest rate is negative or the life not positive.

    Notes
    -----
    The capital recovery factor of engineering economics (the A/P factor of compound-interest
    tables): the equal yearly payment whose present value at rate r over n years is C.
    """
    r = np.asarray(interest_percent, dtype=float) / 100.0
    n = np.asarray(life_years, dtype=float)
    if np.any(r < 0):
        raise ValueError(f"interest_percent must be >= 0, got {interest_percent}")
    if np.any(n <= 0):
        raise ValueError(f"life_years must be > 0, got {life_years}")
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = r / (1.0 - (1.0 + r) ** -n)
    return np.where(r > 0, factor, 1.0 / n)


def annuity_eur_yr(capital_eur, interest_percent, life_years):
    """A capital spread over its life as equal yearly payments [EUR yr-1].

    Parameters
    ----------
    capital_eur : float or ndarray
        The investment [EUR], >= 0.
    interest_percent : float or ndarray
        Interest rate [% yr-1], >= 0.
    life_years : float or ndarray
        Life of the investment [yr], > 0.

    Returns
    -------
    annuity_eur_yr : float or ndarray
        C x :func:`annuity_factor_per_yr` [EUR yr-1].

    Raises
    ------
    ValueError
        If the capital or interest is negative or the life not positive.
    """
    capital = np.asarray(capital_eur, dtype=float)
    if np.any(capital < 0):
        raise ValueError(f"capital_eur must be >= 0, got {capital_eur}")
    return capital * annuity_factor_per_yr(interest_percent, life_years)


def running_cost_eur_yr(
    *,
    electricity_kwh_yr,
    electricity_eur_per_kwh,
    water_m3_yr,
    water_eur_per_m3,
    acid_kg_yr,
    acid_eur_per_kg,
    effluent_m3_yr,
    effluent_eur_per_m3,
    maintenance_eur_yr,
    other_eur_yr=0.0,
):
    """The yearly running cost of a technique [EUR yr-1]: use x price, plus upkeep.

    electricity x its price + water x its price + acid x its price + effluent x its disposal
    price + maintenance + other running costs (e.g. a dearer feed). A quantity that does not
    apply is passed as 0, one that is unknown as NaN (the sum is then NaN).

    Parameters
    ----------
    electricity_kwh_yr, electricity_eur_per_kwh : float or ndarray
        Electricity used [kWh yr-1] and its price [EUR kWh-1].
    water_m3_yr, water_eur_per_m3 : float or ndarray
        Fresh water used [m3 yr-1] and its price [EUR m-3].
    acid_kg_yr, acid_eur_per_kg : float or ndarray
        Acid used [kg yr-1, as 100 % H2SO4] and its price [EUR kg-1].
    effluent_m3_yr, effluent_eur_per_m3 : float or ndarray
        Effluent [m3 yr-1] and the cost of storing and disposing of it [EUR m-3].
    maintenance_eur_yr : float or ndarray
        Upkeep [EUR yr-1].
    other_eur_yr : float or ndarray
        Other running costs [EUR yr-1] (default 0).

    Returns
    -------
    running_eur_yr : float or ndarray
        The sum [EUR yr-1].

    Raises
    ------
    ValueError
        If a price is negative.
    """
    prices = (electricity_eur_per_kwh, water_eur_per_m3, acid_eur_per_kg, effluent_eur_per_m3)
    if any(np.any(np.asarray(p, dtype=float) < 0) for p in prices):
        raise ValueError("prices must be >= 0")
    return (
        np.asarray(electricity_kwh_yr, dtype=float) * electricity_eur_per_kwh
        + np.asarray(water_m3_yr, dtype=float) * water_eur_per_m3
        + np.asarray(acid_kg_yr, dtype=float) * acid_eur_per_kg
        + np.asarray(effluent_m3_yr, dtype=float) * effluent_eur_per_m3
        + np.asarray(maintenance_eur_yr, dtype=float)
        + np.asarray(other_eur_yr, dtype=float)
    )


def cost_eur_per_kg_nh3(annual_cost_eur_yr, nh3_abated_kg_yr):
    """Cost of each kg of ammonia abated [EUR kg-1 NH3]: annual cost / ammonia abated per year.

    Parameters
    ----------
    annual_cost_eur_yr : float or ndarray
        Capital annuity plus running cost [EUR yr-1].
    nh3_abated_kg_yr : float or ndarray
        Emission before abatement less the emission after it [kg NH3 yr-1].

    Returns
    -------
    cost_eur_per_kg_nh3 : float or ndarray
        [EUR kg-1 NH3]; NaN where nothing is abated (no finite cost per kg).
    """
    cost = np.asarray(annual_cost_eur_yr, dtype=float)
    abated = np.asarray(nh3_abated_kg_yr, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(abated > 0, cost / np.where(abated > 0, abated, 1.0), np.nan)
