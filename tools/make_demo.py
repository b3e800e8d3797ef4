"""Regenerate the INVENTED demo data of siting: the fictional Hollowmere Farm.

Everything written here is made up for demonstration: the holding, the habitat sites, their
names, outlines and background values, the named points and all the weather. None of it
describes a real place, and no number here may be used for a real decision.

Writes into siting/data_demo/:
  weather_table.csv  12 sectors x 4 speed classes x 6 Pasquill classes, frequencies summing to 1
  hourly_weather.csv one invented year (2025) of hourly station-style observations
  weather_isd/demo-station-2024.gz, demo-station-2025.gz
                     the same invented station in the ISD-Lite format (UTC, scaled integers,
                     gzip): 2025 is hourly_weather.csv, 2024 an earlier invented year
  reanalysis_2025.nc an invented reanalysis-like CF NetCDF grid (3 x 3 points, 0.25 deg) for
                     2025 (UTC) whose middle point holds the same invented weather
  habitats.gpkg      layer "habitats": four fictional protected sites (EPSG:32632)
  receptors.csv      five named points on or at the edge of those sites

scenario.toml, scenario_hourly.toml and README.md are written by hand; this script only checks
that the scenarios' sources lie outside every habitat polygon. The output is the same on every
run (fixed seeds; the hourly record has its own generator, so adding it changed nothing else;
the ISD-Lite files and the grid are made from that record's fields and streams of their own).
The gzip files have mtime 0 and no file name in their header; the NetCDF file carries no date,
so it too comes out byte-identical with the same libraries (it records their versions).

Run:  python tools/make_demo.py      (writes into siting/data_demo/)
Needs numpy, shapely, geopandas (with pyogrio), pyproj, xarray and h5netcdf.
"""

from __future__ import annotations

import csv
import gzip
import io
import math
import tomllib
from pathlib import Path

import geopandas as gpd
import numpy as np
from shapely import affinity
from shapely.geometry import LineString, Point, Polygon

SEED = 20240611
CRS = "EPSG:32632"  # WGS 84 / UTM zone 32N, metres
FARM_X_M = 500_000.0  # centre of the fictional holding
FARM_Y_M = 5_800_000.0
HERE = Path(__file__).resolve().parents[1] / "siting" / "data_demo"  # the bundled demo folder

# --- weather ------------------------------------------------------------------------------------

DIRECTIONS_DEG = np.arange(0, 360, 30)  # direction the wind blows FROM, sector centres
# Invented climate: prevailing south-westerly, a secondary easterly mode.
DIRECTION_WEIGHTS = np.array(
    [0.055, 0.050, 0.060, 0.075, 0.060, 0.055, 0.080, 0.140, 0.150, 0.120, 0.085, 0.070]
)
SPEEDS_M_S = np.array([1.5, 3.0, 5.0, 8.0])  # class speeds at 10 m
STABILITIES = ["A", "B", "C", "D", "E", "F"]
# Pasquill class given speed class (rows: speeds; columns: A..F). Unstable A/B only at low and
# moderate speeds, stable E/F at low speeds (clear nights), D dominant and alone-ish when windy.
STABILITY_GIVEN_SPEED = np.array(
    [
        [0.05, 0.12, 0.08, 0.25, 0.15, 0.35],  # 1.5 m/s
        [0.02, 0.10, 0.13, 0.45, 0.18, 0.12],  # 3.0 m/s
        [0.00, 0.04, 0.14, 0.70, 0.12, 0.00],  # 5.0 m/s
        [0.00, 0.00, 0.08, 0.92, 0.00, 0.00],  # 8.0 m/s
    ]
)


def _speed_distribution(direction_deg: float) -> np.ndarray:
    """Share of each speed class for one sector: windier from the west, calmer from the east."""
    calm = np.array([0.22, 0.36, 0.30, 0.12])
    windy = np.array([0.10, 0.28, 0.37, 0.25])
    westerliness = 0.5 * (1.0 - math.cos(math.radians(direction_deg - 255.0)))  # 0 at 255 deg
    return westerliness * calm + (1.0 - westerliness) * windy


def make_weather(rng: np.random.Generator) -> list[tuple[int, float, str, float]]:
    """Joint frequency table (direction, speed, stability), with a little seeded jitter."""
    rows = []
    for i, direction in enumerate(DIRECTIONS_DEG):
        speeds = _speed_distribution(float(direction))
        for j, speed in enumerate(SPEEDS_M_S):
            for k, stability in enumerate(STABILITIES):
                base = DIRECTION_WEIGHTS[i] * speeds[j] * STABILITY_GIVEN_SPEED[j, k]
                jitter = math.exp(0.15 * rng.standard_normal()) if base > 0 else 0.0
                rows.append([int(direction), float(speed), stability, base * jitter])
    freq = np.array([r[3] for r in rows])
    freq = np.round(freq / freq.sum(), 10)
    freq[np.argmax(freq)] += 1.0 - freq.sum()  # absorb rounding so the column sums to 1
    for row, f in zip(rows, freq):
        row[3] = float(round(f, 10))
    return [tuple(r) for r in rows]


# --- hourly record -----------------------------------------------------------------------------

HOURLY_SEED = SEED + 1  # its own stream: the older files do not depend on it
HOURLY_YEAR = 2025
HOURLY_UTC_OFFSET = "+01:00"  # the invented station keeps its local standard time all year
# Invented weather regimes: (mean direction FROM [deg], spread [deg], mean speed [m/s], share,
# cloud tendency [oktas]). Prevailing south-westerly and moist, an easterly mode drier and
# lighter, a north-westerly mode behind fronts.
REGIMES = [
    (235.0, 30.0, 5.0, 0.52, 5.0),
    (300.0, 30.0, 5.5, 0.18, 4.0),
    (80.0, 35.0, 3.4, 0.20, 1.5),
    (170.0, 35.0, 3.6, 0.10, 3.0),
]
REGIME_MEAN_HOURS = 60.0  # mean persistence of a regime
#: two gaps, one with empty values, one with the rows left out (local start hour, length)
HOURLY_GAPS = [("2025-03-14T08", 3, "empty"), ("2025-08-21T01", 7, "absent")]


def _ar1(rng: np.random.Generator, n: int, correlation: float) -> np.ndarray:
    """Unit-variance AR(1) series (hour-to-hour correlation given)."""
    noise = rng.standard_normal(n) * math.sqrt(1.0 - correlation**2)
    out = np.empty(n)
    out[0] = rng.standard_normal()
    for i in range(1, n):
        out[i] = correlation * out[i - 1] + noise[i]
    return out


def _hourly_fields(rng: np.random.Generator, year: int = HOURLY_YEAR) -> dict[str, np.ndarray]:
    """One invented year of hourly weather before any reporting: continuous direction and
    speed, the cloud's latent value and whole oktas, the ceiling before and after rounding,
    temperature; and the values as a station reports them (``*_reported``).

    Hour i is local standard time (HOURLY_UTC_OFFSET) ``year``-01-01T00 plus i hours. The same
    generator and seed give the same fields: the CSV, the ISD-Lite files and the NetCDF grid
    are all made from them.
    """
    start = np.datetime64(f"{year}-01-01T00", "h")
    n = int((np.datetime64(f"{year + 1}-01-01T00", "h") - start).astype(int))
    hour_of_day = np.arange(n) % 24
    day = np.arange(n) / 24.0
    season = np.cos(2.0 * math.pi * (day - 196.0) / 365.0)  # +1 mid-July, -1 mid-January

    # regimes as a persistent Markov chain
    shares = np.array([r[3] for r in REGIMES])
    regime = np.empty(n, dtype=int)
    regime[0] = 0
    switch = rng.random(n) < 1.0 / REGIME_MEAN_HOURS
    picks = rng.choice(len(REGIMES), size=n, p=shares)
    for i in range(1, n):
        regime[i] = picks[i] if switch[i] else regime[i - 1]
    mean_dir = np.array([r[0] for r in REGIMES])[regime]
    spread = np.array([r[1] for r in REGIMES])[regime]
    mean_speed = np.array([r[2] for r in REGIMES])[regime]
    cloud_bias = np.array([r[4] for r in REGIMES])[regime]

    direction = mean_dir + spread * _ar1(rng, n, 0.97) + 8.0 * rng.standard_normal(n)
    cloud_latent = cloud_bias + 1.0 * (1.0 - season) + 2.6 * _ar1(rng, n, 0.93)
    cloud = np.clip(np.round(cloud_latent), 0, 8).astype(int)
    daytime = np.sin(math.pi * np.clip((hour_of_day - 5.0) / 15.0, 0.0, 1.0))  # 0 at night
    clear_night = (daytime == 0) & (cloud <= 3)
    strength = np.exp(0.45 * _ar1(rng, n, 0.96) - 0.1)
    speed = (
        mean_speed
        * strength
        * (1.0 - 0.12 * season)
        * (0.8 + 0.35 * daytime)
        * np.where(clear_night, 0.5, 1.0)
    )
    still = clear_night & (_ar1(rng, n, 0.8) > 0.3)  # spells of still, clear nights
    speed = np.where(still, 0.0, speed)
    temperature = (
        9.8
        + 7.8 * season
        + (2.5 + 1.2 * season)
        * (1.0 - 0.07 * cloud)
        * np.cos(2.0 * math.pi * (hour_of_day - 15.0) / 24.0)
        + 2.8 * _ar1(rng, n, 0.985)
    )
    ceiling_raw_ft = np.exp(rng.normal(math.log(2500.0), 0.8, n))
    ceiling = np.clip(np.round(ceiling_raw_ft / 100.0) * 100.0, 200.0, 20000.0)

    speed_reported = np.round(speed * 2.0) / 2.0
    direction_reported = (np.round(direction / 10.0) * 10.0) % 360.0
    direction_reported = np.where(direction_reported == 0, 360.0, direction_reported)
    direction_reported = np.where(speed_reported == 0, 0.0, direction_reported)  # calm code
    return {
        "start": start,
        "direction_deg": direction % 360.0,
        "speed_m_s": speed,
        "cloud_latent": cloud_latent,
        "cloud_oktas": cloud,
        "ceiling_raw_ft": ceiling_raw_ft,
        "ceiling_ft": ceiling,
        "temperature_c": temperature,
        "direction_reported": direction_reported,
        "speed_reported": speed_reported,
    }


def make_hourly_weather(
    rng: np.random.Generator, year: int = HOURLY_YEAR, gaps=tuple(HOURLY_GAPS)
) -> list[list[str]]:
    """One invented year of hourly observations as CSV cells (header first).

    Station-like reporting: direction in 10 deg steps (360 = north, 0 with a calm), speed in
    0.5 m/s steps, whole oktas, ceiling in 100 ft steps when 5 oktas or more, temperature to
    0.1 deg C. Seasonal temperature cycle about 2 deg C in January to 17 deg C in July with a
    daily cycle; about 3 % calms, mostly on clear nights; the gaps given (local start hour,
    length, "empty" or "absent"; HOURLY_GAPS for the demo's year).
    """
    f = _hourly_fields(rng, year)
    start = f["start"]
    n = f["speed_m_s"].size
    cloud, ceiling, temperature = f["cloud_oktas"], f["ceiling_ft"], f["temperature_c"]
    direction_reported, speed_reported = f["direction_reported"], f["speed_reported"]

    gap_empty, gap_absent = set(), set()
    for first, length, kind in gaps:
        i0 = int((np.datetime64(first, "h") - start).astype(int))
        (gap_empty if kind == "empty" else gap_absent).update(range(i0, i0 + length))
    rows = [["time", "direction_deg", "speed_m_s", "cloud_oktas", "ceiling_ft", "temperature_c"]]
    for i in range(n):
        if i in gap_absent:
            continue
        stamp = f"{start + i}:00{HOURLY_UTC_OFFSET}"
        if i in gap_empty:
            rows.append([stamp, "", "", "", "", ""])
            continue
        rows.append(
            [
                stamp,
                f"{direction_reported[i]:.0f}",
                f"{speed_reported[i]:.1f}",
                str(cloud[i]),
                f"{ceiling[i]:.0f}" if cloud[i] >= 5 else "",
                f"{temperature[i]:.1f}",
            ]
        )
    return rows


# --- the same invented weather in two open formats --------------------------------------------

ISD_FOLDER = "weather_isd"
#: The archive names a station-year file USAF-WBAN-YEAR(.gz); a name of words cannot be taken
#: for a real station's number.
ISD_NAME = "demo-station-{year}.gz"
ISD_YEARS = (HOURLY_YEAR - 1, HOURLY_YEAR)
ISD_EARLIER_SEED = SEED + 3  # the invented station's year before: same generator, own stream
ISD_EXTRAS_SEED = SEED + 2  # dew point, pressure and precipitation (siting reads none of them)
ISD_MISSING = -9999  # the format's missing code, every field
ISD_SKY_OBSCURED = 9  # a sky code that is not in oktas (obscured, in fog)
#: Values the invented station failed to report, in each year: (UTC start "MM-DDTHH", hours,
#: fields set to the missing code), fields by name as in _isd_line.
ISD_FAULTS = (
    ("06-02T11", 2, ("sky",)),
    ("10-07T04", 1, ("temperature", "dew_point")),
    ("12-05T17", 1, ("direction", "speed")),
)
_ISD_FIELDS = ("temperature", "dew_point", "pressure", "direction", "speed", "sky", "p1h", "p6h")


def _station_hours(rows: list[list[str]]) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """The hours of make_hourly_weather's rows in UTC, and temperature, direction, speed and sky
    as the ISD-Lite format scales them (deg C x 10, deg, m/s x 10, oktas); the missing code
    where a cell is empty."""
    offset = np.timedelta64(int(HOURLY_UTC_OFFSET[:3]), "h")  # whole hours in this demo
    times, cells = [], []
    for stamp, direction, speed, cloud, _ceiling, temperature in rows[1:]:
        assert stamp.endswith(HOURLY_UTC_OFFSET), stamp
        times.append(np.datetime64(stamp[:13], "h") - offset)
        cells.append([temperature, direction, speed, cloud])
    scales = (10, 1, 10, 1)
    table = np.array(
        [
            [ISD_MISSING if c == "" else int(round(float(c) * k)) for c, k in zip(row, scales)]
            for row in cells
        ],
        dtype=np.int64,
    )
    names = ("temperature", "direction", "speed", "sky")
    return np.array(times), {name: table[:, k] for k, name in enumerate(names)}


def _isd_extras(
    rng: np.random.Generator, times: np.ndarray, v: dict[str, np.ndarray]
) -> dict[str, np.ndarray]:
    """Invented dew point, sea-level pressure and 6 h precipitation, scaled as the format has
    them (x 10); 1 h precipitation never reported. Plausible only: siting reads none of them."""
    n = times.size
    out_of_service = v["temperature"] == ISD_MISSING  # the hours the record leaves empty
    cloud = np.where(out_of_service, 4, v["sky"]).astype(float)
    temperature = v["temperature"] / 10.0
    local_hour = (times.astype(np.int64) + int(HOURLY_UTC_OFFSET[:3])) % 24
    afternoon = 0.5 * (1.0 + np.cos(2.0 * math.pi * (local_hour - 15.0) / 24.0))
    depression = np.clip(
        (0.6 + 0.55 * (8.0 - cloud)) * (0.35 + 0.65 * afternoon) + 0.7 * rng.standard_normal(n),
        0.0,
        None,
    )
    pressure = 1013.0 + 11.0 * _ar1(rng, n, 0.997) - 0.8 * (cloud - 4.0)
    wet = (cloud >= 7) & (rng.random(n) < 0.55)
    amount = np.round(rng.gamma(0.9, 1.8, n) * 10.0)
    synoptic = (times.astype(np.int64) % 6) == 0  # 00, 06, 12, 18 UTC
    p6h = np.where(wet, np.where(amount == 0, -1, amount), 0)  # -1: a trace
    extras = {
        "dew_point": np.round((temperature - depression) * 10.0).astype(np.int64),
        "pressure": np.round(pressure * 10.0).astype(np.int64),
        "p1h": np.full(n, ISD_MISSING, dtype=np.int64),
        "p6h": np.where(synoptic, p6h, ISD_MISSING).astype(np.int64),
    }
    for key in ("dew_point", "pressure", "p6h"):
        extras[key][out_of_service] = ISD_MISSING
    return extras


def _isd_line(time: np.datetime64, fields: dict[str, int]) -> str:
    """One ISD-Lite line: year month day hour (UTC), then the eight fields 6 wide."""
    stamp = str(time.astype("datetime64[h]"))  # 2025-01-01T00
    head = f"{stamp[0:4]} {stamp[5:7]} {stamp[8:10]} {stamp[11:13]}"
    return head + "".join(f"{int(fields[name]):6d}" for name in _ISD_FIELDS)


def make_isd_lite(hourly_rows: list[list[str]]) -> dict[str, bytes]:
    """The invented station's two years as ISD-Lite files, gzip-compressed: name -> bytes.

    The station's record is an earlier invented year (same generator, ISD_EARLIER_SEED, no
    gaps) followed by hourly_rows (the demo's hourly_weather.csv), in UTC: each file holds the
    hours of its UTC year, so the first local hour of the CSV (2025-01-01T00+01:00) closes the
    2024 file and the 2025 file ends at 2025-12-31T22Z. The CSV's empty hours are lines of
    missing codes, its absent hours absent lines. On top, in each year: the faults of
    ISD_FAULTS, and the sky code 9 (obscured) in the first two calm hours in a row in
    November (fog), so that a reader's counts of missing and non-okta codes have something
    to show.
    """
    earlier = make_hourly_weather(
        np.random.default_rng(ISD_EARLIER_SEED), year=ISD_YEARS[0], gaps=()
    )
    t_a, v_a = _station_hours(earlier)
    t_b, v_b = _station_hours(hourly_rows)
    times = np.concatenate([t_a, t_b])
    values = {key: np.concatenate([v_a[key], v_b[key]]) for key in v_a}
    assert (np.diff(times).astype(np.int64) > 0).all(), "the two years overlap"
    values.update(_isd_extras(np.random.default_rng(ISD_EXTRAS_SEED), times, values))
    year = times.astype("datetime64[Y]").astype(int) + 1970
    files = {}
    for y in ISD_YEARS:
        for first, hours, fields in ISD_FAULTS:
            i0 = int(np.flatnonzero(times == np.datetime64(f"{y}-{first}", "h"))[0])
            for name in fields:
                values[name][i0 : i0 + hours] = ISD_MISSING
        november = (times >= np.datetime64(f"{y}-11-01T00", "h")) & (
            times < np.datetime64(f"{y}-12-01T00", "h")
        )
        calm = november & (values["speed"] == 0)
        fog = int(np.flatnonzero(calm[:-1] & calm[1:])[0])
        values["sky"][fog : fog + 2] = ISD_SKY_OBSCURED
        lines = [
            _isd_line(times[i], {name: values[name][i] for name in _ISD_FIELDS})
            for i in np.flatnonzero(year == y)
        ]
        files[ISD_NAME.format(year=y)] = _gzip(("\n".join(lines) + "\n").encode("ascii"))
    return files


def _gzip(data: bytes) -> bytes:
    """gzip as the archive serves its files, reproducibly: mtime 0 and no file name in the
    header (operating system byte 255, "unknown", whatever Python's version)."""
    buffer = io.BytesIO()
    with gzip.GzipFile(filename="", mode="wb", fileobj=buffer, mtime=0) as out:
        out.write(data)
    return buffer.getvalue()


REANALYSIS_FILE = "reanalysis_2025.nc"
REANALYSIS_STEP_DEG = 0.25  # a reanalysis-like grid spacing
#: Quantisation of the stored values (powers of two: float32's low bits stay zero and zlib
#: packs them; far finer than any reanalysis' own precision).
REANALYSIS_STEPS = {"u10": 2.0**-7, "v10": 2.0**-7, "tcc": 2.0**-10, "cbh": 1.0, "t2m": 2.0**-6}
REANALYSIS_ATTRS = {
    "u10": {
        "units": "m s**-1",
        "standard_name": "eastward_wind",
        "long_name": "10 metre U wind component",
    },
    "v10": {
        "units": "m s**-1",
        "standard_name": "northward_wind",
        "long_name": "10 metre V wind component",
    },
    "tcc": {
        "units": "(0 - 1)",
        "standard_name": "cloud_area_fraction",
        "long_name": "Total cloud cover",
    },
    # cloud base above the ground: CF's cloud_base_altitude is above the geoid, so no name
    "cbh": {"units": "m", "long_name": "Cloud base height (above ground; none without cloud)"},
    "t2m": {"units": "K", "standard_name": "air_temperature", "long_name": "2 metre temperature"},
}


def demo_site_lat_lon() -> tuple[float, float]:
    """Latitude and longitude [deg] of the demo site as siting takes it: the mean position of
    scenario.toml's sources, from its CRS to WGS 84 (siting.runs.screening_inputs)."""
    from pyproj import Transformer

    scenario = tomllib.loads((HERE / "scenario.toml").read_text(encoding="utf-8"))
    x = float(np.mean([src["x"] for src in scenario["source"]]))
    y = float(np.mean([src["y"] for src in scenario["source"]]))
    lon, lat = Transformer.from_crs(scenario["crs"], "EPSG:4326", always_xy=True).transform(x, y)
    return float(lat), float(lon)


def make_reanalysis(latitude_deg: float, longitude_deg: float):
    """An invented reanalysis-like grid for 2025 (UTC): 3 x 3 points 0.25 deg apart, the middle
    one the grid point nearest the site, as an xarray Dataset.

    The middle point holds the invented weather of hourly_weather.csv before any station
    reporting (same generator and seed): continuous direction and speed (a grid cell's wind
    is never quite still: speeds at least about 0.4 m/s), the cloud's latent value as a
    fraction, the ceiling as the cloud base in m (none where the fraction is 0), the
    temperature in K; local hour i + 1 is UTC hour i, and the last hour of the year, for which
    the local year has no value, repeats the hour before. The other points vary smoothly
    around it (windier and cooler to the north and west, the direction veering a few degrees
    across the grid with a slow nine-day swing). Latitude runs north to south, as many
    reanalyses store it.
    """
    import xarray as xr

    f = _hourly_fields(np.random.default_rng(HOURLY_SEED))
    n = f["speed_m_s"].size

    def utc(a: np.ndarray) -> np.ndarray:  # local hour i + 1 = UTC hour i; the last repeated
        return np.concatenate([a[1:], a[-1:]])

    direction = utc(f["direction_deg"])
    speed = utc(np.hypot(f["speed_m_s"], 0.4))
    cloud = utc(np.clip(f["cloud_latent"] / 8.0, 0.0, 1.0))
    base_m = utc(np.clip(f["ceiling_raw_ft"] * 0.3048, 60.0, 6000.0))  # 0.3048 m per ft
    temperature_k = utc(f["temperature_c"] + 273.15)
    time = np.datetime64(f"{HOURLY_YEAR}-01-01T00", "h") + np.arange(n)
    swing = np.sin(2.0 * math.pi * np.arange(n) / (9 * 24.0))  # a slow nine-day swing

    step = REANALYSIS_STEP_DEG
    lat0 = round(latitude_deg / step) * step
    lon0 = round(longitude_deg / step) * step
    north = np.array([1, 0, -1])  # latitude index -> steps north of the middle
    east = np.array([-1, 0, 1])
    dn = north[None, :, None].astype(float)
    de = east[None, None, :].astype(float)
    speed_g = speed[:, None, None] * (1.0 + 0.04 * dn - 0.05 * de)
    direction_g = direction[:, None, None] + 3.0 * dn + 2.0 * de * swing[:, None, None]
    to_rad = np.radians(direction_g)
    cloud_g = np.clip(cloud[:, None, None] + 0.04 * dn + 0.02 * de * swing[:, None, None], 0, 1)
    fields = {
        "u10": -speed_g * np.sin(to_rad),  # direction is where the wind blows FROM
        "v10": -speed_g * np.cos(to_rad),
        "tcc": cloud_g,
        "cbh": base_m[:, None, None] * (1.0 - 0.04 * dn + 0.06 * de),
        "t2m": temperature_k[:, None, None] - 0.45 * dn + 0.15 * de,
    }
    fields = {k: np.round(a / REANALYSIS_STEPS[k]) * REANALYSIS_STEPS[k] for k, a in fields.items()}
    fields["cbh"] = np.where(fields["tcc"] == 0.0, np.nan, fields["cbh"])
    dims = ("valid_time", "latitude", "longitude")
    ds = xr.Dataset(
        {k: (dims, a.astype(np.float32), REANALYSIS_ATTRS[k]) for k, a in fields.items()},
        coords={
            "valid_time": (
                "valid_time",
                time.astype("datetime64[ns]"),
                {"standard_name": "time", "long_name": "time (UTC)"},
            ),
            "latitude": (
                "latitude",
                lat0 + step * north,
                {"units": "degrees_north", "standard_name": "latitude", "long_name": "latitude"},
            ),
            "longitude": (
                "longitude",
                lon0 + step * east,
                {"units": "degrees_east", "standard_name": "longitude", "long_name": "longitude"},
            ),
        },
        attrs={
            "Conventions": "CF-1.8",
            "title": "INVENTED demo grid of hourly surface weather (siting demo data)",
            "source": (
                "invented by siting's tools/make_demo.py: not a real reanalysis; no model, "
                "observation or data provider stands behind any value"
            ),
            "comment": (
                "Made up to show how siting reads a reanalysis-style CF NetCDF file; the "
                "middle grid point holds the invented weather of hourly_weather.csv. Must not "
                "be used for any real assessment."
            ),
        },
    )
    return ds


def write_reanalysis(ds, path: Path) -> None:
    """Write make_reanalysis's grid as NetCDF-4: float32, zlib-compressed, times in hours since
    1970-01-01 (CF), no history or date attribute (the same bytes on every run with the same
    libraries)."""
    encoding = {  # one chunk a variable: packs to about a quarter of the raw 1.6 MB
        name: {
            "dtype": "float32",
            "zlib": True,
            "complevel": 9,
            "shuffle": True,
            "chunksizes": ds[name].shape,
        }
        for name in ds.data_vars
    }
    encoding["valid_time"] = {
        "units": "hours since 1970-01-01",
        "calendar": "standard",
        "dtype": "int32",
    }
    for name in ("latitude", "longitude"):
        encoding[name] = {"dtype": "float64", "_FillValue": None}
    path.unlink(missing_ok=True)
    ds.to_netcdf(path, engine="h5netcdf", format="NETCDF4", encoding=encoding)


def write_open_formats(hourly_rows: list[list[str]], out: Path) -> list[Path]:
    """Write the ISD-Lite files and the NetCDF grid into out; the paths written."""
    folder = out / ISD_FOLDER
    folder.mkdir(exist_ok=True)
    written = []
    for name, data in make_isd_lite(hourly_rows).items():
        (folder / name).write_bytes(data)
        written.append(folder / name)
    write_reanalysis(make_reanalysis(*demo_site_lat_lon()), out / REANALYSIS_FILE)
    written.append(out / REANALYSIS_FILE)
    return written


# --- habitat polygons --------------------------------------------------------------------------


def _offset(bearing_deg: float, distance_m: float) -> tuple[float, float]:
    """Point at a bearing (clockwise from north) and distance from the farm centre."""
    b = math.radians(bearing_deg)
    return FARM_X_M + distance_m * math.sin(b), FARM_Y_M + distance_m * math.cos(b)


def irregular_blob(
    rng: np.random.Generator,
    centre: tuple[float, float],
    area_ha: float,
    elongation: float,
    angle_deg: float,
    roughness: float,
    n_vertices: int = 64,
) -> Polygon:
    """Smooth irregular polygon of a given area: an ellipse with random low harmonics."""
    theta = np.linspace(0.0, 2.0 * np.pi, n_vertices, endpoint=False)
    radius = np.ones_like(theta)
    for harmonic in range(2, 10):
        amplitude = roughness * rng.uniform(0.3, 1.0) / harmonic
        radius += amplitude * np.cos(harmonic * theta + rng.uniform(0.0, 2.0 * np.pi))
    x = radius * np.cos(theta) * math.sqrt(elongation)
    y = radius * np.sin(theta) / math.sqrt(elongation)
    poly = Polygon(zip(x, y))
    poly = affinity.scale(poly, *(2 * [math.sqrt(area_ha * 1e4 / poly.area)]), origin=(0, 0))
    # rotate so the long axis points along angle_deg (clockwise from north)
    poly = affinity.rotate(poly, 90.0 - angle_deg, origin=(0, 0))
    poly = affinity.translate(poly, *centre)
    assert poly.is_valid, "blob self-intersects; lower roughness"
    return poly


def meandering_strip(
    rng: np.random.Generator,
    start: tuple[float, float],
    heading_deg: float,
    length_m: float,
    width_m: float,
) -> Polygon:
    """Narrow strip along a wandering centre line (a mire along a fictional stream)."""
    n = 40
    step = length_m / n
    heading = math.radians(heading_deg)
    points = [start]
    for _ in range(n):
        heading += rng.normal(0.0, 0.12)
        x, y = points[-1]
        points.append((x + step * math.sin(heading), y + step * math.cos(heading)))
    strip = LineString(points).buffer(width_m / 2.0, cap_style="round", join_style="round")
    assert strip.is_valid
    return strip


def make_habitats(rng: np.random.Generator) -> gpd.GeoDataFrame:
    """Four fictional sites around the farm, 300 m to 2.5 km away, 1 to ~50 ha."""
    bog = irregular_blob(rng, _offset(50.0, 1900.0), 48.0, 1.7, 140.0, 0.28)
    heath = irregular_blob(rng, _offset(100.0, 950.0), 16.0, 1.4, 20.0, 0.32)
    wood = irregular_blob(rng, _offset(320.0, 480.0), 5.0, 1.3, 60.0, 0.30)
    # About 1 ha but only ~20 m wide: narrower than the 25 m grid spacing, so grid nodes can
    # straddle it; a screening that samples only grid nodes would miss or under-read it.
    mire = meandering_strip(rng, _offset(235.0, 700.0), 115.0, 520.0, 20.0)
    records = [
        {
            "name": "Fernwhistle Moss",
            "designation": "Special Area of Conservation",
            "habitat": "raised_bog",
            "background_dep_kg_n_ha_yr": 13.8,
            "background_conc_ug_m3": 1.4,
            "geometry": bog,
        },
        {
            "name": "Gorseburrow Heath",
            "designation": "Site of Special Scientific Interest",
            "habitat": "dry_heath",
            "background_dep_kg_n_ha_yr": 15.6,
            "background_conc_ug_m3": 1.9,
            "geometry": heath,
        },
        {
            "name": "Thimbleden Wood",
            "designation": "Ancient Woodland",
            "habitat": "broadleaved_woodland",
            "background_dep_kg_n_ha_yr": 23.5,
            "background_conc_ug_m3": 2.6,
            "geometry": wood,
        },
        {
            "name": "Peewit Slack",
            "designation": "Site of Special Scientific Interest",
            "habitat": "valley_mire",
            "background_dep_kg_n_ha_yr": 16.9,
            "background_conc_ug_m3": 2.1,
            "geometry": mire,
        },
    ]
    return gpd.GeoDataFrame(records, geometry="geometry", crs=CRS)


# --- named points ------------------------------------------------------------------------------


def _inside_towards(poly: Polygon, target: Point, inset_m: float) -> Point:
    """Point of poly's boundary nearest target, moved inset_m into the polygon."""
    edge = poly.exterior.interpolate(poly.exterior.project(target))
    centre = poly.centroid
    dx, dy = centre.x - edge.x, centre.y - edge.y
    norm = math.hypot(dx, dy)
    moved = Point(edge.x + inset_m * dx / norm, edge.y + inset_m * dy / norm)
    return moved if poly.contains(moved) else poly.representative_point()


def _mid_crossing(strip: Polygon) -> Point:
    """Middle of the north-south chord through the strip's centroid (the strip runs roughly
    east-west), i.e. a point on its centre line halfway along."""
    c = strip.centroid
    chord = strip.intersection(LineString([(c.x, c.y - 500.0), (c.x, c.y + 500.0)]))
    if chord.geom_type != "LineString":  # several crossings: take the longest piece
        chord = max(chord.geoms, key=lambda g: g.length)
    return chord.interpolate(0.5, normalized=True)


def make_receptors(habitats: gpd.GeoDataFrame) -> list[tuple[str, float, float, str]]:
    """Named points: a monitoring post, nearest edges of three sites, a point in the mire."""
    farm = Point(FARM_X_M, FARM_Y_M)
    by_name = {row.name: row.geometry for row in habitats.itertuples()}
    bog = by_name["Fernwhistle Moss"]
    heath = by_name["Gorseburrow Heath"]
    wood = by_name["Thimbleden Wood"]
    mire = by_name["Peewit Slack"]
    points = [
        ("moss_monitoring_post", bog.representative_point(), "short_vegetation"),
        ("moss_nearest_edge", _inside_towards(bog, farm, 5.0), "short_vegetation"),
        ("heath_nearest_edge", _inside_towards(heath, farm, 5.0), "short_vegetation"),
        ("wood_nearest_edge", _inside_towards(wood, farm, 5.0), "woodland"),
        ("slack_mid_point", _mid_crossing(mire), "short_vegetation"),
    ]
    return [(pid, round(p.x, 1), round(p.y, 1), cover) for pid, p, cover in points]


# --- checks and main ---------------------------------------------------------------------------


def _check(habitats: gpd.GeoDataFrame, weather: list, receptors: list) -> None:
    farm = Point(FARM_X_M, FARM_Y_M)
    for row in habitats.itertuples():
        near = row.geometry.distance(farm)
        far = max(Point(c).distance(farm) for c in row.geometry.exterior.coords)
        area_ha = row.geometry.area / 1e4
        print(f"  {row.name:20s} {row.habitat:22s} {area_ha:6.2f} ha  {near:7.0f}-{far:5.0f} m")
        assert near >= 300.0 and far <= 2500.0, f"{row.name} outside the 300 m - 2.5 km band"
        assert 0.9 <= area_ha <= 60.0
    assert abs(sum(r[3] for r in weather) - 1.0) < 1e-12
    for pid, x, y, _ in receptors:
        assert habitats.contains(Point(x, y)).any(), f"receptor {pid} not in any habitat"
    for scenario_path in (HERE / "scenario.toml", HERE / "scenario_hourly.toml"):
        if not scenario_path.exists():
            continue
        scenario = tomllib.loads(scenario_path.read_text(encoding="utf-8"))
        for src in scenario.get("source", []):
            p = Point(src["x"], src["y"])
            assert not habitats.contains(p).any(), f"source {src['id']} lies in a habitat"
            print(
                f"  {scenario_path.name}: source {src['id']:3s} {p.distance(farm):7.0f} m "
                "from the farm centre"
            )


def make_holding(habitats: gpd.GeoDataFrame):
    """The invented holding (about 50 ha) and its exclusions: two dwellings and a brook.

    Fixed shapes (no randomness), clipped so the holding never overlaps a habitat site.
    """
    from shapely.geometry import LineString, Polygon

    cx, cy = FARM_X_M, FARM_Y_M
    boundary = Polygon(
        [
            (cx - 230, cy - 420),
            (cx + 520, cy - 470),
            (cx + 610, cy - 60),
            (cx + 540, cy + 230),
            (cx + 60, cy + 260),
            (cx - 260, cy + 120),
        ]
    )
    boundary = boundary.difference(habitats.union_all().buffer(30.0))
    dwellings = [Point(cx - 90, cy + 60), Point(cx + 560, cy - 420)]  # farmhouse, cottage
    brook = LineString(
        [(cx - 300, cy - 250), (cx + 100, cy - 180), (cx + 400, cy - 260), (cx + 700, cy - 200)]
    )
    crs = habitats.crs
    return (
        gpd.GeoDataFrame(
            {"name": ["Hollowmere Farm holding (invented)"]}, geometry=[boundary], crs=crs
        ),
        gpd.GeoDataFrame({"name": ["farmhouse", "cottage"]}, geometry=dwellings, crs=crs),
        gpd.GeoDataFrame({"name": ["Hollow Brook"]}, geometry=[brook], crs=crs),
    )


def main() -> None:
    rng = np.random.default_rng(SEED)
    weather = make_weather(rng)
    habitats = make_habitats(rng)
    receptors = make_receptors(habitats)
    _check(habitats, weather, receptors)

    with open(HERE / "weather_table.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(["direction_deg", "speed_m_s", "stability", "frequency"])
        for direction, speed, stability, freq in weather:
            out.writerow([direction, f"{speed:.1f}", stability, f"{freq:.10f}"])

    gpkg = HERE / "habitats.gpkg"
    gpkg.unlink(missing_ok=True)
    habitats.to_file(gpkg, layer="habitats", driver="GPKG")

    with open(HERE / "receptors.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(["id", "x", "y", "land_cover"])
        for pid, x, y, cover in receptors:
            out.writerow([pid, f"{x:.1f}", f"{y:.1f}", cover])
    holding, dwellings, brook = make_holding(habitats)
    print(f"holding: {holding.area.iloc[0] / 1e4:.1f} ha")
    for name, frame in (
        ("holding.gpkg", holding),
        ("dwellings.gpkg", dwellings),
        ("watercourses.gpkg", brook),
    ):
        (HERE / name).unlink(missing_ok=True)
        frame.to_file(HERE / name, driver="GPKG")
    hourly = make_hourly_weather(np.random.default_rng(HOURLY_SEED))
    with open(HERE / "hourly_weather.csv", "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh, lineterminator="\n").writerows(hourly)
    for path in write_open_formats(hourly, HERE):
        print(f"wrote {path.relative_to(HERE)} ({path.stat().st_size:,} bytes)")
    print(
        f"wrote weather_table.csv ({len(weather)} rows), hourly_weather.csv "
        f"({len(hourly) - 1} rows), habitats.gpkg, receptors.csv"
    )


if __name__ == "__main__":
    main()
