"""Hour-by-hour long-term means: agreement with the sector average, exact single hours."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.hourly import HourlyWeather, element_hourly_mean_g_m3_per_g_s, group_identical_hours
from siting.longterm import (
    DispersionSettings,
    ReleaseElement,
    WeatherClasses,
    element_concentration_g_m3_per_g_s,
)
from siting.plume import plume_concentration_g_m3

D = 3


def _hours(directions, speed=5.0, stability=D):
    n = len(directions)
    return HourlyWeather(np.arange(n).astype("datetime64[h]").astype("datetime64[s]"),
                         np.asarray(directions, float), np.full(n, speed),
                         np.full(n, stability), np.full(n, np.nan))


def test_single_hour_is_the_gaussian_plume(briggs_rural, rural_exponents):
    """One hour from the north: the receptor 600 m south, 40 m east gets Turner Eq. 3.1 (analytic)."""
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=None)
    c = element_hourly_mean_g_m3_per_g_s(np.array([40.0]), np.array([-600.0]),
                                         ReleaseElement(0, 0, 10.0), _hours([0.0]), settings)
    sy, sz = briggs_rural.sigma_y_m(600.0, D), briggs_rural.sigma_z_m(600.0, D)
    assert_allclose(c, plume_concentration_g_m3(1.0, 5.0, 40.0, sy, sz, 10.0), rtol=1e-12)
    upwind = element_hourly_mean_g_m3_per_g_s(np.array([0.0]), np.array([600.0]),
                                              ReleaseElement(0, 0, 10.0), _hours([0.0]), settings)
    assert upwind == 0.0


def test_uniform_directions_reproduce_the_sector_average(briggs_rural, rural_exponents):
    """Directions spread evenly round the compass = a table with equal sector frequencies.

    Cross-check: the sector average assumes directions evenly spread within each sector; with
    3,600 hours at 0.1 deg steps the two agree to the 6-sigma lateral cut-off (< 0.1 %).
    """
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=0.02)
    freq = np.zeros((12, 1, 6))
    freq[:, 0, D] = 1 / 12
    table = WeatherClasses(np.arange(12) * 30.0, np.array([5.0]), freq)
    theta = np.linspace(0, 2 * np.pi, 25)[:-1]
    for r in (300.0, 1000.0, 2500.0):
        x, y = r * np.sin(theta), r * np.cos(theta)
        hourly = element_hourly_mean_g_m3_per_g_s(x, y, ReleaseElement(0, 0, 5.0),
                                                  _hours(np.arange(3600) * 0.1), settings)
        sector = element_concentration_g_m3_per_g_s(x, y, ReleaseElement(0, 0, 5.0), table,
                                                    settings)
        assert_allclose(hourly, sector, rtol=1e-3)


def test_weights_scale_hours(briggs_rural, rural_exponents):
    """Hour weights multiply that hour's plume (linearity); grouping keeps the sum."""
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=None)
    weather = _hours([0.0, 0.0, 90.0])
    x, y = np.array([0.0, -700.0]), np.array([-700.0, 0.0])
    el = ReleaseElement(0, 0, 6.0)
    c = element_hourly_mean_g_m3_per_g_s(x, y, el, weather, settings, [2.0, 0.0, 1.0])
    single = element_hourly_mean_g_m3_per_g_s(x, y, el, _hours([0.0]), settings)
    west = element_hourly_mean_g_m3_per_g_s(x, y, el, _hours([90.0]), settings)
    assert_allclose(c, (2.0 * single + west) / 3.0, rtol=1e-12)
    d, s, k, w = group_identical_hours(weather, [2.0, 0.0, 1.0])
    assert len(d) == 2 and w.sum() == pytest.approx(3.0)


def test_window_wraps_round_north(briggs_rural, rural_exponents):
    """A plume travelling due south reaches receptors either side of the +-180 deg bearing seam."""
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=None)
    x = np.array([-30.0, 30.0])
    y = np.array([-800.0, -800.0])
    c = element_hourly_mean_g_m3_per_g_s(x, y, ReleaseElement(0, 0, 3.0), _hours([0.0]),
                                         settings)
    assert c[0] > 0 and c[1] > 0
    assert_allclose(c[0], c[1], rtol=1e-12)  # symmetric in crosswind distance
