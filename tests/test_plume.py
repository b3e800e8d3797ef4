"""Checks of siting.physics.plume against published coefficient tables and worked examples.

Source keys: Briggs1973 (formulas as tabulated in EPA1995 Vol. II), EPA1995 (EPA-454/B-95-003b),
Boubel1994 (Boubel, Fox, Turner & Stern, Fundamentals of Air Pollution, 3rd ed., Ch. 19 III.D),
Turner1970 (Workbook of Atmospheric Dispersion Estimates, AP-26), Irwin1979.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.physics.plume import (
    gep_stack_height_m,
    momentum_plume_rise_m,
    plume_concentration_g_m3,
    sector_average_concentration_g_m3,
    stack_tip_downwash_height_m,
    vertical_term,
    virtual_distance_m,
    wind_speed_at_height_m_s,
)

A, B, C, D, E, F = range(6)

# Derived from the Briggs1973 formulas (status: formulas confirmed, numbers derived), printed to
# 2 decimals -> atol 0.005 (half the last printed digit).
BRIGGS_RURAL = {  # class: (sy, sz) at 100 m, 1 km, 10 km
    A: [(21.89, 20.00), (209.76, 200.00), (1555.63, 2000.0)],
    B: [(15.92, 12.00), (152.55, 120.00), (1131.37, 1200.0)],
    C: [(10.95, 7.92), (104.88, 73.03), (777.82, 461.88)],
    D: [(7.96, 5.60), (76.28, 37.95), (565.69, 150.00)],
    E: [(5.97, 2.91), (57.21, 23.08), (424.26, 75.00)],
    F: [(3.98, 1.55), (38.14, 12.31), (282.84, 40.00)],
}
BRIGGS_URBAN = {
    A: [(31.38, 25.17), (270.45, 339.41), (1431.08, 7959.90)],
    B: [(31.38, 25.17), (270.45, 339.41), (1431.08, 7959.90)],
    C: [(21.57, 20.00), (185.93, 200.00), (983.87, 2000.0)],
    D: [(15.69, 13.79), (135.22, 122.79), (715.54, 700.00)],
    E: [(10.79, 7.46), (92.97, 50.60), (491.93, 200.00)],
    F: [(10.79, 7.46), (92.97, 50.60), (491.93, 200.00)],
}


@pytest.mark.parametrize(
    "table,fixture", [(BRIGGS_RURAL, "briggs_rural"), (BRIGGS_URBAN, "briggs_urban")]
)
def test_briggs_sigmas_match_tabulated_values(table, fixture, request):
    """Briggs1973 rural and urban sigma_y/sigma_z at 100 m, 1 km, 10 km (derived check values)."""
    scheme = request.getfixturevalue(fixture)
    x = np.array([100.0, 1000.0, 10000.0])
    for s, expected in table.items():
        sy, sz = np.array(expected).T
        assert_allclose(scheme.sigma_y_m(x, s), sy, rtol=0, atol=0.005)
        assert_allclose(scheme.sigma_z_m(x, s), sz, rtol=0, atol=0.005)


def test_urban_sigma_z_catches_known_transcription_slips(briggs_urban):
    """Urban A-B sz at 1 km is 339.41 m (exponent +0.5, 0.001), C 200 m, D 122.79 m (Briggs1973)."""
    assert_allclose(briggs_urban.sigma_z_m(1000.0, A), 339.41, rtol=5e-4)
    assert_allclose(briggs_urban.sigma_z_m(1000.0, C), 200.0, rtol=5e-4)
    assert_allclose(briggs_urban.sigma_z_m(1000.0, D), 122.79, rtol=5e-4)


def test_pasquill_gifford_fits_at_one_km(pasquill_gifford):
    """EPA1995 P-G fits at 1 km: D sy 68.13/sz 32.09, F sy 33.88/sz 13.95, A sz 453.85 (derived)."""
    assert_allclose(pasquill_gifford.sigma_y_m(1000.0, D), 68.13, rtol=5e-4)
    assert_allclose(pasquill_gifford.sigma_z_m(1000.0, D), 32.09, rtol=5e-4)
    assert_allclose(pasquill_gifford.sigma_y_m(1000.0, F), 33.88, rtol=5e-4)
    assert_allclose(pasquill_gifford.sigma_z_m(1000.0, F), 13.95, rtol=5e-4)
    assert_allclose(pasquill_gifford.sigma_z_m(1000.0, A), 453.85, rtol=5e-4)


def test_boubel_worked_example_maximum(pasquill_gifford):
    """Boubel1994 Ch. 19 III.D: Q 0.37 g/s, H 40 m, u 2 m/s, class B, x 0.28 km -> 1.56e-5 g/m3.

    Published (confirmed): sy 49.0 m, sz 28.2 m, C 1.56e-5 g/m3 (3 significant figures, so rtol
    5e-3 on the sigmas; the concentration to its printed precision, 1e-2 relative).
    """
    sy = pasquill_gifford.sigma_y_m(280.0, B)
    sz = pasquill_gifford.sigma_z_m(280.0, B)
    assert_allclose(sy, 49.0, rtol=5e-3)
    assert_allclose(sz, 28.2, rtol=5e-3)
    c = plume_concentration_g_m3(0.37, 2.0, 0.0, sy, sz, 40.0)
    assert_allclose(c, 1.56e-5, rtol=1e-2)
    c_off = plume_concentration_g_m3(0.37, 2.0, sy, sy, sz, 40.0)  # derived: x exp(-1/2)
    assert_allclose(c_off, c * np.exp(-0.5), rtol=1e-12)


@pytest.mark.parametrize("x_m,published", [(260.0, 1.53e-5), (300.0, 1.55e-5)])
def test_boubel_worked_example_either_side(pasquill_gifford, x_m, published):
    """Boubel1994 Ch. 19 III.D table: C at 0.26 km 1.53e-5, at 0.30 km 1.55e-5 g/m3 (confirmed)."""
    sy = pasquill_gifford.sigma_y_m(x_m, B)
    sz = pasquill_gifford.sigma_z_m(x_m, B)
    assert_allclose(plume_concentration_g_m3(0.37, 2.0, 0.0, sy, sz, 40.0), published, rtol=1e-2)


def test_turner_problem_1_ground_source(pasquill_gifford):
    """Turner1970 Problem 1 (from memory): Q 3 g/s, ground, u 7 m/s, D, 3 km -> 1.1e-5 g/m3.

    The workbook reads sigmas off charts (sy 190, sz 65); the curve fits give 184.6 / 65.1 and
    1.13e-5 (derived), so a 5 % tolerance covers the chart reading.
    """
    sy = pasquill_gifford.sigma_y_m(3000.0, D)
    sz = pasquill_gifford.sigma_z_m(3000.0, D)
    assert_allclose(plume_concentration_g_m3(3.0, 7.0, 0.0, sy, sz, 0.0), 1.1e-5, rtol=5e-2)


def test_ground_source_on_axis_matches_closed_form():
    """Ground-level source, receptor on the plume axis: C = Q / (pi u sy sz) (analytic)."""
    c = plume_concentration_g_m3(np.pi, 1.0, 0.0, 1.0, 1.0, 0.0)
    assert_allclose(c, 1.0, rtol=1e-12)  # reflection doubles Q / (2 pi u sy sz)


def test_exam_style_elevated_source():
    """Q 5 g/s, u 2 m/s, H 30 m, sy 50, sz 30 -> about 320 ug/m3 (secondary copy; 321.8 derived)."""
    c = plume_concentration_g_m3(5.0, 2.0, 0.0, 50.0, 30.0, 30.0) * 1e6
    assert_allclose(c, 321.8, rtol=5e-4)


def test_plume_properties():
    """Linear in Q, inverse in u, symmetric in y, never negative (analytic properties)."""
    y = np.linspace(-300, 300, 61)
    c1 = plume_concentration_g_m3(1.0, 3.0, y, 40.0, 20.0, 10.0)
    assert_allclose(plume_concentration_g_m3(2.0, 3.0, y, 40.0, 20.0, 10.0), 2 * c1, rtol=1e-12)
    assert_allclose(plume_concentration_g_m3(1.0, 6.0, y, 40.0, 20.0, 10.0), c1 / 2, rtol=1e-12)
    assert_allclose(c1, c1[::-1], rtol=1e-12)
    assert (c1 >= 0).all()
    with pytest.raises(ValueError, match="wind_speed_m_s"):
        plume_concentration_g_m3(1.0, 0.0, 0.0, 1.0, 1.0, 0.0)


@pytest.mark.parametrize("lid", [None, 300.0])
def test_crosswind_integrated_flux_equals_emission(lid):
    """Mass balance, no deposition: int int C u dy dz = Q, with and without a lid (conservation)."""
    sy, sz, u, q, h = 40.0, 25.0, 4.0, 2.5, 15.0
    y = np.linspace(-8 * sy, 8 * sy, 801)
    z_top = lid if lid else 12 * sz
    z = np.linspace(0.0, z_top, 2001)
    c = plume_concentration_g_m3(q, u, y[:, None], sy, sz, h, z[None, :], lid)
    flux = np.trapezoid(np.trapezoid(c * u, z, axis=1), y)
    assert_allclose(flux, q, rtol=1e-3)  # trapezoid on smooth integrand, < 0.1 %


def test_well_mixed_vertical_term():
    """sz >> lid: V = sqrt(2 pi) sz / L, so C = Q / (sqrt(2 pi) u sy L) (EPA1995, from memory)."""
    v = vertical_term(2000.0, 10.0, 0.0, 500.0)
    assert_allclose(v, np.sqrt(2 * np.pi) * 2000.0 / 500.0, rtol=1e-12)


def test_sector_average_coefficient_2032():
    """n = 16 sectors: C = 2.032 f Q exp(-H^2/2sz^2) / (sz u x) (Turner1970 long-term, from memory)."""
    sz, u, x, h = 32.093, 5.0, 1000.0, 0.0
    v = vertical_term(sz, h)
    c = sector_average_concentration_g_m3(1.0, 1.0, u, x, 2 * np.pi / 16, sz, v)
    assert_allclose(c * sz * u * x, 2.032, rtol=5e-4)
    assert_allclose(c, 1.266e-5, rtol=5e-4)  # REFERENCES 3a check value, P-G D at 1 km (derived)


@pytest.mark.parametrize(
    "s,x_m,expected", [(C, 500.0, 2.506e-5), (D, 100.0, 8.737e-4), (F, 1000.0, 2.912e-5)]
)
def test_sector_average_check_values(pasquill_gifford, s, x_m, expected):
    """Sector-averaged C, Q 1 g/s, u 5 m/s, f 1, H 0, P-G sz (derived from EPA1995 formula)."""
    sz = pasquill_gifford.sigma_z_m(x_m, s)
    c = sector_average_concentration_g_m3(
        1.0, 1.0, 5.0, x_m, 2 * np.pi / 16, sz, vertical_term(sz, 0.0)
    )
    assert_allclose(c, expected, rtol=1e-3)


def test_wind_profile_exponents(rural_exponents):
    """Irwin1979 rural exponents 0.07/0.07/0.10/0.15/0.35/0.55 (secondary copy) and the power law."""
    assert_allclose(rural_exponents, [0.07, 0.07, 0.10, 0.15, 0.35, 0.55])
    assert_allclose(wind_speed_at_height_m_s(5.0, 10.0, 40.0, 0.15), 5.0 * 4**0.15, rtol=1e-12)
    # "unchanged": below the anemometer the measured speed is kept (the old rule)
    assert wind_speed_at_height_m_s(5.0, 10.0, 4.0, 0.55, "unchanged") == 5.0


def test_virtual_distance_inverts_sigma(briggs_rural):
    """Virtual distance: sigma(x_v) = sigma0 (EPA1995 volume sources; analytic inverse)."""
    for s in range(6):
        xv = virtual_distance_m(9.30, lambda x, s=s: briggs_rural.sigma_y_m(x, s))
        assert_allclose(briggs_rural.sigma_y_m(xv, s), 9.30, rtol=2e-3)
    assert virtual_distance_m(0.0, lambda x: x) == 0.0


def test_momentum_rise_neutral_and_stable():
    """Neutral rise 3 d w / u; stable (F) 1.5 (F_m / (u sqrt(s)))^(1/3) by hand (Briggs1969 via
    EPA1995 Sect. 1.1.4, from memory; dtheta/dz 0.035 K/m for F, T 293.15 K)."""
    assert_allclose(momentum_plume_rise_m(1.0, 10.0, 5.0, D), 6.0, rtol=1e-12)
    # by hand: s = 9.80665 / 293.15 x 0.035 = 1.1709e-3 s-2; F_m = 10^2 x 1^2 / 4 = 25 m4 s-2;
    # 1.5 (25 / (2 x 0.034218))^(1/3) = 10.72 m, below the neutral 3 x 1 x 10 / 2 = 15 m
    assert_allclose(momentum_plume_rise_m(1.0, 10.0, 2.0, F), 10.72, rtol=1e-3)


def test_gep_height_of_a_house():
    """Hg = Hb + 1.5 L, L = min(height, width) (EPA1985; 40 CFR 51.100(ii), from memory)."""
    assert gep_stack_height_m(6.0, 20.0) == 15.0  # 6 + 1.5 x 6
    assert gep_stack_height_m(6.0, 4.0) == 12.0  # narrow building: 6 + 1.5 x 4
    assert gep_stack_height_m(6.0) == 15.0  # width unknown: taken no smaller than the height
    with pytest.raises(ValueError):
        gep_stack_height_m(0.0)


def test_stack_tip_downwash_by_hand():
    """h' = hs + 2 D (vs / us - 1.5) below vs = 1.5 us, else hs (Briggs1974 via EPA1995 Eq. 1-7)."""
    # by hand: 7.5 + 2 x 1.2 x (6 / 5 - 1.5) = 7.5 - 0.72 = 6.78 m
    assert_allclose(stack_tip_downwash_height_m(7.5, 1.2, 6.0, 5.0), 6.78, rtol=1e-12)
    assert stack_tip_downwash_height_m(7.5, 1.2, 6.0, 3.0) == 7.5  # vs = 2 us: none
    assert stack_tip_downwash_height_m(1.0, 1.0, 0.0, 5.0) == 0.0  # never below the ground


def test_wind_at_5_m_below_a_10_m_anemometer_by_class(rural_exponents):
    """Power law taken down to a 5 m outlet: u5/u10 = 0.5^p, by hand from the published exponents.

    Exponents rural A-F 0.07/0.07/0.10/0.15/0.35/0.55 (EPA1995 Vol. II after Irwin1979;
    secondary copy). Hand values 0.5^p: A, B 0.95264; C 0.93303; D 0.90125; E 0.78458;
    F 0.68302; the concentration rises by their inverse (+5 % A/B ... +46 % F).
    """
    hand = {0: 0.95264, 1: 0.95264, 2: 0.93303, 3: 0.90125, 4: 0.78458, 5: 0.68302}
    for s, ratio in hand.items():
        u5 = wind_speed_at_height_m_s(4.0, 10.0, 5.0, rural_exponents[s])
        assert_allclose(u5 / 4.0, ratio, rtol=1e-5)  # hand values to 5 s.f.
    assert_allclose(1 / hand[5], 1.464, rtol=1e-3)  # F: +46 % in concentration


def test_wind_profile_lowest_height_and_speed_floor():
    """Below the lowest height the law stops there; the run's minimum wind speed is a floor."""
    at_1m = wind_speed_at_height_m_s(5.0, 10.0, 1.0, 0.15)
    assert_allclose(at_1m, 5.0 * 0.1**0.15, rtol=1e-12)  # analytic power law
    assert wind_speed_at_height_m_s(5.0, 10.0, 0.0, 0.15) == at_1m  # ground source: 1 m
    assert wind_speed_at_height_m_s(1.2, 10.0, 2.0, 0.55, min_speed_m_s=1.0) == 1.0
    with pytest.raises(ValueError, match="below_reference"):
        wind_speed_at_height_m_s(5.0, 10.0, 2.0, 0.15, "linear")
