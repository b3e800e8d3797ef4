"""Bad scenarios through the CLI: exit code 2, one clear line on stderr, nothing written.

Each bad scenario is a copy of ``data_demo/`` in ``tmp_path`` with one thing broken (a key in
scenario.toml, or a data file). The same broken scenario is also run through the Python API
(``screen(load_scenario(...))``) to check the error class a notebook user would catch.
The expected message fragments are this project's own contract (STYLE.md section 5: a message
names what was wrong, the value received and where it came from), not published values.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
from pathlib import Path

import geopandas as gpd
import pandas as pd
import pytest

from siting.cli import main
from siting.errors import InputError, InputFileError
from siting.readers.resources import demo_dir
from siting.readers.scenario import load_scenario
from siting.runs.screening import screen

SCENARIO_DIR = "scenario"  # the copy of data_demo/ inside tmp_path


# --------------------------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------------------------


@pytest.fixture
def demo_copy(tmp_path) -> Path:
    """A private copy of the demo; returns the path of its scenario.toml."""
    folder = tmp_path / SCENARIO_DIR
    shutil.copytree(demo_dir(), folder)
    return folder / "scenario.toml"


def _replace_once(scenario: Path, old: str, new: str) -> None:
    """Edit scenario.toml text; the old text must occur exactly once (no silent no-op edit)."""
    text = scenario.read_text(encoding="utf-8")
    assert text.count(old) == 1, f"test setup: {old!r} occurs {text.count(old)} times"
    scenario.write_text(text.replace(old, new), encoding="utf-8")


def _rewrite_habitats(folder: Path, change) -> None:
    """Rewrite habitats.gpkg (layer "habitats") after ``change(gdf) -> gdf``."""
    path = folder / "habitats.gpkg"
    gdf = change(gpd.read_file(path))
    path.unlink()
    gdf.to_file(path, layer="habitats", driver="GPKG")


def _rewrite_weather(folder: Path, change) -> None:
    """Rewrite weather_table.csv after ``change(DataFrame) -> DataFrame``."""
    path = folder / "weather_table.csv"
    change(pd.read_csv(path)).to_csv(path, index=False)


def _listing(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def _run_bad(scenario: Path, capsys) -> str:
    """Run ``siting screen`` on a bad scenario; check the contract; return the stderr line."""
    out = scenario.parent.parent / "out"
    before = _listing(scenario.parent)
    rc = main(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"])
    captured = capsys.readouterr()
    assert rc == 2  # DESIGN.md: exit code 2 = bad input
    lines = captured.err.splitlines()
    assert len(lines) == 1, f"expected one line on stderr, got {captured.err!r}"
    assert lines[0].startswith("siting: error:")
    assert "Traceback" not in captured.err
    assert "{'" not in lines[0], "message dumps a raw Python structure"
    assert not out.exists()  # nothing written
    # no staging (.partial) or backup folder beside the target: only the scenario copy
    assert sorted(p.name for p in out.parent.iterdir()) == [SCENARIO_DIR]
    assert _listing(scenario.parent) == before  # nothing written next to the inputs either
    return lines[0]


def _pattern(fragments: list[str]) -> str:
    """Regex requiring every literal fragment, in any order (wording may be rearranged)."""
    return "(?s)^" + "".join(f"(?=.*{re.escape(f)})" for f in fragments)


# --------------------------------------------------------------------------------------------
# bad scenario.toml text
# --------------------------------------------------------------------------------------------

# (id, old text, new text, error class, fragments the message must hold, in order)
TOML_CASES = [
    (
        "unknown top-level key",
        'crs = "EPSG:32632"',
        'crs = "EPSG:32632"\ncolour = "red"',
        InputError,
        ["scenario.toml", "unknown key", "colour"],
    ),
    (
        "unknown source key next to the right one",
        "height_m = 7.5",
        "height_m = 7.5\nhieght_m = 7.5",
        InputError,
        ["scenario.toml", "unknown key", 'source "H1"', "hieght_m"],
    ),
    (
        "missing crs",
        'crs = "EPSG:32632"\n',
        "",
        InputError,
        ["scenario.toml", "missing key", "crs"],
    ),
    (
        "source without x",
        "x = 500040.0\n",
        "",
        InputError,
        ["scenario.toml", "missing key", 'source "H1"', " x"],
    ),
    (
        "wrong type",
        "height_m = 7.5",
        'height_m = "six"',
        InputError,
        ["scenario.toml", 'source "H1"', "height_m", "six"],
    ),
    (
        "negative height",
        "height_m = 7.5",
        "height_m = -6",
        InputError,
        ['source "H1"', "height_m", "-6"],
    ),
    (
        "reduction above 100 %",
        "treated_air_fraction = 1.0",
        "treated_air_fraction = 1.0\nreduction_percent = 150",
        InputError,
        ['source "H1"', "reduction_percent", "100", "150"],
    ),
    (
        "geographic CRS",
        'crs = "EPSG:32632"',
        'crs = "EPSG:4326"',
        InputError,
        ["crs", "EPSG:4326", "geographic (degrees)", "projected"],
    ),
    (
        "unknown CRS",
        'crs = "EPSG:32632"',
        'crs = "EPSG:999999"',
        InputError,
        ["crs", "EPSG:999999", "not a CRS"],
    ),
    (
        "weather file missing",
        'frequency_table = "weather_table.csv"',
        'frequency_table = "no_such_weather.csv"',
        InputFileError,
        ["weather.frequency_table", "no_such_weather.csv", "not found"],
    ),
    (
        "unknown livestock",
        'livestock = "finishing_pig"\nhousing = "fully_slatted"',
        'livestock = "finishing_pigs"\nhousing = "fully_slatted"',
        InputError,
        ['source "H1"', 'unknown livestock "finishing_pigs"', 'did you mean "finishing_pig"?'],
    ),
    (
        "unknown abatement, close to a known one",
        'abatement = "acid_scrubber"',
        'abatement = "acid_scrubbers"',
        InputError,
        ['source "H1"', 'unknown abatement "acid_scrubbers"', 'did you mean "acid_scrubber"?'],
    ),
    (
        "unknown abatement, nothing close",
        'abatement = "acid_scrubber"',
        'abatement = "magic_box"',
        InputError,
        ['source "H1"', 'unknown abatement "magic_box"', "known:", "acid_scrubber"],
    ),
    (
        "direct figure and livestock both",
        "places = 2400",
        "places = 2400\nnh3_kg_per_year = 100.0",
        InputError,
        ['source "H1"', "nh3_kg_per_year", "not both"],
    ),
    (
        "volume source without width",
        "width_m = 18.0\n",
        "",
        InputError,
        ['source "H2"', "volume", "width_m"],
    ),
    (
        "duplicate source ids",
        'id = "H2"',
        'id = "H1"',
        InputError,
        ["scenario.toml", 'duplicate source id "H1"'],
    ),
    (
        "name_field not in the layer",
        'name_field = "name"',
        'name_field = "site_name"',
        InputError,
        ["habitats.name_field", '"site_name"', "habitats.gpkg", 'did you mean "name"?'],
    ),
    (
        "a reduction basis without the reduction it supports",
        "treated_air_fraction = 1.0",
        'treated_air_fraction = 1.0\nreduction_basis = "certificate"',
        InputError,
        ['source "H1"', "reduction_basis", "reduction_percent"],
    ),
    (
        "building width without its height",
        "building_height_m = 6.0 ",
        "# ",
        InputError,
        ['source "H1"', "building_width_m needs building_height_m"],
    ),
    (
        "unknown wind rule",
        'land_type = "rural"',
        'land_type = "rural"\nwind_below_anemometer = "linear"',
        InputError,
        ["weather", "wind_below_anemometer", "power_law"],
    ),
    (
        "unknown critical load review",
        "[weather]\n",
        '[assessment]\ncritical_load_review = "2019"\n\n[weather]\n',
        InputError,
        ["assessment", "critical_load_review", "2022"],
    ),
    (
        "direction step with a frequency table",
        'land_type = "rural"',
        'land_type = "rural"\ndirection_step_deg = 10.0',
        InputError,
        ["weather.direction_step_deg", "hourly"],
    ),
]


# cases that expose a reported bug: strict xfail, so a fix shows up as XPASS
KNOWN_BUGS: dict[str, str] = {}


def _params(cases):
    return [
        pytest.param(
            *case[1:],
            id=case[0],
            marks=[pytest.mark.xfail(strict=True, reason=KNOWN_BUGS[case[0]])]
            if case[0] in KNOWN_BUGS
            else [],
        )
        for case in cases
    ]


@pytest.mark.parametrize("old, new, error, fragments", _params(TOML_CASES))
def test_bad_scenario_key_is_named_and_nothing_written(
    demo_copy, capsys, old, new, error, fragments
):
    """A bad key in scenario.toml: exit 2, one stderr line naming it, no output folder."""
    _replace_once(demo_copy, old, new)
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(fragments), line), line
    with pytest.raises(error, match=_pattern(fragments)):
        screen(load_scenario(demo_copy))


def test_misspelt_source_key_is_named(demo_copy, capsys):
    """A misspelt key (hieght_m for height_m): the message names it, not the missing height_m."""
    _replace_once(demo_copy, "height_m = 7.5", "hieght_m = 7.5")
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(['source "H1"', "unknown key", "hieght_m"]), line), line


# --------------------------------------------------------------------------------------------
# bad or missing data files
# --------------------------------------------------------------------------------------------


def _remove(name):
    def change(folder: Path) -> None:
        (folder / name).unlink()

    return change


def _text_as_gpkg(folder: Path) -> None:
    (folder / "habitats.gpkg").write_text("id,name\n1,not a geopackage\n", encoding="utf-8")


def _empty_layer(folder: Path) -> None:
    # zero features but the full schema (fields and geometry column) of the demo layer
    _rewrite_habitats(folder, lambda gdf: gdf.iloc[:0])


def _points_layer(folder: Path) -> None:
    _rewrite_habitats(folder, lambda gdf: gdf.set_geometry(gdf.geometry.representative_point()))


def _unknown_habitat(folder: Path) -> None:
    def change(gdf):
        gdf.loc[gdf["name"] == "Gorseburrow Heath", "habitat"] = "dry_heaths"
        return gdf

    _rewrite_habitats(folder, change)


def _uneven_directions(folder: Path) -> None:
    # 12 sectors, one moved from 30 to 40 deg: no longer 30 deg apart
    _rewrite_weather(folder, lambda w: w.assign(direction_deg=w["direction_deg"].replace(30, 40)))


def _stability_g(folder: Path) -> None:
    _rewrite_weather(folder, lambda w: w.assign(stability=w["stability"].replace("F", "G")))


def _no_stability_column(folder: Path) -> None:
    _rewrite_weather(folder, lambda w: w.drop(columns="stability"))


# (id, change to the scenario folder, error class, message fragments in order)
FILE_CASES = [
    (
        "habitats file missing",
        _remove("habitats.gpkg"),
        InputFileError,
        ["habitats.file", "habitats.gpkg", "not found"],
    ),
    (
        "receptors file missing",
        _remove("receptors.csv"),
        InputFileError,
        ["receptors.file", "receptors.csv", "not found"],
    ),
    (
        "empty habitat layer",
        _empty_layer,
        InputError,
        ["habitats.file", "habitats.gpkg", "no features"],
    ),
    (
        "text file named .gpkg",
        _text_as_gpkg,
        InputError,
        ["habitats.file", "habitats.gpkg", "cannot read"],
    ),
    (
        "points instead of polygons",
        _points_layer,
        InputError,
        ["habitats.gpkg", '"Fernwhistle Moss"', "Point", "polygons"],
    ),
    (
        "habitat not in critical_loads.toml",
        _unknown_habitat,
        InputError,
        [
            "habitats.gpkg",
            '"Gorseburrow Heath"',
            '"dry_heaths"',
            "critical_loads.toml",
            'did you mean "dry_heath"?',
        ],
    ),
    (
        "weather directions unevenly spaced",
        _uneven_directions,
        InputError,
        ["weather_table.csv", "evenly spaced", "30 deg", "40"],
    ),
    (
        "weather stability G",
        _stability_g,
        InputError,
        ["weather_table.csv", "line", "stability", "A-F", "'G'"],
    ),
    (
        "weather column missing",
        _no_stability_column,
        InputError,
        ["weather_table.csv", "missing column", "stability"],
    ),
]


@pytest.mark.parametrize("change, error, fragments", _params(FILE_CASES))
def test_bad_data_file_is_named_and_nothing_written(demo_copy, capsys, change, error, fragments):
    """A bad or missing data file: exit 2, one stderr line naming it, no output folder."""
    change(demo_copy.parent)
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(fragments), line), line
    with pytest.raises(error, match=_pattern(fragments)):
        screen(load_scenario(demo_copy))


def test_scenario_file_missing(tmp_path, capsys):
    """A scenario path that does not exist: exit 2, one line naming the file."""
    missing = tmp_path / "nowhere" / "scenario.toml"
    rc = main(["screen", str(missing), "--out", str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 2
    assert len(err) == 1 and err[0].startswith("siting: error:")
    assert str(missing) in err[0]
    assert not (tmp_path / "out").exists()


def test_scenario_not_toml(demo_copy, capsys):
    """Text that is not TOML: exit 2, one line naming the file."""
    demo_copy.write_text("title = \n[weather\n", encoding="utf-8")
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(["scenario.toml", "not valid TOML"]), line), line


def test_existing_output_folder_needs_overwrite(demo_copy, capsys):
    """An existing output folder without --overwrite: exit 2 and its content is untouched."""
    out = demo_copy.parent.parent / "out"
    out.mkdir()
    (out / "earlier_result.txt").write_text("keep me", encoding="utf-8")
    rc = main(["screen", str(demo_copy), "--out", str(out), "--quiet", "--no-pdf"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 2
    assert len(err) == 1 and err[0].startswith("siting: error:")
    assert re.search(_pattern([str(out), "exists", "--overwrite"]), err[0]), err[0]
    assert [p.name for p in out.iterdir()] == ["earlier_result.txt"]
    assert (out / "earlier_result.txt").read_text(encoding="utf-8") == "keep me"
    assert sorted(p.name for p in out.parent.iterdir()) == ["out", SCENARIO_DIR]


# --------------------------------------------------------------------------------------------
# paths resolve against the scenario file's folder
# --------------------------------------------------------------------------------------------


@pytest.fixture
def elsewhere(tmp_path, monkeypatch) -> Path:
    """A working directory holding decoys of the demo's data files (broken on purpose)."""
    folder = tmp_path / "elsewhere"
    folder.mkdir()
    for name in ("weather_table.csv", "habitats.gpkg", "receptors.csv"):
        (folder / name).write_text("decoy: read from the wrong folder\n", encoding="utf-8")
    monkeypatch.chdir(folder)
    return folder


def test_load_scenario_returns_absolute_paths(demo_copy, elsewhere):
    """load_scenario resolves relative paths against the scenario's folder, not the cwd."""
    folder = demo_copy.parent.resolve()
    relative = Path(os.path.relpath(demo_copy, elsewhere))  # ../scenario/scenario.toml
    for given in (demo_copy, relative):
        scenario = load_scenario(given)
        assert scenario.path == folder / "scenario.toml"
        assert scenario.weather.frequency_table == folder / "weather_table.csv"
        assert scenario.habitats.file == folder / "habitats.gpkg"
        assert scenario.receptors.file == folder / "receptors.csv"
        for path in (
            scenario.path,
            scenario.weather.frequency_table,
            scenario.habitats.file,
            scenario.receptors.file,
        ):
            assert path.is_absolute()


def test_screen_from_another_folder_reads_the_scenario_folder(demo_copy, elsewhere, capsys):
    """Run from another cwd with an absolute scenario path: the files beside it are used."""
    # a coarse grid keeps this fast; the point is which files are read
    _replace_once(demo_copy, "spacing_m = 25.0", "spacing_m = 100.0")
    _replace_once(demo_copy, "margin_m = 2500.0", "margin_m = 1000.0")
    out = demo_copy.parent.parent / "out"
    rc = main(["screen", str(demo_copy.resolve()), "--out", str(out), "--quiet", "--no-pdf"])
    assert rc == 0, capsys.readouterr().err
    assert (out / "sites.csv").is_file()
    # nothing written in the cwd: only the three decoys are there
    assert sorted(p.name for p in elsewhere.iterdir()) == [
        "habitats.gpkg",
        "receptors.csv",
        "weather_table.csv",
    ]
    # run.json names the files relative to the scenario's folder (nothing of the machine's
    # folders), and their hashes are those of the files beside the scenario, not the decoys
    inputs = json.loads((out / "run.json").read_text(encoding="utf-8"))["inputs"]
    folder = demo_copy.parent.resolve()
    for key, name in (("weather", "weather_table.csv"), ("habitats", "habitats.gpkg"),
                      ("receptors", "receptors.csv")):  # fmt: skip
        assert inputs[key]["path"] == name
        digest = hashlib.sha256((folder / name).read_bytes()).hexdigest()
        assert inputs[key]["sha256"] == digest
        assert digest != hashlib.sha256((elsewhere / name).read_bytes()).hexdigest()


# --------------------------------------------------------------------------------------------
# non-finite numbers and wrong TOML types (once reported as bugs, now fixed)
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "old, new, fragments",
    [
        pytest.param("x = 500040.0", "x = nan", ['source "H1"', "x"], id="x nan"),
        pytest.param("x = 500040.0", "x = inf", ['source "H1"', "x"], id="x inf"),
        pytest.param(
            "nh3_kg_per_year = 420.0",
            "nh3_kg_per_year = inf",
            ['source "M1"', "nh3_kg_per_year"],
            id="emission inf",
        ),
    ],
)
def test_non_finite_numbers_are_rejected(demo_copy, capsys, old, new, fragments):
    """TOML nan/inf in a number field: exit 2 with the key named, nothing written."""
    _replace_once(demo_copy, old, new)
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(fragments), line), line


@pytest.mark.parametrize(
    "old, new, fragments",
    [
        pytest.param("places = 2400", "places = true", ['source "H1"', "places"], id="bool places"),
        pytest.param(
            "height_m = 7.5", 'height_m = "7.5"', ['source "H1"', "height_m"], id="quoted number"
        ),
    ],
)
def test_wrong_toml_type_is_not_coerced(demo_copy, capsys, old, new, fragments):
    """A boolean or quoted string where a number belongs: exit 2 naming the key."""
    _replace_once(demo_copy, old, new)
    line = _run_bad(demo_copy, capsys)
    assert re.search(_pattern(fragments), line), line
