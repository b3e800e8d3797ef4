"""The fast engines against the straightforward references of bench/reference.py (cross-check).

The references evaluate every weather class or hour on every receptor, one source at a time,
with no grouping, windows or tables, and integrate the source depletion directly (Gauss-Legendre
on a fine lattice); bench/reference.py says how. Inputs are small, random and seeded: three
sources (a plain point, a fan outlet with momentum rise, a volume source), 2,000 receptors
50-3,000 m from the origin, a random 12-sector table and a random 200-hour record.
"""

import dataclasses
import importlib.util
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.special import exp1

from siting.dispersion.hourly import HourlyWeather, source_hourly_mean_g_m3_per_g_s
from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.sector import sector_position, source_concentration_g_m3_per_g_s

_SPEC = importlib.util.spec_from_file_location(
    "bench_reference", Path(__file__).resolve().parents[1] / "bench" / "reference.py"
)
reference = importlib.util.module_from_spec(_SPEC)
_SPEC.loader.exec_module(reference)

#: the lateral term at hourly.py's 6-sigma cut-off, exp(-6^2 / 2) = 1.5e-8 (analytic)
LATERAL_CUTOFF = np.exp(-18.0)
#: depletion tables this fine make the hourly engine's trapezoid integral agree with the
#: reference's direct integral to ~2e-7 (measured); the default 256 points are checked on their
#: own below (the sector engine integrates on its own profile nodes, 0.2 % apart)
FINE_TABLE_POINTS = 4096

POINT = ReleaseElement(0.0, 0.0, 6.0)
FAN = ReleaseElement(-40.0, 10.0, 8.0, diameter_m=0.8, exit_velocity_m_s=9.0)
VOLUME = ReleaseElement(30.0, -20.0, 4.0, sigma_y0_m=8.0, sigma_z0_m=2.5, min_distance_m=2.15 * 8.0)
EMISSION_G_S = np.array([0.3, 1.2, 0.05])


def _receptors(seed, n=2000, near_m=50.0, far_m=3000.0, centre=(0.0, 0.0)):
    rng = np.random.default_rng(seed)
    r = np.sqrt(rng.uniform(near_m**2, far_m**2, n))  # uniform over the annulus
    theta = rng.uniform(0.0, 2.0 * np.pi, n)
    return centre[0] + r * np.sin(theta), centre[1] + r * np.cos(theta)


def _table(seed):
    rng = np.random.default_rng(seed)
    freq = rng.random((12, 4, 6))
    freq[freq < 0.1] = 0.0  # some empty classes, as in real tables
    return WeatherClasses(np.arange(12) * 30.0, np.array([1.5, 3.0, 5.0, 8.0]), freq / freq.sum())


def _record(seed, n_hours=200):
    rng = np.random.default_rng(seed)
    return HourlyWeather(
        np.arange(n_hours).astype("datetime64[h]").astype("datetime64[s]"),
        rng.integers(0, 36, n_hours) * 10.0,
        rng.integers(1, 21, n_hours) * 0.5,
        rng.integers(0, 6, n_hours),
        np.full(n_hours, np.nan),
    )


def _settings(briggs_rural, rural_exponents, vd=0.02, points=FINE_TABLE_POINTS):
    return DispersionSettings(
        briggs_rural, rural_exponents, depletion_velocity_m_s=vd, depletion_table_points=points
    )


def _fast_sector(rx, ry, elements, emissions, weather, settings):
    return sum(
        q * source_concentration_g_m3_per_g_s(rx, ry, [e], weather, settings)
        for e, q in zip(elements, emissions)
    )


def _fast_hourly(rx, ry, elements, emissions, weather, settings, hour_weights=None):
    return sum(
        q * source_hourly_mean_g_m3_per_g_s(rx, ry, [e], weather, settings, hour_weights)
        for e, q in zip(elements, emissions)
    )


def _assert_within_cutoff(fast, ref, centreline, rtol=1e-6):
    # cross-check: the same formula except that hourly.py skips receptors beyond 6 sigma_y of
    # an hour's axis, each worth < exp(-18) of that hour's centre-line value there; so
    # |fast - ref| <= exp(-18) * (sum of centre-line values) + rtol (depletion table)
    bound = LATERAL_CUTOFF * centreline + rtol * ref
    excess = np.abs(fast - ref) - bound
    assert excess.max() <= 0, (
        f"worst excess {excess.max():.3g} at reference {ref[excess.argmax()]:.3g}"
    )


@pytest.mark.parametrize("vd", [None, 0.02])
def test_sector_average_equals_reference(briggs_rural, rural_exponents, vd):
    """Three sources incl. a volume one, random 12-sector table: the sector engine = reference."""
    rx, ry = _receptors(1)
    weather, settings = _table(2), _settings(briggs_rural, rural_exponents, vd)
    elements = [POINT, FAN, VOLUME]
    fast = _fast_sector(rx, ry, elements, EMISSION_G_S, weather, settings)
    ref = reference.reference_sector_average(rx, ry, elements, weather, settings, EMISSION_G_S)
    assert (ref > 0).all()
    # cross-check, same formula: the engine interpolates each element's centre-line profile
    # log-linearly between nodes 0.2 % apart in distance (4.0e-7 measured here with and without
    # depletion; 1.5e-7 at 0.1 %, 3e-8 at 0.05 %: second order in the step) and integrates the
    # depletion by trapezoid on the same nodes (~h^2 / 12 = 3e-7 of I)
    assert_allclose(fast, ref, rtol=1e-6)


def test_sector_average_near_the_sources_converges_at_second_order(briggs_rural, rural_exponents):
    """Receptors 2-300 m away: default nodes within 5e-6; halving the step quarters the error."""
    rx, ry = _receptors(3, near_m=2.0, far_m=300.0)
    weather = _table(4)
    elements = [POINT, FAN, VOLUME]
    ref = None
    worst = {}
    for step in (0.004, 0.002):
        settings = DispersionSettings(
            briggs_rural, rural_exponents, depletion_velocity_m_s=0.02, profile_log_step=step
        )
        fast = _fast_sector(rx, ry, elements, EMISSION_G_S, weather, settings)
        if ref is None:
            ref = reference.reference_sector_average(
                rx, ry, elements, weather, settings, EMISSION_G_S
            )
        worst[step] = np.max(np.abs(fast / ref - 1.0))
    # derived: linear interpolation in ln(distance) errs by ~h^2 / 8 x the profile's curvature
    # there, so the error falls fourfold per halving (7.0e-6 and 1.9e-6 measured, ratio 3.7)
    assert worst[0.002] < 5e-6
    assert worst[0.004] / worst[0.002] > 3.0


def test_hourly_equals_reference_up_to_the_lateral_cutoff(briggs_rural, rural_exponents):
    """Point and fan sources, random 200-hour record and hour weights: hourly engine = reference."""
    rx, ry = _receptors(5)
    weather, settings = _record(6), _settings(briggs_rural, rural_exponents)
    hour_weights = np.random.default_rng(7).uniform(0.5, 1.5, weather.n_hours)
    elements, emissions = [POINT, FAN], EMISSION_G_S[:2]
    fast = _fast_hourly(rx, ry, elements, emissions, weather, settings, hour_weights)
    ref, centreline = reference.reference_hourly(
        rx, ry, elements, weather, settings, emissions, hour_weights, return_centreline=True
    )
    assert (ref > 0).mean() > 0.9  # most receptors are reached, so the check has teeth
    _assert_within_cutoff(fast, ref, centreline)


def test_hourly_spread_over_the_direction_step_equals_reference(briggs_rural, rural_exponents):
    """The same record in 10 deg steps, each hour spread over its interval: engine = reference."""
    rx, ry = _receptors(5)
    record, settings = _record(6), _settings(briggs_rural, rural_exponents)
    weather = dataclasses.replace(record, direction_step_deg=10.0)
    elements, emissions = [POINT, FAN], EMISSION_G_S[:2]
    fast = _fast_hourly(rx, ry, elements, emissions, weather, settings)
    ref, centreline = reference.reference_hourly(
        rx, ry, elements, weather, settings, emissions, return_centreline=True
    )
    unspread = reference.reference_hourly(rx, ry, elements, record, settings, emissions)
    assert np.abs(ref / np.maximum(unspread, 1e-300) - 1.0).max() > 0.1  # the spread matters
    # cross-check, same formula (normal CDF in the engine, erf here): the window widened by
    # half the step keeps the cut-off below exp(-18) of the centre line, as without spreading
    _assert_within_cutoff(fast, ref, centreline)


def test_hourly_default_depletion_table_within_its_step(briggs_rural, rural_exponents):
    """The hourly engine's default 256-point depletion table stays within 5e-4 of the direct one."""
    rx, ry = _receptors(3)
    weather = _record(4)
    settings = DispersionSettings(briggs_rural, rural_exponents, depletion_velocity_m_s=0.02)
    elements, emissions = [POINT, FAN], EMISSION_G_S[:2]
    fast = _fast_hourly(rx, ry, elements, emissions, weather, settings)
    ref, centreline = reference.reference_hourly(
        rx, ry, elements, weather, settings, emissions, return_centreline=True
    )
    # derived: 256 geometric steps over 0.01 m-3 km are 4.9 % apart (h = ln(3e5) / 256); the
    # trapezoid errs by ~h^2 / 12 = 2e-4 of I, so the depletion fraction by 2e-4 x (v_d / u) I,
    # a few e-4 in the slowest, most depleted hours; averaged with the other hours of the year
    # 2.2e-4 of the mean was measured here
    _assert_within_cutoff(fast, ref, centreline, rtol=5e-4)


def test_hourly_volume_source_equals_reference_beyond_its_near_field(briggs_rural, rural_exponents):
    """Volume source, receptors 150-3,000 m from it: hourly engine = reference (to the cut-off)."""
    rx, ry = _receptors(8, near_m=150.0, centre=(VOLUME.x_m, VOLUME.y_m))
    weather, settings = _record(9), _settings(briggs_rural, rural_exponents)
    fast = _fast_hourly(rx, ry, [VOLUME], [1.0], weather, settings)
    ref, centreline = reference.reference_hourly(
        rx, ry, [VOLUME], weather, settings, return_centreline=True
    )
    _assert_within_cutoff(fast, ref, centreline)


def test_hourly_volume_source_equals_reference_in_its_near_field(briggs_rural, rural_exponents):
    """Volume source, receptors 5-60 m from it: hourly engine = reference (to the cut-off)."""
    rx, ry = _receptors(10, n=500, near_m=5.0, far_m=60.0, centre=(VOLUME.x_m, VOLUME.y_m))
    weather, settings = _record(11), _settings(briggs_rural, rural_exponents)
    fast = _fast_hourly(rx, ry, [VOLUME], [1.0], weather, settings)
    ref, centreline = reference.reference_hourly(
        rx, ry, [VOLUME], weather, settings, return_centreline=True
    )
    _assert_within_cutoff(fast, ref, centreline)


def test_reference_depletion_integral_is_analytic_for_linear_sigma_z(briggs_rural):
    """sz = a x (Briggs rural A): I(x) = E1(H^2 / 2 a^2 x^2) / (a sqrt(2 pi)) (analytic)."""
    # derived: I = int_0^x sqrt(2/pi) exp(-H^2 / 2 a^2 x'^2) / (a x') dx'; with t = H / (a x')
    # this is sqrt(2/pi) / a * int_T^inf exp(-t^2 / 2) / t dt = E1(T^2 / 2) / (a sqrt(2 pi))
    a, height_m = briggs_rural.z[0][0], 6.0
    assert briggs_rural.z[0][1] == 0.0  # sigma_z is exactly a x for class A
    x = np.geomspace(5.0, 3000.0, 200)
    integral = reference.DirectDepletionIntegral(
        lambda d: briggs_rural.sigma_z_m(d, 0), height_m, None, x.max()
    )(x)
    expected = exp1(height_m**2 / (2.0 * a**2 * x**2)) / (a * np.sqrt(2.0 * np.pi))
    # the last panel to each x is a midpoint rule: absolute error <~ 1e-7 in I (1e-8 measured),
    # i.e. < 4e-9 in the depletion fraction exp(-(v_d / u) I) for v_d / u <= 0.04
    assert_allclose(integral, expected, rtol=1e-8, atol=1e-7)


def test_reference_sector_weights_interpolate_between_centre_lines():
    """Sector weights: 1 on a centre line, 1/2 half way, summing to 1 everywhere (by design)."""
    centres = np.arange(12) * 30.0
    wind_from = np.array([0.0, 15.0, 30.0, 345.0, 200.0])
    travel = np.deg2rad(wind_from + 180.0)
    weights = reference._sector_weights(np.sin(travel), np.cos(travel), centres)
    assert_allclose(weights.sum(axis=0), 1.0, rtol=1e-12)
    assert_allclose(weights[:, 0], np.eye(12)[0], atol=1e-12)  # on sector 0's centre line
    assert_allclose(weights[[0, 1], 1], [0.5, 0.5], rtol=1e-12)  # half way between 0 and 30
    assert_allclose(weights[[11, 0], 3], [0.5, 0.5], rtol=1e-12)  # across north
    assert_allclose(weights[[6, 7], 4], [1 / 3, 2 / 3], rtol=1e-12)  # 200 deg: 1/3 of the way


@pytest.mark.parametrize("first_centre_deg", [0.0, 5.0, 15.0, 180.0, 345.0, 350.0])
@pytest.mark.parametrize("n_sectors", [8, 12, 36])
def test_engine_sector_position_is_the_angle_between_centre_lines(first_centre_deg, n_sectors):
    """The engine's (k0, w1) place the wind direction between two centre lines, whatever the
    first centre: checked against the direction the wind blows from (b + 180 deg for a receptor
    at bearing b, geometry) and the centre lines' own angles, modulo written out here."""
    rng = np.random.default_rng(3)
    dx, dy = rng.normal(size=2000), rng.normal(size=2000)
    dx[:4], dy[:4] = [0.0, 1.0, -1.0, 0.0], [-1.0, 0.0, 0.0, 1.0]  # exactly S, E, W, N
    width = 360.0 / n_sectors
    centres = (first_centre_deg + np.arange(n_sectors) * width) % 360.0
    weather = WeatherClasses(centres, np.array([1.0]), np.full((n_sectors, 1, 1), 1 / n_sectors))
    k0, w1 = sector_position(dx, dy, weather)
    assert k0.min() >= 0 and k0.max() <= n_sectors - 1
    assert w1.min() >= 0.0 and w1.max() <= 1.0
    wind_from = (np.rad2deg(np.arctan2(dx, dy)) + 180.0) % 360.0
    placed = (weather.sector_centres_deg[k0] + w1 * width) % 360.0
    gap = np.abs((placed - wind_from + 180.0) % 360.0 - 180.0)
    assert gap.max() < 1e-9


def test_reference_neighbour_sectors_are_the_non_zero_sector_weights():
    """The two bracketing sectors and their weights are exactly the non-zero entries of the
    triangle weights (same definition, two ways), at random bearings and on centre lines."""
    centres = np.arange(16) * 22.5
    rng = np.random.default_rng(3)
    wind_from = np.concatenate([rng.uniform(0, 360, 200), centres, [359.999, 0.0]])
    travel = np.deg2rad(wind_from + 180.0)
    dx, dy = np.sin(travel), np.cos(travel)
    dense = reference._sector_weights(dx, dy, centres)
    k0, k1, w0, w1 = reference._neighbour_sectors(dx, dy, centres)
    rebuilt = np.zeros_like(dense)
    columns = np.arange(dense.shape[1])
    np.add.at(rebuilt, (k0, columns), w0)
    np.add.at(rebuilt, (k1, columns), w1)
    assert_allclose(rebuilt, dense, atol=1e-9)
