"""`siting compare`: separate screening runs of the demo side by side (issue 14, part 2).

Three screen runs of the invented demo on a coarse grid: the demo as bundled (spacing 100 m),
the same with house H1's places halved (2400 -> 1200), and the demo on a 50 m grid. Each check
reads the runs' own files independently (pandas, rasterio) and computes the expected figure in
the test.
"""

import json
import shutil

import numpy as np
import pandas as pd
import pytest
import rasterio

from siting.cli import main
from siting.readers.resources import demo_dir
from siting.runs.comparing import safe_file_stem


def _screen(base, name, spacing_m=100.0, places=None):
    """`siting screen` of a copy of the demo into ``base / name``."""
    inputs = base / f"{name}_inputs"
    shutil.copytree(demo_dir(), inputs)
    scenario = inputs / "scenario.toml"
    text = scenario.read_text().replace("spacing_m = 25.0", f"spacing_m = {spacing_m}", 1)
    if places is not None:
        assert text.count("places = 2400") == 1  # H1, the only house with 2400 places
        text = text.replace("places = 2400", f"places = {places}")
    scenario.write_text(text)
    out = base / name
    assert main(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    return out


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """(base folder, as bundled, H1 halved, 50 m grid) output folders of `siting screen`."""
    base = tmp_path_factory.mktemp("compare")
    return (
        base,
        _screen(base, "base"),
        _screen(base, "h1_half", places=1200),
        _screen(base, "fine", spacing_m=50.0),
    )


@pytest.fixture(scope="module")
def compared(runs):
    base, first, half, _ = runs
    out = base / "cmp"
    assert main(["compare", str(first), str(half), "--out", str(out), "--quiet"]) == 0
    return out


def _left_in(folder) -> set[str]:
    return {p.name for p in folder.iterdir()}


def test_comparison_rows_are_each_runs_own_sites_table(runs, compared):
    _, first, half, _ = runs
    table = pd.read_csv(compared / "comparison.csv", dtype={"site_id": str, "name": str})
    assert list(table.columns[:2]) == ["run", "name"]
    assert list(table["run"].unique()) == ["base", "h1_half"]
    for folder in (first, half):
        own = pd.read_csv(folder / "sites.csv", dtype={"site_id": str, "name": str})
        rows = table[table["run"] == folder.name].reset_index(drop=True)
        pd.testing.assert_frame_equal(rows[list(own.columns)], own, check_dtype=False)
    # the change against the first run, from the two sites.csv files (both carry judged_*)
    a = pd.read_csv(first / "sites.csv")
    b = pd.read_csv(half / "sites.csv")
    rows = table[table["run"] == "h1_half"].reset_index(drop=True)
    expected = b["judged_dep_max_kg_n_ha_yr"] - a["judged_dep_max_kg_n_ha_yr"]
    np.testing.assert_allclose(rows["change_dep_max_kg_n_ha_yr"], expected, rtol=1e-5, atol=1e-9)
    expected = b["judged_pct_load"] - a["judged_pct_load"]
    np.testing.assert_allclose(rows["change_pct_load"], expected, rtol=1e-5, atol=1e-9)
    assert set(table["change_basis"]) == {"judged"}
    first_rows = table[table["run"] == "base"]
    assert (first_rows["change_dep_max_kg_n_ha_yr"] == 0).all()  # a run against itself


def test_difference_is_the_two_deposition_fields_subtracted(runs, compared):
    _, first, half, _ = runs
    with rasterio.open(first / "deposition.tif") as a, rasterio.open(half / "deposition.tif") as b:
        dep_a, dep_b = a.read(1, masked=True), b.read(1, masked=True)
        crs, transform = a.crs, a.transform
    with rasterio.open(compared / "difference_h1_half.tif") as d:
        assert d.crs == crs and d.transform == transform
        assert d.dtypes[0] == "float32"
        assert d.tags(1)["units"] == "kg N/ha/yr"
        diff = d.read(1, masked=True)
    expected = dep_b - dep_a  # numpy subtraction, masked where either is nodata
    np.testing.assert_array_equal(diff.mask, np.ma.getmaskarray(expected))
    np.testing.assert_allclose(diff.compressed(), expected.compressed(), rtol=1e-6, atol=1e-9)
    # physics: deposition is linear and non-negative in each emission, so lowering only H1's
    # emission lowers it or leaves it unchanged everywhere (to float32 rounding) ...
    assert diff.max() <= 1e-6 * float(dep_a.max())
    # ... and lowers it somewhere (H1 emits 2025 kg NH3/yr as bundled, scenario.toml)
    assert diff.min() < 0
    record = json.loads((compared / "run.json").read_text())
    assert record["command"] == "compare"
    assert [r["name"] for r in record["runs"]] == ["base", "h1_half"]
    assert record["runs"][1]["deposition_tif_sha256"] != record["runs"][0]["deposition_tif_sha256"]
    assert any("competent authority" in c for c in record["cautions"])


def test_another_grid_spacing_is_refused_naming_the_cell_size(runs, capsys):
    base, first, _, fine = runs
    out = base / "cmp_fine"
    before = _left_in(base)
    assert main(["compare", str(first), str(fine), "--out", str(out), "--quiet"]) == 2
    error = capsys.readouterr().err
    assert "cell size 100 m vs 50 m" in error and str(first) in error and str(fine) in error
    assert _left_in(base) == before  # nothing written, no staging folder left


def test_fewer_than_two_runs_or_a_missing_file_exit_2_writing_nothing(runs, tmp_path, capsys):
    _, first, _, _ = runs
    out = tmp_path / "cmp"
    assert main(["compare", str(first), "--out", str(out)]) == 2
    assert "at least two" in capsys.readouterr().err
    broken = tmp_path / "broken"
    shutil.copytree(first, broken)
    (broken / "deposition.tif").unlink()
    assert main(["compare", str(first), str(broken), "--out", str(out)]) == 2
    assert "deposition.tif" in capsys.readouterr().err
    assert _left_in(tmp_path) == {"broken"}


def test_the_output_folder_may_not_be_a_run_folder(runs, capsys):
    _, first, half, _ = runs
    before = _left_in(half)
    args = ["compare", str(first), str(half), "--out", str(half), "--overwrite", "--quiet"]
    assert main(args) == 2
    assert "output folder" in capsys.readouterr().err
    assert _left_in(half) == before and (half / "sites.csv").is_file()


def test_a_site_missing_from_one_run_is_named(runs, tmp_path, capsys):
    _, first, _, _ = runs
    fewer = tmp_path / "fewer"
    shutil.copytree(first, fewer)
    sites = pd.read_csv(fewer / "sites.csv", dtype={"site_id": str, "name": str})
    dropped = sites["name"].iloc[-1]
    sites.iloc[:-1].to_csv(fewer / "sites.csv", index=False)
    assert main(["compare", str(first), str(fewer), "--out", str(tmp_path / "c")]) == 2
    error = capsys.readouterr().err
    assert f"site '{dropped}' of run base is missing from run fewer" in error


def test_hostile_or_shared_folder_names_give_safe_file_names(runs, tmp_path):
    # hand-made cases: each character outside [A-Za-z0-9_-] becomes "_"
    assert safe_file_stem("../../etc", 2) == "______etc"
    assert safe_file_stem("<script>", 2) == "_script_"
    assert safe_file_stem("..", 3) == "run_3"  # nothing of the name left
    _, first, half, _ = runs
    hostile = tmp_path / "<script>alert(1)<x>..$HOME"
    shutil.copytree(half, hostile)
    # a path with ../ in it: the folder's own name is what names the run
    dotted = tmp_path / "sub" / ".." / hostile.name
    (tmp_path / "sub").mkdir()
    out = tmp_path / "out"
    assert main(["compare", str(first), str(dotted), "--out", str(out), "--quiet"]) == 0
    assert _left_in(out) == {
        ".siting-output",
        "comparison.csv",
        "run.json",
        "difference__script_alert_1__x____HOME.tif",
    }
    assert _left_in(tmp_path) == {hostile.name, "sub", "out"}
    # two folders of one name: named by position, with a warning
    twin = tmp_path / "sub" / "base"
    shutil.copytree(first, twin)
    out2 = tmp_path / "out2"
    assert main(["compare", str(first), str(twin), "--out", str(out2), "--quiet"]) == 0
    table = pd.read_csv(out2 / "comparison.csv")
    assert list(table["run"].unique()) == ["run_1", "run_2"]
    assert (out2 / "difference_run_2.tif").is_file()
    record = json.loads((out2 / "run.json").read_text())
    assert any("share a name" in w for w in record["warnings"])
    assert (table["change_dep_max_kg_n_ha_yr"] == 0).all()  # the same run twice


def test_runs_judged_on_different_bases_are_compared_on_their_pc():
    """A run judged on the net change and one judged on the installation: their judged figures
    are different quantities, so the change is taken on the PC both carry (hand-made tables)."""
    from siting.runs.comparing import site_changes

    def table(basis, judged, pc):
        return pd.DataFrame(
            {
                "basis": [basis],
                "judged_dep_max_kg_n_ha_yr": [judged],
                "judged_pct_load": [judged * 20.0],
                "pc_dep_max_kg_n_ha_yr": [pc],
                "pc_pct_load": [pc * 20.0],
            }
        )

    mixed = site_changes(table("net", 0.1, 1.0), table("installation", 0.9, 0.9))
    assert mixed["change_basis"].iloc[0] == "pc"
    assert mixed["change_dep_max_kg_n_ha_yr"].iloc[0] == pytest.approx(0.9 - 1.0)
    same = site_changes(table("net", 0.1, 1.0), table("net", 0.05, 0.9))
    assert same["change_basis"].iloc[0] == "judged"
    assert same["change_dep_max_kg_n_ha_yr"].iloc[0] == pytest.approx(0.05 - 0.1)
