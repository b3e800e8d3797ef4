"""`siting verify` says what changed since the run: keys, emissions and every output.

One screening of a copy of the demo (H1 claiming 90 % for its acid scrubber, 100 m grid so it
is quick) is shared by the module; each test copies the folder, changes one thing as an
applicant might after the run, and verifies the copy.
"""

import json
import shutil
import tomllib
from pathlib import Path

import pytest

import siting
from siting.cli import main
from siting.readers.resources import demo_dir
from siting.runs.changes import toml_differences
from siting.runs.verification import verify

CLAIM = 'abatement = "acid_scrubber"\nreduction_percent = 90\nreduction_basis = "test certificate"'


@pytest.fixture(scope="module")
def submitted(tmp_path_factory):
    """An output folder of `siting screen` of the demo with H1 claiming 90 % (test input)."""
    root = tmp_path_factory.mktemp("changes")
    folder = root / "in"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    text = scenario.read_text().replace("spacing_m = 25.0", "spacing_m = 100.0", 1)
    scenario.write_text(text.replace('abatement = "acid_scrubber"', CLAIM, 1))
    out = root / "out"
    assert main(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    return out


@pytest.fixture
def copy(submitted, tmp_path):
    """A fresh copy of the submission to change."""
    target = tmp_path / "sub"
    shutil.copytree(submitted, target, symlinks=True)
    return target


def _h1(scenario_path):
    """H1's [[source]] table of a scenario file, parsed."""
    parsed = tomllib.loads(scenario_path.read_text(encoding="utf-8"))
    return next(s for s in parsed["source"] if s["id"] == "H1")


def _sources(folder):
    import pandas as pd

    return pd.read_csv(folder / "sources.csv").set_index("source_id")


def _by_code(result, code):
    return [f for f in result.findings if f.code == code]


def test_an_untouched_submission_has_nothing_changed(submitted, tmp_path):
    """A folder as `screen` wrote it: no changed file, key, emission or output; exit 0, and
    verify.html and the terminal say nothing changed."""
    out = tmp_path / "v"
    assert main(["verify", str(submitted), "--out", str(out), "--quiet"]) == 0
    payload = json.loads((out / "findings.json").read_text())
    changes = payload["changes"]
    assert changes["files"] == [] and changes["keys"] == [] and changes["outputs"] == []
    assert changes["emissions"] and not any(e["differs"] for e in changes["emissions"])
    assert changes["notes"] == []  # a current run record: nothing it could not compare
    codes = {f["code"] for f in payload["findings"]}
    assert not {c for c in codes if c.startswith(("OUTPUT_", "INPUT_", "GEOTIFF_"))}
    page = (out / "verify.html").read_text(encoding="utf-8")
    assert "Nothing changed since the run" in page
    # what the regulator files names no folder of the machine: the submission relative to
    # the output folder, the bundled rule set as siting/config/...
    package = str(Path(siting.__file__).resolve().parent)
    for text in (page, (out / "findings.json").read_text(encoding="utf-8")):
        assert str(submitted.parent) not in text and package not in text
    assert payload["rule_sets"]["submission"]["path"] == "siting/config/rules/plain.toml"


def test_a_changed_reduction_is_named_with_both_values_and_its_emission(submitted, copy, tmp_path):
    """reduction_percent of H1 raised in the packed scenario after the run: the key in scenario
    terms, the value the run read (the original file's) and the new one, and H1's emission
    before (the submitted sources.csv) and after (unabated x (1 - 98 %), the derivation's own
    arithmetic with treated_air_fraction 1)."""
    old = _h1(submitted / "inputs" / "scenario.toml")["reduction_percent"]
    packed = copy / "inputs" / "scenario.toml"
    packed.write_text(
        packed.read_text().replace(f"reduction_percent = {old}", "reduction_percent = 98", 1)
    )
    assert _h1(packed)["reduction_percent"] == 98  # the edit took
    result = verify(copy)
    [key] = [k for k in result.changes.keys if k["key"] == "source H1 reduction_percent"]
    assert (key["file"], key["change"], key["old"], key["new"]) == (
        "scenario.toml",
        "changed",
        old,
        98,
    )
    assert [k["key"] for k in result.changes.keys] == ["source H1 reduction_percent"]
    submitted_sources = _sources(submitted)
    before = submitted_sources.loc["H1", "nh3_kg_yr"]
    assert before == pytest.approx(
        submitted_sources.loc["H1", "nh3_unabated_kg_yr"] * (1 - old / 100), rel=1e-5
    )  # sources.csv is written to 6 significant figures
    [effect] = key["effect"]
    assert effect["source"] == "H1" and effect["differs"]
    assert effect["submitted_kg_yr"] == pytest.approx(before, rel=1e-12)
    assert effect["rerun_kg_yr"] == pytest.approx(
        submitted_sources.loc["H1", "nh3_unabated_kg_yr"] * (1 - 98 / 100), rel=1e-5
    )
    # the other sources' emissions are as submitted
    assert [e["source"] for e in result.changes.emissions if e["differs"]] == ["H1"]
    [changed] = _by_code(result, "INPUT_CHANGED")
    assert f"source H1 reduction_percent: {old} -> 98" in changed.message
    assert result.exit_code == 1
    # the H1 emission is one of the differing figures, explained by the changed scenario
    [row] = [d for d in result.differences if d["table"] == "sources"]
    assert row["id"] == "H1" and "scenario" in row["explained_by"]


def test_the_page_and_the_terminal_lead_with_what_changed(submitted, copy, tmp_path, capsys):
    """verify.html's first section lists the key, both values and H1's emission before ->
    after, before the findings; the terminal lists the same line."""
    old = _h1(submitted / "inputs" / "scenario.toml")["reduction_percent"]
    packed = copy / "inputs" / "scenario.toml"
    packed.write_text(
        packed.read_text().replace(f"reduction_percent = {old}", "reduction_percent = 98", 1)
    )
    assert main(["verify", str(copy), "--out", str(tmp_path / "v")]) == 1
    printed = capsys.readouterr().out
    line = next(ln for ln in printed.splitlines() if "source H1 reduction_percent" in ln)
    assert f"{old} → 98" in line and "kg NH3/yr" in line
    page = (tmp_path / "v" / "verify.html").read_text(encoding="utf-8")
    section = page[page.index('id="changes"') : page.index('id="findings"')]
    assert "source H1 reduction_percent" in section
    assert f">{old}<" in section and ">98<" in section
    assert "H1: " in section and "kg NH3/yr" in section
    assert page.index('id="changes"') < page.index('id="findings"') < page.index('id="figures"')


def test_an_edited_verdict_in_report_html_is_flagged(copy):
    """One verdict word changed in report.html (same length: above -> below): OUTPUT_CHANGED
    naming report.html, the same size and another SHA-256; not consistent."""
    report = copy / "report.html"
    written = report.read_bytes()
    assert b"above threshold" in written  # the demo has sites above their threshold
    report.write_bytes(written.replace(b"above threshold", b"below threshold", 1))
    result = verify(copy)
    [finding] = _by_code(result, "OUTPUT_CHANGED")
    assert finding.subject == "output report.html" and finding.severity == "high"
    evidence = finding.evidence
    assert evidence["file"] == "report.html" and evidence["change"] == "edited"
    assert evidence["found_bytes"] == evidence["expected_bytes"] == len(written)
    assert evidence["found_sha256"] != evidence["expected_sha256"]
    assert [o["evidence"]["file"] for o in result.changes.outputs] == ["report.html"]
    assert result.differences == [] and result.exit_code == 1


def test_a_truncated_geotiff_is_named_and_does_not_crash(copy, tmp_path):
    """deposition.tif cut to half: OUTPUT_CHANGED (truncated, both sizes) and
    GEOTIFF_UNREADABLE, through the command line too (exit 1, verify.html written)."""
    tif = copy / "deposition.tif"
    size = tif.stat().st_size
    tif.write_bytes(tif.read_bytes()[: size // 2])
    result = verify(copy)
    [changed] = _by_code(result, "OUTPUT_CHANGED")
    assert (
        changed.evidence["file"] == "deposition.tif" and changed.evidence["change"] == "truncated"
    )
    assert (changed.evidence["expected_bytes"], changed.evidence["found_bytes"]) == (
        size,
        size // 2,
    )
    [unreadable] = _by_code(result, "GEOTIFF_UNREADABLE")
    assert unreadable.subject == "output deposition.tif"
    assert main(["verify", str(copy), "--out", str(tmp_path / "v"), "--quiet"]) == 1
    page = (tmp_path / "v" / "verify.html").read_text(encoding="utf-8")
    section = page[page.index('id="changes"') : page.index('id="findings"')]
    assert "deposition.tif" in section and "truncated" in section


def test_a_missing_output_and_an_extra_file_are_findings(copy):
    """Every recorded output is looked for (here results.gpkg or sites.gpkg, whichever this
    version writes: taken from run.json, not a list in the test); a file the run did not
    write is OUTPUT_UNEXPECTED (medium)."""
    recorded = json.loads((copy / "run.json").read_text())["outputs"]
    gone = next(name for name in recorded if name.endswith(".gpkg"))
    (copy / gone).unlink()
    (copy / "cover_letter.txt").write_text("please approve")
    result = verify(copy)
    assert [f.evidence["file"] for f in _by_code(result, "OUTPUT_MISSING")] == [gone]
    [extra] = _by_code(result, "OUTPUT_UNEXPECTED")
    assert extra.evidence["file"] == "cover_letter.txt" and extra.severity == "medium"


def test_a_symlinked_output_is_a_finding_and_is_not_read(copy, tmp_path):
    """map.html replaced by a link to a file outside the package: OUTPUT_NOT_A_FILE, no exit 2
    (the re-run needs no output), and the target is not hashed."""
    outside = tmp_path / "elsewhere.html"
    outside.write_text("<p>not the map</p>")
    (copy / "map.html").unlink()
    (copy / "map.html").symlink_to(outside)
    result = verify(copy)
    [finding] = _by_code(result, "OUTPUT_NOT_A_FILE")
    assert finding.evidence["file"] == "map.html" and "found_sha256" not in finding.evidence


def test_a_changed_table_row_is_named_by_its_columns(copy):
    """An emission factor lowered in the packed table: the row named by livestock and housing
    (not its position), both values, and the sources using that row (H1 only)."""
    table = copy / "inputs" / "_config" / "emission_factors.toml"
    recorded = json.loads((copy / "run.json").read_text())["toml_values"]["config_tables"]
    row = next(
        r for r in recorded["emission_factors.toml"]["factor"]
        if (r["livestock"], r["housing"]) == ("finishing_pig", "fully_slatted")
    )  # fmt: skip
    old = row["nh3_kg_per_place_yr"]
    text = table.read_text()
    assert text.count(f"nh3_kg_per_place_yr = {old}\n") == 1
    table.write_text(text.replace(f"nh3_kg_per_place_yr = {old}\n", "nh3_kg_per_place_yr = 2.0\n"))
    result = verify(copy)
    [key] = result.changes.keys
    assert key["file"] == "emission_factors.toml"
    assert key["key"] == "factor finishing_pig fully_slatted nh3_kg_per_place_yr"
    assert (key["old"], key["new"]) == (old, 2.0)
    assert [e["source"] for e in key["effect"]] == ["H1"]  # R1 is straw-bedded, not slatted


def test_an_older_run_record_still_verifies_with_a_note(copy):
    """A run.json written before toml_values: verify runs, says it cannot list keys from the
    file as written, and lists the scenario's from the run's parameters and the table's against
    the bundled table that has the recorded hash."""
    record_path = copy / "run.json"
    record = json.loads(record_path.read_text())
    del record["toml_values"]
    record_path.write_text(json.dumps(record))
    old = _h1(copy / "inputs" / "scenario.toml")["reduction_percent"]
    packed = copy / "inputs" / "scenario.toml"
    packed.write_text(
        packed.read_text().replace(f"reduction_percent = {old}", "reduction_percent = 98", 1)
    )
    thresholds = copy / "inputs" / "_config" / "thresholds.toml"
    thresholds.write_text(thresholds.read_text() + "\n# a comment only\n")
    result = verify(copy)
    assert any("did not record the values of its TOML inputs" in n for n in result.changes.notes)
    [key] = [k for k in result.changes.keys if k["input"] == "scenario"]
    assert (key["key"], key["old"], key["new"]) == ("source H1 reduction_percent", old, 98)
    files = {f["input"]: f for f in result.changes.files}
    assert "validated parameters" in files["scenario"]["compared"]
    assert "bundled table" in files["table thresholds.toml"]["compared"]
    assert files["table thresholds.toml"]["n_keys"] == 0  # a comment is no key


def test_without_values_or_parameters_the_keys_cannot_be_listed(copy):
    """A run record with neither toml_values nor parameters: the changed scenario is still a
    finding, and the file says why its keys are not listed."""
    record_path = copy / "run.json"
    record = json.loads(record_path.read_text())
    del record["toml_values"], record["parameters"]
    record_path.write_text(json.dumps(record))
    packed = copy / "inputs" / "scenario.toml"
    packed.write_text(packed.read_text() + "\n# edited\n")
    result = verify(copy)
    [entry] = result.changes.files
    assert entry["n_keys"] is None and "cannot be listed" in entry["note"]
    assert _by_code(result, "INPUT_CHANGED") and result.exit_code == 1


def test_an_output_name_climbing_out_is_refused(copy, tmp_path, capsys):
    """run.json naming an output "../x": exit 2 in one line, nothing written."""
    record_path = copy / "run.json"
    record = json.loads(record_path.read_text())
    record["outputs"]["../outside.txt"] = {"sha256": "0" * 64, "bytes": 1}
    record_path.write_text(json.dumps(record))
    assert main(["verify", str(copy), "--out", str(tmp_path / "v"), "--quiet"]) == 2
    assert "points outside the package" in capsys.readouterr().err
    assert not (tmp_path / "v").exists()


# --- toml_differences on its own ---------------------------------------------------------------


def test_list_entries_are_matched_by_id_not_position():
    """Sources reordered are no change; a changed key is named by the source's id; 90 and
    90.0 are equal, true and 1 are not (TOML types)."""
    old = {"source": [{"id": "H1", "reduction_percent": 90}, {"id": "H2", "flag": True}]}
    new = {"source": [{"id": "H2", "flag": 1}, {"id": "H1", "reduction_percent": 90.0}]}
    rows = toml_differences(old, new)
    assert [(r["key"], r["old"], r["new"]) for r in rows] == [("source H2 flag", True, 1)]
    assert rows[0]["item"] == {"list": "source", "identity": {"id": "H2"}}


def test_added_and_removed_entries_and_nested_keys_are_named():
    """A source added, an option's change by the option's name, a table key by its dotted
    path, an exclusion layer by its name."""
    old = {
        "grid": {"spacing_m": 25.0},
        "source": [{"id": "H1"}],
        "option": [{"name": "fewer", "change": {"H1": {"places": 1600}}}],
        "holding": {"exclusion": [{"name": "dwellings", "buffer_m": 100.0}]},
    }
    new = {
        "grid": {"spacing_m": 50.0, "margin_m": 3000.0},
        "source": [{"id": "H1"}, {"id": "N9"}],
        "option": [{"name": "fewer", "change": {"H1": {"places": 1200}}}],
        "holding": {"exclusion": [{"name": "dwellings", "buffer_m": 50.0}]},
    }
    rows = {r["key"]: (r["change"], r["old"], r["new"]) for r in toml_differences(old, new)}
    assert rows == {
        "grid.spacing_m": ("changed", 25.0, 50.0),
        "grid.margin_m": ("added", None, 3000.0),
        "source N9": ("added", None, {"id": "N9"}),
        "option fewer change.H1.places": ("changed", 1600, 1200),
        "holding.exclusion dwellings buffer_m": ("changed", 100.0, 50.0),
    }


def test_rows_without_an_id_are_named_by_the_columns_that_tell_them_apart():
    """Factor rows by livestock and housing; rows nothing tells apart by position."""
    old = {"factor": [{"livestock": "pig", "housing": "a", "f": 1.0},
                      {"livestock": "pig", "housing": "b", "f": 2.0}],
           "point": [{"x": 1}, {"x": 2}]}  # fmt: skip
    new = {"factor": [{"livestock": "pig", "housing": "b", "f": 2.5},
                      {"livestock": "pig", "housing": "a", "f": 1.0}],
           "point": [{"x": 1}, {"x": 3}]}  # fmt: skip
    keys = [r["key"] for r in toml_differences(old, new)]
    assert keys == ["factor pig b f", "point #2 x"]


def test_recorded_keys_only_leaves_out_settings_of_another_version():
    """Comparing validated parameters: a key only one side has is left out, a value is not."""
    old = {"grid": {"spacing_m": 25.0}}
    new = {"grid": {"spacing_m": 25.0, "memory_mb": 256.0}}
    assert toml_differences(old, new, recorded_keys_only=True) == []
    assert len(toml_differences(old, new)) == 1
