"""The Python API end to end, as a notebook uses it (issue 13 item 9).

The code of the guide on docs/API.md (its ```python blocks, run in order in one namespace in an
empty folder) is the API call under test: screen, place, verify and region through the
names of the top level, the weather readers, the warnings. Each result is compared with the
command line's own output for the same inputs: the CLI is the reference a user already trusts
(every figure it writes is checked by the rest of the suite against published values), so
the API must give the same files, byte for byte where both write one. Where the API returns
a table the CLI writes to 6 significant figures (write_csv), the comparison allows that
rounding (rtol 1e-5).
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import siting
from siting.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = siting.demo_dir()
#: the CSV tables' 6 significant figures (siting.output.tables.write_csv): rounding < 5e-6
CSV_RTOL = 1e-5


def _guide_blocks() -> list[str]:
    """The ```python blocks of the guide that docs/make_api.py writes at the top of API.md."""
    spec = importlib.util.spec_from_file_location("make_api", ROOT / "docs" / "make_api.py")
    make_api = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(make_api)
    return re.findall(r"```python\n(.*?)```", make_api.GUIDE, flags=re.S)


@pytest.fixture(scope="module")
def guide(tmp_path_factory):
    """(folder, namespace) after running every code block of the guide in an empty folder."""
    work = tmp_path_factory.mktemp("guide")
    namespace: dict = {}
    here = os.getcwd()
    os.chdir(work)  # the guide writes maps/... relative to the current folder
    try:
        for block in _guide_blocks():
            exec(compile(block, "docs/API.md", "exec"), namespace)
    finally:
        os.chdir(here)
    return work, namespace


@pytest.fixture(scope="module")
def cli(guide, tmp_path_factory, demo_place_run):
    """The command line on the same inputs as the guide; {command: (exit code, out folder)}.
    `siting place DEMO --house H2 --spacing 25` is the session's run of conftest.py (read by
    tests/test_browser.py too)."""
    work, _ = guide
    out = tmp_path_factory.mktemp("cli")
    runs = {
        "verify": ["verify", str(work / "maps" / "my_run")],
        "region": [
            "region", str(DEMO / "region_farms.gpkg"),
            "--weather", str(DEMO / "weather_table.csv"),
            "--habitats", str(DEMO / "region_habitats.gpkg"),
            "--spacing", "100", "--memory-mb", "2000",
            "--id-field", "id", "--height-field", "height_m",
        ],
        "weather": [
            "weather", str(DEMO / "hourly_weather.csv"), "--lat", "52.4", "--lon", "9.0",
        ],
    }  # fmt: skip
    done = {"place": demo_place_run}
    for name, argv in runs.items():
        code = main([*argv, "--out", str(out / name), "--quiet"])
        done[name] = (code, out / name)
    return done


def _same_bytes(a: Path, b: Path, names) -> None:
    for name in names:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def test_screen_and_write_outputs_give_the_files_of_siting_demo(guide, demo_output):
    """siting.screen + siting.write_outputs on the demo scenario write the tables that
    `siting demo` (screen of the same scenario) writes, byte for byte."""
    work, _ = guide
    _same_bytes(
        work / "maps" / "my_run",
        demo_output,
        ["sites.csv", "receptors.csv", "sources.csv", "sensitivity.csv"],
    )


def test_the_screen_result_in_memory_is_what_the_cli_writes(guide, demo_output):
    """The figures a notebook reads off the result are those of the CLI's sites.csv."""
    _, ns = guide
    written = pd.read_csv(demo_output / "sites.csv")
    sites = ns["result"].sites
    assert list(sites["name"]) == list(written["name"])
    assert list(sites["verdict"]) == list(written["verdict"])
    for column in ("pc_conc_max_ug_m3", "pc_dep_max_kg_n_ha_yr", "pc_pct_load", "pc_pct_level"):
        np.testing.assert_allclose(sites[column], written[column], rtol=CSV_RTOL, err_msg=column)
    grid = ns["result"].fields["pc_dep_kg_n_ha_yr"]
    assert grid.shape == (ns["result"].grid.n_rows, ns["result"].grid.n_cols)


def test_place_gives_the_positions_of_siting_place(guide, cli):
    work, ns = guide
    code, out = cli["place"]
    assert code == 0
    _same_bytes(work / "maps" / "place_h2", out, ["positions.csv"])
    written = pd.read_csv(out / "positions.csv")
    np.testing.assert_allclose(ns["placed"].positions["x"], written["x"], atol=0.005)  # cm
    np.testing.assert_allclose(ns["placed"].positions["y"], written["y"], atol=0.005)


def test_verify_of_the_api_written_folder_agrees_with_siting_verify(guide, cli):
    """The folder write_outputs wrote is a complete submission: siting.verify finds it
    consistent (the README's contract for an untouched package: inputs intact, the same
    figures), and its findings are those `siting verify` writes for the same folder."""
    work, ns = guide
    code, out = cli["verify"]
    check = ns["check"]
    assert check.consistent and check.exit_code == 0
    assert code == check.exit_code
    api = json.loads((work / "maps" / "check" / "findings.json").read_text(encoding="utf-8"))
    ours = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    for record in (api, ours):
        record.pop("run_time_utc", None)
    # each names the submission relative to its own output folder (no folder of the machine)
    api_folder = (work / "maps" / "check" / api.pop("submission")).resolve()
    assert api_folder == (out / ours.pop("submission")).resolve()
    assert api == ours
    assert [f.as_dict() for f in check.findings] == ours["findings"]


def test_region_gives_the_tables_of_siting_region(guide, cli):
    work, ns = guide
    code, out = cli["region"]
    assert code == 0
    _same_bytes(work / "maps" / "region", out, ["sites.csv", "contributors.csv", "farms.csv"])
    written = pd.read_csv(out / "sites.csv")
    np.testing.assert_allclose(
        ns["regional"].sites["incomb_dep_max_kg_n_ha_yr"],
        written["incomb_dep_max_kg_n_ha_yr"],
        rtol=CSV_RTOL,
    )


def test_the_weather_readers_give_what_siting_weather_and_screen_write(guide, cli, demo_output):
    """frequency_table_from_hourly is the frequency_table.csv of `siting weather` on the same
    record, and its frequencies sum to 1 (a frequency table's definition); the summary of
    read_hourly_record is the one in its summary.json; read_frequency_table's summary of the
    demo table is the weather summary `siting demo` records in run.json."""
    _, ns = guide
    code, out = cli["weather"]
    assert code == 0
    written = pd.read_csv(out / "frequency_table.csv")
    table = ns["table"]
    assert list(table.columns) == list(written.columns)
    for column in table.columns:
        if pd.api.types.is_numeric_dtype(written[column]):
            np.testing.assert_allclose(table[column], written[column], rtol=CSV_RTOL)
        else:
            assert list(table[column]) == list(written[column]), column
    assert table["frequency"].sum() == pytest.approx(1.0, abs=1e-12)
    record = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert json.loads(json.dumps(ns["summary"], default=str)) == record["summary"]
    run = json.loads((demo_output / "run.json").read_text(encoding="utf-8"))
    # a run adds the record's position (the scenario's station, not in the table's file)
    recorded = dict(run["weather_summary"])
    assert recorded.pop("record_position")["position"] is None  # the demo gives no station
    assert json.loads(json.dumps(ns["table_summary"], default=str)) == recorded
    assert ns["classes"].frequency_fraction.sum() == pytest.approx(1.0, abs=1e-12)


def test_collected_weather_warnings_are_those_siting_weather_lists(guide, cli):
    """collect_warnings() around the reader gathers the warnings the command lists in its
    summary.json (which may add the binning's own)."""
    _, ns = guide
    _, out = cli["weather"]
    record = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert all(isinstance(m, str) for m in ns["found"].messages)
    assert set(ns["found"].messages) <= set(record["warnings"])


def test_an_error_is_the_same_one_line_the_cli_prints(tmp_path, capsys):
    """A missing scenario raises siting.InputFileError, also a FileNotFoundError (the error
    types' contract, siting/errors.py); the CLI prints the same message on its one stderr line
    and exits 2 (README: exit codes)."""
    missing = tmp_path / "no_such.toml"
    with pytest.raises(siting.InputFileError) as raised:
        siting.load_scenario(missing)
    assert isinstance(raised.value, FileNotFoundError)
    assert isinstance(raised.value, siting.SitingError)
    assert main(["screen", str(missing), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert capsys.readouterr().err == f"siting: error: {raised.value}\n"
