"""Tests of siting.presentation.verify_report: the verification page's content, order, escaping and marks."""

from __future__ import annotations

import html
import re
from pathlib import Path

import pandas as pd
import pytest

from siting.errors import InputError
from siting.output.verify import write_verify_report

HOSTILE_SUBJECT = 'site "<script>alert(1)</script>"'

CAUTIONS = [
    "Screening estimate from a simplified model (flat terrain, no building wake, long-term means).",
    "Local regulations and the competent authority decide.",
]


def _findings() -> list[dict]:
    """Four findings, one per severity, given out of order; one with a hostile subject."""
    return [
        {"code": "STATION_DISTANT", "severity": "low", "subject": 'station "Crossmoor"',
         "message": "The station is 38 km from the farm.", "evidence": {"distance_km": 38.2}},
        {"code": "NOTE_<B>", "severity": "info", "subject": HOSTILE_SUBJECT,
         "message": "Site name holds markup & is shown as text.", "evidence": {}},
        {"code": "REDUCTION_OUT_OF_RANGE", "severity": "high", "subject": 'source "H1"',
         "message": "Reduction 99.5 % is above the published range.",
         "evidence": {"published_range_percent": "70-99", "source": "BATc2017 <Table 2>"}},
        {"code": "WEATHER_RECORD_SHORT", "severity": "medium", "subject": "weather <file>",
         "message": "The record covers 1 year.", "evidence": {"record_years": 1.0}},
    ]  # fmt: skip


def _integrity(changed: bool = True) -> list[dict]:
    """Three recorded inputs; the weather table changed unless `changed` is False."""
    return [
        {"key": "scenario", "file": "inputs/scenario.toml", "expected_sha256": "a" * 64,
         "actual_sha256": "a" * 64, "status": "ok"},
        {"key": "weather", "file": "inputs/weather_table.csv", "expected_sha256": "b" * 64,
         "actual_sha256": ("c" if changed else "b") * 64, "status": "changed" if changed else "ok"},
        {"key": "habitats", "file": "inputs/habitats.gpkg", "expected_sha256": "d" * 64,
         "actual_sha256": "d" * 64, "status": "ok"},
    ]  # fmt: skip


def _sensitivity() -> tuple[pd.DataFrame, pd.DataFrame]:
    """Two sites; the first flips above the threshold with a high deposition velocity."""
    long = pd.DataFrame(
        {
            "site": ["Moss <A>"] * 3 + ["Hollin Wood"] * 3,
            "variant": ["central", "deposition velocity low", "deposition velocity high"] * 2,
            "pct_load": [0.98, 0.59, 1.47, 0.31, 0.19, 0.46],
            "pct_level": [0.39, 0.24, 0.59, 0.12, 0.08, 0.19],
            "verdict": ["below threshold", "below threshold", "above threshold"]
            + ["below threshold"] * 3,
        }
    )
    summary = pd.DataFrame(
        {
            "site": ["Moss <A>", "Hollin Wood"],
            "central_pct_load": [0.98, 0.31],
            "min_pct_load": [0.59, 0.19],
            "max_pct_load": [1.47, 0.46],
            "central_verdict": ["below threshold", "below threshold"],
            "verdict_flips": [True, False],
            "flipping_variants": ["deposition velocity high", ""],
        }
    )
    return long, summary


def _write(tmp_path: Path, **overrides) -> str:
    """Write a report with realistic synthetic inputs (overridable) and return its text."""
    long, summary = _sensitivity()
    differences = [
        {"table": "sites", "id": "Moss <A>", "column": "pc_pct_load", "submitted": 4.9012,
         "recomputed": 4.9031, "relative_difference": 3.9e-4, "explained_by": ""},
        {"table": "sites", "id": "Hollin Wood", "column": "verdict",
         "submitted": "below threshold", "recomputed": "above threshold",
         "relative_difference": None, "explained_by": "0.4.0: depletion over height"},
    ]  # fmt: skip
    arguments = {
        "submission": "applications/2024-117 <farm>/out",
        "submitted_version": "0.3.2",
        "this_version": "0.4.0",
        "run_time": "2025-03-14T10:22:05Z",
        "verdict": "Not consistent: 1 input file changed.",
        "exit_code": 1,
        "integrity": _integrity(),
        "differences": differences,
        "tolerance_text": "relative 1e-3 on every figure",
        "findings": _findings(),
        "sensitivity": long,
        "sensitivity_summary": summary,
        "cautions": CAUTIONS,
    }
    arguments.update(overrides)
    path = tmp_path / "verify.html"
    write_verify_report(path, **arguments)
    return path.read_text(encoding="utf-8")


def test_writes_a_self_contained_html_file(tmp_path):
    """The file is written, starts as HTML and carries the title, verdict and cautions."""
    page = _write(tmp_path)
    assert page.startswith("<!DOCTYPE html>")
    assert "Verification of a screening submission" in page
    assert "Not consistent: 1 input file changed." in page
    assert 'class="verdict-box fail"' in page
    assert all(html.escape(c) in page for c in CAUTIONS)


def test_consistent_verdict_box_is_marked_as_passing(tmp_path):
    """Exit code 0 gives the passing box and marks 0 as the current exit code."""
    page = _write(tmp_path, verdict="Consistent: all reproduced.", exit_code=0)
    assert 'class="verdict-box pass"' in page
    assert re.search(r'<li class="current"><code>0</code>', page)


def test_every_finding_code_and_subject_appears_escaped(tmp_path):
    """Codes, subjects, messages and evidence are escaped; a <script> subject is inert text."""
    page = _write(tmp_path)
    for finding in _findings():
        assert html.escape(finding["code"]) in page
        assert html.escape(finding["subject"]) in page
        assert html.escape(finding["message"]) in page
    assert "&lt;script&gt;" in page
    assert "<script" not in page.lower()
    assert "NOTE_&lt;B&gt;" in page
    assert "BATc2017 &lt;Table 2&gt;" in page


def test_findings_are_sorted_by_severity(tmp_path):
    """Findings read high, medium, low, info whatever order they arrive in."""
    page = _write(tmp_path)
    findings = page[page.index('id="findings"') : page.index('id="integrity"')]
    codes = ["REDUCTION_OUT_OF_RANGE", "WEATHER_RECORD_SHORT", "STATION_DISTANT", "NOTE_&lt;B&gt;"]
    positions = [findings.index(f'<span class="code mono">{c}</span>') for c in codes]
    assert positions == sorted(positions)
    badges = re.findall(r'<tr class="finding[^"]*"><td class="sev"><span class="badge sev-(\w+)"',
                        findings)  # fmt: skip
    assert badges == ["high", "medium", "low", "info"]


def test_integrity_table_marks_a_changed_row(tmp_path):
    """A changed input's row is marked and shows both hashes; intact rows are not marked."""
    page = _write(tmp_path)
    section = page[page.index('id="integrity"') : page.index('id="figures"')]
    rows = re.findall(r"<tr class=\"(\w+)\"><td class=\"ident\">(\w+)</td>", section)
    assert rows == [("ok", "scenario"), ("bad", "weather"), ("ok", "habitats")]
    assert "⚠ changed" in section
    assert "b" * 64 in section and "c" * 64 in section


def test_missing_input_is_marked_and_not_found(tmp_path):
    """A missing input's row is marked and says the file was not found."""
    integrity = _integrity(changed=False)
    integrity[2] |= {"actual_sha256": None, "status": "missing"}
    page = _write(tmp_path, integrity=integrity)
    section = page[page.index('id="integrity"') : page.index('id="figures"')]
    assert '<tr class="bad"><td class="ident">habitats</td>' in section
    assert "⚠ missing" in section and "file not found" in section


def test_no_differences_says_so(tmp_path):
    """With no differing figure the section says so instead of showing a table."""
    page = _write(tmp_path, differences=[])
    section = page[page.index('id="figures"') : page.index('id="sensitivity"')]
    assert "No figure differs beyond the tolerance" in section
    assert "<table" not in section
    assert "relative 1e-3 on every figure" in section


def test_differences_show_versions_explanations_and_telling_digits(tmp_path):
    """Both versions head the columns, an unexplained difference is marked, and close values
    get enough digits to differ (4.9012 vs 4.9031 at 2 decimals would both read 4.90)."""
    page = _write(tmp_path)
    section = page[page.index('id="figures"') : page.index('id="sensitivity"')]
    assert "siting 0.3.2" in section and "siting 0.4.0" in section
    assert "0.4.0: depletion over height" in section
    assert section.count("⚠ not explained") == 1
    assert ">4.901<" in section and ">4.903<" in section  # 3 decimals tell them apart
    assert "Moss &lt;A&gt;" in section


def test_no_scripts_and_no_outside_links(tmp_path):
    """No script element, no event handler and no http(s) reference anywhere in the page."""
    page = _write(tmp_path)
    assert "<script" not in page.lower()
    assert "http" not in page.lower()
    assert not re.search(r"\son\w+\s*=", page)
    assert all(href.startswith("#") for href in re.findall(r'href="([^"]*)"', page))


def test_sensitivity_flips_are_marked(tmp_path):
    """The flipping site's summary row and the flipping variant's row are marked; the steady
    site is not."""
    page = _write(tmp_path)
    section = page[page.index('id="sensitivity"') : page.index('id="cautions"')]
    summary_rows = re.findall(r'<tr class="(\w*)"><td class="site"><span class="site-name">'
                              r"([^<]*)</span>", section)  # fmt: skip
    assert summary_rows == [("flips", "Moss &lt;A&gt;"), ("", "Hollin Wood")]
    assert "under: deposition velocity high" in section
    long_rows = re.findall(r'<tr class="(\w*)"><td>([^<]*)</td>', section)
    assert ("flips", "deposition velocity high") in long_rows
    assert long_rows.count(("flips", "deposition velocity high")) == 1  # Hollin Wood holds
    assert "The verdict flips for 1 of 2 sites: Moss &lt;A&gt;." in section


def test_empty_sensitivity_says_none_was_run(tmp_path):
    """Empty sensitivity tables (no columns at all) give a plain sentence, not an error."""
    page = _write(tmp_path, sensitivity=pd.DataFrame(), sensitivity_summary=pd.DataFrame())
    assert "No sensitivity analysis was run." in page


def test_sensitivity_table_without_a_column_raises_before_writing(tmp_path):
    """A non-empty sensitivity table lacking a column raises InputError naming it; no file."""
    long, _ = _sensitivity()
    with pytest.raises(InputError, match="pct_level"):
        _write(tmp_path, sensitivity=long.drop(columns="pct_level"))
    assert not (tmp_path / "verify.html").exists()


def test_print_css_keeps_rows_whole_and_headings_with_content(tmp_path):
    """The A4 print rules of the screening report come along: rows unsplit, headings kept."""
    page = _write(tmp_path)
    assert "@page { size: A4 portrait" in page
    assert re.search(r"tr, img, figure \{ page-break-inside: avoid", page)
    assert re.search(r"h1, h2, h3, h4 \{ page-break-after: avoid", page)
    assert "<details" not in page  # nothing collapsed that print would hide


def test_many_receptor_differences_list_the_largest_and_count_the_rest(tmp_path):
    """Past 200 receptor rows the largest relative differences are listed, the rest counted."""
    differences = [
        {"table": "receptors", "id": f"R{i:04d}", "column": "pc_conc_ug_m3", "submitted": 1.0,
         "recomputed": 1.0 + i * 1e-3, "relative_difference": i * 1e-3, "explained_by": ""}
        for i in range(1, 251)
    ]  # fmt: skip
    page = _write(tmp_path, differences=differences)
    section = page[page.index('id="figures"') : page.index('id="sensitivity"')]
    assert "250 figures differ beyond the tolerance" in section
    assert "R0250" in section and "R0051" in section  # the 200 largest
    assert "R0050" not in section
    assert "50 more receptor figures also differ" in section


def test_page_parts_come_in_reading_order(tmp_path):
    """Heading, verdict box, checks, caution line, sections 1 to 5, then the footer, in order."""
    page = _write(tmp_path)
    markers = [
        "<h1>Verification of a screening submission</h1>",
        'class="verdict-box',
        '<h2 id="checks">',
        'class="caution-line"',
        'id="findings"',
        'id="integrity"',
        'id="figures"',
        'id="sensitivity"',
        'id="cautions"',
        "<footer>",
    ]
    positions = [page.index(marker) for marker in markers]
    assert positions == sorted(positions)  # regression: order of the page before the split
    footer = page[page.index("<footer>") :]
    assert "siting 0.4.0" in footer and "siting 0.3.2" in footer and "exit code 1" in footer


def _changes() -> dict:
    """What changed: the scenario (one key, a hostile source id), and a truncated output."""
    return {
        "files": [{"input": "scenario", "file": "inputs/scenario.toml", "status": "changed",
                   "compared": "the values the run read against the packed file", "n_keys": 1,
                   "note": "changed after the run: 1 key(s) differ"}],
        "keys": [{"input": "scenario", "file": "scenario.toml",
                  "key": "source <H1> reduction_percent", "change": "changed", "old": 90,
                  "new": 98, "item": {"list": "source", "identity": {"id": "<H1>"}},
                  "effect": [{"source": "<H1>", "submitted_kg_yr": 675.12,
                              "rerun_kg_yr": 135.024, "differs": True}],
                  "effect_note": None}],
        "keys_left_out": 0,
        "emissions": [{"source": "<H1>", "submitted_kg_yr": 675.12, "rerun_kg_yr": 135.024,
                       "relative_difference": 0.8, "differs": True},
                      {"source": "E1", "submitted_kg_yr": 1323.0, "rerun_kg_yr": 1323.0,
                       "relative_difference": 0.0, "differs": False}],
        "outputs": [{"code": "OUTPUT_CHANGED", "severity": "high",
                     "subject": "output deposition.tif",
                     "message": "deposition.tif is not the file the run wrote: truncated",
                     "evidence": {"file": "deposition.tif", "change": "truncated",
                                  "expected_bytes": 207108, "found_bytes": 500,
                                  "expected_sha256": "e" * 64, "found_sha256": "f" * 64}}],
        "notes": [],
    }  # fmt: skip


def test_what_changed_comes_first_with_key_values_and_emissions(tmp_path):
    """Section 1 lists the key (escaped), both values, the emission before -> after at 4
    significant digits (675.1 and 135.0, shown 135: trailing zeros trimmed), the truncated
    output with both sizes and hashes; it comes before the findings, and the check list says
    what changed."""
    page = _write(tmp_path, changes=_changes())
    section = page[page.index('id="changes"') : page.index('id="findings"')]
    assert "source &lt;H1&gt; reduction_percent" in section and "<H1>" not in section
    assert ">90<" in section and ">98<" in section
    assert "&lt;H1&gt;: 675.1 → 135 kg NH3/yr" in section
    assert "-80.0" in section  # (135.024 - 675.12) / 675.12 = -80 %
    assert "1 other source(s) agree" in section  # E1
    assert "deposition.tif" in section and "truncated" in section
    assert "207 108 bytes" in section and "500 bytes" in section
    assert "e" * 64 in section and "f" * 64 in section
    checks = page[page.index('id="checks"') : page.index('id="changes"')]
    assert "1 key(s) differ" in checks


def test_nothing_changed_says_so(tmp_path):
    """No changed file, key, emission or output: one sentence, no tables in section 1."""
    page = _write(tmp_path, changes={"files": [], "keys": [], "emissions": [], "outputs": [],
                                     "notes": [], "keys_left_out": 0})  # fmt: skip
    section = page[page.index('id="changes"') : page.index('id="findings"')]
    assert "Nothing changed since the run" in section and "<table" not in section
