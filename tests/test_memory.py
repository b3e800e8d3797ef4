"""Bounded memory: the engines work through receptors in chunks sized by the memory budget."""

import tracemalloc

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.dispersion.hourly import HourlyWeather, element_hourly_mean_g_m3_per_g_s
from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.sector import element_concentration_g_m3_per_g_s

RNG = np.random.default_rng(11)
N_RECEPTORS = 300_000
X = RNG.uniform(-3000, 3000, N_RECEPTORS)
Y = RNG.uniform(-3000, 3000, N_RECEPTORS)
HOUSE = ReleaseElement(0.0, 0.0, 5.0, sigma_y0_m=5.0, sigma_z0_m=2.3, min_distance_m=10.0)


def _weathers():
    freq = RNG.random((12, 6, 6))
    table = WeatherClasses(
        np.arange(12) * 30.0, np.array([1.0, 2.0, 3.5, 5.0, 7.0, 10.0]), freq / freq.sum()
    )
    n = 1500
    hourly = HourlyWeather(
        np.zeros(n, "datetime64[s]"),
        RNG.integers(0, 36, n) * 10.0,
        np.round(RNG.uniform(1, 8, n) * 2) / 2,
        RNG.integers(0, 6, n),
        np.full(n, np.nan),
    )
    return [(element_concentration_g_m3_per_g_s, table), (element_hourly_mean_g_m3_per_g_s, hourly)]


@pytest.mark.parametrize("engine,weather", _weathers())
def test_peak_memory_stays_within_the_budget(engine, weather, briggs_rural, rural_exponents):
    """A 6 MB budget: the working memory beyond the result stays under 6 MB (tracemalloc)."""
    budget_mb = 6.0
    settings = DispersionSettings(
        briggs_rural, rural_exponents, depletion_velocity_m_s=0.02, memory_budget_mb=budget_mb
    )
    tracemalloc.start()
    engine(X, Y, HOUSE, weather, settings)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    result_bytes = 2 * X.size * 8  # the result and, for the hourly engine, its chunk copies
    assert peak - result_bytes < budget_mb * 1e6


@pytest.mark.parametrize("engine,weather", _weathers())
def test_chunked_equals_whole(engine, weather, briggs_rural, rural_exponents):
    """Chunked and unchunked evaluation give the same field (same arithmetic per receptor)."""
    x, y = X[:20_000], Y[:20_000]
    small = DispersionSettings(
        briggs_rural, rural_exponents, depletion_velocity_m_s=0.02, memory_budget_mb=1.0
    )  # chunks of 3,125 receptors
    large = DispersionSettings(
        briggs_rural, rural_exponents, depletion_velocity_m_s=0.02, memory_budget_mb=1000.0
    )
    # every chunk uses depletion tables over the same distance range: identical arithmetic
    assert_allclose(
        engine(x, y, HOUSE, weather, small), engine(x, y, HOUSE, weather, large), rtol=1e-12, atol=0
    )
