"""`siting verify`: clean submissions pass; tampering, edits, implausible inputs are flagged."""

import json
import re
import shutil

import geopandas as gpd
import pandas as pd
import pytest

from siting.cli import main
from siting.readers.resources import demo_dir
from siting.runs.verification import verify


def _screen(tmp_path, name="sub", edit=None, habitats=None):
    """Run `siting screen` on a copy of the demo (optionally edited) into tmp_path/name."""
    folder = tmp_path / f"{name}_in"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    text = scenario.read_text()
    text = text.replace("spacing_m = 25.0", "spacing_m = 100.0", 1)  # keep the tests quick
    if edit:
        text = edit(text)
    scenario.write_text(text)
    if habitats is not None:
        habitats(folder / "habitats.gpkg")
    out = tmp_path / name
    # --no-pdf: report.pdf is no input of verify, and each PDF costs seconds
    assert main(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    return out


@pytest.fixture(scope="module")
def clean(coarse_demo_submission):
    """The demo on a 100 m grid as `screen` wrote it (what ``_screen`` makes without an edit;
    the session's run of conftest.py, also verified by tests/test_verify_rules.py)."""
    return coarse_demo_submission


def _codes(result):
    return {f.code for f in result.findings}


def test_clean_submission_verifies(clean, tmp_path):
    """A folder written by `screen` verifies clean: exit 0, inputs intact, same figures."""
    rc = main(["verify", str(clean), "--out", str(tmp_path / "v"), "--quiet"])
    assert rc == 0
    payload = json.loads((tmp_path / "v" / "findings.json").read_text())
    assert payload["consistent"] and payload["differences"] == []
    assert all(row["status"] == "ok" for row in payload["integrity"])
    assert not [f for f in payload["findings"] if f["severity"] == "high"]
    assert (tmp_path / "v" / "verify.html").is_file()


def test_tampered_input_is_flagged_and_explains_the_difference(clean, tmp_path):
    """A changed packed input: INPUT_CHANGED, and the differing figures name it."""
    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    table = sub / "inputs" / "weather_table.csv"
    frame = pd.read_csv(table)
    frame.loc[frame["frequency"].idxmax(), "frequency"] *= 3  # more of the prevailing wind
    frame["frequency"] /= frame["frequency"].sum()  # still fractions summing to 1
    frame.to_csv(table, index=False)
    result = verify(sub)
    assert {"INPUT_CHANGED", "RESULTS_DIFFER"} <= _codes(result)
    assert result.exit_code == 1
    assert result.differences and all("weather" in d["explained_by"] for d in result.differences)


def test_edited_result_figure_is_flagged(clean, tmp_path):
    """An edited figure in sites.csv differs from the re-run, with no input to explain it."""
    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    sites = pd.read_csv(sub / "sites.csv")
    sites.loc[0, "pc_pct_load"] *= 0.8
    sites.to_csv(sub / "sites.csv", index=False)
    result = verify(sub)
    diffs = [d for d in result.differences if d["column"] == "pc_pct_load"]
    assert len(diffs) == 1 and diffs[0]["id"] == sites.loc[0, "name"]
    assert diffs[0]["relative_difference"] == pytest.approx(0.2, rel=1e-3)
    assert diffs[0]["explained_by"] == ""
    assert "RESULTS_DIFFER" in _codes(result) and result.exit_code == 1


def test_inflated_reduction_is_flagged(tmp_path):
    """An acid scrubber claimed at 99.9 %: outside the published 70-99 % (BATc2017, from memory)."""
    out = _screen(
        tmp_path,
        edit=lambda t: t.replace(
            'abatement = "acid_scrubber"',
            'abatement = "acid_scrubber"\nreduction_percent = 99.9',
            1,
        ),
    )
    result = verify(out)
    finding = next(f for f in result.findings if f.code == "REDUCTION_OUT_OF_RANGE")
    assert finding.severity == "high" and finding.subject == 'source "H1"'
    assert finding.evidence["published_range_percent"] == "70-99"
    assert result.differences == [] and result.exit_code == 1


def test_missing_habitat_site_is_flagged(tmp_path):
    """A site left out of the submitted layer but within its search distance: SITE_LEFT_OUT."""

    def drop_heath(path):
        layer = gpd.read_file(path)
        layer[layer["name"] != "Gorseburrow Heath"].to_file(path, layer="habitats", driver="GPKG")

    out = _screen(tmp_path, habitats=drop_heath)
    result = verify(out, reference_habitats=demo_dir() / "habitats.gpkg")
    left_out = [f for f in result.findings if f.code == "SITE_LEFT_OUT"]
    assert [f.subject for f in left_out] == ['site "Gorseburrow Heath"']
    assert left_out[0].evidence["search_distance_m"] == 5000.0  # national tier: 5 km
    assert result.exit_code == 1


def test_sensitivity_looks_both_ways(clean):
    """Every site's variants reach above AND below the central % of load (two-sided): the v_d
    table's high end lies above the screening value (from memory, deposition_velocities.toml),
    the emission factors' +-30 % (IPCC2006 analogy) and depletion switched on lower it."""
    result = verify(clean)
    long = result.sensitivity
    variants = set(long["variant"])
    assert {
        "central",
        "deposition velocity low",
        "deposition velocity high",
        "critical load lower end",
        "critical load upper end",
        "critical level 1 µg/m³",
        "critical level 3 µg/m³",
        "plume depletion on",
        "wind below the anemometer: unchanged",
        "emission factors low (-30 %)",
        "emission factors high (+30 %)",
    } <= variants
    summary = result.sensitivity_summary
    assessed = summary["central_pct_load"].notna()
    assert assessed.sum() >= 3
    s = summary[assessed]
    assert (s["max_pct_load"] > s["central_pct_load"] * 1.05).all()  # some variant raises it
    assert (s["min_pct_load"] < s["central_pct_load"] * 0.95).all()  # and some lowers it
    assert (s["max_pct_level"] > s["central_pct_level"] * 1.05).all()
    assert (s["min_pct_level"] < s["central_pct_level"] * 0.95).all()
    # each raising variant by itself: v_d high raises deposition, factors high raise both
    for variant in ("deposition velocity high", "emission factors high (+30 %)"):
        rows = long[long["variant"] == variant].set_index("site")["pct_load"]
        central = long[long["variant"] == "central"].set_index("site")["pct_load"]
        assert (rows[assessed.values] > central[assessed.values]).all(), variant


def test_claimed_reduction_is_a_finding_and_a_variant(tmp_path):
    """A reduction above the range's lower end is the user's claim: accepted with its basis in
    sources.csv, raised by verify, and undone in a sensitivity variant (acid scrubber 70-99 %,
    BATc2017 4.11, from memory)."""
    claim = (
        'abatement = "acid_scrubber"\nreduction_percent = 95.0\n'
        'reduction_basis = "invented test certificate no. 1"'
    )
    out = _screen(tmp_path, edit=lambda t: t.replace('abatement = "acid_scrubber"', claim, 1))
    sources = pd.read_csv(out / "sources.csv").set_index("source_id")
    assert sources.loc["H1", "reduction_basis"] == "claimed: invented test certificate no. 1"
    result = verify(out)
    claimed = [f for f in result.findings if f.code == "REDUCTION_CLAIMED"]
    assert [f.subject for f in claimed] == ['source "H1"']
    assert "invented test certificate" in claimed[0].message
    variants = set(result.sensitivity["variant"])
    assert "abatement at the lower end of its range (H1)" in variants
    lowered = result.sensitivity[result.sensitivity["variant"].str.startswith("abatement")]
    central = result.sensitivity[result.sensitivity["variant"] == "central"]
    assert (lowered["pct_load"].to_numpy() > central["pct_load"].to_numpy()).all()


def test_other_weather_year_is_a_variant(clean, tmp_path):
    """--weather adds a variant per file (here the demo's hourly record)."""
    result = verify(clean, weather_files=[demo_dir() / "hourly_weather.csv"])
    assert "weather: hourly_weather.csv" in set(result.sensitivity["variant"])


def test_unreadable_submission_exits_2(tmp_path, capsys):
    """A folder without run.json cannot be verified: exit 2, nothing written."""
    (tmp_path / "empty").mkdir()
    rc = main(["verify", str(tmp_path / "empty"), "--out", str(tmp_path / "v")])
    assert rc == 2 and not (tmp_path / "v").exists()
    assert "run.json" in capsys.readouterr().err


def test_scenario_plus_results_table(clean, tmp_path):
    """A scenario file with the applicant's sites table re-runs and compares (no hashes)."""
    result = verify(clean / "inputs" / "scenario.toml", results=clean / "sites.csv")
    assert result.differences == [] and "NO_RUN_RECORD" in _codes(result)


def test_factor_below_table_and_underived_treated_share(tmp_path):
    """A lowered factor in the applicant's own tables, a bare treated share: both flagged."""
    from siting.readers.resources import config_dir

    def edit(text):
        text = re.sub(
            r"(?m)^treated_air_fraction = [0-9.]+", "treated_air_fraction = 0.5", text, count=1
        )
        return text + '\n[assessment]\nconfig_dir = "my_tables"\n'

    folder_tables = tmp_path / "sub_in" / "my_tables"

    def tables(_habitats_path):
        shutil.copytree(config_dir(), folder_tables)
        path = folder_tables / "emission_factors.toml"
        path.write_text(
            path.read_text().replace("nh3_kg_per_place_yr = 2.813", "nh3_kg_per_place_yr = 1.5", 1)
        )

    out = _screen(tmp_path, edit=edit, habitats=tables)
    result = verify(out)
    below = next(f for f in result.findings if f.code == "FACTOR_BELOW_TABLE")
    assert below.severity == "high" and below.evidence["table_kg_per_place_yr"] == 2.813
    assert "EA2024" in below.evidence["source"]  # the table row's published source
    assert "TREATED_SHARE_UNDERIVED" in _codes(result)
    assert result.differences == []  # the run itself is reproducible; its inputs are not


def test_package_stands_alone_with_inputs_from_elsewhere(tmp_path):
    """Inputs named outside the scenario folder are packed too; the folder verifies elsewhere."""

    def edit(text):
        return text.replace(
            'frequency_table = "weather_table.csv"',
            'frequency_table = "../shared_weather/weather_table.csv"',
            1,
        )

    (tmp_path / "shared_weather").mkdir()
    shutil.copy(demo_dir() / "weather_table.csv", tmp_path / "shared_weather")
    out = _screen(tmp_path, edit=edit)
    moved = tmp_path / "elsewhere" / "received"
    shutil.copytree(out, moved)  # as if zipped, sent and unpacked on another machine
    shutil.rmtree(out)
    shutil.rmtree(tmp_path / "shared_weather")
    shutil.rmtree(tmp_path / "sub_in")
    result = verify(moved)
    assert result.consistent, [f.code for f in result.findings if f.severity == "high"]
    assert (moved / "inputs" / "_external" / "weather" / "weather_table.csv").is_file()


def test_plume_rise_is_a_finding_to_check(tmp_path):
    """An outlet given building dimensions that put it clear of the wake (GEP height, EPA1985)
    gets rise, which lowers nearby figures: verify asks for the dimensions to be checked."""
    out = _screen(
        tmp_path,
        edit=lambda t: t.replace("building_height_m = 6.0 ", "building_height_m = 2.0 ", 1).replace(
            "building_width_m = 25.0 ", "building_width_m = 2.0 ", 1
        ),
    )
    result = verify(out)
    rise = [f for f in result.findings if f.code == "PLUME_RISE_CLAIMED"]
    assert [f.subject for f in rise] == ['source "H1"']
    assert "wake height 5 m" in rise[0].message  # 2 + 1.5 x min(2, 2)


@pytest.mark.parametrize(
    "change, match",
    [
        (
            lambda r: r["package"]["files"].update(scenario="../../../../etc/hostname"),
            "points outside the package",
        ),
        (lambda r: r["package"]["files"].update(weather="/etc/hostname"), "points outside"),
        (lambda r: r["config_tables"].update({"../../x.toml": {"sha256": "0"}}), "points outside"),
        (lambda r: r.update(inputs=["not", "a", "map"]), "inputs must be a map"),
        (lambda r: r["inputs"]["scenario"].update(sha256=5), "needs a sha256 text"),
        (lambda r: r["package"].update(files="scenario.toml"), "package.files must be a map"),
    ],
    ids=[
        "scenario path escapes",
        "absolute weather path",
        "config table escapes",
        "inputs not a map",
        "hash not text",
        "files not a map",
    ],
)
def test_a_hostile_run_record_is_refused_in_one_line(clean, tmp_path, capsys, change, match):
    """verify treats a package as untrusted: paths stay inside it, malformed entries are exit 2
    with one line naming run.json; nothing outside the package is read, nothing written."""
    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    record = json.loads((sub / "run.json").read_text())
    change(record)
    (sub / "run.json").write_text(json.dumps(record))
    rc = main(["verify", str(sub), "--out", str(tmp_path / "v"), "--quiet"])
    err = capsys.readouterr().err.strip()
    assert rc == 2 and len(err.splitlines()) == 1 and "run.json" in err and match in err, err
    assert not (tmp_path / "v").exists()


def test_a_run_record_that_is_not_an_object_is_refused(clean, tmp_path, capsys):
    """run.json holding a list: exit 2, one line."""
    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    (sub / "run.json").write_text("[1, 2, 3]")
    rc = main(["verify", str(sub), "--out", str(tmp_path / "v"), "--quiet"])
    assert rc == 2 and "not a run record" in capsys.readouterr().err


@pytest.mark.parametrize(
    "damage, code",
    [
        (
            lambda sub: (sub / "report.html").write_text(
                (sub / "report.html").read_text().replace("above threshold", "below threshold")
            ),
            "OUTPUT_CHANGED",
        ),
        (
            lambda sub: (sub / "deposition.tif").write_bytes(
                (sub / "deposition.tif").read_bytes()[:500]
            ),
            "OUTPUT_CHANGED",
        ),
        (lambda sub: (sub / "receptors.csv").unlink(), "OUTPUT_MISSING"),
    ],
    ids=["edited verdict in report.html", "truncated GeoTIFF", "deleted receptors.csv"],
)
def test_edited_truncated_or_deleted_outputs_are_findings(clean, tmp_path, damage, code):
    """Every output is hashed in run.json: an edited report, a truncated GeoTIFF or a deleted
    table no longer verifies as consistent (exit 1)."""
    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    damage(sub)
    result = verify(sub)
    assert code in _codes(result)
    assert result.exit_code == 1


def test_findings_come_in_a_fixed_order(clean, tmp_path):
    """Findings are listed RESULTS_DIFFER, changed inputs (last recorded first), outputs, then
    the plausibility review by severity (regression: the order before verify.py was split)."""
    from siting.runs.findings import SEVERITY_ORDER

    sub = tmp_path / "sub"
    shutil.copytree(clean, sub)
    table = sub / "inputs" / "weather_table.csv"
    frame = pd.read_csv(table)
    frame.loc[frame["frequency"].idxmax(), "frequency"] *= 3  # more of the prevailing wind
    frame["frequency"] /= frame["frequency"].sum()
    frame.to_csv(table, index=False)
    thresholds = sub / "inputs" / "_config" / "thresholds.toml"
    thresholds.write_text(thresholds.read_text() + "\n# edited\n")  # same values, new hash
    report = sub / "report.html"
    report.write_text(report.read_text().replace("above threshold", "below threshold"))
    result = verify(sub)
    changed = [row["key"] for row in result.integrity if row["status"] != "ok"]
    assert changed == ["weather", "table thresholds.toml"]
    codes = [f.code for f in result.findings]
    assert codes[:4] == ["RESULTS_DIFFER", "INPUT_CHANGED", "INPUT_CHANGED", "OUTPUT_CHANGED"]
    assert [f.subject for f in result.findings[1:3]] == [f"input {k}" for k in changed[::-1]]
    reviewed = [SEVERITY_ORDER[f.severity] for f in result.findings[4:]]
    assert reviewed and reviewed == sorted(reviewed)
