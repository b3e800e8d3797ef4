"""Regenerate the INVENTED regional demo of siting: 200 fictional farms and eight habitat sites.

Everything written here is made up for demonstration: the farms, their positions, houses,
emissions and ids, and the four regional habitat sites added to the four of the Hollowmere demo
(siting/data_demo/habitats.gpkg). None of it describes a real place or farm, and no number here may be
used for a real decision.

Writes, next to this script:
  region_farms.gpkg     layer "farms": 200 farms over about 20 x 20 km around x = 500 000,
                        y = 5 800 000 (EPSG:32632). About 60 % are points (a house's outlet),
                        40 % polygons (a house footprint, modelled as a volume source). Fields:
                        id, nh3_kg_per_year (200-10,000 kg NH3/yr, log-uniform; empty for about
                        one farm in ten, which give livestock, housing and places instead),
                        livestock, housing, places, height_m (empty for about one in four: the
                        default height of its kind is used)
  region_habitats.gpkg  layer "habitats": the four demo sites plus four invented regional ones,
                        same fields as habitats.gpkg

Run:  python tools/make_region_demo.py      (then see README.md, "Many farms over a region")
Needs numpy, shapely, geopandas (with pyogrio). The seed is fixed: the same farms every run.
"""

from __future__ import annotations

import math
from pathlib import Path

import geopandas as gpd
import numpy as np
from shapely import affinity
from shapely.geometry import Point, Polygon, box

SEED = 20260301
CRS = "EPSG:32632"  # WGS 84 / UTM zone 32N, metres
CENTRE_X_M, CENTRE_Y_M = 500_000.0, 5_800_000.0
HALF_SIDE_M = 10_000.0  # the region is 20 x 20 km
N_FARMS = 200
HERE = Path(__file__).resolve().parents[1] / "siting" / "data_demo"  # the bundled demo folder

# invented regional sites: name, designation, habitat, centre offset (m), radius (m)
REGIONAL_SITES = [
    ("Brackenmeal Fen", "Special Area of Conservation", "valley_mire", (-6500.0, 5200.0), 450.0),
    (
        "Tumblebent Heath",
        "Site of Special Scientific Interest",
        "dry_heath",
        (6200.0, -4800.0),
        600.0,
    ),
    ("Quillwort Mire", "Special Area of Conservation", "raised_bog", (-5200.0, -6600.0), 700.0),
    ("Wrenhallow Copse", "Ancient Woodland", "broadleaved_woodland", (4300.0, 6900.0), 350.0),
]
# farms given by livestock instead of a figure: (livestock, housing, places range)
LIVESTOCK = [
    ("finishing_pig", "fully_slatted", (800, 4000)),
    ("sow", "fully_slatted", (200, 900)),
    ("dairy_cow", "cubicle_slurry", (80, 400)),
    ("laying_hen", "floor_housing", (5000, 30000)),
]


def blob(rng: np.random.Generator, x: float, y: float, radius_m: float) -> Polygon:
    """An irregular roundish polygon around (x, y)."""
    angles = np.linspace(0, 2 * np.pi, 40, endpoint=False)
    radii = radius_m * (
        1 + 0.25 * np.sin(3 * angles + rng.uniform(0, 6)) + 0.1 * rng.standard_normal(angles.size)
    )
    return Polygon(np.c_[x + radii * np.sin(angles), y + radii * np.cos(angles)])


def make_habitats(rng: np.random.Generator) -> gpd.GeoDataFrame:
    demo = gpd.read_file(HERE / "habitats.gpkg").to_crs(CRS)
    rows = []
    for name, designation, habitat, (dx, dy), radius in REGIONAL_SITES:
        rows.append(
            {
                "name": name,
                "designation": designation,
                "habitat": habitat,
                "background_dep_kg_n_ha_yr": round(float(rng.uniform(12, 25)), 1),
                "background_conc_ug_m3": round(float(rng.uniform(1.2, 3.0)), 1),
                "geometry": blob(rng, CENTRE_X_M + dx, CENTRE_Y_M + dy, radius),
            }
        )
    extra = gpd.GeoDataFrame(rows, geometry="geometry", crs=CRS)
    return gpd.GeoDataFrame(
        gpd.pd.concat([demo, extra[demo.columns]], ignore_index=True), geometry="geometry", crs=CRS
    )


def make_farms(rng: np.random.Generator, habitats: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    keep_off = habitats.union_all().buffer(250.0)
    clusters = rng.uniform(-8000, 8000, (5, 2))  # livestock districts
    rows = []
    while len(rows) < N_FARMS:
        if rng.uniform() < 0.6:
            cx, cy = clusters[rng.integers(len(clusters))]
            x, y = cx + rng.normal(0, 1800), cy + rng.normal(0, 1800)
        else:
            x, y = rng.uniform(-HALF_SIDE_M, HALF_SIDE_M, 2)
        if abs(x) > HALF_SIDE_M or abs(y) > HALF_SIDE_M:
            continue
        x, y = CENTRE_X_M + x, CENTRE_Y_M + y
        if keep_off.contains(Point(x, y)):
            continue
        i = len(rows) + 1
        if rng.uniform() < 0.6:
            geom = Point(round(x, 1), round(y, 1))
        else:
            width, length = rng.uniform(14, 30), rng.uniform(40, 110)
            geom = affinity.rotate(
                box(x - width / 2, y - length / 2, x + width / 2, y + length / 2),
                rng.uniform(0, 180),
                origin=(x, y),
            )
        row = {
            "id": f"RF{i:03d}",
            "nh3_kg_per_year": None,
            "livestock": None,
            "housing": None,
            "places": None,
            "height_m": None,
            "geometry": geom,
        }
        if rng.uniform() < 0.1:
            livestock, housing, (lo, hi) = LIVESTOCK[rng.integers(len(LIVESTOCK))]
            row.update(
                livestock=livestock, housing=housing, places=float(round(rng.uniform(lo, hi), -1))
            )
        else:
            row["nh3_kg_per_year"] = round(
                float(math.exp(rng.uniform(math.log(200), math.log(10_000)))), 0
            )
        if rng.uniform() < 0.75:
            row["height_m"] = float(rng.choice([3.0, 4.0, 5.0, 6.0, 8.0]))
        rows.append(row)
    return gpd.GeoDataFrame(rows, geometry="geometry", crs=CRS)


def main() -> None:
    rng = np.random.default_rng(SEED)
    habitats = make_habitats(rng)
    farms = make_farms(rng, habitats)
    assert not farms.geometry.intersects(habitats.union_all()).any()
    habitats.to_file(HERE / "region_habitats.gpkg", layer="habitats", driver="GPKG")
    farms.to_file(HERE / "region_farms.gpkg", layer="farms", driver="GPKG")
    total = farms["nh3_kg_per_year"].sum()
    print(
        f"{len(farms)} invented farms ({(farms.geom_type == 'Point').sum()} points), "
        f"{total:,.0f} kg NH3/yr given directly; {len(habitats)} habitat sites"
    )


if __name__ == "__main__":
    main()
