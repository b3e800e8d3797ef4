"""Checks of siting.physics.solar against NREL SPA (via pvlib), analytic solar geometry and Turner's night.

Source keys: NOAA-GMD (NOAA solar calculator equations), Meeus1991 (Astronomical Algorithms),
EPA2000 (EPA-454/R-99-005 Sect. 6.4.1, night definition: from memory), SPA = Reda & Andreas
(2004), "Solar position algorithm for solar radiation applications", Solar Energy 76:577-589,
as implemented by pvlib ``method="nrel_numpy"`` (an independent reference implementation,
stated uncertainty +/-0.0003 deg).

Tolerance against SPA, 0.05 deg: the NOAA method uses Meeus's low-accuracy solar coordinates,
good to ~0.01 deg in the sun's longitude (Meeus1991 Ch. 24, from memory); above the horizon the
NOAA and SPA refraction formulas agree to ~0.003 deg (both give ~0.48 deg at 0 deg). Observed
differences are <= 0.015 deg, so 0.05 deg leaves 3x margin yet fails on any real slip: a
1-minute time error moves the elevation by up to 0.25 deg, a sign slip in the equation of time
(up to 16 min) by several degrees. Below the horizon the two refraction models diverge (SPA
stops refracting at -0.83 deg, NOAA continues), so there we compare the geometric elevation.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from siting.physics.solar import _true_elevation_deg, _unix_seconds, is_night, solar_elevation_deg

pvlib = pytest.importorskip("pvlib", reason="pvlib (NREL SPA reference) not installed")
pd = pytest.importorskip("pandas")

SPA_TOLERANCE_DEG = 0.05  # see module docstring

DATES = ["2024-03-20", "2024-06-21", "2024-09-22", "2024-12-21", "1995-02-11", "2031-08-03"]
SITES = [  # (latitude_deg, longitude_deg): equator, England, Southern Ocean, Svalbard, Tokyo
    (0.0, 0.0),
    (52.0, -1.5),
    (-60.0, -65.0),
    (78.0, 15.6),
    (35.7, 139.7),
]


def _times_utc():
    """Every 37 min through six days (solstices, equinoxes, two other years), as UTC index."""
    return pd.DatetimeIndex(
        np.concatenate([pd.date_range(d, periods=39, freq="37min", tz="UTC") for d in DATES])
    )


def _spa(times, latitude_deg, longitude_deg):
    """NREL SPA apparent and true elevation [deg] from pvlib."""
    position = pvlib.solarposition.get_solarposition(
        times, latitude_deg, longitude_deg, method="nrel_numpy"
    )
    return position["apparent_elevation"].to_numpy(), position["elevation"].to_numpy()


def _minutes(day, start_hhmm, stop_hhmm):
    """Times at 1-minute spacing on one UTC day, as datetime64[m]."""
    return np.arange(
        np.datetime64(f"{day}T{start_hhmm}"),
        np.datetime64(f"{day}T{stop_hhmm}"),
        np.timedelta64(1, "m"),
    )


@pytest.mark.parametrize("latitude_deg,longitude_deg", SITES)
def test_apparent_elevation_matches_spa_above_horizon(latitude_deg, longitude_deg):
    """Refracted elevation agrees with NREL SPA within 0.05 deg wherever the sun is up."""
    times = _times_utc()
    spa_apparent, spa_true = _spa(times, latitude_deg, longitude_deg)
    ours = solar_elevation_deg(times.tz_convert(None).to_numpy(), latitude_deg, longitude_deg)
    up = spa_true > 0.0
    assert up.sum() > 20
    assert_allclose(ours[up], spa_apparent[up], atol=SPA_TOLERANCE_DEG)  # cross-check: SPA


@pytest.mark.parametrize("latitude_deg,longitude_deg", SITES)
def test_geometric_elevation_matches_spa_everywhere(latitude_deg, longitude_deg):
    """Unrefracted elevation agrees with NREL SPA within 0.05 deg by day and by night."""
    times = _times_utc()
    _, spa_true = _spa(times, latitude_deg, longitude_deg)
    seconds = _unix_seconds(times.tz_convert(None).to_numpy())
    ours = _true_elevation_deg(seconds, latitude_deg, longitude_deg)
    assert_allclose(ours, spa_true, atol=SPA_TOLERANCE_DEG)  # cross-check: SPA


@pytest.mark.parametrize("latitude_deg", [0.0, 52.0, -60.0, 30.0])
def test_equinox_noon_elevation_is_90_minus_latitude(latitude_deg):
    """At the March 2024 equinox the highest sun stands at 90 - |latitude| within 0.5 deg."""
    times = _minutes("2024-03-20", "11:00", "13:30")  # solar noon at 0 deg E ~12:07 UTC
    peak_deg = solar_elevation_deg(times, latitude_deg, 0.0).max()
    # analytic: noon elevation = 90 - |lat - declination|; declination at the 03:06 UTC equinox
    # is 0 and changes by <= 0.4 deg/day, so <= 0.2 deg by noon; refraction above 30 deg
    # is <= 0.03 deg (NOAA-GMD) -> 0.5 deg bounds both with margin.
    assert peak_deg == pytest.approx(90.0 - abs(latitude_deg), abs=0.5)


def test_solstice_noon_elevation_uses_obliquity():
    """At the June solstice, noon elevation at 52 N is 90 - 52 + 23.44 deg (plus refraction)."""
    times = _minutes("2024-06-21", "11:30", "12:30")
    peak_deg = solar_elevation_deg(times, 52.0, 0.0).max()
    # analytic: declination = obliquity 23.44 deg at the solstice (Meeus1991 Eq. 21.2, 2024);
    # refraction at 61 deg ~0.01 deg (NOAA-GMD formula) -> 61.44 within 0.05
    assert peak_deg == pytest.approx(90.0 - 52.0 + 23.44, abs=0.05)


def test_accepts_strings_and_any_datetime64_unit():
    """ISO strings, datetime64[m] and datetime64[ns] of the same instant give one elevation."""
    as_string = solar_elevation_deg("2024-06-21T10:00", 52.0, -1.5)
    as_minutes = solar_elevation_deg(np.datetime64("2024-06-21T10:00", "m"), 52.0, -1.5)
    as_ns = solar_elevation_deg(np.array(["2024-06-21T10:00"], dtype="datetime64[ns]"), 52.0, -1.5)
    assert_allclose(as_minutes, as_string, rtol=0, atol=1e-9)  # same instant, exact
    assert_allclose(as_ns, [float(as_string)], rtol=0, atol=1e-9)


def test_broadcasts_over_time_and_latitude():
    """Times (n, 1) against latitudes (m,) give an (n, m) array equal to scalar calls."""
    times = np.array(["2024-06-21T06:00", "2024-06-21T12:00"], dtype="datetime64[s]")[:, None]
    latitudes = np.array([-30.0, 0.0, 52.0])
    grid = solar_elevation_deg(times, latitudes, 10.0)
    assert grid.shape == (2, 3)
    assert grid[1, 2] == pytest.approx(float(solar_elevation_deg(times[1, 0], 52.0, 10.0)))


def test_nat_gives_nan_elevation():
    """A missing time (NaT) gives NaN, not an error."""
    times = np.array(["2024-06-21T12:00", "NaT"], dtype="datetime64[s]")
    elevation_deg = solar_elevation_deg(times, 52.0, 0.0)
    assert np.isfinite(elevation_deg[0]) and np.isnan(elevation_deg[1])


@pytest.mark.parametrize(
    "latitude_deg,longitude_deg,name",
    [(91.0, 0.0, "latitude_deg"), (np.nan, 0.0, "latitude_deg"), (52.0, 200.0, "longitude_deg")],
)
def test_position_out_of_range_raises(latitude_deg, longitude_deg, name):
    """Latitude outside [-90, 90] or longitude outside [-180, 180] raises, naming the input."""
    with pytest.raises(ValueError, match=name):
        solar_elevation_deg("2024-06-21T12:00", latitude_deg, longitude_deg)


@pytest.mark.parametrize("day", ["2024-03-20", "2024-06-21", "2024-12-21"])
def test_night_at_local_midnight_and_day_at_local_noon(day):
    """At 52 N, 0 E: local midnight is night and local noon is day in every season."""
    times = np.array([f"{day}T00:00", f"{day}T12:00"], dtype="datetime64[s]")
    # EPA2000 definition (from memory): even on 21 Dec the sun is up ~08:09-15:48 UTC, so
    # noon lies inside [sunrise + 1 h, sunset - 1 h]; midnight is below the horizon.
    assert_array_equal(is_night(times, 52.0, 0.0), [True, False])


@pytest.mark.parametrize(
    "day,latitude_deg",
    [("2024-06-21", 52.0), ("2024-12-21", 52.0), ("2024-03-20", 0.0), ("2024-12-21", -60.0)],
)
def test_night_ends_one_hour_after_sunrise_and_starts_one_hour_before_sunset(day, latitude_deg):
    """Day begins 60 min after the apparent sun rises and ends 60 min before it sets."""
    times = _minutes(day, "00:00", "23:59")
    up = solar_elevation_deg(times, latitude_deg, 0.0) > 0.0
    night = is_night(times, latitude_deg, 0.0)
    sunrise, sunset = np.flatnonzero(up)[[0, -1]]  # first and last minute with the sun up
    day_first, day_last = np.flatnonzero(~night)[[0, -1]]
    # EPA2000 definition (from memory): night = [sunset - 1 h, sunrise + 1 h]; minute sampling
    # puts the crossing within one sample of the expected minute.
    assert abs(day_first - (sunrise + 60)) <= 1
    assert abs(day_last - (sunset - 60)) <= 1
    assert not night[day_first : day_last + 1].any()  # one unbroken day


def test_sunrise_minute_matches_spa():
    """The apparent-horizon crossing, hence Turner's night, agrees with SPA to 1 minute."""
    times = _minutes("2024-06-21", "02:00", "06:00")
    index = pd.DatetimeIndex(times).tz_localize("UTC")
    spa_apparent, _ = _spa(index, 52.0, -1.5)
    ours_up = np.flatnonzero(solar_elevation_deg(times, 52.0, -1.5) > 0.0)[0]
    spa_up = np.flatnonzero(spa_apparent > 0.0)[0]
    assert abs(ours_up - spa_up) <= 1  # cross-check: SPA (refraction models agree near 0 deg)


def test_polar_night_and_midnight_sun_at_78_north():
    """At 78 N it is night all of 21 Dec and day all of 21 Jun (sun never sets)."""
    december = _minutes("2024-12-21", "00:00", "23:59")[::15]
    june = _minutes("2024-06-21", "00:00", "23:59")[::15]
    # analytic: noon elevation 21 Dec = 90 - 78 - 23.44 < 0; midnight elevation 21 Jun =
    # 23.44 - (90 - 78) = 11.4 deg > 0
    assert is_night(december, 78.0, 15.6).all()
    assert not is_night(june, 78.0, 15.6).any()


def test_is_night_rejects_nat():
    """A missing time cannot be classed as day or night, so it raises."""
    with pytest.raises(ValueError, match="NaT"):
        is_night(np.array(["2024-06-21T12:00", "NaT"], dtype="datetime64[s]"), 52.0, 0.0)
