"""Physical constants and the unit conversions built from them.

Each base constant carries its source on its line; every conversion factor is derived here from
the base constants, never typed in. Reporting units (ug m-3, kg N ha-1 yr-1, mol N ha-1 yr-1,
keq ha-1 yr-1) appear only through these names.
"""

from __future__ import annotations

MOLAR_MASS_N_G_MOL = 14.0067  # CIAAW standard atomic weight of N (conventional value), IUPAC 2021
MOLAR_MASS_H_G_MOL = 1.00794  # CIAAW standard atomic weight of H (pre-2009 single value), IUPAC
MOLAR_MASS_NH3_G_MOL = MOLAR_MASS_N_G_MOL + 3 * MOLAR_MASS_H_G_MOL  # 17.0305 g/mol, derived
MOLAR_MASS_O_G_MOL = 15.999  # CIAAW standard atomic weight of O (conventional value), IUPAC 2021
MOLAR_MASS_S_G_MOL = 32.06  # CIAAW standard atomic weight of S (conventional value), IUPAC 2021
#: H2SO4, 98.072 g/mol, derived
MOLAR_MASS_H2SO4_G_MOL = 2 * MOLAR_MASS_H_G_MOL + MOLAR_MASS_S_G_MOL + 4 * MOLAR_MASS_O_G_MOL
#: kg H2SO4 bound per kg NH3 captured, 2 NH3 + H2SO4 -> (NH4)2SO4 (~2.879), derived
H2SO4_PER_NH3_MASS_RATIO = MOLAR_MASS_H2SO4_G_MOL / (2 * MOLAR_MASS_NH3_G_MOL)

SECONDS_PER_DAY = 86_400.0  # definition of the day in SI seconds
DAYS_PER_YEAR = 365.0  # calendar year used for annual emissions and deposition (common practice)
SECONDS_PER_YEAR = SECONDS_PER_DAY * DAYS_PER_YEAR  # 31 536 000 s

M2_PER_HA = 1.0e4  # definition of the hectare
G_PER_KG = 1.0e3
UG_PER_G = 1.0e6

N_PER_NH3_MASS_RATIO = MOLAR_MASS_N_G_MOL / MOLAR_MASS_NH3_G_MOL  # ~0.8225 g N per g NH3

#: g NH3 m-2 s-1 -> kg N ha-1 yr-1
G_NH3_M2_S_TO_KG_N_HA_YR = SECONDS_PER_YEAR * M2_PER_HA / G_PER_KG * N_PER_NH3_MASS_RATIO
#: ug NH3 m-2 s-1 -> kg N ha-1 yr-1 (~259.4; AQTAG06 quotes ~259.7 with 14/17 rounding)
UG_NH3_M2_S_TO_KG_N_HA_YR = G_NH3_M2_S_TO_KG_N_HA_YR / UG_PER_G
#: kg N -> mol N
MOL_N_PER_KG_N = G_PER_KG / MOLAR_MASS_N_G_MOL
#: kg N ha-1 yr-1 -> keq ha-1 yr-1 (one N atom per equivalent of acidity; APIS: keq = kg N / 14)
KEQ_PER_KG_N = 1.0 / MOLAR_MASS_N_G_MOL
#: kg NH3 yr-1 -> g s-1
KG_YR_TO_G_S = G_PER_KG / SECONDS_PER_YEAR


def kg_per_year_to_g_s(emission_kg_yr):
    """Annual emission [kg yr-1] -> mean source strength [g s-1] over a 365-day year.

    Parameters
    ----------
    emission_kg_yr : float or ndarray
        Annual emission [kg yr-1].

    Returns
    -------
    float or ndarray
        Mean source strength [g s-1].
    """
    return emission_kg_yr * KG_YR_TO_G_S


def deposition_kg_n_ha_yr(concentration_ug_m3, deposition_velocity_m_s):
    """Dry deposition flux of NH3 expressed as nitrogen [kg N ha-1 yr-1].

    flux = v_d * C, with C [ug NH3 m-3] and v_d [m s-1], converted with the factor above.

    Parameters
    ----------
    concentration_ug_m3 : float or ndarray
        Ground-level NH3 concentration [ug m-3].
    deposition_velocity_m_s : float or ndarray
        Dry deposition velocity [m s-1].

    Returns
    -------
    float or ndarray
        Deposition [kg N ha-1 yr-1].
    """
    return concentration_ug_m3 * deposition_velocity_m_s * UG_NH3_M2_S_TO_KG_N_HA_YR


def kg_n_to_mol_n(value_kg_n):
    """kg N -> mol N (works for fluxes per ha per yr too).

    Parameters
    ----------
    value_kg_n : float or ndarray
        Nitrogen [kg N], or a flux [kg N ha-1 yr-1].

    Returns
    -------
    float or ndarray
        The same in mol N (or mol N ha-1 yr-1).
    """
    return value_kg_n * MOL_N_PER_KG_N
