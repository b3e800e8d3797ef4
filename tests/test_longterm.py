"""Checks of siting.dispersion.sector: sector averaging, mass conservation, area and volume sources.

Expected values are analytic (the sector-averaged formula of Turner1970 Ch. 10 / EPA1995, from
memory) or conservation laws (what is emitted is carried through every ring, or deposited).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.dispersion.inputs import (
    DispersionSettings,
    ReleaseElement,
    WeatherClasses,
    rectangle_elements,
)
from siting.dispersion.sector import (
    element_concentration_g_m3_per_g_s,
    source_concentration_g_m3_per_g_s,
)
from siting.physics.deposition import ground_vertical_density_per_m, source_depletion_fraction
from siting.physics.plume import sector_average_concentration_g_m3, vertical_term

D = 3


def _weather(n_sectors=16, speeds=(5.0,), seed=None, single=None):
    freq = np.zeros((n_sectors, len(speeds), 6))
    if seed is not None:
        freq = np.random.default_rng(seed).random((n_sectors, len(speeds), 6))
    elif single is not None:
        freq[single] = 1.0
    else:
        freq[:, :, D] = 1.0
    freq /= freq.sum()
    return WeatherClasses(np.arange(n_sectors) * 360.0 / n_sectors, np.array(speeds, float), freq)


def _settings(scheme, exponents, vd=None, lid=None, wind="unchanged"):
    # the analytic checks below use the class speed as the wind at release height ("unchanged"
    # below the anemometer); test_power_law_wind_below_anemometer checks the default rule
    return DispersionSettings(
        scheme=scheme,
        wind_exponents=exponents,
        mixing_height_m=lid,
        depletion_velocity_m_s=vd,
        wind_below_anemometer=wind,
    )


def test_centre_line_gets_exactly_its_sector(briggs_rural, rural_exponents):
    """A receptor on a sector's centre line gets that sector's value alone (sector formula)."""
    weather = _weather(seed=1, speeds=(2.0, 5.0))
    settings = _settings(briggs_rural, rural_exponents)
    element = ReleaseElement(0.0, 0.0, 10.0)  # 10 m = anemometer height: u = class speed
    k = 5  # sector 5 blows FROM 112.5 deg, so the plume travels to 292.5 deg
    bearing = np.deg2rad(weather.sector_centres_deg[k] + 180.0)
    node_m = np.exp(
        np.round(np.log(800.0) / settings.profile_log_step) * settings.profile_log_step
    )  # a node of the engine's radial profiles
    x = np.array([node_m, 800.0])
    c = element_concentration_g_m3_per_g_s(
        x * np.sin(bearing), x * np.cos(bearing), element, weather, settings
    )
    expected = 0.0
    for s in range(6):
        sz = briggs_rural.sigma_z_m(x, s)
        for j, u in enumerate(weather.speeds_m_s):
            expected += sector_average_concentration_g_m3(
                1.0,
                weather.frequency_fraction[k, j, s],
                u,
                x,
                2 * np.pi / 16,
                sz,
                vertical_term(sz, 10.0),
            )
    # on a node: the formula itself, to rounding; between nodes the engine interpolates
    # log-linearly in distance over 0.2 % steps (derived: error ~ h^2 / 8 x the profile's
    # curvature in log-log, h = 0.002; 1.1e-7 measured here)
    assert_allclose(c[0], expected[0], rtol=1e-10)
    assert_allclose(c[1], expected[1], rtol=1e-6)


def test_direction_convention_wind_from_north_blows_south(briggs_rural, rural_exponents):
    """Wind FROM 0 deg carries the plume to the south (direction convention, by definition)."""
    weather = _weather(n_sectors=8, single=(0, 0, D))
    settings = _settings(briggs_rural, rural_exponents)
    c = element_concentration_g_m3_per_g_s(
        np.array([0.0, 0.0, 500.0]),
        np.array([-500.0, 500.0, 0.0]),
        ReleaseElement(0, 0, 5.0),
        weather,
        settings,
    )
    assert c[0] > 0 and c[1] == 0 and c[2] == 0


@pytest.mark.parametrize("lid", [None, 400.0])
def test_ring_flux_equals_emission_without_deposition(briggs_rural, rural_exponents, lid):
    """int C(x, theta) x dtheta = Q g(x) / u over the full circle (conservation; g analytic)."""
    weather = _weather()
    settings = _settings(briggs_rural, rural_exponents, lid=lid)
    x = 1500.0
    theta = np.linspace(0, 2 * np.pi, 7201)
    c = element_concentration_g_m3_per_g_s(
        x * np.sin(theta), x * np.cos(theta), ReleaseElement(0, 0, 10.0), weather, settings
    )
    ring = np.trapezoid(c * x, theta)
    sz = briggs_rural.sigma_z_m(x, D)
    assert_allclose(ring, ground_vertical_density_per_m(sz, 10.0, lid) / 5.0, rtol=1e-4)


def test_deposited_plus_airborne_equals_emitted(briggs_rural, rural_exponents):
    """Source depletion conserves mass: deposited within R + airborne at R = emitted, within 1 %."""
    vd, u, height, radius = 0.02, 3.0, 5.0, 3000.0
    weather = _weather(speeds=(u,))
    settings = _settings(briggs_rural, rural_exponents, vd=vd)
    r = np.geomspace(0.5, radius, 1500)
    theta = np.linspace(0, 2 * np.pi, 721)
    rr, tt = np.meshgrid(r, theta, indexing="ij")
    c = element_concentration_g_m3_per_g_s(
        rr * np.sin(tt), rr * np.cos(tt), ReleaseElement(0, 0, height), weather, settings
    )
    deposited = np.trapezoid(np.trapezoid(vd * c * rr, theta, axis=1), r)
    table = np.concatenate(([0.0], np.geomspace(0.01, radius, 100_000)))
    g = ground_vertical_density_per_m(np.maximum(briggs_rural.sigma_z_m(table, D), 1e-9), height)
    integral = np.trapezoid(g, table)
    airborne = source_depletion_fraction(vd, u, integral)
    assert 0.05 < deposited < 0.5  # a real share was deposited, so the check has teeth
    assert_allclose(deposited + airborne, 1.0, rtol=1e-2)


def test_depletion_lowers_concentration_as_published(pasquill_gifford, rural_exponents):
    """H 10 m, D, u 5, v_d 0.02, 500 m: depleted/undepleted = 7.740e-5/8.290e-5 (derived, 4 s.f.)."""
    weather = _weather(speeds=(5.0,))
    x = np.array([500.0])
    el = ReleaseElement(0, -0.0, 10.0)
    bearing = np.deg2rad(180.0)  # from north sector 0 -> travels south
    rx, ry = x * np.sin(bearing), x * np.cos(bearing)
    with_dep = element_concentration_g_m3_per_g_s(
        rx, ry, el, weather, _settings(pasquill_gifford, rural_exponents, vd=0.02)
    )
    without = element_concentration_g_m3_per_g_s(
        rx, ry, el, weather, _settings(pasquill_gifford, rural_exponents)
    )
    assert_allclose(with_dep / without, 7.740e-5 / 8.290e-5, rtol=2e-3)


def test_finite_non_negative_linear(briggs_rural, rural_exponents):
    """Never negative, finite at the source itself, and linear in the element share."""
    weather = _weather(seed=3, speeds=(1.0, 3.0, 6.0))
    settings = _settings(briggs_rural, rural_exponents, vd=0.02)
    x, y = np.meshgrid(np.linspace(-300, 300, 25), np.linspace(-300, 300, 25))
    for element in (
        ReleaseElement(0, 0, 0.0),
        ReleaseElement(0, 0, 6.0, 9.3, 2.79),
        ReleaseElement(0, 0, 8.0, diameter_m=0.8, exit_velocity_m_s=9.0),
    ):
        c = element_concentration_g_m3_per_g_s(x, y, element, weather, settings)
        assert np.isfinite(c).all() and (c >= 0).all()
    half = [ReleaseElement(0, 0, 6.0, share_fraction=0.5)]
    whole = [ReleaseElement(0, 0, 6.0)]
    assert_allclose(
        source_concentration_g_m3_per_g_s(x, y, half, weather, settings),
        0.5 * source_concentration_g_m3_per_g_s(x, y, whole, weather, settings),
        rtol=1e-12,
    )


def test_plume_rise_lowers_nearby_ground_concentration(briggs_rural, rural_exponents):
    """An exit velocity lifts the plume: lower ground-level values near the source (Briggs rise)."""
    weather = _weather()
    settings = _settings(briggs_rural, rural_exponents)
    x = np.array([0.0])
    y = np.array([-150.0])
    flat = element_concentration_g_m3_per_g_s(x, y, ReleaseElement(0, 0, 8.0), weather, settings)
    jet = element_concentration_g_m3_per_g_s(
        x,
        y,
        ReleaseElement(0, 0, 8.0, diameter_m=1.0, exit_velocity_m_s=10.0, plume_rise=True),
        weather,
        settings,
    )
    assert jet < flat
    # without plume_rise (an outlet in the building wake) the exit velocity changes nothing
    wake = element_concentration_g_m3_per_g_s(
        x, y, ReleaseElement(0, 0, 8.0, diameter_m=1.0, exit_velocity_m_s=10.0), weather, settings
    )
    assert wake == flat


def test_area_source_integrates_and_matches_point_far_away(briggs_rural, rural_exponents):
    """Area source = sum of its elements; far away it equals a point source within 2 % (limit)."""
    weather = _weather(seed=7, speeds=(2.0, 5.0))
    settings = _settings(briggs_rural, rural_exponents)
    elements = rectangle_elements(0.0, 0.0, 30.0, 40.0, 30.0, 2.0)
    assert len(elements) == 6 * 8
    assert_allclose(sum(e.share_fraction for e in elements), 1.0, rtol=1e-12)
    far = np.array([2500.0, -1800.0]), np.array([300.0, 2000.0])
    area = source_concentration_g_m3_per_g_s(*far, elements, weather, settings)
    point = source_concentration_g_m3_per_g_s(*far, [ReleaseElement(0, 0, 2.0)], weather, settings)
    assert_allclose(area, point, rtol=2e-2)
    centre = source_concentration_g_m3_per_g_s(
        np.array([0.0]), np.array([0.0]), elements, weather, settings
    )
    assert np.isfinite(centre).all()


def test_rectangle_orientation():
    """angle_deg turns the length axis clockwise from north (90 deg: length runs east-west)."""
    els = rectangle_elements(0.0, 0.0, 10.0, 100.0, 90.0, 1.0, element_size_m=10.0)
    xs = np.array([e.x_m for e in els])
    ys = np.array([e.y_m for e in els])
    assert np.ptp(xs) == pytest.approx(90.0) and np.ptp(ys) == pytest.approx(0.0, abs=1e-9)


def test_volume_source_ring_flux_equals_emission(briggs_rural, rural_exponents):
    """A volume source's sector average also carries Q through every ring (conservation).

    The lateral initial spread must not widen the sector arc: ring flux = Q g(x + x_z) / u.
    """
    weather = _weather()
    settings = _settings(briggs_rural, rural_exponents)
    element = ReleaseElement(0, 0, 5.0, sigma_y0_m=9.3, sigma_z0_m=2.8, min_distance_m=20.0)
    theta = np.linspace(0, 2 * np.pi, 3601)
    from siting.physics.plume import virtual_distance_m

    xz = virtual_distance_m(2.8, lambda x: briggs_rural.sigma_z_m(x, D))
    for x in (200.0, 1500.0):
        c = element_concentration_g_m3_per_g_s(
            x * np.sin(theta), x * np.cos(theta), element, weather, settings
        )
        sz = briggs_rural.sigma_z_m(x + xz, D)
        assert_allclose(
            np.trapezoid(c * x, theta), ground_vertical_density_per_m(sz, 5.0) / 5.0, rtol=1e-4
        )


def test_power_law_wind_below_anemometer(briggs_rural, rural_exponents):
    """Default rule: a 5 m release under a 10 m anemometer sees u (5/10)^p, so without depletion
    the annual mean is (10/5)^p higher: D 1/0.90125 = +11 %, F 1/0.68302 = +46 % (hand values
    from the EPA1995 / Irwin1979 exponents 0.15 and 0.55, secondary copy)."""
    x, y = np.array([0.0]), np.array([-400.0])
    for s, ratio in ((3, 1 / 0.90125), (5, 1 / 0.68302)):
        weather = _weather(speeds=(4.0,), single=(0, 0, s))
        low = element_concentration_g_m3_per_g_s(
            x,
            y,
            ReleaseElement(0, 0, 5.0),
            weather,
            _settings(briggs_rural, rural_exponents, wind="power_law"),
        )
        kept = element_concentration_g_m3_per_g_s(
            x, y, ReleaseElement(0, 0, 5.0), weather, _settings(briggs_rural, rural_exponents)
        )
        assert_allclose(low / kept, ratio, rtol=1e-4)  # hand values to 5 s.f.
