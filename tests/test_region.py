"""Checks of siting.runs.regional (with region_*.py, readers/farms.py) and `siting region`.

Expected values are cross-checks (tiled vs one tile, dask vs no dask, the grid and site figures
vs the engine's direct per-farm sum), conservation (contributors add up to the site total), the
bundled emission factor table (EA2024, via config/emission_factors.toml) or the behaviour the
docstrings promise (defaults, errors). The demo data are invented (data_demo/README.md).
"""

import json
import math
import tracemalloc

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from shapely.geometry import LineString, Point, box

from siting.cli import main
from siting.dispersion.kernels import offset_concentration_g_m3_per_g_s
from siting.errors import InputError, InputFileError
from siting.output.region import SITE_COLUMNS
from siting.physics.constants import UG_PER_G, kg_per_year_to_g_s
from siting.readers.farms import FarmFields, read_farms
from siting.readers.resources import demo_dir
from siting.readers.tables import load_tables
from siting.runs.region_inputs import RegionOptions, prepare_region
from siting.runs.region_sites import CONTRIBUTOR_COLUMNS
from siting.runs.region_tiles import plan_tiles
from siting.runs.regional import compute_region, region

CRS = "EPSG:32632"
CENTRE = (500_000.0, 5_800_000.0)


@pytest.fixture(scope="module")
def tables():
    return load_tables()


@pytest.fixture(scope="module")
def weather_csv():
    return demo_dir() / "weather_table.csv"


@pytest.fixture(scope="module")
def habitats():
    return demo_dir() / "habitats.gpkg"


def _farms(n: int, seed: int, half_side_m: float = 3500.0) -> gpd.GeoDataFrame:
    """Invented farms around the demo centre, outside the demo habitat sites."""
    rng = np.random.default_rng(seed)
    sites = gpd.read_file(demo_dir() / "habitats.gpkg").to_crs(CRS).union_all().buffer(150.0)
    rows = []
    while len(rows) < n:
        x = CENTRE[0] + rng.uniform(-half_side_m, half_side_m)
        y = CENTRE[1] + rng.uniform(-half_side_m, half_side_m)
        if sites.contains(Point(x, y)):
            continue
        geom = Point(x, y) if len(rows) % 3 else box(x - 10, y - 25, x + 10, y + 25)
        rows.append(
            {
                "id": f"T{len(rows) + 1}",
                "nh3_kg_per_year": rng.uniform(300, 6000),
                "height_m": float(rng.choice([4.0, 6.0])),
                "geometry": geom,
            }
        )
    return gpd.GeoDataFrame(rows, geometry="geometry", crs=CRS)


@pytest.fixture(scope="module")
def farms_file(tmp_path_factory):
    """24 invented farms (every third a 20 x 50 m house footprint) over 7 x 7 km."""
    path = tmp_path_factory.mktemp("farms") / "farms.gpkg"
    _farms(24, seed=1).to_file(path, driver="GPKG")
    return path


def _run(farms_file, weather_csv, habitats, **options):
    base = {"spacing_m": 100.0, "margin_m": 1000.0, "scheduler": None}
    base.update(options)
    return region(farms_file, weather_csv, habitats, RegionOptions(**base))


@pytest.fixture(scope="module")
def plain(farms_file, weather_csv, habitats):
    """The reference run: no dask, the whole grid as one tile."""
    return _run(farms_file, weather_csv, habitats, top=100)


def test_cli_region_on_the_demo(tmp_path):
    """`siting region` on the invented demo writes tiled GeoTIFFs with overviews and tables."""
    import rasterio

    out = tmp_path / "region"
    demo = demo_dir()
    code = main(
        [
            "region",
            str(demo / "region_farms.gpkg"),
            "--weather",
            str(demo / "weather_table.csv"),
            "--habitats",
            str(demo / "region_habitats.gpkg"),
            "--out",
            str(out),
            "--quiet",
        ]
    )
    assert code == 0
    for name, units in (("deposition.tif", "kg N/ha/yr"), ("concentration.tif", "ug/m3")):
        with rasterio.open(out / name) as src:
            assert src.crs.to_epsg() == 32632
            assert src.nodata == -9999.0
            assert src.profile["tiled"] and src.block_shapes == [(256, 256)]
            assert src.overviews(1) == [2, 4, 8, 16]
            assert src.tags(1)["units"] == units
            assert src.transform.a == 100.0 and src.transform.e == -100.0
            data = src.read(1)
            assert (data >= 0).all() and data.max() > 0
    sites = pd.read_csv(out / "sites.csv")
    assert list(sites.columns) == SITE_COLUMNS
    assert len(sites) == 8  # four demo sites and four regional ones, all invented
    contributors = pd.read_csv(out / "contributors.csv")
    assert list(contributors.columns) == CONTRIBUTOR_COLUMNS
    assert (contributors.groupby("site_id")["rank"].max() == 10).all()
    farms = pd.read_csv(out / "farms.csv")
    assert len(farms) == 200
    record = json.loads((out / "run.json").read_text())
    assert {"farms", "weather", "habitats"} <= set(record["inputs"])
    assert all(len(v["sha256"]) == 64 for v in record["inputs"].values())
    assert sum(c["farms"] for c in record["release_classes"]) == 200
    assert record["grid"]["deposition_velocity_m_s"] == 0.02  # short vegetation (AQTAG06)


def test_tiled_equals_in_memory(plain, farms_file, weather_csv, habitats):
    """Tiles of 32 cells (overlap-add over blocks of farms) give the one-tile grid, 1e-12."""
    tiled = _run(farms_file, weather_csv, habitats, tile_size=32, top=100)
    assert tiled.plan.n_tiles > 4
    a, b = tiled.concentration_ug_m3, plain.concentration_ug_m3
    # cross-check: the same sum split by tiles and blocks; FFT round-off relative to the peak
    assert_allclose(a, b, rtol=1e-12, atol=1e-14 * b.max())
    assert_allclose(
        tiled.sites["incomb_dep_max_kg_n_ha_yr"],
        plain.sites["incomb_dep_max_kg_n_ha_yr"],
        rtol=0,
        atol=0,
    )  # site figures do not depend on the tiles


@pytest.mark.parametrize("scheduler", ["threads", "synchronous"])
def test_dask_run_is_identical_to_plain(plain, farms_file, weather_csv, habitats, scheduler):
    """Dask threads (2 workers) or its synchronous scheduler: the very same numbers."""
    run = _run(
        farms_file, weather_csv, habitats, top=100, scheduler=scheduler, workers=2, tile_size=48
    )
    again = _run(farms_file, weather_csv, habitats, top=100, tile_size=48)
    assert np.array_equal(run.concentration_ug_m3, again.concentration_ug_m3)
    pd.testing.assert_frame_equal(
        pd.DataFrame(run.sites.drop(columns="geometry")),
        pd.DataFrame(plain.sites.drop(columns="geometry")),
    )
    pd.testing.assert_frame_equal(run.contributors, plain.contributors)


def test_distributed_run_is_identical_to_plain(plain, farms_file, weather_csv, habitats):
    """A dask.distributed scheduler address (an in-process local cluster) gives the same run."""
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None
    ) as cluster:
        run = _run(farms_file, weather_csv, habitats, top=100, scheduler=cluster.scheduler_address)
    assert np.array_equal(run.concentration_ug_m3, plain.concentration_ug_m3)
    pd.testing.assert_frame_equal(run.contributors, plain.contributors)


def test_unreachable_scheduler_is_a_clear_error(farms_file, weather_csv, monkeypatch):
    """A scheduler address nobody listens on: InputError naming the scheduler parameter."""
    pytest.importorskip("distributed")
    monkeypatch.setattr("siting.runs.region_tasks.SCHEDULER_CONNECT_TIMEOUT_S", 1.0)
    with pytest.raises(InputError, match=r"^scheduler "):
        _run(farms_file, weather_csv, None, scheduler="tcp://127.0.0.1:9")


def test_large_grid_is_tiled_within_the_memory_budget(farms_file, weather_csv, habitats):
    """A budget too small for one tile: the run is tiled and its traced peak stays below it."""
    import dask

    dask.compute(dask.delayed(sum)([1]), scheduler="threads")  # import dask's modules first
    options = RegionOptions(spacing_m=50.0, margin_m=1000.0, scheduler="threads", workers=2)
    inputs = prepare_region(farms_file, weather_csv, habitats, options)
    grid = inputs.grid
    n_classes = len(inputs.classes)
    whole = plan_tiles(
        grid.n_rows,
        grid.n_cols,
        n_classes,
        grid.n_rows - 1,
        grid.n_cols - 1,
        1e12,
        2,
        1e6,
        n_farms=24,
        window_cells=10,
    )
    assert whole.n_tiles == 1
    budget_mb = 0.8 * whole.peak_bytes / 1e6  # one tile does not fit
    inputs.options = RegionOptions(
        spacing_m=50.0, margin_m=1000.0, scheduler="threads", workers=2, memory_mb=budget_mb
    )
    tracemalloc.start()
    try:
        result = compute_region(inputs)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert result.plan.n_tiles > 1
    assert result.plan.peak_bytes <= budget_mb * 1e6
    print(
        f"budget {budget_mb:.1f} MB, estimate {result.plan.peak_bytes / 1e6:.1f} MB, traced "
        f"peak {peak / 1e6:.1f} MB, {result.plan.n_tiles} tiles"
    )
    assert peak < budget_mb * 1e6, f"traced peak {peak / 1e6:.1f} MB > budget {budget_mb:.1f} MB"


def test_budget_too_small_for_one_tile_is_refused(farms_file, weather_csv):
    """A budget below the kernels and the smallest tile: InputError with the figures."""
    with pytest.raises(InputError, match="memory_mb 0.5 is too small"):
        _run(farms_file, weather_csv, None, memory_mb=0.5)


def test_plan_tiles_picks_the_largest_tile_that_fits():
    """Whole grid when it fits; else tiles from TILE_SIZES; the estimate never above budget."""
    whole = plan_tiles(600, 700, 3, 599, 699, 1e12, 2, 1e6)
    assert (whole.tile_rows, whole.tile_cols, whole.n_tiles) == (600, 700, 1)
    smaller = plan_tiles(600, 700, 3, 599, 699, 0.9 * whole.peak_bytes, 2, 1e6)
    assert smaller.tile_rows == 512 and smaller.n_tiles == 4
    assert smaller.peak_bytes <= 0.9 * whole.peak_bytes
    with pytest.raises(InputError, match="memory_mb"):
        plan_tiles(600, 700, 3, 599, 699, 1e6, 2, 1e6)


def test_contributors_add_up_to_the_site_total(plain):
    """Every farm's deposition at a site's maximum point adds up to the site's maximum."""
    sites = plain.sites.set_index("site_id")
    for site_id, group in plain.contributors.groupby("site_id"):
        assert len(group) == 24  # top=100 lists all 24 farms
        # conservation: the total is the sum of the farms' own direct sums at that point
        assert_allclose(
            group["dep_kg_n_ha_yr"].sum(),
            sites.loc[site_id, "incomb_dep_max_kg_n_ha_yr"],
            rtol=1e-12,
        )
        assert_allclose(group["share_of_site_total_percent"].sum(), 100.0, rtol=1e-12)
        assert (np.diff(group["dep_kg_n_ha_yr"]) <= 0).all()  # ranked, largest first


def test_site_maximum_is_the_direct_sum_of_the_farms(plain):
    """A site's maximum is the engine's direct sum over the farms at that point."""
    inputs = plain.inputs
    farms = inputs.farms
    for site in plain.sites.itertuples():
        total = 0.0
        for farm in farms.itertuples():
            unit = offset_concentration_g_m3_per_g_s(
                np.array([site.max_x_m - farm.x_m]),
                np.array([site.max_y_m - farm.y_m]),
                farm.release_class.elements(),
                inputs.weather,
                inputs.settings,
            )
            total += farm.emission_g_s * unit[0] * UG_PER_G
        # cross-check: the same per-pair values (fixed profile nodes), summed in another order
        assert_allclose(site.incomb_conc_max_ug_m3, total, rtol=1e-12)


def test_grid_is_the_direct_sum_when_the_near_field_covers_it(weather_csv, tmp_path):
    """Near-field windows as wide as the grid: every cell is the direct per-farm sum (1e-9)."""
    path = tmp_path / "farms.gpkg"
    _farms(6, seed=3, half_side_m=2000.0).to_file(path, driver="GPKG")
    result = region(
        path,
        weather_csv,
        None,
        RegionOptions(spacing_m=200.0, margin_m=600.0, scheduler=None, near_field_cells=100),
    )
    grid, inputs = result.grid, result.inputs
    gx, gy = grid.centres()
    direct = (
        sum(
            f.emission_g_s
            * offset_concentration_g_m3_per_g_s(
                gx - f.x_m, gy - f.y_m, f.release_class.elements(), inputs.weather, inputs.settings
            )
            for f in inputs.farms.itertuples()
        )
        * UG_PER_G
    )
    # cross-check: FFT round-off only, relative to the peak for the smallest cells
    assert_allclose(result.concentration_ug_m3, direct, rtol=1e-9, atol=1e-12 * direct.max())
    # and with the default 10-cell window, the bilinear placement error (measured <= 1.5 %)
    default = region(
        path, weather_csv, None, RegionOptions(spacing_m=200.0, margin_m=600.0, scheduler=None)
    )
    assert_allclose(default.concentration_ug_m3, direct, rtol=0.02, atol=1e-9 * direct.max())


def test_grid_deposition_uses_short_vegetation(plain):
    """Grid deposition = concentration x 0.02 m/s (short vegetation, AQTAG06) x ~259.4."""
    ratio = plain.deposition_kg_n_ha_yr / plain.concentration_ug_m3
    # derived: ug NH3 m-2 s-1 -> kg N ha-1 yr-1 is 31 536 000 x 1e4 / 1e9 x 14.0067/17.0305
    assert_allclose(ratio[np.isfinite(ratio)], 0.02 * 259.36, rtol=1e-4)


# --- reading the farms layer ----------------------------------------------------------------


def _layer(tmp_path, rows, crs=CRS, name="farms.gpkg"):
    path = tmp_path / name
    gpd.GeoDataFrame(rows, geometry="geometry", crs=crs).to_file(path, driver="GPKG")
    return path


def test_defaults_and_classes(tmp_path, tables):
    """Points default to 6 m, polygons to 4 m; a polygon's class side is its area's ladder step."""
    path = _layer(
        tmp_path,
        [
            {"id": "A", "nh3_kg_per_year": 1000.0, "height_m": None, "geometry": Point(*CENTRE)},
            {
                "id": "B",
                "nh3_kg_per_year": 2000.0,
                "height_m": None,
                "geometry": box(CENTRE[0] + 500, CENTRE[1], CENTRE[0] + 520, CENTRE[1] + 40),
            },
            {
                "id": "C",
                "nh3_kg_per_year": 500.0,
                "height_m": 7.8,
                "geometry": Point(CENTRE[0], CENTRE[1] + 900),
            },
        ],
    )
    farms, crs = read_farms(path, tables)
    assert crs.endswith("32632")
    assert list(farms["kind"]) == ["point", "volume", "point"]
    assert list(farms["release_height_m"]) == [6.0, 4.0, 7.8]
    assert farms["release_class"][2].release_height_m == 8.0  # rounded to 0.5 m
    assert farms["release_class"][1].footprint_side_m == pytest.approx(20 * math.sqrt(2))
    assert farms["emission_g_s"][0] == pytest.approx(kg_per_year_to_g_s(1000.0), rel=1e-15)


def test_livestock_fields_give_the_emission(tmp_path, tables):
    """An empty emission with livestock, housing, places: factor x places, less abatement."""
    path = _layer(
        tmp_path,
        [
            {
                "id": "P",
                "nh3_kg_per_year": None,
                "livestock": "finishing_pig",
                "housing": "fully_slatted",
                "places": 1000.0,
                "abatement": None,
                "geometry": Point(*CENTRE),
            },
            {
                "id": "Q",
                "nh3_kg_per_year": None,
                "livestock": "finishing_pig",
                "housing": "fully_slatted",
                "places": 1000.0,
                "abatement": "acid_scrubber",
                "geometry": Point(CENTRE[0] + 800, CENTRE[1]),
            },
        ],
    )
    farms, _ = read_farms(path, tables)
    assert farms["nh3_kg_yr"][0] == pytest.approx(2813.0)  # EA2024: 2.813 kg/place/yr x 1000
    # no reduction stated: the lower end of the acid scrubber's range (BATc2017 4.11, 70 %;
    # from memory)
    assert farms["nh3_kg_yr"][1] == pytest.approx(2813.0 * (1 - 70.0 / 100))
    assert "finishing_pig" in farms["emission_from"][0]


def test_no_emission_field_is_an_input_error(tmp_path, tables):
    """A layer with neither an emission field nor livestock fields: InputError naming both."""
    path = _layer(tmp_path, [{"id": "A", "tonnes": 3.0, "geometry": Point(*CENTRE)}])
    with pytest.raises(InputError, match='no emission field "nh3_kg_per_year".*tonnes'):
        read_farms(path, tables)
    with pytest.raises(InputError, match='emission_field "nh3": no such field'):
        read_farms(path, tables, FarmFields(emission_field="nh3"))


def test_geographic_crs_is_an_input_error(tmp_path, tables):
    """A farms layer in degrees: InputError asking for --crs; with --crs it is reprojected."""
    path = _layer(
        tmp_path,
        [{"id": "A", "nh3_kg_per_year": 900.0, "geometry": Point(9.0, 52.3)}],
        crs="EPSG:4326",
    )
    with pytest.raises(InputError, match="geographic.*give crs"):
        read_farms(path, tables)
    farms, _ = read_farms(path, tables, crs="EPSG:32632")
    assert 499_000 < farms["x_m"][0] < 501_000  # 9 deg E is zone 32's central meridian
    with pytest.raises(InputError, match="^crs: .*geographic"):
        read_farms(path, tables, crs="EPSG:4326")


@pytest.mark.parametrize(
    "row, message",
    [
        (
            {"id": "A", "nh3_kg_per_year": -5.0, "geometry": Point(*CENTRE)},
            'farm "A": nh3_kg_per_year must be a number >= 0',
        ),
        (
            {"id": "A", "nh3_kg_per_year": 5.0, "height_m": 250.0, "geometry": Point(*CENTRE)},
            'farm "A": height_m must be a number >= 0 and <= 100',
        ),
        (
            {
                "id": "A",
                "nh3_kg_per_year": 5.0,
                "geometry": LineString([CENTRE, (CENTRE[0] + 10, CENTRE[1])]),
            },
            'farm "A": geometry is a LineString',
        ),
        (
            {
                "id": "A",
                "nh3_kg_per_year": None,
                "livestock": "finishing_pigs",
                "housing": "fully_slatted",
                "places": 10.0,
                "geometry": Point(*CENTRE),
            },
            'did you mean "finishing_pig"',
        ),
    ],
)
def test_bad_farm_values_name_the_farm(tmp_path, tables, row, message):
    """A bad value, geometry or livestock id: InputError naming the farm and the field."""
    path = _layer(tmp_path, [row])
    with pytest.raises(InputError, match=message):
        read_farms(path, tables)


def test_duplicate_ids_and_missing_file(tmp_path, tables):
    """Two farms with one id, or a file that is not there: clear errors."""
    path = _layer(
        tmp_path,
        [
            {"id": "A", "nh3_kg_per_year": 5.0, "geometry": Point(*CENTRE)},
            {"id": "A", "nh3_kg_per_year": 6.0, "geometry": Point(CENTRE[0] + 100, CENTRE[1])},
        ],
    )
    with pytest.raises(InputError, match='duplicate farm id "A"'):
        read_farms(path, tables)
    with pytest.raises(InputFileError, match="not found"):
        read_farms(tmp_path / "nothing.gpkg", tables)


def test_first_fault_of_a_farm_layer_is_the_one_reported(tmp_path, tables):
    """Several faults in one layer: ids, then geometry, then emission, then height are checked."""
    line = LineString([CENTRE, (CENTRE[0] + 10, CENTRE[1])])
    bad_a = {"id": "A", "nh3_kg_per_year": -5.0, "height_m": 500.0, "geometry": line}
    bad_b = {"id": "B", "nh3_kg_per_year": -5.0, "height_m": 500.0, "geometry": Point(*CENTRE)}
    again_a = {"id": "A", "nh3_kg_per_year": 5.0, "height_m": 4.0, "geometry": Point(*CENTRE)}
    cases = [
        ([bad_a, bad_b, again_a], 'duplicate farm id "A"'),
        ([bad_a, bad_b], 'farm "A": geometry is a LineString'),
        ([bad_b], 'farm "B": nh3_kg_per_year must be a number >= 0'),
        (
            [{**bad_b, "nh3_kg_per_year": 5.0}],
            'farm "B": height_m must be a number >= 0 and <= 100',
        ),
    ]
    for i, (rows, message) in enumerate(cases):
        with pytest.raises(InputError, match=message):
            read_farms(_layer(tmp_path, rows, name=f"farms_{i}.gpkg"), tables)


def test_options_are_checked():
    """Out-of-range options name the CLI option."""
    with pytest.raises(InputError, match="margin_m"):
        RegionOptions(spacing_m=100.0, margin_m=50.0).check()
    with pytest.raises(InputError, match="tile_size"):
        RegionOptions(tile_size=4).check()


def test_cli_bad_input_exits_2(tmp_path, weather_csv, capsys):
    """A geographic farms layer: exit code 2, one line on stderr, nothing written."""
    path = _layer(
        tmp_path,
        [{"id": "A", "nh3_kg_per_year": 900.0, "geometry": Point(9.0, 52.3)}],
        crs="EPSG:4326",
    )
    out = tmp_path / "out"
    assert (
        main(["region", str(path), "--weather", str(weather_csv), "--out", str(out), "--quiet"])
        == 2
    )
    assert "geographic" in capsys.readouterr().err
    assert not out.exists()
