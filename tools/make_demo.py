"""Regenerate the INVENTED demo data of siting: the fictional Hollowmere Farm.

Everything written here is made up for demonstration: the holding, the habitat sites, their
names, outlines and background values, the named points and the weather table. None of it
describes a real place, and no number here may be used for a real decision.

Writes, next to this script:
  weather_table.csv  12 sectors x 4 speed classes x 6 Pasquill classes, frequencies summing to 1
  hourly_weather.csv one invented year (2025) of hourly station-style observations
  habitats.gpkg      layer "habitats": four fictional protected sites (EPSG:32632)
  receptors.csv      five named points on or at the edge of those sites

scenario.toml, scenario_hourly.toml and README.md are written by hand; this script only checks
that the scenarios' sources lie outside every habitat polygon. The output is the same on every
run (fixed seeds; the hourly record has its own generator, so adding it changed nothing else).

Run:  python tools/make_demo.py      (writes into siting/data_demo/)
Needs numpy, shapely, geopandas (with pyogrio).
"""

from __future__ import annotations

import csv
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


def make_hourly_weather(rng: np.random.Generator) -> list[list[str]]:
    """One invented year of hourly observations as CSV cells (header first).

    Station-like reporting: direction in 10 deg steps (360 = north, 0 with a calm), speed in
    0.5 m/s steps, whole oktas, ceiling in 100 ft steps when 5 oktas or more, temperature to
    0.1 deg C. Seasonal temperature cycle about 2 deg C in January to 17 deg C in July with a
    daily cycle; about 3 % calms, mostly on clear nights; two short gaps (HOURLY_GAPS).
    """
    start = np.datetime64(f"{HOURLY_YEAR}-01-01T00", "h")
    n = int((np.datetime64(f"{HOURLY_YEAR + 1}-01-01T00", "h") - start).astype(int))
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
    ceiling = np.clip(
        np.round(np.exp(rng.normal(math.log(2500.0), 0.8, n)) / 100.0) * 100.0, 200.0, 20000.0
    )

    speed_reported = np.round(speed * 2.0) / 2.0
    direction_reported = (np.round(direction / 10.0) * 10.0) % 360.0
    direction_reported = np.where(direction_reported == 0, 360.0, direction_reported)
    direction_reported = np.where(speed_reported == 0, 0.0, direction_reported)  # calm code

    gap_empty, gap_absent = set(), set()
    for first, length, kind in HOURLY_GAPS:
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
    print(
        f"wrote weather_table.csv ({len(weather)} rows), hourly_weather.csv "
        f"({len(hourly) - 1} rows), habitats.gpkg, receptors.csv"
    )


if __name__ == "__main__":
    main()
