"""Placement arithmetic: the offset kernel, required reduction and the most places that pass."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.placement import (
    PolarKernel,
    max_places,
    required_reduction_percent,
    share_of_threshold,
    site_maxima,
)
from siting.dispersion.sector import source_concentration_g_m3_per_g_s

RNG = np.random.default_rng(5)


@pytest.fixture(scope="module")
def kernel_and_direct(briggs_rural, rural_exponents):
    freq = RNG.random((12, 3, 6))
    freq /= freq.sum()
    weather = WeatherClasses(np.arange(12) * 30.0, np.array([1.5, 4.0, 8.0]), freq)
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=0.02)
    house = [ReleaseElement(0.0, 0.0, 5.0, sigma_y0_m=5.0, sigma_z0_m=2.3, min_distance_m=10.0)]

    def direct(dx, dy):
        return source_concentration_g_m3_per_g_s(dx, dy, house, weather, settings)

    radius, bearing, ox, oy = PolarKernel.offsets(5.0, 4000.0)
    return PolarKernel(radius, bearing, direct(ox, oy)), direct


def test_kernel_matches_direct_evaluation(kernel_and_direct):
    """Kernel interpolation equals the direct plume sum within 0.5 % (100 m - 3.5 km).

    Cross-check: bilinear interpolation on 3 % radius steps and 0.25 deg bearing steps of a
    field that is smooth in radius and piecewise linear in bearing; the error is second order.
    """
    kernel, direct = kernel_and_direct
    r = RNG.uniform(100.0, 3500.0, 400)
    b = RNG.uniform(0, 2 * np.pi, 400)
    dx, dy = r * np.sin(b), r * np.cos(b)
    assert_allclose(kernel(dx, dy), direct(dx, dy), rtol=5e-3)
    assert kernel(np.array([5000.0]), np.array([0.0]))[0] == 0.0  # beyond the kernel


def test_site_maxima_take_the_maximum_over_each_site(kernel_and_direct):
    """Per candidate and site: the largest kernel value over that site's points (definition)."""
    kernel, _ = kernel_and_direct
    px = np.array([500.0, 520.0, -800.0, -820.0, -790.0])
    py = np.array([0.0, 10.0, 300.0, 310.0, 290.0])
    site = np.array([0, 0, 1, 1, 1])
    cx, cy = np.array([0.0, 50.0]), np.array([0.0, -20.0])
    out = site_maxima(kernel, cx, cy, px, py, site, 2)
    for c in range(2):
        values = kernel(px - cx[c], py - cy[c])
        assert out[c, 0] == values[:2].max() and out[c, 1] == values[2:].max()


def test_required_reduction_reproduces_the_threshold():
    """Fed back, the reduced house puts the worst site exactly at its threshold (linearity)."""
    house = np.array([[2.0, 0.5, 1.25], [0.8, 0.3, 0.1]])
    other = np.array([0.2, 0.6, 0.0])
    red = required_reduction_percent(house, other)
    assert red[1] == 0.0  # already passes
    worst = (house[0] * (1 - red[0] / 100) + other).max()
    assert_allclose(worst, 1.0, rtol=1e-12)
    full = required_reduction_percent(np.array([[0.5, 0.1]]), np.array([1.2, 0.0]))
    assert full[0] == 100.0  # the others alone exceed a site the house reaches


def test_max_places_is_the_largest_whole_number_that_passes():
    """max_places passes, one more place does not (linearity, whole places)."""
    house = np.array([[1.7, 0.4]])  # for 1000 places
    other = np.array([0.1, 0.0])
    n = max_places(1000, house, other)[0]
    share = lambda places: (house[0] * places / 1000 + other).max()  # noqa: E731
    assert share(n) <= 1.0 < share(n + 1)
    n_abated = max_places(1000, house, other, effective_reduction_percent=90.0)[0]
    assert share(n_abated * 0.1) <= 1.0 < share((n_abated + 1) * 0.1)


def test_share_of_threshold_takes_the_worse_of_level_and_load():
    """The worse of % of level and % of load, divided by the threshold (definition)."""
    assert_allclose(share_of_threshold([2.0, 10.0], [6.0, 1.0], [4.0, 20.0]), [1.5, 0.5])
