"""The demo's result tables are unchanged by restructuring (a regression guard, not a check of
the physics: those live in the other test files against published values).

tests/golden/ holds sites.csv, receptors.csv, sensitivity.csv and sources.csv of the bundled
invented demo as written by siting at commit 49c5a42, before the vectorised site sampling and
the package restructuring. A refactor that changes any figure or text in them fails here; a
change meant to alter results updates the golden files in the same commit, saying why.

The demo's weather files made by tools/make_demo.py are checked against the generator: it
still writes hourly_weather.csv byte for byte, and the same invented weather in the two open
formats, the ISD-Lite station-years weather_isd/demo-station-<year>.gz (their text byte for
byte and a reproducible gzip header; the compressed bytes may differ between zlib builds) and
the reanalysis-style grid reanalysis_2025.nc (its decoded content, attributes and encoding; its
bytes too where the NetCDF libraries are those that wrote it, since the file records their
versions). The readers then read both as data_demo/README.md describes them.
"""

import csv
import gzip
import importlib.util
import io
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from siting.cli import main
from siting.errors import collect_warnings
from siting.readers.hourly_record import read_hourly_record
from siting.readers.resources import demo_dir

GOLDEN = Path(__file__).parent / "golden"
MAKE_DEMO = Path(__file__).resolve().parents[1] / "tools" / "make_demo.py"


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("demo_unchanged") / "out"
    assert main(["screen", str(demo_dir() / "scenario.toml"), "--out", str(out), "--quiet"]) == 0
    return out


#: Columns added to sites.csv since the golden files, on purpose: the rule sets (issue 14) add
#: the judged contribution, the basis, the deciding rule and whether the verdict passes.
ADDED = {
    "sites.csv": [
        "passes",
        "deciding_rule",
        "basis",
        "rules",
        "judged_conc_max_ug_m3",
        "judged_dep_max_kg_n_ha_yr",
        "judged_pct_level",
        "judged_pct_load",
        "judged_incomb_dep_max_kg_n_ha_yr",
        "judged_incomb_pct_level",
        "judged_incomb_pct_load",
    ],
    # issue 15 item 3: the abatement appraisal of each abated source, appended at the end
    # (siting.runs.appraisal.APPRAISAL_COLUMNS); every earlier column is unchanged
    "sources.csv": [
        "scrubber_capacity_m3_h",
        "water_m3_yr",
        "electricity_kwh_yr",
        "acid_kg_yr",
        "capital_eur",
        "annual_cost_eur_yr",
        "cost_eur_per_kg_nh3",
        "appraisal_note",
    ],
}
#: Columns whose text changed on purpose: a threshold's source is now the rule of the rule set
#: that sets it (the default set "plain" keeps the same thresholds).
CHANGED = {"sites.csv": {"threshold_source"}}


@pytest.mark.parametrize("name", ["sites.csv", "receptors.csv", "sensitivity.csv", "sources.csv"])
def test_demo_table_is_as_before(demo_out, name):
    """Same columns (plus those ADDED on purpose), same text, numbers equal to 1e-9 relative
    (platform rounding only)."""
    before = pd.read_csv(GOLDEN / f"demo_{name}", keep_default_na=False)
    after = pd.read_csv(demo_out / name, keep_default_na=False)
    added = ADDED.get(name, [])
    assert [c for c in after.columns if c not in added] == list(before.columns)
    assert sorted(set(after.columns) - set(before.columns)) == sorted(added)
    assert len(after) == len(before)
    for column in [c for c in before.columns if c not in CHANGED.get(name, set())]:
        old, new = before[column], after[column]
        numeric_old = pd.to_numeric(old, errors="coerce")
        numeric_new = pd.to_numeric(new, errors="coerce")
        if numeric_old.notna().all() and numeric_new.notna().all():
            np.testing.assert_allclose(numeric_new, numeric_old, rtol=1e-9, err_msg=column)
        else:
            assert new.astype(str).tolist() == old.astype(str).tolist(), column


# --- the generator's weather files --------------------------------------------------------------


@pytest.fixture(scope="module")
def make_demo():
    """tools/make_demo.py as a module (tools/ is no package; its main() is not run)."""
    if not MAKE_DEMO.is_file():
        pytest.skip("tools/make_demo.py is not here (siting installed without its checkout)")
    spec = importlib.util.spec_from_file_location("make_demo", MAKE_DEMO)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def hourly_rows(make_demo) -> list[list[str]]:
    return make_demo.make_hourly_weather(np.random.default_rng(make_demo.HOURLY_SEED))


def test_generator_reproduces_the_hourly_record(hourly_rows):
    """hourly_weather.csv is what the generator writes, byte for byte (the ISD-Lite files and
    the NetCDF grid are made from the same invented weather)."""
    text = io.StringIO()
    csv.writer(text, lineterminator="\n").writerows(hourly_rows)
    assert text.getvalue().encode("utf-8") == (demo_dir() / "hourly_weather.csv").read_bytes()


def test_generator_reproduces_the_isd_lite_files(make_demo, hourly_rows):
    """The two invented station-years: the same text as the generator makes, gzip-compressed
    with mtime 0 and no file name in the header (RFC 1952: FLG 0, MTIME 0)."""
    made = make_demo.make_isd_lite(hourly_rows)
    folder = demo_dir() / "weather_isd"
    assert sorted(made) == ["demo-station-2024.gz", "demo-station-2025.gz"]
    assert sorted(p.name for p in folder.iterdir()) == sorted(made)
    for name, data in made.items():
        stored = (folder / name).read_bytes()
        # magic, deflate, no flags (so no FNAME), MTIME 0
        assert stored[:8] == b"\x1f\x8b\x08\x00\x00\x00\x00\x00", name
        assert data[:8] == stored[:8], name
        assert gzip.decompress(stored) == gzip.decompress(data), name
    lines_2025 = gzip.decompress(made["demo-station-2025.gz"]).decode("ascii").splitlines()
    assert lines_2025[0].startswith("2025 01 01 00") and len(lines_2025[0]) == 61


def test_generator_reproduces_the_reanalysis_grid(make_demo, tmp_path):
    """reanalysis_2025.nc decodes to what the generator makes (values, coordinates and every
    attribute), stored as float32 with zlib and CF times in hours since 1970-01-01; where the
    NetCDF libraries are the ones that wrote it, the bytes are the same too."""
    import h5py
    import xarray as xr

    stored_path = demo_dir() / make_demo.REANALYSIS_FILE
    made_path = tmp_path / make_demo.REANALYSIS_FILE
    made = make_demo.make_reanalysis(*make_demo.demo_site_lat_lon())
    make_demo.write_reanalysis(made, made_path)
    assert stored_path.stat().st_size < 1_000_000
    with (
        xr.open_dataset(stored_path, engine="h5netcdf") as stored,
        xr.open_dataset(made_path, engine="h5netcdf") as again,
    ):
        xr.testing.assert_identical(stored, again)
        assert stored.sizes == {"valid_time": 8760, "latitude": 3, "longitude": 3}
        assert str(stored.valid_time.values[0])[:13] == "2025-01-01T00"
        assert stored.valid_time.encoding["units"] == "hours since 1970-01-01"
        for name in ("u10", "v10", "tcc", "cbh", "t2m"):
            assert stored[name].dtype == np.float32 and stored[name].encoding["zlib"], name
        assert "invented" in stored.attrs["source"] and "not a real" in stored.attrs["source"]
    with h5py.File(stored_path, "r") as a, h5py.File(made_path, "r") as b:
        same_libraries = a.attrs.get("_NCProperties") == b.attrs.get("_NCProperties")
    if same_libraries:
        assert stored_path.read_bytes() == made_path.read_bytes()


def test_demo_open_format_files_read_as_described(make_demo):
    """Both files read at the demo site as data_demo/README.md says: the ISD-Lite record two
    years with their missing codes and sky codes 9 counted, the grid at its nearest point
    (52.25 N, 9.00 E, about 11 km from the site) with no hour missing."""
    lat, lon = make_demo.demo_site_lat_lon()
    folder = demo_dir() / "weather_isd"
    with collect_warnings(reissue=False) as found:
        _, isd = read_hourly_record(sorted(folder.glob("*.gz")), lat, lon)
        _, grid = read_hourly_record(demo_dir() / "reanalysis_2025.nc", lat, lon)
    assert found.messages == []
    assert isd["format"] == "isd-lite" and isd["years_covered"] == [2024, 2025]
    assert isd["hours_expected"] == 8784 + 8759 and isd["hours_missing"] == 20
    for name, missing in (("demo-station-2024.gz", 1), ("demo-station-2025.gz", 4)):
        source = isd["sources"][name]
        assert source["missing_codes"]["wind speed"] == missing  # 2025: 3 empty hours more
        assert list(source["not_in_oktas"].values()) == [2]
    assert grid["format"] == "netcdf" and grid["hours_expected"] == grid["hours_used"] == 8760
    source = grid["sources"]["reanalysis_2025.nc"]
    assert (source["grid_latitude_deg"], source["grid_longitude_deg"]) == (52.25, 9.0)
    assert 10.0 < source["distance_km"] < 12.5
    assert isd["prevailing_from_words"] == grid["prevailing_from_words"]
