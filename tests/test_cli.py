"""The command line end to end: the invented demo through ``siting demo`` into tmp_path.

The demo runs ONCE per session (fixture ``demo``, conftest.py's ``demo_run``); the tests read
its outputs. Expected values are
either properties of the outputs named in DESIGN.md ("Outputs of screen"), figures copied from
the demo scenario and the config tables (each read from the file, so the test names its origin),
or analytic properties of the model (linear in the emission, falling with distance).
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import json
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import rasterio
from numpy.testing import assert_allclose

import siting
from siting.cli import main
from siting.output.screen import SITE_COLUMNS
from siting.readers.resources import config_dir, demo_dir

OUTPUTS = [
    "concentration.tif",
    "deposition.tif",
    "deposition_in_combination.tif",
    "sites.csv",
    "results.gpkg",
    "receptors.csv",
    "sources.csv",
    "sensitivity.csv",
    "what_it_takes.csv",
    "run.json",
    "report.html",
    "report.pdf",  # issue 16: the report laid out for print, beside report.html
    "map.html",
    "inputs",
]  # inputs/: the copies that make the folder a complete package

# CSV tables are written with float_format "%.6g" (siting/output/tables.py): 6 significant figures,
# so a value read back is within 5e-6 relative of the one computed.
CSV_RTOL = 5e-6


def _demo_scenario() -> dict:
    with open(demo_dir() / "scenario.toml", "rb") as handle:
        return tomllib.load(handle)


def _demo_source(source_id: str) -> dict:
    return next(s for s in _demo_scenario()["source"] if s["id"] == source_id)


def _acid_scrubber() -> dict:
    with open(config_dir() / "abatement.toml", "rb") as handle:
        return next(t for t in tomllib.load(handle)["technique"] if t["id"] == "acid_scrubber")


def _run(argv: list[str]) -> tuple[int, str]:
    """Run the CLI in-process; return (exit code, what it printed on stdout)."""
    stdout = io.StringIO()
    with contextlib.redirect_stdout(stdout):
        rc = main(argv)
    return rc, stdout.getvalue()


@pytest.fixture(scope="module")
def demo(demo_run) -> dict:
    """The demo run once (`siting demo --out ... --quiet`, in-process, stdout captured; the
    session's ``demo_run`` of conftest.py, which other modules read too): exit code, stdout
    and the output folder."""
    return demo_run


@pytest.fixture(scope="module")
def sites(demo) -> pd.DataFrame:
    return pd.read_csv(demo["out"] / "sites.csv")


# --------------------------------------------------------------------------------------------
# the run and its files
# --------------------------------------------------------------------------------------------


def test_demo_exits_zero_and_quiet_prints_nothing(demo):
    """`siting demo --quiet` exits 0 and prints no summary on stdout."""
    assert demo["rc"] == 0
    assert demo["stdout"] == ""


@pytest.mark.parametrize("name", OUTPUTS)
def test_demo_writes_every_output(demo, name):
    """Every output DESIGN.md lists for `screen` is written and not empty."""
    path = demo["out"] / name
    if name == "inputs":  # a folder: the packed scenario and the tables it used
        assert (path / "scenario.toml").is_file() and (path / "_config").is_dir()
        return
    assert path.is_file()
    assert path.stat().st_size > 0


def test_demo_leaves_no_staging_folder(demo):
    """The atomic write leaves only the output folder in its parent (no .partial, no .old)."""
    assert [p.name for p in demo["out"].parent.iterdir()] == ["demo"]


@pytest.mark.parametrize(
    "name, units",
    [
        ("concentration.tif", "ug/m3"),
        ("deposition.tif", "kg N/ha/yr"),
        ("deposition_in_combination.tif", "kg N/ha/yr"),
    ],
)
def test_geotiff_profile(demo, name, units):
    """Each GeoTIFF: EPSG:32632, north-up at the scenario's spacing, float32, nodata, units."""
    spacing_m = _demo_scenario()["grid"]["spacing_m"]  # 25 m, data_demo/scenario.toml
    with rasterio.open(demo["out"] / name) as src:
        assert src.crs.to_epsg() == 32632  # data_demo/scenario.toml crs
        t = src.transform
        assert (t.a, t.b, t.d, t.e) == (spacing_m, 0.0, 0.0, -spacing_m)  # north-up, square
        assert src.count == 1
        assert src.dtypes[0] == "float32"
        assert src.nodata is not None
        assert src.descriptions[0]
        assert src.tags(1)["units"] == units
        assert src.units[0] == units
        values = src.read(1, masked=True)
    assert values.count() > 0
    assert np.all(np.isfinite(values.compressed()))
    assert values.min() >= 0.0  # PC and in-combination figures are never negative


def test_sites_csv_columns_and_rows(sites):
    """sites.csv has siting.output.screen.SITE_COLUMNS, one row per habitat feature, in layer order."""
    layer = gpd.read_file(demo_dir() / "habitats.gpkg")
    assert list(sites.columns) == SITE_COLUMNS
    assert list(sites["name"]) == list(layer["name"])


def test_sites_gpkg_matches_sites_csv(demo, sites):
    """results.gpkg, layer sites: EPSG:32632, the same sites and figures as sites.csv."""
    gpkg = gpd.read_file(demo["out"] / "results.gpkg", layer="sites")
    assert gpkg.crs.to_epsg() == 32632
    assert list(gpkg["site_id"]) == list(sites["site_id"])
    assert list(gpkg["name"]) == list(sites["name"])
    assert set(gpkg.geom_type) <= {"Polygon", "MultiPolygon"}
    assert_allclose(gpkg["pc_dep_max_kg_n_ha_yr"], sites["pc_dep_max_kg_n_ha_yr"], rtol=CSV_RTOL)


def test_receptors_csv_rows(demo):
    """receptors.csv has the named points in order, with non-negative PC figures."""
    given = pd.read_csv(demo_dir() / "receptors.csv")
    table = pd.read_csv(demo["out"] / "receptors.csv")
    assert list(table["id"]) == list(given["id"])
    assert (table[["conc_ug_m3", "dep_kg_n_ha_yr"]] >= 0).all().all()


def test_receptors_csv_starts_with_the_design_columns(demo):
    """receptors.csv starts id,x,y,conc_ug_m3,dep_kg_n_ha_yr (DESIGN.md contract)."""
    table = pd.read_csv(demo["out"] / "receptors.csv")
    assert list(table.columns[:5]) == ["id", "x", "y", "conc_ug_m3", "dep_kg_n_ha_yr"]


def test_coordinates_round_trip(demo):
    """receptors.csv and sources.csv repeat the x, y given in the inputs (to 0.01 m)."""
    given = pd.read_csv(demo_dir() / "receptors.csv")
    table = pd.read_csv(demo["out"] / "receptors.csv")
    assert_allclose(table[["x", "y"]], given[["x", "y"]], rtol=0, atol=0.01)
    sources = pd.read_csv(demo["out"] / "sources.csv")
    spec = _demo_scenario()["source"]
    assert_allclose(sources["x_m"], [s["x"] for s in spec], rtol=0, atol=0.01)
    assert_allclose(sources["y_m"], [s["y"] for s in spec], rtol=0, atol=0.01)


def test_run_json_hashes_inputs_and_tables(demo):
    """run.json lists every input and config table with its true SHA-256."""
    record = json.loads((demo["out"] / "run.json").read_text(encoding="utf-8"))
    expected_inputs = {
        "scenario": "scenario.toml",
        "weather": "weather_table.csv",
        "habitats": "habitats.gpkg",
        "receptors": "receptors.csv",
    }
    assert set(record["inputs"]) == set(expected_inputs)
    for key, filename in expected_inputs.items():
        entry = record["inputs"][key]
        # relative to the scenario's folder: no folder of the machine in run.json (issue 16)
        assert entry["path"] == filename
        digest = hashlib.sha256((demo_dir() / filename).read_bytes()).hexdigest()
        assert entry["sha256"] == digest
    tables = {p.name: p for p in config_dir().glob("*.toml")}
    assert set(record["config_tables"]) == set(tables)
    for name, entry in record["config_tables"].items():
        assert entry["sha256"] == hashlib.sha256(tables[name].read_bytes()).hexdigest()
    assert record["version"] == siting.__version__


# --------------------------------------------------------------------------------------------
# sane figures
# --------------------------------------------------------------------------------------------


def test_deposition_falls_with_distance_from_h1(demo):
    """Mean PC deposition on a ring 1.5-2 km from H1 is below that on a ring 300-500 m."""
    h1 = _demo_source("H1")  # the proposed house, data_demo/scenario.toml
    with rasterio.open(demo["out"] / "deposition.tif") as src:
        values = src.read(1, masked=True)
        t = src.transform
    x = t.c + (np.arange(values.shape[1]) + 0.5) * t.a  # cell centres
    y = t.f + (np.arange(values.shape[0]) + 0.5) * t.e
    distance = np.hypot(*np.meshgrid(x - h1["x"], y - h1["y"]))
    near = values[(distance >= 300) & (distance <= 500)]
    far = values[(distance >= 1500) & (distance <= 2000)]
    assert near.count() > 100 and far.count() > 100  # both rings lie inside the grid
    # property: a long-term plume mean falls with distance (Gaussian plume spreading)
    assert far.mean() < near.mean()


def test_nearest_site_has_higher_concentration_than_farthest(sites):
    """Among the demo sites, the nearest has a higher max PC concentration than the farthest."""
    assessed = sites[sites["assessed"]]
    nearest = assessed.loc[assessed["distance_m"].idxmin()]
    farthest = assessed.loc[assessed["distance_m"].idxmax()]
    assert nearest["name"] != farthest["name"]
    assert nearest["pc_conc_max_ug_m3"] > farthest["pc_conc_max_ug_m3"]  # falls with distance


def test_h1_emission_derivation(demo):
    """sources.csv, H1: unabated x (1 - effective reduction) = emitted; no reduction stated, so
    the acid scrubber's published lower end (BATc2017 section 4.11, 70 %; from memory)."""
    table = pd.read_csv(demo["out"] / "sources.csv").set_index("source_id")
    h1 = table.loc["H1"]
    spec = _demo_source("H1")
    scrubber = _acid_scrubber()
    # BATc2017 section 4.11, wet acid scrubber 70-99 % (from memory): the demo states no
    # reduction_percent, so the lower end is used; treated_air_fraction 1.0
    assert scrubber["reduction_percent_min"] == 70
    assert "reduction_percent" not in spec
    assert h1["abatement"] == "acid_scrubber"
    assert h1["effective_reduction_percent"] == pytest.approx(70.0, rel=CSV_RTOL)
    assert h1["reduction_basis"].startswith("lower end of the published range")
    # analytic: unabated = factor [kg/place/yr] x places (DESIGN.md, Emissions)
    assert h1["nh3_unabated_kg_yr"] == pytest.approx(
        h1["factor_nh3_kg_per_place_yr"] * spec["places"], rel=CSV_RTOL
    )
    assert h1["nh3_kg_yr"] == pytest.approx(
        h1["nh3_unabated_kg_yr"] * (1 - h1["effective_reduction_percent"] / 100), rel=2 * CSV_RTOL
    )  # two rounded CSV figures multiplied
    # kg/yr -> g/s: 1000 g per kg over a 365-day year (siting/constants.py, DAYS_PER_YEAR)
    assert h1["emission_g_s"] == pytest.approx(
        h1["nh3_kg_yr"] * 1000 / (365 * 86400), rel=2 * CSV_RTOL
    )


def test_demo_has_a_site_above_threshold(sites):
    """The demo is built to have at least one site above its threshold (data_demo/README.md)."""
    assert (sites["verdict"] == "above threshold").any()


def test_fail_on_exceed_returns_1_for_the_demo(sites, tmp_path):
    """`screen --fail-on-exceed` on the demo exits 1 (a site is above threshold) and writes."""
    assert (sites["verdict"] == "above threshold").any()  # precondition, from sites.csv
    out = tmp_path / "exceed"
    rc, _ = _run(
        [
            "screen",
            str(demo_dir() / "scenario.toml"),
            "--out",
            str(out),
            "--fail-on-exceed",
            "--quiet",
            "--no-pdf",  # report.pdf is checked on the demo run; here it would only cost time
        ]
    )
    assert rc == 1  # DESIGN.md: exit 1 only where asked (--fail-on-exceed)
    assert (out / "sites.csv").is_file()


@pytest.mark.parametrize("name", ["map.html", "report.html"])
def test_html_names_title_and_screening(demo, name):
    """map.html and report.html carry the scenario title and say 'screening'."""
    text = (demo["out"] / name).read_text(encoding="utf-8")
    assert _demo_scenario()["title"] in text
    assert "screening" in text.lower()


# --------------------------------------------------------------------------------------------
# H1 alone, with and without its scrubber
# --------------------------------------------------------------------------------------------


def _toml_value(value) -> str:
    return json.dumps(value)  # strings, numbers and booleans: JSON spelling is valid TOML


def _h1_only_scenario(folder: Path, abated: bool) -> Path:
    """A copy of the demo with only H1 (proposed), small grid (50 m, margin 1000 m)."""
    demo_toml = _demo_scenario()
    h1 = dict(_demo_source("H1"))
    if not abated:
        for key in ("abatement", "reduction_percent", "treated_air_fraction"):
            h1.pop(key, None)
    assert h1["role"] == "proposed"
    lines = [
        f"title = {_toml_value('H1 alone (test variant of the invented demo)')}",
        f"crs = {_toml_value(demo_toml['crs'])}",
        "[weather]",
    ]
    lines += [f"{k} = {_toml_value(v)}" for k, v in demo_toml["weather"].items()]
    lines += ["[grid]", "spacing_m = 50.0", "margin_m = 1000.0", "[deposition]"]
    lines += [f"{k} = {_toml_value(v)}" for k, v in demo_toml["deposition"].items()]
    lines += ["[habitats]"]
    lines += [f"{k} = {_toml_value(v)}" for k, v in demo_toml["habitats"].items()]
    lines += ["[[source]]"] + [f"{k} = {_toml_value(v)}" for k, v in h1.items()]
    path = folder / f"h1_{'abated' if abated else 'unabated'}.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def h1_runs(tmp_path_factory) -> dict:
    """H1 alone screened twice (abated, unabated); the abated run with --fail-on-exceed."""
    folder = tmp_path_factory.mktemp("h1")
    for name in ("weather_table.csv", "habitats.gpkg"):
        shutil.copy(demo_dir() / name, folder / name)
    runs = {}
    for abated in (True, False):
        label = "abated" if abated else "unabated"
        scenario = _h1_only_scenario(folder, abated)
        out = folder / f"out_{label}"
        extra = ["--fail-on-exceed"] if abated else []
        rc, _ = _run(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf", *extra])
        runs[label] = {
            "rc": rc,
            "scenario": scenario,
            "out": out,
            "sites": gpd.read_file(out / "results.gpkg", layer="sites"),
        }  # full double precision
    return runs


def test_abated_run_is_lower_by_the_reduction(h1_runs):
    """H1 with its scrubber / without: every site's PC ratio is 1 - 70/100 = 0.3."""
    abated, unabated = h1_runs["abated"]["sites"], h1_runs["unabated"]["sites"]
    assert h1_runs["unabated"]["rc"] == 0
    assert list(abated["assessed"]) == list(unabated["assessed"])
    mask = abated["assessed"].to_numpy(bool)
    assert mask.sum() >= 3  # the 1 km margin reaches the three nearer demo sites
    # analytic: concentration and deposition are linear in the emission (source depletion
    # depends on distance and v_d only), and the emission ratio is 1 - 90 % x 1.0
    # (acid scrubber, lower end of BATc2017 section 4.11's 70-99 %, from memory;
    # treated_air_fraction 1.0); rtol covers float rounding only
    expected = 1 - _acid_scrubber()["reduction_percent_min"] / 100 * 1.0
    assert expected == pytest.approx(0.3)
    for column in ("pc_conc_max_ug_m3", "pc_conc_mean_ug_m3", "pc_dep_max_kg_n_ha_yr"):
        ratio = abated[column][mask].to_numpy() / unabated[column][mask].to_numpy()
        assert_allclose(ratio, expected, rtol=1e-9, err_msg=column)


def test_fail_on_exceed_matches_verdicts(h1_runs):
    """--fail-on-exceed exits 1 exactly when sites.csv has a site above threshold."""
    run = h1_runs["abated"]
    verdicts = pd.read_csv(run["out"] / "sites.csv")["verdict"]
    assert run["rc"] == (1 if (verdicts == "above threshold").any() else 0)


def test_overwrite_replaces_existing_folder(h1_runs, tmp_path):
    """--overwrite replaces an existing output folder whole; no staging or backup is left."""
    out = tmp_path / "out"
    out.mkdir()
    (out / ".siting-output").write_text("{}", encoding="utf-8")  # an earlier output folder
    (out / "stale.txt").write_text("from an earlier run", encoding="utf-8")
    rc, _ = _run(
        [
            "screen",
            str(h1_runs["unabated"]["scenario"]),
            "--out",
            str(out),
            "--overwrite",
            "--quiet",
        ]
    )
    assert rc == 0
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS + [".siting-output"])
    assert [p.name for p in tmp_path.iterdir()] == ["out"]


# --------------------------------------------------------------------------------------------
# python -m siting
# --------------------------------------------------------------------------------------------


def test_python_m_siting_version(tmp_path):
    """`python -m siting --version` prints 'siting <version>' and exits 0."""
    done = subprocess.run(
        [sys.executable, "-m", "siting", "--version"],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == f"siting {siting.__version__}"


def test_user_text_in_the_terminal_is_shown_as_itself(tmp_path, capsys):
    """A stated reduction basis with rich markup and HTML is printed literally by verify and
    escaped in report.html (user text is never markup or code; common practice, no source)."""
    folder = tmp_path / "demo"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    hostile = "<b>cert</b> [bold]x[/bold]"
    scenario.write_text(
        scenario.read_text()
        .replace(
            "treated_air_fraction = 1.0",
            f'treated_air_fraction = 1.0\nreduction_percent = 95\nreduction_basis = "{hostile}"',
            1,
        )
        .replace("spacing_m = 25.0", "spacing_m = 100.0", 1)
    )
    assert (
        main(["screen", str(scenario), "--out", str(tmp_path / "out"), "--quiet", "--no-pdf"]) == 0
    )
    assert "<b>cert</b>" not in (tmp_path / "out" / "report.html").read_text()
    capsys.readouterr()
    main(["verify", str(tmp_path / "out"), "--out", str(tmp_path / "v")])
    printed = capsys.readouterr().out
    assert "[bold]" in printed  # shown literally; as markup rich would have swallowed it


def _snapshot(folder: Path) -> dict:
    return {
        str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()
    }


@pytest.mark.parametrize(
    "case",
    [
        "scenario folder",
        "current folder",
        "parent of current",
        "submission",
        "weather record folder",
        "farms folder",
        "notes folder",
    ],
)
def test_overwrite_never_deletes_inputs_or_unrelated_folders(tmp_path, monkeypatch, capsys, case):
    """--overwrite naming a folder that holds inputs, the current folder, a parent of it or a
    folder siting did not write: exit 2, one line saying why, every file kept (nothing lost)."""
    demo = tmp_path / "demo"
    shutil.copytree(demo_dir(), demo)
    (demo / "notes.txt").write_text("the client's notes", encoding="utf-8")
    scenario = demo / "scenario.toml"
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    if case == "submission":
        sub = tmp_path / "sub"
        text = scenario.read_text().replace("spacing_m = 25.0", "spacing_m = 100.0", 1)
        scenario.write_text(text)
        assert main(["screen", str(scenario), "--out", str(sub), "--quiet", "--no-pdf"]) == 0
        target, argv = sub, ["verify", str(sub), "--out", str(sub), "--overwrite", "--quiet"]
    elif case == "weather record folder":
        target = demo
        argv = [
            "weather",
            str(demo / "hourly_weather.csv"),
            "--lat",
            "52.3",
            "--lon",
            "9.7",
            "--out",
            str(demo),
            "--overwrite",
            "--quiet",
        ]
    elif case == "farms folder":
        target = demo
        argv = [
            "region",
            str(demo / "region_farms.gpkg"),
            "--weather",
            str(demo / "weather_table.csv"),
            "--out",
            str(demo),
            "--overwrite",
            "--quiet",
        ]
    elif case == "notes folder":
        target = tmp_path / "notes"
        target.mkdir()
        (target / "letter.txt").write_text("keep me", encoding="utf-8")
        argv = ["screen", str(scenario), "--out", str(target), "--overwrite", "--quiet"]
    else:
        target = {"scenario folder": demo, "current folder": work, "parent of current": tmp_path}[
            case
        ]
        argv = ["screen", str(scenario), "--out", str(target), "--overwrite", "--quiet"]
    (work / "keep.txt").write_text("in the current folder", encoding="utf-8")
    before = _snapshot(tmp_path)
    capsys.readouterr()
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1, err
    assert "never replaces" in err or "replaces only siting's own" in err, err
    assert _snapshot(tmp_path) == before


def test_sigterm_while_writing_leaves_nothing_and_keeps_the_old_folder(tmp_path):
    """SIGTERM (as `timeout` or CI sends) during writing is handled like Ctrl-C: exit 130, no
    staging folder left, the earlier output kept whole. The signal is raised at a fixed point
    (while the report is written), not by timing."""
    import subprocess
    import sys

    out = tmp_path / "out"
    out.mkdir()
    (out / ".siting-output").write_text("{}", encoding="utf-8")
    (out / "old.txt").write_text("earlier result", encoding="utf-8")
    scenario = tmp_path / "demo" / "scenario.toml"
    shutil.copytree(demo_dir(), scenario.parent)
    scenario.write_text(scenario.read_text().replace("spacing_m = 25.0", "spacing_m = 100.0", 1))
    code = (
        "import os, signal, sys\n"
        "import siting.output.screen as report\n"
        "real = report.write_report\n"
        "def dying(*a, **k):\n"
        "    os.kill(os.getpid(), signal.SIGTERM)\n"
        "    return real(*a, **k)\n"
        "report.write_report = dying\n"
        "from siting.cli import main\n"
        f"sys.exit(main(['screen', {str(scenario)!r}, '--out', {str(out)!r}, '--overwrite',"
        " '--quiet']))\n"
    )
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300)
    assert run.returncode == 130, run.stderr
    assert "interrupted" in run.stderr and "Traceback" not in run.stderr
    assert sorted(p.name for p in out.iterdir()) == [".siting-output", "old.txt"]
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_fail_on_exceed_with_no_site_assessed_does_not_pass(tmp_path, capsys):
    """--fail-on-exceed: a run that could assess no site (all outside the grid) exits 1 and
    says why, instead of passing."""
    import geopandas as gpd
    from shapely import affinity

    scenario = tmp_path / "demo" / "scenario.toml"
    shutil.copytree(demo_dir(), scenario.parent)
    scenario.write_text(scenario.read_text().replace("spacing_m = 25.0", "spacing_m = 100.0", 1))
    layer = scenario.parent / "habitats.gpkg"
    sites = gpd.read_file(layer)
    sites["geometry"] = [affinity.translate(g, 100_000.0, 0.0) for g in sites.geometry]
    sites.to_file(layer)  # 100 km east: outside the grid
    rc = main(
        [
            "screen",
            str(scenario),
            "--out",
            str(tmp_path / "out"),
            "--quiet",
            "--fail-on-exceed",
            "--no-pdf",
        ]
    )
    assert rc == 1
    assert "no habitat site could be assessed" in capsys.readouterr().err


def test_output_location_problems_are_found_before_any_work(tmp_path, capsys):
    """A parent path that is a file, or a name longer than 255 bytes: exit 2 with one line,
    before the computation (nothing written)."""
    scenario = tmp_path / "demo" / "scenario.toml"
    shutil.copytree(demo_dir(), scenario.parent)
    (tmp_path / "afile").write_text("x", encoding="utf-8")
    for out, match in (
        (tmp_path / "afile" / "out", "is a file, not a folder"),
        (tmp_path / ("n" * 300), "too long"),
    ):
        capsys.readouterr()
        assert main(["screen", str(scenario), "--out", str(out), "--quiet"]) == 2
        err = capsys.readouterr().err.strip()
        assert len(err.splitlines()) == 1 and match in err, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["afile", "demo"]


def test_an_internal_error_is_one_line_with_the_traceback_kept(tmp_path, capsys, monkeypatch):
    """A bug (here a forced one) is not a bare traceback: one line saying it is a bug and where
    the traceback was written, exit 3 (README's exit codes)."""
    import importlib

    def broken(*args, **kwargs):
        raise ZeroDivisionError("forced for the test")

    monkeypatch.setattr(importlib.import_module("siting.cli.screen"), "screen", broken)
    rc = main(
        ["screen", str(demo_dir() / "scenario.toml"), "--out", str(tmp_path / "o"), "--quiet"]
    )
    err = capsys.readouterr().err.strip()
    assert rc == 3 and len(err.splitlines()) == 1 and "internal error" in err
    path = Path(err.rsplit("the traceback is in ", 1)[1])
    assert "ZeroDivisionError: forced for the test" in path.read_text(encoding="utf-8")
    path.unlink()
    assert not (tmp_path / "o").exists()


# --------------------------------------------------------------------------------------------
# the terminal summary of a large habitat layer
# --------------------------------------------------------------------------------------------


def _many_site_result(n: int = 200, n_warnings: int = 30):
    """A screening result of n synthetic sites (invented values): % of load rises with the
    index against a 1 % threshold, every third verdict flips under a variant."""
    from types import SimpleNamespace

    i = np.arange(n)
    sites = pd.DataFrame(
        {
            "name": [f"Site {k}" for k in i],
            "tier": "national",
            "pc_conc_max_ug_m3": i / 100.0,
            "pc_pct_level": i / 20.0,
            "pc_dep_max_kg_n_ha_yr": i / 50.0,
            "pc_pct_load": i / 10.0,
            "threshold_percent": 1.0,
            "verdict": np.where(i / 10.0 > 1.0, "above threshold", "below threshold"),
            "passes": i / 10.0 <= 1.0,
            "assessed": True,
            "deciding_rule": "synthetic/rule: a made-up rule",
            "net_dep_max_kg_n_ha_yr": i / 50.0,
        }
    )
    for figure in ("conc_max_ug_m3", "pct_level", "dep_max_kg_n_ha_yr", "pct_load"):
        sites[f"judged_{figure}"] = sites[f"pc_{figure}"]
    summary = pd.DataFrame(
        {
            "site": sites["name"],
            "verdict_flips": i % 3 == 0,
            "flipping_variants": "plume depletion on",
        }
    )
    return SimpleNamespace(
        scenario=SimpleNamespace(title="Many sites (synthetic)"),
        rules=SimpleNamespace(id="synthetic", title="a made-up set", basis_words="PC"),
        sites=sites,
        sensitivity_summary=summary,
        warnings=[f"warning number {k}" for k in range(n_warnings)],
    )


def test_summary_of_many_sites_prints_the_most_affected_and_a_count(tmp_path):
    """200 sites: at most 25 site rows, the most affected first, then "175 more sites in
    sites.csv"; at most 10 flip lines and "and 57 more sites (sensitivity.csv)"; at most 10
    warnings (caps: common practice, no source)."""
    from siting.cli.screen import _print_summary
    from siting.cli.terminal import SUMMARY_MAX_FLIPS, SUMMARY_MAX_SITES, SUMMARY_MAX_WARNINGS

    result = _many_site_result()
    stdout = io.StringIO()
    with contextlib.redirect_stdout(stdout):
        _print_summary(result, tmp_path, quiet=False)
    lines = stdout.getvalue().splitlines()
    rows = [line for line in lines if line.startswith("│ Site ")]
    assert SUMMARY_MAX_SITES == 25 and len(rows) == SUMMARY_MAX_SITES
    assert rows[0].startswith("│ Site 199 ")  # analytic: the highest % of load over 1 %
    assert rows[-1].startswith("│ Site 175 ")
    assert "175 more sites in sites.csv" in stdout.getvalue()  # 200 - 25
    flips = [line for line in lines if line.startswith("sensitivity: the verdict for")]
    assert SUMMARY_MAX_FLIPS == 10 and len(flips) == SUMMARY_MAX_FLIPS
    assert flips[0].startswith("sensitivity: the verdict for Site 198 ")  # most affected of i%3==0
    assert "and 57 more sites (sensitivity.csv)" in stdout.getvalue()  # 67 flip (0, 3, .., 198)
    warned = [line for line in lines if line.startswith("warning: warning number")]
    assert SUMMARY_MAX_WARNINGS == 10 and len(warned) == SUMMARY_MAX_WARNINGS
    assert "and 20 more warnings" in stdout.getvalue()


def test_summary_of_few_sites_prints_every_site_in_layer_order(tmp_path):
    """Up to 25 sites every one is printed, in layer order, with no "more sites" line."""
    from siting.cli.screen import _print_summary

    result = _many_site_result(n=5, n_warnings=1)
    stdout = io.StringIO()
    with contextlib.redirect_stdout(stdout):
        _print_summary(result, tmp_path, quiet=False)
    rows = [
        line.split()[2] for line in stdout.getvalue().splitlines() if line.startswith("│ Site ")
    ]
    assert rows == ["0", "1", "2", "3", "4"]
    assert "more sites" not in stdout.getvalue()
