"""Cross-check: hour-by-hour and sector-averaged long-term means on the same data.

The invented demo hourly record (data_demo/hourly_weather.csv) is run hour by hour, and turned
into a frequency table that is run by the sector-averaging method. Both carry the same ammonia
through every ring round the source (mass balance), so ring means agree closely; they differ in
how they spread it in angle: the hourly plume follows each hour's reported direction (10-degree
steps, so narrow stable plumes leave "spokes"), the sector average spreads each sector evenly.
Tolerances follow from that (cross-check, not a published value):
- ring means within 1 % (36 sectors, every 0.5 m/s its own class): residuals come only from the
  6-sigma lateral cut-off and from depleting along the plume axis rather than the radius;
- 30-degree arc means within 6 %: three 10-degree spokes per arc average out the spoke pattern;
- with the default 12 sectors and 6 speed classes: ring means within 3 % (class-mean speeds
  stand in for each hour's 1/u) and 30-degree arcs within 20 % (one sector per 30 degrees).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.dispersion.hourly import element_hourly_mean_g_m3_per_g_s
from siting.dispersion.inputs import DispersionSettings, ReleaseElement
from siting.dispersion.sector import element_concentration_g_m3_per_g_s
from siting.readers.frequency_table import read_frequency_table
from siting.readers.hourly_record import read_hourly_record
from siting.readers.hourly_table import frequency_table_from_hourly
from siting.readers.resources import demo_dir

HOUSE = ReleaseElement(0.0, 0.0, 4.0, sigma_y0_m=9.3, sigma_z0_m=1.9, min_distance_m=20.0)


@pytest.fixture(scope="module")
def record():
    weather, _ = read_hourly_record(demo_dir() / "hourly_weather.csv", 52.4, 9.0)
    return weather


def _table(weather, tmp_path, n_sectors, edges):
    path = tmp_path / f"table_{n_sectors}.csv"
    frequency_table_from_hourly(weather, n_sectors, edges).to_csv(path, index=False)
    return read_frequency_table(path)[0]


def _both(record, table, scheme, exponents, radius_m):
    settings = DispersionSettings(scheme, exponents, depletion_velocity_m_s=0.02)
    theta = np.linspace(0, 2 * np.pi, 73)[:-1]
    x, y = radius_m * np.sin(theta), radius_m * np.cos(theta)
    hourly = element_hourly_mean_g_m3_per_g_s(x, y, HOUSE, record, settings)
    sector = element_concentration_g_m3_per_g_s(x, y, HOUSE, table, settings)
    return hourly, sector


@pytest.mark.parametrize("radius_m", [500.0, 1000.0, 2000.0])
def test_fine_table_agrees_with_hourly(record, tmp_path, briggs_rural, rural_exponents, radius_m):
    """36 sectors, 0.5 m/s classes: rings within 1 %, 30-degree arcs within 6 % (cross-check)."""
    table = _table(record, tmp_path, 36, np.arange(0.0, 30.5, 0.5))
    hourly, sector = _both(record, table, briggs_rural, rural_exponents, radius_m)
    assert_allclose(hourly.mean(), sector.mean(), rtol=1e-2)
    assert_allclose(
        hourly.reshape(12, 6).mean(axis=1), sector.reshape(12, 6).mean(axis=1), rtol=6e-2
    )


@pytest.mark.parametrize("radius_m", [500.0, 2000.0])
def test_default_table_agrees_with_hourly(
    record, tmp_path, briggs_rural, rural_exponents, radius_m
):
    """Default 12 sectors, 6 speed classes: rings within 3 %, arcs within 20 % (cross-check)."""
    table = _table(record, tmp_path, 12, (0.0, 1.5, 3.0, 5.0, 8.0, 11.0))
    hourly, sector = _both(record, table, briggs_rural, rural_exponents, radius_m)
    assert_allclose(hourly.mean(), sector.mean(), rtol=3e-2)
    assert_allclose(
        hourly.reshape(12, 6).mean(axis=1), sector.reshape(12, 6).mean(axis=1), rtol=0.2
    )
