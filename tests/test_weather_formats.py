"""Hourly weather in other formats: unit conversions, u/v -> direction and speed, the ISD-Lite,
CF NetCDF and column-mapped CSV readers, format detection, one record written in every format,
and hostile input.

Every expected value comes from outside the code under test; its source is named beside it:
an exact unit definition, WMO's okta scale, the ISD-Lite Format Documentation (2006), MetPy
(an independent meteorology library), pyproj's geodesic, or hand arithmetic. "From memory" or
"common practice, no source" says where that is all there is. All values are invented.
"""

import gzip
import math

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from metpy.calc import wind_direction, wind_speed
from metpy.units import units
from numpy.testing import assert_allclose, assert_array_equal
from pyproj import Geod

from siting.errors import InputError, WeatherWarning
from siting.physics.met_units import (
    direction_in_deg,
    feet_from_metres,
    oktas_from_fraction,
    speed_in_m_s,
    wind_from_components,
)
from siting.readers.hourly_record import read_hourly_record
from siting.readers.hourly_table import frequency_table_from_hourly
from siting.readers.weather_formats import (
    WeatherSource,
    detect_format,
    parse_column_map,
    read_record_files,
    weather_source,
)

# every record here is shorter than a year: the reader says so, rightly; not the point here
pytestmark = pytest.mark.filterwarnings("ignore:.*less than a year:siting.errors.WeatherWarning")

KNOT_M_S = 1852.0 / 3600.0  # 1 knot = 1852 m per hour (international nautical mile), exact
KM_H_M_S = 1000.0 / 3600.0  # 1 km/h = 1000 m per 3600 s, exact (definition)
FOOT_M = 0.3048  # 1 international foot = 0.3048 m, exact (1959 agreement; from memory)
ZERO_CELSIUS_K = 273.15  # 0 deg C = 273.15 K (definition of the Celsius scale)
LAT, LON = 55.1, 10.05  # an invented site inside the NetCDF grid below
HOUR = np.timedelta64(1, "h")

# ISD-Lite Format Documentation (20 June 2006), "Data Format": 1-based first and last
# character of each field. The document prints day as "Pos 9-11, Length 2" and dew point as
# "Pos 20-24, Length 6"; the lengths (2 and 6) and the next fields' positions show 9-10 and
# 20-25 are meant.
ISD_POSITIONS = {
    "year": (1, 4),
    "month": (6, 7),
    "day": (9, 10),
    "hour": (12, 13),
    "temperature": (14, 19),  # deg C, scaling factor 10, missing -9999
    "dew_point": (20, 25),  # deg C, scaling factor 10
    "pressure": (26, 31),  # hPa, scaling factor 10
    "direction": (32, 37),  # deg, scaling factor 1; calm coded as 0
    "speed": (38, 43),  # m/s, scaling factor 10
    "sky": (44, 49),  # sky condition total coverage code
    "precip_1h": (50, 55),  # mm, scaling factor 10
    "precip_6h": (56, 61),  # mm, scaling factor 10
}
ISD_MISSING = -9999  # ISD-Lite Format Documentation (2006): every element's missing value


# --- files written by the tests -----------------------------------------------------------


def _times(start: str, n: int) -> np.ndarray:
    return np.datetime64(start, "m") + np.arange(n) * HOUR


def _isd_line(t, *, temperature=0, direction=0, speed=0, sky=0, dew_point=-9999) -> str:
    """One ISD-Lite line, each field placed at its documented columns (date fields
    zero-padded as the archive writes them, from memory; the others right-justified)."""
    t = pd.Timestamp(t)
    fields = {
        "year": t.year,
        "month": t.month,
        "day": t.day,
        "hour": t.hour,
        "temperature": temperature,
        "dew_point": dew_point,
        "pressure": 10132,
        "direction": direction,
        "speed": speed,
        "sky": sky,
        "precip_1h": 0,
        "precip_6h": ISD_MISSING,
    }
    chars = [" "] * 61
    for name, (first, last) in ISD_POSITIONS.items():
        width = last - first + 1
        pad = "0" if name in ("month", "day", "hour") else " "
        text = f"{fields[name]:{pad}>{width}d}"
        assert len(text) == width
        chars[first - 1 : last] = text
    return "".join(chars)


def _write_isd(path, times, temperature, direction, speed, sky, gz=False):
    lines = [
        _isd_line(t, temperature=tt, direction=dd, speed=ss, sky=cc)
        for t, tt, dd, ss, cc in zip(times, temperature, direction, speed, sky)
    ]
    data = ("\n".join(lines) + "\n").encode("ascii")
    path.write_bytes(gzip.compress(data) if gz else data)
    return path


def _siting_csv(path, times_utc, direction, speed, cloud, temperature, offset_h=1):
    """siting's own hourly CSV, local times written with their ISO UTC offset."""
    rows = ["time,direction_deg,speed_m_s,cloud_oktas,temperature_c"]
    sign = "+" if offset_h >= 0 else "-"
    for t, d, s, c, tt in zip(times_utc, direction, speed, cloud, temperature):
        local = t + np.timedelta64(offset_h, "h")
        rows.append(f"{local}{sign}{abs(offset_h):02d}:00,{d:g},{s:g},{c:g},{tt:g}")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


GRID_LAT = np.array([55.5, 55.25, 55.0, 54.75])  # north to south, as ERA5 writes it (from memory)
GRID_LON = np.array([9.75, 10.0, 10.25, 10.5])


def _grid_dataset(times, fields, *, lat=GRID_LAT, lon=GRID_LON, time_name="valid_time"):
    """A CF dataset: fields maps a name to (values (time, lat, lon) or (time,), attrs)."""
    data = {}
    for name, (values, attrs) in fields.items():
        values = np.asarray(values, dtype=float)
        if values.ndim == 1:  # the same value in every cell
            values = np.broadcast_to(values[:, None, None], (values.size, lat.size, lon.size))
        data[name] = ((time_name, "latitude", "longitude"), np.array(values), attrs)
    coords = {
        time_name: pd.DatetimeIndex(np.asarray(times, dtype="datetime64[ns]")),
        "latitude": ("latitude", lat, {"units": "degrees_north"}),
        "longitude": ("longitude", lon, {"units": "degrees_east"}),
    }
    return xr.Dataset(data, coords=coords)


def _uv(direction_deg, speed_m_s):
    """Components of a wind FROM direction_deg (meteorological convention, from memory):
    u = -s sin(d), v = -s cos(d)."""
    d = np.radians(np.asarray(direction_deg, dtype=float))
    s = np.asarray(speed_m_s, dtype=float)
    return -s * np.sin(d), -s * np.cos(d)


def _raw(path, source=None, utc_offset_h=None, lat=LAT, lon=LON):
    """The rows a reader gives (before the record's rules), one file."""
    (raw,) = read_record_files(path, source, utc_offset_h, lat, lon)
    return raw


# --- 1. unit conversions against their exact definitions -----------------------------------


def test_speed_units_by_exact_definitions():
    # 1 knot = 1852/3600 m/s; 3600 knots = 1852 m/s (hand arithmetic); 100 kn = 51.444... m/s
    assert speed_in_m_s([1.0], "knots")[0] == pytest.approx(1852.0 / 3600.0, rel=1e-15)
    assert speed_in_m_s([3600.0], "knots")[0] == pytest.approx(1852.0, rel=1e-15)
    assert speed_in_m_s([100.0], "knots")[0] == pytest.approx(51.44444444444444, rel=1e-14)
    # 1 km/h = 1000/3600 m/s; 36 km/h = 10 m/s, 3.6 km/h = 1 m/s (hand arithmetic)
    assert speed_in_m_s([1.0], "km/h")[0] == pytest.approx(1000.0 / 3600.0, rel=1e-15)
    assert_allclose(speed_in_m_s([36.0, 3.6, 0.0], "km/h"), [10.0, 1.0, 0.0], rtol=1e-14)
    assert_array_equal(speed_in_m_s([0.0, 4.2, 17.0], "m/s"), [0.0, 4.2, 17.0])
    assert np.isnan(speed_in_m_s([np.nan], "knots")[0])  # missing stays missing
    with pytest.raises(ValueError, match="knots"):
        speed_in_m_s([1.0], "mph")


def test_direction_units_tens_of_degrees():
    # tens of degrees: 27 = 270 deg (the unit's definition: x10)
    assert_array_equal(direction_in_deg([0, 9, 18, 27, 36], "tens"), [0, 90, 180, 270, 360])
    assert_array_equal(direction_in_deg([0.0, 123.0, 360.0], "deg"), [0.0, 123.0, 360.0])
    with pytest.raises(ValueError, match="tens"):
        direction_in_deg([1.0], "rad")


def test_feet_from_metres_by_the_international_foot():
    # 1 ft = 0.3048 m exactly: 0.3048 m = 1 ft, 1524 m = 5000 ft, 30.48 m = 100 ft, and
    # 1000 m = 1000/0.3048 = 3280.839895... ft (hand arithmetic)
    assert_allclose(
        feet_from_metres([0.3048, 1524.0, 30.48, 1000.0, 0.0]),
        [1.0, 5000.0, 100.0, 3280.839895013123, 0.0],
        rtol=1e-14,
    )
    assert np.isnan(feet_from_metres(np.nan))


@pytest.mark.parametrize(
    "fraction, oktas",
    [
        (0.0, 0),  # WMO okta scale: 0 oktas = sky clear
        (1.0, 8),  # 8 oktas = sky completely covered
        (0.5, 4),  # hand arithmetic: half the sky = 4/8
        (1e-9, 1),  # WMO: 1 okta = "1/8 or less, but not zero": any cloud is at least 1
        (0.04, 1),  # nearest eighth would be 0; WMO's definition of 1 okta keeps it 1
        (1.0 / 8.0, 1),  # exact eighths (hand arithmetic)
        (3.0 / 8.0, 3),
        (5.0 / 8.0, 5),
        (7.0 / 8.0, 7),
        (0.96, 7),  # nearest eighth would be 8; WMO: 7 oktas = "7/8 or more, but not 8/8"
        (1.0 - 1e-9, 7),  # any gap in the cloud is at most 7
        (0.3, 2),  # 2.4 eighths -> nearest whole okta 2 (common practice, no source)
        (0.7, 6),  # 5.6 eighths -> 6 (common practice, no source)
    ],
)
def test_oktas_from_fraction_by_wmo_okta_scale(fraction, oktas):
    assert oktas_from_fraction(fraction) == oktas


def test_oktas_scale_is_whole_monotonic_and_keeps_missing():
    f = np.linspace(0.0, 1.0, 1001)
    oktas = oktas_from_fraction(f)
    assert_array_equal(oktas, np.round(oktas))  # whole oktas only
    assert (np.diff(oktas) >= 0).all() and oktas.min() == 0 and oktas.max() == 8
    # WMO: only a clear sky is 0 and only a full sky is 8
    assert_array_equal(oktas == 0, f == 0.0)
    assert_array_equal(oktas == 8, f == 1.0)
    assert np.isnan(oktas_from_fraction([np.nan])[0])


# --- 2. u/v -> direction and speed against MetPy ------------------------------------------

COMPONENTS_M_S = (0.0, 0.1, -0.1, 1.0, -1.0, 7.3, -7.3, 20.0, -20.0)


def test_wind_from_components_matches_metpy_on_a_grid():
    u, v = (a.ravel() for a in np.meshgrid(COMPONENTS_M_S, COMPONENTS_M_S))
    direction, speed = wind_from_components(u, v)
    # MetPy (independent library): meteorological direction the wind blows FROM
    mp_direction = wind_direction(u * units("m/s"), v * units("m/s")).m_as("degree")
    mp_speed = wind_speed(u * units("m/s"), v * units("m/s")).m_as("m/s")
    assert_allclose(speed, mp_speed, rtol=1e-13, atol=0)
    calm = (u == 0) & (v == 0)
    # MetPy's calm convention: u = v = 0 gives direction 0 (its documentation, from memory;
    # its output checked here); ours too, the station code for "calm, no direction"
    assert calm.sum() == 1 and mp_direction[calm][0] == 0.0 and direction[calm][0] == 0.0
    # MetPy gives (0, 360]: a wind from the north is 360; ours is in [0, 360), north is 0
    north = (u == 0) & (v < 0)
    assert (mp_direction[north] == 360.0).all() and (direction[north] == 0.0).all()
    assert ((direction >= 0.0) & (direction < 360.0)).all()
    turn = (direction - mp_direction + 180.0) % 360.0 - 180.0  # the difference on the circle
    assert np.abs(turn[~calm]).max() < 1e-9


@pytest.mark.parametrize(
    "u, v, direction, speed",
    [
        (1.0, 0.0, 270.0, 1.0),  # blowing towards the east comes from the west (hand)
        (0.0, 1.0, 180.0, 1.0),  # towards the north: from the south
        (-1.0, 0.0, 90.0, 1.0),  # towards the west: from the east
        (0.0, -1.0, 0.0, 1.0),  # towards the south: from the north, 0 (= 360)
        (-1.0, -1.0, 45.0, math.sqrt(2.0)),  # from the north-east (hand)
        (3.0, 4.0, 180.0 + math.degrees(math.atan2(3.0, 4.0)), 5.0),  # 3-4-5 (hand)
        (0.0, 0.0, 0.0, 0.0),  # calm: 0, no direction
        (1e-20, -5.0, 0.0, 5.0),  # a hair west of north: 360 - 1e-19 is 360.0 in floats: 0
    ],
)
def test_wind_from_components_hand_cases(u, v, direction, speed):
    d, s = wind_from_components(u, v)
    turn = (float(d) - direction + 180.0) % 360.0 - 180.0
    assert abs(turn) < 1e-9 and 0.0 <= float(d) < 360.0
    assert float(s) == pytest.approx(speed, rel=1e-14)


def test_wind_from_components_keeps_missing():
    d, s = wind_from_components([np.nan, 1.0], [1.0, np.nan])
    assert np.isnan(d).all() and np.isnan(s).all()


# --- 3a. ISD-Lite -------------------------------------------------------------------------


def _isd_record(n=48, start="2025-03-10T00:00"):
    """Invented hours (in the format's scaled integers), with missing and non-okta codes."""
    k = np.arange(n)
    times = _times(start, n)
    temperature = -25 + 7 * k  # tenths of deg C: -2.5, -1.8, ...
    direction = (k * 70) % 350 + 10  # 10..350, multiples of 10
    speed = 12 + (k * 13) % 90  # tenths of m/s: 1.2 .. 10.1
    sky = (k * 5) % 9  # oktas 0..8
    direction[5] = ISD_MISSING  # hour 5: no direction -> missing hour
    speed[40] = ISD_MISSING  # hour 40: no speed -> missing hour
    # sky codes 9 (obscured) and 15 (broken, not in eighths): ISD-Lite's code table, from
    # memory; neither is a number of oktas -> missing hours
    sky[9], sky[20] = 9, 15
    temperature[30] = ISD_MISSING  # hour 30: no temperature; the hour is still used
    direction[12], speed[12] = 0, 0  # hour 12: a calm (direction 0 = calm, by the document)
    return times, temperature, direction, speed, sky


def test_isd_lite_reads_documented_columns_and_counts_codes(tmp_path):
    times, temperature, direction, speed, sky = _isd_record()
    path = _write_isd(tmp_path / "123450-99999-2025", times, temperature, direction, speed, sky)
    line = path.read_text().splitlines()[0]
    assert len(line) == 61 and line[13:19] == "   -25"  # field 5 at columns 14-19 (document)
    weather, summary = read_hourly_record(path, LAT, LON)

    assert summary["format"] == "isd-lite"
    source = summary["sources"][path.name]
    # hand count of the codes written above
    assert source["missing_codes"] == {
        "wind direction": 1,
        "wind speed": 1,
        "sky cover": 0,
        "air temperature": 1,
    }
    assert list(source["not_in_oktas"].values()) == [2]  # sky codes 9 and 15
    assert summary["hours_expected"] == 48 and summary["hours_used"] == 44
    assert summary["hours_missing"] == 4 and summary["calm_hours"] == 1
    used = np.setdiff1d(np.arange(48), [5, 9, 20, 40])
    assert_array_equal(weather.time_utc, times[used].astype("datetime64[s]"))  # UTC as written
    # temperature: scaling factor 10 (document); -9999 -> no temperature for hour 30
    expected_t = np.where(temperature == ISD_MISSING, np.nan, temperature / 10.0)[used]
    assert_allclose(weather.temperature_c, expected_t, rtol=1e-12, equal_nan=True)
    assert weather.temperature_c[0] == pytest.approx(-2.5)  # -25 tenths (hand)
    # speed: scaling factor 10 (document); the calm is raised to the 1 m/s floor
    expected_s = np.maximum(np.where(speed < 0, np.nan, speed / 10.0)[used], 1.0)
    assert_allclose(weather.speed_m_s, expected_s, rtol=1e-12)
    # direction in whole degrees (document); the calm (hour 12) takes hour 11's direction
    expected_d = direction[used].astype(float)
    expected_d[used == 12] = direction[11]
    assert_allclose(weather.direction_deg, expected_d, rtol=0, atol=1e-12)
    assert summary["direction_step_deg"] == 10.0  # every direction a multiple of 10 (hand)


def test_isd_lite_gzip_copy_reads_the_same(tmp_path):
    record = _isd_record()
    plain = _write_isd(tmp_path / "123450-99999-2025", *record)
    packed = _write_isd(tmp_path / "123450-99999-2025.gz", *record, gz=True)
    assert packed.read_bytes()[:2] == b"\x1f\x8b"  # gzip's signature (RFC 1952)
    w1, s1 = read_hourly_record(plain, LAT, LON)
    w2, s2 = read_hourly_record(packed, LAT, LON)
    for name in ("time_utc", "direction_deg", "speed_m_s", "stability_index", "temperature_c"):
        assert_array_equal(getattr(w1, name), getattr(w2, name))
    assert s1["sources"][plain.name] == s2["sources"][packed.name]
    drop = ("files", "sources")
    assert {k: v for k, v in s1.items() if k not in drop} == {
        k: v for k, v in s2.items() if k not in drop
    }


def test_isd_lite_codes_outside_documented_ranges_are_refused(tmp_path):
    times = _times("2025-03-10T00:00", 3)
    path = _write_isd(tmp_path / "st", times, [10] * 3, [90, 90, 90], [30, 30, 30], [2, 20, 2])
    # sky codes run 0..19 (ISD-Lite Format Documentation 2006, field 10): 20 is not a code
    with pytest.raises(InputError, match=r"st, line 2: sky cover code \(field 10\).*got 20"):
        read_hourly_record(path, LAT, LON)
    path = _write_isd(tmp_path / "st", times, [10] * 3, [90, 361, 90], [30, 30, 30], [2, 2, 2])
    with pytest.raises(InputError, match=r"st, line 2: wind direction \(field 8\).*got 361"):
        read_hourly_record(path, LAT, LON)


# --- 3b. CF NetCDF ------------------------------------------------------------------------

# the wind components per grid cell at time step 0 (rows GRID_LAT, columns GRID_LON); the
# site (55.1 N, 10.05 E) lies in the cell 55.0..55.25 N, 10.0..10.25 E
U_CELL = np.array(
    [
        [0.5, 1.5, -0.5, 2.0],
        [2.5, 1.0, -2.0, 0.0],  # 55.25 N: NW corner (10.0 E) 1.0, NE corner (10.25 E) -2.0
        [-1.0, 3.0, 5.0, 1.0],  # 55.0 N: SW corner 3.0, SE corner 5.0
        [0.0, 2.0, 4.0, 6.0],
    ]
)
V_CELL = np.array(
    [
        [1.0, 0.0, 2.0, -1.0],
        [3.0, 4.0, 0.5, 2.0],  # NW 4.0, NE 0.5
        [0.0, -1.0, 2.0, 3.0],  # SW -1.0, SE 2.0
        [1.5, 2.5, -0.5, 0.0],
    ]
)
NT = 30


def _reanalysis():
    """30 hours on the grid: u, v per cell, cloud, cloud base, 2 m temperature in K."""
    times = _times("2025-06-01T00:00", NT)
    t = np.arange(NT, dtype=float)[:, None, None]
    u = U_CELL[None] + 0.1 * t
    v = V_CELL[None] - 0.05 * t
    u[4, 2, 1] = np.nan  # time step 5: u missing at the site's nearest cell (SW corner)
    tcc = (np.arange(NT) % 9) / 8.0  # k/8: whole oktas exactly
    tcc[7] = 1.5  # time step 8: outside valid_range -> missing
    cbh = np.full(NT, 1524.0)  # m = 5000 ft (hand arithmetic)
    cbh[2] = np.nan  # time step 3: no cloud base
    t2m = ZERO_CELSIUS_K + 10.0 + 0.5 * np.arange(NT)  # K: 10.0, 10.5, ... deg C
    t2m[10] = 150.0  # time step 11: below valid_min -> no temperature
    ds = _grid_dataset(
        times,
        {
            "u10": (u, {"units": "m s**-1", "long_name": "10 metre U wind component"}),
            "v10": (v, {"units": "m s**-1"}),
            "tcc": (tcc, {"units": "(0 - 1)", "valid_range": np.array([0.0, 1.0])}),
            "cbh": (cbh, {"units": "m"}),
            "t2m": (t2m, {"units": "K", "valid_min": 200.0}),
        },
    )
    for name in ds.data_vars:
        ds[name].encoding["_FillValue"] = -32767.0  # NaN is written as this fill value
    return ds


@pytest.fixture(scope="module")
def era_nc(tmp_path_factory):
    """The 30 hours of _reanalysis() as NetCDF-4, written once for the tests that only read."""
    path = tmp_path_factory.mktemp("era") / "era.nc"
    _reanalysis().to_netcdf(path, engine="h5netcdf")
    return path


def test_netcdf_nearest_and_bilinear_against_hand_interpolation(era_nc):
    path = era_nc
    with xr.open_dataset(path, engine="h5netcdf", mask_and_scale=False) as stored:
        assert float(stored["u10"][4, 2, 1]) == -32767.0  # the fill value is in the file

    t = np.arange(NT, dtype=float)
    # nearest grid point: 55.0 N, 10.0 E (0.1 deg and 0.05 deg away; the next are farther)
    u_near, v_near = 3.0 + 0.1 * t, -1.0 - 0.05 * t
    # bilinear, by hand: 0.4 of the way north (0.1/0.25), 0.2 of the way east (0.05/0.25);
    # weights SW 0.6*0.8 = 0.48, SE 0.6*0.2 = 0.12, NW 0.4*0.8 = 0.32, NE 0.4*0.2 = 0.08:
    # u = 0.48*3 + 0.12*5 + 0.32*1 + 0.08*(-2) = 2.20; v = 0.48*(-1) + 0.12*2 + 0.32*4
    # + 0.08*0.5 = 1.08; the time trend adds to every corner, so to the result too
    u_bi, v_bi = 2.20 + 0.1 * t, 1.08 - 0.05 * t
    for rule, (u, v) in {"nearest": (u_near, v_near), "bilinear": (u_bi, v_bi)}.items():
        raw = _raw(path, WeatherSource(grid_point=rule))
        u = u.copy()
        u[4] = np.nan  # the fill value at the nearest cell, also a corner of the four
        # MetPy (independent library) turns the components into direction and speed
        want_d = wind_direction(u * units("m/s"), v * units("m/s")).m_as("degree") % 360.0
        want_s = wind_speed(u * units("m/s"), v * units("m/s")).m_as("m/s")
        # the reader rounds direction and speed to 1e-6 (its stated choice): atol 5e-7
        assert_allclose(raw.columns["speed_m_s"], want_s, rtol=0, atol=5e-7, equal_nan=True)
        got_d = raw.columns["direction_deg"]
        turn = (got_d - want_d + 180.0) % 360.0 - 180.0
        assert np.nanmax(np.abs(turn)) <= 5e-7 and np.isnan(got_d[4])
    near_d = _raw(path, WeatherSource(grid_point="nearest")).columns["direction_deg"]
    bi_d = _raw(path, WeatherSource(grid_point="bilinear")).columns["direction_deg"]
    assert np.nanmin(np.abs(near_d - bi_d)) > 1.0  # the two rules really differ here


def test_netcdf_fill_values_valid_range_units_and_summary(era_nc):
    path = era_nc
    weather, summary = read_hourly_record(path, LAT, LON)
    assert summary["format"] == "netcdf"
    source = summary["sources"]["era.nc"]
    assert source["variables"] == {
        "u": "u10",
        "v": "v10",
        "cloud": "tcc",
        "ceiling": "cbh",
        "temperature": "t2m",
    }
    # hand count: one fill value in u10, one tcc outside valid_range, one t2m below valid_min;
    # a missing cloud base is "no cloud base", not a missing value
    assert source["missing_codes"] == {"u10": 1, "v10": 0, "tcc": 1, "cbh": 0, "t2m": 1}
    assert summary["hours_expected"] == NT and summary["hours_used"] == NT - 2
    assert summary["hours_missing"] == 2
    used = np.setdiff1d(np.arange(NT), [4, 7])
    assert_array_equal(weather.time_utc, _times("2025-06-01T00:00", NT)[used])
    # K -> deg C: minus 273.15 (definition of the Celsius scale): 10.0 + 0.5 k deg C
    want_t = 10.0 + 0.5 * np.arange(NT)
    want_t[10] = np.nan
    assert_allclose(weather.temperature_c, want_t[used], atol=1e-9, equal_nan=True)

    raw = _raw(path)
    ceiling = raw.columns["ceiling_ft"]
    assert ceiling[2] == np.inf  # no cloud base: an unlimited ceiling
    assert_allclose(np.delete(ceiling, 2), 5000.0, rtol=1e-12)  # 1524 m = 5000 ft (hand)
    assert_array_equal(raw.columns["cloud_oktas"][:7], np.arange(7))  # k/8 -> k oktas

    # the grid point: 55.0 N, 10.0 E; its distance by pyproj's geodesic on WGS84
    grid = summary["grid_point"]
    assert grid["grid_latitude_deg"] == 55.0 and grid["grid_longitude_deg"] == 10.0
    _, _, metres = Geod(ellps="WGS84").inv(LON, LAT, 10.0, 55.0)
    assert grid["distance_km"] == pytest.approx(metres / 1000.0, abs=0.005)  # 2 decimals
    # hand check: 0.1 deg of latitude ~ 11.1 km, 0.05 deg of longitude at 55 N ~ 3.2 km,
    # together ~ 11.6 km
    assert 11.3 < grid["distance_km"] < 11.9
    assert summary["grid_point"]["grid_point_rule"] == "the nearest grid point"


def test_netcdf_classic_netcdf3_reads_the_same(tmp_path):
    ds = _reanalysis()
    ds.to_netcdf(tmp_path / "a.nc", engine="h5netcdf")
    ds.to_netcdf(tmp_path / "b.nc", engine="scipy")
    assert (tmp_path / "b.nc").read_bytes()[:3] == b"CDF"  # classic signature (NetCDF spec)
    a, b = _raw(tmp_path / "a.nc"), _raw(tmp_path / "b.nc")
    for column in ("direction_deg", "speed_m_s", "cloud_oktas", "ceiling_ft", "temperature_c"):
        assert_array_equal(a.columns[column], b.columns[column])
    assert_array_equal(a.time_utc, b.time_utc)
    assert a.source["missing_codes"] == b.source["missing_codes"]


def test_netcdf_packed_values_keep_valid_range_in_packed_units(tmp_path):
    """CF conventions section 8.1 (from memory): with scale_factor/add_offset, valid_range
    is given in the packed type and units; a packed 12000 (1.2) is outside 0..10000."""
    times = _times("2025-06-01T00:00", 6)
    u, v = _uv(np.full(6, 200.0), np.full(6, 4.0))
    tcc = np.array([0.0, 0.25, 0.5, 1.2, 0.75, 1.0])
    ds = _grid_dataset(
        times,
        {
            "u10": (u, {"units": "m s-1"}),
            "v10": (v, {"units": "m s-1"}),
            "tcc": (tcc, {"units": "1", "valid_range": np.array([0, 10000], dtype="int16")}),
        },
    )
    ds["tcc"].encoding.update(dtype="int16", scale_factor=1e-4, add_offset=0.0)
    ds["tcc"].encoding["_FillValue"] = np.int16(-32767)
    path = tmp_path / "packed.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    raw = _raw(path)
    assert raw.source["missing_codes"]["tcc"] == 1
    assert_array_equal(raw.columns["cloud_oktas"], [0, 2, 4, np.nan, 6, 8])  # k/8 (hand)


def test_netcdf_expver_takes_the_version_that_has_a_value(tmp_path):
    times = _times("2025-06-01T00:00", 6)
    u, v = _uv([90, 100, 110, 120, 130, 140], [3.0, 3.5, 4.0, 4.5, 5.0, 5.5])
    final = np.where(np.arange(6) < 4, 1.0, np.nan)  # final data for the first 4 hours
    stack = {  # (time, expver, lat, lon): version 1 final, version 5 preliminary
        name: np.stack([x * final, x * np.where(np.isnan(final), 1.0, np.nan)], axis=1)
        for name, x in (("u10", u), ("v10", v), ("tcc", np.full(6, 0.5)))
    }
    cells = (len(GRID_LAT), len(GRID_LON))
    ds = xr.Dataset(
        {
            name: (
                ("valid_time", "expver", "latitude", "longitude"),
                np.broadcast_to(x[:, :, None, None], (6, 2, *cells)).copy(),
                {"units": "m s-1" if name != "tcc" else "1"},
            )
            for name, x in stack.items()
        },
        coords={
            "valid_time": pd.DatetimeIndex(times.astype("datetime64[ns]")),
            "expver": ["0001", "0005"],
            "latitude": GRID_LAT,
            "longitude": GRID_LON,
        },
    )
    path = tmp_path / "expver.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    raw = _raw(path)
    assert_allclose(raw.columns["direction_deg"], [90, 100, 110, 120, 130, 140], atol=1e-9)
    assert_allclose(raw.columns["speed_m_s"], [3.0, 3.5, 4.0, 4.5, 5.0, 5.5], rtol=1e-12)
    assert raw.source["missing_codes"] == {"u10": 0, "v10": 0, "tcc": 0}


def test_netcdf_longitudes_0_to_360(tmp_path):
    times = _times("2025-06-01T00:00", 4)
    u, v = _uv(np.full(4, 250.0), np.full(4, 3.0))
    lon = np.array([358.5, 359.0, 359.5])
    ds = _grid_dataset(
        times,
        {"u10": (u, {"units": "m s-1"}), "v10": (v, {"units": "m s-1"}), "tcc": (u * 0, {})},
        lat=np.array([50.5, 50.0]),
        lon=lon,
    )
    path = tmp_path / "east.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    raw = _raw(path, lat=50.1, lon=-0.9)  # -0.9 E = 359.1 E; nearest 359.0 E = -1.0 E
    assert raw.source["grid_longitude_deg"] == pytest.approx(-1.0)
    assert raw.source["grid_latitude_deg"] == 50.0
    _, _, metres = Geod(ellps="WGS84").inv(-0.9, 50.1, -1.0, 50.0)
    assert raw.source["distance_km"] == pytest.approx(metres / 1000.0, abs=0.005)


@pytest.mark.parametrize(
    "lat, lon, rule, match",
    [
        (56.0, 10.05, "nearest", "latitude 56.0000 is outside the grid"),
        (55.1, 11.0, "nearest", "longitude 11.0000 is outside the grid"),
        # within half a grid step (0.125 deg) of the edge: the nearest point is the edge's,
        # but there are no four points around the site to interpolate between
        (55.55, 10.05, "bilinear", "latitude 55.5500 is outside the grid"),
    ],
)
def test_netcdf_site_outside_the_grid_is_refused(era_nc, lat, lon, rule, match):
    with pytest.raises(InputError, match=match):
        _raw(era_nc, WeatherSource(grid_point=rule), lat=lat, lon=lon)


def test_netcdf_near_the_edge_is_accepted_for_nearest(era_nc):
    raw = _raw(era_nc, WeatherSource(grid_point="nearest"), lat=55.55)
    assert raw.source["grid_latitude_deg"] == 55.5


@pytest.mark.parametrize(
    "variable, unit, match",
    [
        ("u10", "knots", "u10 has units 'knots'"),
        ("tcc", "oktas", "tcc has units 'oktas'"),
        ("t2m", "degF", "t2m has units 'degF'"),
        ("cbh", "ft", "cbh has units 'ft'"),
    ],
)
def test_netcdf_unknown_units_are_refused(tmp_path, variable, unit, match):
    ds = _reanalysis()
    ds[variable].attrs["units"] = unit
    path = tmp_path / "era.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    with pytest.raises(InputError, match=match):
        _raw(path)


def test_netcdf_cf_standard_names_and_percent_cloud(tmp_path):
    times = _times("2025-06-01T00:00", 4)
    u, v = _uv([90.0, 180.0, 270.0, 0.0], [2.0, 3.0, 4.0, 5.0])
    ds = _grid_dataset(
        times,
        {
            "east": (u, {"units": "m/s", "standard_name": "eastward_wind"}),
            "north": (v, {"units": "m/s", "standard_name": "northward_wind"}),
            "cover": ([0.0, 50.0, 99.0, 100.0], {"units": "%"}),
            "air": ([10.0, 11.0, 12.0, 13.0], {"units": "degC"}),
        },
        time_name="time",
    )
    ds["cover"].attrs["standard_name"] = "cloud_area_fraction"
    ds["air"].attrs["standard_name"] = "air_temperature"
    path = tmp_path / "cf.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    raw = _raw(path)
    assert raw.source["variables"] == {
        "u": "east",
        "v": "north",
        "cloud": "cover",
        "temperature": "air",
    }
    # 0 % -> 0, 50 % -> 4, 99 % -> 7 (WMO: not 8 unless full), 100 % -> 8 oktas
    assert_array_equal(raw.columns["cloud_oktas"], [0, 4, 7, 8])
    assert_allclose(raw.columns["direction_deg"] % 360.0, [90, 180, 270, 0], atol=1e-9)
    assert_allclose(raw.columns["temperature_c"], [10.0, 11.0, 12.0, 13.0])


# --- 3c. column-mapped CSV ----------------------------------------------------------------

NATIONAL_MAP = {
    "time": "DATUM+STD",
    "direction": "DD",
    "speed": "FF",
    "speed_flag": "Q_FF",
    "cloud": "N",
    "temperature": "T",
}


def _national_csv(path, rows):
    """An invented national service's export: comment line, semicolons, decimal commas."""
    text = "# invented station 4711, local time UTC+1\nSTN;DATUM;STD;DD;FF;Q_FF;N;T\n"
    path.write_text(text + "\n".join(";".join(r) for r in rows) + "\n", encoding="utf-8")
    return path


def _national_source(**options):
    """The export's map and units: knots, tens of degrees, local day and hour, flags 0 and 1."""
    return WeatherSource(
        columns=NATIONAL_MAP,
        speed_unit="knots",
        direction_unit="tens",
        time_format="%d.%m.%Y %H",
        flags_ok=("0", "1"),
        **options,
    )


def _national_rows(n=48):
    """Local time from 01.01.2025 00 (= 2024-12-31T23:00Z at UTC+1): tens, knots, oktas."""
    local = _times("2025-01-01T00:00", n)
    rows, expected = [], []
    for k, t in enumerate(local):
        tens, knots = (k * 7) % 35 + 1, 2.5 + (k * 11) % 30  # 10..350 deg, 2.5..31.5 kn
        cloud, temperature = (k * 5) % 9, -3.5 + 0.5 * k
        ts = pd.Timestamp(t)
        row = [
            "4711",
            f"{ts:%d.%m.%Y}",
            f"{ts:%H}",
            str(tens),
            f"{knots:g}".replace(".", ","),
            "1",
            str(cloud),
            f"{temperature:g}".replace(".", ","),
        ]
        rows.append(row)
        expected.append((tens * 10.0, knots * KNOT_M_S, cloud, temperature))
    return rows, np.array(expected)


def test_mapped_csv_units_local_time_missing_codes_and_flags(tmp_path):
    rows, expected = _national_rows()
    rows[5][4] = "-999"  # hour 5: FF missing code
    rows[8][3] = "-999,0"  # hour 8: DD missing code written as a decimal number
    rows[12][5] = "3"  # hour 12: FF flag 3 is not accepted
    rows[15][6] = "/"  # hour 15: N missing code
    rows[20][3], rows[20][4] = "0", "0"  # hour 20: a calm
    path = _national_csv(tmp_path / "wx.csv", rows)
    source = weather_source(
        "auto",
        NATIONAL_MAP,
        speed_unit="knots",
        direction_unit="tens",
        time_format="%d.%m.%Y %H",
        missing_codes="-999,/",
        flags_ok=["0", "1"],
    )
    weather, summary = read_hourly_record(path, LAT, LON, utc_offset_h=1, source=source)

    assert summary["format"] == "csv"
    info = summary["sources"]["wx.csv"]
    assert "semicolon-separated" in info["layout"]
    # hand count of what was written above
    assert info["missing_codes"] == {"direction": 1, "speed": 1, "cloud": 1, "temperature": 0}
    assert info["flags_rejected"] == {"direction": 0, "speed": 1, "cloud": 0, "temperature": 0}
    assert summary["hours_used"] == 44 and summary["hours_missing"] == 4
    # local 01.01.2025 00:00 at UTC+1 is 2024-12-31T23:00Z (hand); the year as written: 2025
    assert summary["first_time_utc"] == "2024-12-31T23:00Z"
    assert summary["years_covered"] == [2025]
    assert summary["time_offsets"] == "utc_offset_h = 1"
    assert summary["calm_hours"] == 1

    used = np.setdiff1d(np.arange(48), [5, 8, 12, 15])
    assert_array_equal(weather.time_utc, (_times("2024-12-31T23:00", 48))[used])
    want_d, want_s = expected[used, 0].copy(), expected[used, 1].copy()
    calm = used == 20
    want_d[calm], want_s[calm] = expected[19, 0], 1.0  # the calm rule (hourly_record.py)
    assert_allclose(weather.direction_deg, want_d, atol=1e-12)  # tens x 10
    assert_allclose(weather.speed_m_s, want_s, rtol=1e-12)  # knots x 1852/3600
    assert weather.speed_m_s[0] == pytest.approx(2.5 * 1852 / 3600, rel=1e-14)  # 2.5 kn
    assert_allclose(weather.temperature_c, expected[used, 3], atol=1e-12)  # decimal comma


def test_mapped_csv_error_names_the_source_column_and_line(tmp_path):
    rows, _ = _national_rows(6)
    rows[3][3] = "40"  # 40 tens of degrees = 400 deg
    path = _national_csv(tmp_path / "wx.csv", rows)
    source = _national_source()
    # line 1 is the comment, line 2 the header: the fourth data row is line 6 (hand count)
    with pytest.raises(InputError, match=r"wx\.csv, line 6: DD \(tens of degrees\) .*'40'"):
        read_hourly_record(path, LAT, LON, utc_offset_h=1, source=source)
    rows[3][3] = "27"
    rows[2][4] = "viel"  # not a number, in the FF column
    _national_csv(path, rows)
    with pytest.raises(InputError, match=r"wx\.csv, line 5: FF must be a number, got 'viel'"):
        read_hourly_record(path, LAT, LON, utc_offset_h=1, source=source)


def test_mapped_csv_iso_times_km_h_percent_cloud_and_metres(tmp_path):
    path = tmp_path / "export.csv"
    path.write_text(
        "valid,drct,kmh,cover,ceil_m,tmp\n"
        "2025-06-01T01:00+01:00,90,36,0,,12.5\n"  # 36 km/h = 10 m/s (hand)
        "2025-06-01T02:00+01:00,180,3.6,1,1524,13.0\n"  # 3.6 km/h = 1 m/s; 1 % -> 1 okta
        "2025-06-01T03:00+01:00,270,18,50,304.8,13.5\n"  # 50 % -> 4; 304.8 m = 1000 ft
        "2025-06-01T04:00+01:00,360,7.2,99,0,14.0\n"  # 99 % -> 7 oktas (WMO)
        "2025-06-01T05:00+01:00,45,54,100,152.4,14.5\n",  # 100 % -> 8; 152.4 m = 500 ft
        encoding="utf-8",
    )
    source = weather_source(
        columns="time=valid,direction=drct,speed=kmh,cloud=cover,ceiling=ceil_m,temperature=tmp",
        speed_unit="km/h",
        cloud_unit="percent",
        ceiling_unit="m",
    )
    raw = _raw(path, source)
    assert_allclose(raw.columns["speed_m_s"], [10.0, 1.0, 5.0, 2.0, 15.0], rtol=1e-14)
    assert_array_equal(raw.columns["cloud_oktas"], [0, 1, 4, 7, 8])
    assert_allclose(raw.columns["ceiling_ft"], [np.nan, 5000.0, 1000.0, 0.0, 500.0], equal_nan=True)
    assert_array_equal(raw.time_utc, _times("2025-06-01T00:00", 5))  # +01:00 -> UTC
    assert raw.offsets == {"+01:00"}
    # the same with a fraction instead of percent: 0.5 -> 4 oktas
    path.write_text(path.read_text().replace(",50,", ",0.5,").replace(",99,", ",0.99,"))
    fraction = weather_source(
        columns=dict(source.columns), speed_unit="km/h", cloud_unit="fraction", ceiling_unit="m"
    )
    cloud = _raw(path, fraction).columns["cloud_oktas"]
    assert cloud[2] == 4 and cloud[3] == 7


def test_mapped_csv_nan_text_is_missing_and_infinity_is_refused(tmp_path):
    """NaN (and NA, empty) is a missing value by the reader's documented rule, the same as in
    siting's own CSV; an infinity is no value at all and is refused."""
    rows, _ = _national_rows(24)
    rows[4][4] = "NaN"
    source = _national_source()
    path = _national_csv(tmp_path / "wx.csv", rows)
    _, summary = read_hourly_record(path, LAT, LON, utc_offset_h=1, source=source)
    assert summary["sources"]["wx.csv"]["missing_codes"]["speed"] == 1
    assert summary["hours_missing"] == 1
    rows[4][4] = "inf"
    _national_csv(path, rows)
    with pytest.raises(InputError, match=r"wx\.csv, line 7: FF must be a number, got 'inf'"):
        read_hourly_record(path, LAT, LON, utc_offset_h=1, source=source)


def test_parse_column_map_and_source_options():
    assert parse_column_map("time=DATE+HOUR, direction=DD,speed=FF") == {
        "time": "DATE+HOUR",
        "direction": "DD",
        "speed": "FF",
    }
    assert parse_column_map(None) == {} and parse_column_map("") == {}
    with pytest.raises(InputError, match="not NAME=COLUMN"):
        parse_column_map("time")
    with pytest.raises(InputError, match="given twice"):
        parse_column_map("time=A,time=B")
    with pytest.raises(InputError, match="'gust' unknown"):
        parse_column_map("gust=FX")
    with pytest.raises(InputError, match="speed_unit must be one of"):
        weather_source(speed_unit="mph")
    with pytest.raises(InputError, match="format must be one of"):
        weather_source("grib")
    assert weather_source(missing_codes="-999, 9999").missing_codes == ("-999", "9999")


# --- 4. one record in four layouts gives one frequency table -------------------------------

# tenths of m/s (ISD-Lite's resolution), none on a frequency-table class edge (1.5, 3, 5, 8,
# 11), the calm threshold (0.5) or the floor (1.0), none within 0.08 kn of a half knot (where
# Turner's method rounds to the next whole knot), so a rounding in the last bit of a knots or
# u/v conversion cannot move an hour to another class
SPEEDS_TENTHS = (6, 12, 17, 21, 26, 33, 38, 43, 48, 53, 58, 63, 68, 74, 79, 84, 89, 96, 104, 118)
CROSS_START = "2025-06-20T00:00"  # UTC; two days and nights at midsummer
CROSS_HOURS = 48


def _cross_record():
    k = np.arange(CROSS_HOURS)
    direction = (k * 70) % 350 + 10  # 10..350 deg in tens
    speed_tenths = np.array(SPEEDS_TENTHS)[(k * 7) % len(SPEEDS_TENTHS)]
    cloud = (k * 5) % 9
    temperature_tenths = 50 + (k * 37) % 150  # 5.0 .. 19.9 deg C
    for calm in (2, 45):  # two calms, at night: speed 0, direction 0
        direction[calm], speed_tenths[calm] = 0, 0
    return _times(CROSS_START, CROSS_HOURS), direction, speed_tenths, cloud, temperature_tenths


def test_cross_record_speeds_avoid_every_class_edge():
    kn = np.array(SPEEDS_TENTHS) / 10.0 / KNOT_M_S
    assert (np.abs(kn - np.floor(kn) - 0.5) > 0.08).all()
    assert not set(SPEEDS_TENTHS) & {5, 10, 15, 30, 50, 80, 110}


def test_same_hours_in_every_format_give_the_same_frequency_table(tmp_path):
    times, direction, speed_tenths, cloud, temperature_tenths = _cross_record()
    speed, temperature = speed_tenths / 10.0, temperature_tenths / 10.0
    paths = {}
    paths["csv"] = _siting_csv(
        tmp_path / "own.csv", times, direction, speed, cloud, temperature, offset_h=1
    )
    paths["isd-lite"] = _write_isd(
        tmp_path / "123450-99999-2025", times, temperature_tenths, direction, speed_tenths, cloud
    )
    u, v = _uv(direction, speed)
    u[speed == 0], v[speed == 0] = 0.0, 0.0  # a calm: no wind at all
    ds = _grid_dataset(
        times,
        {
            "u10": (u, {"units": "m s**-1"}),
            "v10": (v, {"units": "m s**-1"}),
            "tcc": (cloud / 8.0, {"units": "(0 - 1)"}),  # k/8 is exact in binary
            "t2m": (temperature + ZERO_CELSIUS_K, {"units": "K"}),
        },
    )
    paths["netcdf"] = tmp_path / "era.nc"
    ds.to_netcdf(paths["netcdf"], engine="h5netcdf")
    # the national export: local time UTC+2 in two columns, tens of degrees, knots written
    # to 12 significant digits (relative error <= 5e-13, compared with rtol 1e-9 below)
    lines = ["DATE;HOUR;DD;FF;N;T"]
    for t, d, s, c, tt in zip(times, direction, speed, cloud, temperature):
        local = pd.Timestamp(t + np.timedelta64(2, "h"))
        knots = f"{s / KNOT_M_S:.12g}".replace(".", ",")
        lines.append(f"{local:%Y%m%d};{local:%H};{d // 10};{knots};{c};{tt:g}".replace(".", ","))
    paths["mapped"] = tmp_path / "national.csv"
    paths["mapped"].write_text("\n".join(lines) + "\n", encoding="utf-8")
    mapped = WeatherSource(
        columns={
            "time": "DATE+HOUR",
            "direction": "DD",
            "speed": "FF",
            "cloud": "N",
            "temperature": "T",
        },
        speed_unit="knots",
        direction_unit="tens",
        time_format="%Y%m%d %H",
    )

    read = {
        "csv": read_hourly_record(paths["csv"], LAT, LON),
        "isd-lite": read_hourly_record(paths["isd-lite"], LAT, LON),
        "netcdf": read_hourly_record(paths["netcdf"], LAT, LON),
        "mapped": read_hourly_record(paths["mapped"], LAT, LON, utc_offset_h=2, source=mapped),
    }
    reference, ref_summary = read["csv"]
    assert reference.n_hours == CROSS_HOURS and ref_summary["calm_hours"] == 2
    # Turner's classes vary over the two days and nights (at least four of A-F)
    assert len(np.unique(reference.stability_index)) >= 4
    ref_table = frequency_table_from_hourly(reference, n_sectors=12)
    for name, (weather, summary) in read.items():
        assert summary["hours_used"] == CROSS_HOURS, name
        assert_array_equal(weather.time_utc, times.astype("datetime64[s]"))
        assert_array_equal(weather.stability_index, reference.stability_index)
        assert_allclose(weather.speed_m_s, reference.speed_m_s, rtol=1e-9)
        turn = (weather.direction_deg - reference.direction_deg + 180.0) % 360.0 - 180.0
        assert np.abs(turn).max() < 1e-9, name
        assert_allclose(weather.temperature_c, reference.temperature_c, atol=1e-9)
        assert summary["direction_step_deg"] == 10.0
        assert summary["stability_share"] == ref_summary["stability_share"]
        table = frequency_table_from_hourly(weather, n_sectors=12)
        assert_array_equal(table["hours"].to_numpy(), ref_table["hours"].to_numpy())
        pd.testing.assert_frame_equal(table, ref_table, check_exact=False, rtol=1e-9, atol=0)
    assert {read[n][1]["format"] for n in read} == {"csv", "isd-lite", "netcdf"}


# --- 5. detection -------------------------------------------------------------------------


def _small_files(tmp_path):
    times = _times("2025-06-01T00:00", 4)
    direction, speed = np.array([90, 180, 270, 20]), np.array([3.0, 4.0, 5.0, 6.0])
    cloud, temperature = np.array([0, 2, 4, 8]), np.array([10.0, 11.0, 12.0, 13.0])
    t10, s10 = (np.round(x * 10).astype(int) for x in (temperature, speed))  # tenths
    files = {
        "own": _siting_csv(tmp_path / "own.csv", times, direction, speed, cloud, temperature),
        # an ISD-Lite file under a misleading name: detected by its content
        "isd": _write_isd(tmp_path / "isd.csv", times, t10, direction, s10, cloud),
        "isd_gz": _write_isd(tmp_path / "isd.gz", times, t10, direction, s10, cloud, gz=True),
    }
    files["foreign"] = tmp_path / "foreign.csv"
    files["foreign"].write_text("Zeit,DD,FF,N\n2025-06-01T00:00Z,9,10,3\n", encoding="utf-8")
    u, v = _uv(direction, speed)
    ds = _grid_dataset(
        times,
        {"u10": (u, {"units": "m s-1"}), "v10": (v, {"units": "m s-1"}), "tcc": (cloud / 8, {})},
    )
    files["nc4"], files["nc3"] = tmp_path / "grid.txt", tmp_path / "grid3.dat"
    ds.to_netcdf(files["nc4"], engine="h5netcdf")
    ds.to_netcdf(files["nc3"], engine="scipy")
    return files


def test_detect_format_by_content(tmp_path):
    files = _small_files(tmp_path)
    assert detect_format(files["own"]) == "csv"
    assert detect_format(files["foreign"]) == "csv"  # read only with a column map
    assert detect_format(files["isd"]) == "isd-lite"
    assert detect_format(files["isd_gz"]) == "isd-lite"  # gunzipped first
    assert detect_format(files["nc4"]) == "netcdf"  # HDF5 signature
    assert detect_format(files["nc3"]) == "netcdf"  # classic CDF signature
    # and reading each by detection gives the same hours
    hours = [
        read_hourly_record(files[k], LAT, LON)[0] for k in ("own", "isd", "isd_gz", "nc4", "nc3")
    ]
    for weather in hours[1:]:
        assert_allclose(weather.speed_m_s, hours[0].speed_m_s, rtol=1e-12)
        assert_array_equal(weather.time_utc, hours[0].time_utc)


@pytest.mark.parametrize(
    "key, fmt, match",
    [
        ("isd", "netcdf", "format netcdf given, but the file has no NetCDF signature"),
        ("own", "netcdf", "format netcdf given, but the file has no NetCDF signature"),
        ("nc4", "csv", "a NetCDF file, but the format given is csv"),
        ("nc3", "isd-lite", "a NetCDF file, but the format given is isd-lite"),
        ("own", "isd-lite", r"own\.csv, line 1: .* characters; an ISD-Lite line"),
    ],
)
def test_named_format_contradicted_by_content_is_refused(tmp_path, key, fmt, match):
    files = _small_files(tmp_path)
    with pytest.raises(InputError, match=match):
        read_hourly_record(files[key], LAT, LON, source=WeatherSource(format=fmt))


def test_foreign_csv_without_a_column_map_is_refused(tmp_path):
    files = _small_files(tmp_path)
    with pytest.raises(InputError, match="column map") as caught:
        read_hourly_record(files["foreign"], LAT, LON)
    assert "columns" in caught.value.parameters


def test_files_of_different_formats_in_one_record_are_refused(tmp_path):
    files = _small_files(tmp_path)
    later = _times("2025-06-01T04:00", 4)  # after the ISD file's hours: no overlap
    own = _siting_csv(tmp_path / "later.csv", later, [90] * 4, [3.0] * 4, [2] * 4, [9.0] * 4)
    with pytest.raises(InputError, match=r"different formats: isd\.csv \(isd-lite\), later"):
        read_hourly_record([files["isd"], own], LAT, LON)


def test_isd_lite_station_years_join_in_time_order(tmp_path):
    def year_file(start, name):
        times = _times(start, 24)
        k = np.arange(24)
        return _write_isd(tmp_path / name, times, 10 + k, (k * 30) % 350 + 10, 20 + k, (k * 5) % 9)

    late = year_file("2025-01-01T00:00", "123450-99999-2025")
    early = year_file("2024-12-31T00:00", "123450-99999-2024")
    weather, summary = read_hourly_record([late, early], LAT, LON)  # given out of order
    assert summary["files"] == [early.name, late.name]
    assert summary["years_covered"] == [2024, 2025]
    assert summary["hours_expected"] == 48 and summary["hours_missing"] == 0
    assert_array_equal(weather.time_utc, _times("2024-12-31T00:00", 48).astype("datetime64[s]"))


def test_short_record_warns(tmp_path):
    files = _small_files(tmp_path)
    with pytest.warns(WeatherWarning, match="less than a year"):
        read_hourly_record(files["isd"], LAT, LON)


# --- 6. hostile input ---------------------------------------------------------------------


def _hostile_mapped(tmp_path, bad):
    rows, _ = _national_rows(6)
    bad(rows)
    path = _national_csv(tmp_path / "wx.csv", rows)
    source = _national_source()
    return path, source, {"utc_offset_h": 1}


def _hostile_isd(tmp_path, edit):
    times = _times("2025-02-27T00:00", 6)
    lines = [_isd_line(t, temperature=20, direction=90, speed=30, sky=3) for t in times]
    edit(lines)
    path = tmp_path / "123450-99999-2025"
    path.write_text("\n".join(lines) + "\n", encoding="ascii")
    return path, None, {}


def _hostile_netcdf(tmp_path, times):
    n = len(times)
    u, v = _uv(np.full(n, 200.0), np.full(n, 4.0))
    ds = _grid_dataset(
        times, {"u10": (u, {"units": "m s-1"}), "v10": (v, {"units": "m s-1"}), "tcc": (u * 0, {})}
    )
    path = tmp_path / "era.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    return path, None, {}


def _set(row, col, text):
    def edit(rows):
        rows[row][col] = text

    return edit


def _replace_line(index, line):
    def edit(lines):
        lines[index] = line

    return edit


def _edit_line(index, at, text):
    """Overwrite characters of line ``index`` from 0-based position ``at``."""

    def edit(lines):
        lines[index] = lines[index][:at] + text + lines[index][at + len(text) :]

    return edit


def _cut_line(index, length):
    def edit(lines):
        lines[index] = lines[index][:length]

    return edit


def _off_hour():
    t = _times("2025-06-01T00:00", 4)
    t[1] += np.timedelta64(30, "m")
    return t


HOSTILE = {
    # mapped CSV: infinities written as text (line 1 comment, line 2 header, data from line 3)
    "mapped inf": (
        lambda p: _hostile_mapped(p, _set(2, 4, "inf")),
        r"wx\.csv, line 5: FF must be a number, got 'inf'",
    ),
    "mapped -Infinity": (
        lambda p: _hostile_mapped(p, _set(3, 7, "-Infinity")),
        r"wx\.csv, line 6: T must be a number, got '-Infinity'",
    ),
    "mapped overflow": (
        lambda p: _hostile_mapped(p, _set(0, 4, "1e999")),
        r"wx\.csv, line 3: FF must be a number, got '1e999'",
    ),
    "mapped 30 February": (
        lambda p: _hostile_mapped(p, _set(1, 1, "30.02.2025")),
        r"wx\.csv, line 4: time '30\.02\.2025 01' does not match the time format",
    ),
    "mapped times go back": (
        lambda p: _hostile_mapped(p, _set(4, 2, "01")),
        r"wx\.csv, line 7: time '01\.01\.2025 01' is earlier than line 6",
    ),
    "mapped time repeats": (
        lambda p: _hostile_mapped(p, _set(4, 2, "03")),
        r"wx\.csv, line 7: time '01\.01\.2025 03' repeats the time of line 6",
    ),
    "isd line too short": (
        lambda p: _hostile_isd(p, _cut_line(2, 49)),  # ends at column 49: 49 characters
        r"123450-99999-2025, line 3: 49 characters; an ISD-Lite line",
    ),
    "isd line too long": (
        lambda p: _hostile_isd(p, _edit_line(1, 61, "    42")),  # a 13th field
        r"123450-99999-2025, line 2: 67 characters",
    ),
    "isd letters in a field": (
        lambda p: _hostile_isd(p, _edit_line(1, 40, "ab")),  # columns 41-42: field 9
        r"123450-99999-2025, line 2: field 9 \(columns 38-43\) must be an integer",
    ),
    "isd 30 February": (
        lambda p: _hostile_isd(p, _edit_line(3, 8, "30")),  # day at columns 9-10
        r"123450-99999-2025, line 4: 2025-02-30T03:00 is not a date",
    ),
    "isd times go back": (
        lambda p: _hostile_isd(p, _replace_line(4, _isd_line("2025-02-27T01:00", speed=30))),
        r"123450-99999-2025, line 5: time '2025-02-27T01:00Z' is earlier than line 4",
    ),
    "netcdf off the hour": (
        lambda p: _hostile_netcdf(p, _off_hour()),
        r"era\.nc, time step 2: 2025-06-01T01:30:00 is not on a whole hour",
    ),
    "netcdf time repeats": (
        lambda p: _hostile_netcdf(p, _times("2025-06-01T00:00", 4)[[0, 1, 1, 2]]),
        r"era\.nc, time step 3: time '2025-06-01T01:00Z' repeats the time of time step 2",
    ),
    "netcdf times go back": (
        lambda p: _hostile_netcdf(p, _times("2025-06-01T00:00", 4)[[0, 2, 1, 3]]),
        r"era\.nc, time step 3: time '2025-06-01T01:00Z' is earlier than time step 2",
    ),
}


def _hostile_bytes(tmp_path, name, data):
    path = tmp_path / name
    path.write_bytes(data)
    return path, None, {}


HOSTILE |= {
    # the signatures are right (gzip RFC 1952; HDF5; classic CDF), the content is not
    "gzip cut short": (
        lambda p: _hostile_bytes(p, "st.gz", gzip.compress(_isd_line("2025-01-01").encode())[:30]),
        r"st\.gz: a gzip file that cannot be read",
    ),
    "netcdf-4 garbage": (
        lambda p: _hostile_bytes(p, "bad.nc", b"\x89HDF\r\n\x1a\n" + bytes(200)),
        r"bad\.nc: cannot be read as NetCDF",
    ),
    "classic netcdf garbage": (
        lambda p: _hostile_bytes(p, "bad3.nc", b"CDF\x01" + b"\xff" * 200),
        r"bad3\.nc: cannot be read as NetCDF",
    ),
}


@pytest.mark.parametrize("case", list(HOSTILE))
def test_hostile_input_is_refused_naming_file_and_place(tmp_path, monkeypatch, case):
    build, match = HOSTILE[case]
    inputs, cwd = tmp_path / "in", tmp_path / "cwd"
    inputs.mkdir()
    cwd.mkdir()
    path, source, options = build(inputs)
    monkeypatch.chdir(cwd)
    before = {p: (p.stat().st_size, p.stat().st_mtime_ns) for p in tmp_path.rglob("*")}
    with pytest.raises(InputError, match=match):
        read_hourly_record(path, LAT, LON, source=source, **options)
    # nothing written anywhere: the inputs untouched, nothing new beside them or in the cwd
    after = {p: (p.stat().st_size, p.stat().st_mtime_ns) for p in tmp_path.rglob("*")}
    assert after == before and list(cwd.iterdir()) == []


def test_siting_csv_and_iso_mapped_csv_refuse_30_february(tmp_path):
    own = tmp_path / "own.csv"
    own.write_text(
        "time,direction_deg,speed_m_s,cloud_oktas\n"
        "2025-02-28T23:00Z,90,3,2\n"
        "2025-02-30T00:00Z,90,3,2\n",
        encoding="utf-8",
    )
    with pytest.raises(InputError, match=r"own\.csv, line 3: time '2025-02-30T00:00Z' is not a"):
        read_hourly_record(own, LAT, LON)
    mapped = tmp_path / "mapped.csv"
    mapped.write_text(own.read_text().replace("time,direction_deg", "t,direction_deg"))
    source = WeatherSource(
        columns={
            "time": "t",
            "direction": "direction_deg",
            "speed": "speed_m_s",
            "cloud": "cloud_oktas",
        }
    )
    with pytest.raises(InputError, match=r"mapped\.csv, line 3: time '2025-02-30T00:00Z' is not"):
        read_hourly_record(mapped, LAT, LON, source=source)


def test_flag_columns_without_accepted_flags_are_refused(tmp_path):
    """A mapped flag column with no flags_ok would reject every value in silence: refused up
    front, naming flags_ok (our rule, no source)."""
    path = tmp_path / "flags.csv"
    path.write_text(
        "time,dd,ff,n,q\n2025-01-01T00:00Z,270,3.0,4,1\n2025-01-01T01:00Z,270,3.0,4,1\n",
        encoding="utf-8",
    )
    source = weather_source(
        columns="time=time,direction=dd,speed=ff,cloud=n,speed_flag=q",
    )
    with pytest.raises(InputError, match="flags_ok"):
        read_hourly_record(path, 55.0, 10.0, source=source)
