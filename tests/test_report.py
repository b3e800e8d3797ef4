"""Tests of siting.report: report.html structure, escaping, inlined figures, helpers."""

from __future__ import annotations

import html
import json
import re

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure
from shapely.geometry import Point, box

from siting.errors import InputError
from siting.report import (
    deposition_class_edges,
    deposition_figure,
    figure_png,
    format_number,
    pc_vs_distance_figure,
    write_report,
)

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
NAMES = [
    "<script>alert(1)</script>",
    "a`b${alert(1)}\\c",
    "<img src=x onerror=alert(1)>",
    "Plain Moor",
]
CAUTIONS = [
    "Screening estimate from a simplified model (flat terrain, no building wake, long-term means);"
    " not a substitute for detailed modelling by qualified practitioners.",
    "Emission factors and deposition velocities carry wide uncertainty.",
    "Local regulations and the competent authority decide.",
]


def _sites() -> pd.DataFrame:
    """Four sites, three with hostile names, one per verdict and an unknown one."""
    return pd.DataFrame(
        {
            "site_id": ["S1", "S2", "S3", "S4"],
            "name": NAMES,
            "designation": ["SAC", "<b>SSSI</b>", "local", "SPA"],
            "habitat": ["raised bog", "oak woodland", "heath", "dune grassland"],
            "critical_level_ug_m3": [1.0, 1.0, 3.0, 3.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 10.0, 10.0, 8.0],
            "pc_conc_max_ug_m3": [1.234, 0.008, np.nan, 0.05],
            "pc_pct_level": [123.4, 0.8, np.nan, 1.67],
            "pc_dep_max_kg_n_ha_yr": [12.5, 0.04, np.nan, 0.39],
            "pc_pct_load": [250.0, 0.4, np.nan, 4.9],
            "threshold_percent": [1.0, 1.0, 100.0, 1.0],
            "verdict": ["above threshold", "below threshold", "not assessed", "above threshold"],
            "distance_m": [350.0, 900.0, 1500.0, 600.0],
        }
    )


def _write(path, **overrides) -> str:
    """Write a report with synthetic inputs and return its HTML."""
    sources = pd.DataFrame(
        {
            "source_id": ["H1", "STORE"],
            "kind": ["point", "area"],
            "role": ["proposed", "existing"],
            "places": [2000, np.nan],
            "factor_nh3_kg_per_place_yr": [2.5, np.nan],
            "nh3_kg_yr": [1500.0, 300.0],
            "emission_g_s": [0.0476, 0.0095],
            "empty_column": [np.nan, None],
        }
    )
    habitat_values = pd.DataFrame(
        {
            "habitat": ["raised bog", "oak woodland"],
            "critical_load_min_kg_n_ha_yr": [5.0, 10.0],
            "critical_load_max_kg_n_ha_yr": [10.0, 15.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 10.0],
            "critical_level_ug_m3": [1.0, 1.0],
            "land_cover": ["short_vegetation", "woodland"],
            "deposition_velocity_m_s": [0.02, 0.03],
            "source": ["key A, Table 1 (from memory)", "key B, p. 12 & <note>"],
        }
    )
    arguments = dict(
        title="Farm <Nord>",
        version="0.1.0",
        run_time="2024-05-01T12:00:00Z",
        scenario_file="scenario.toml",
        sites=_sites(),
        sources=sources,
        weather_summary={"station": "Invented <station>", "years": 3, "calm_fraction": 0.021},
        habitat_values=habitat_values,
        warnings=["weather record is short <1 yr>"],
        cautions=CAUTIONS,
        method_notes=["Sector-averaged Gaussian plume, flat terrain."],
        run_record={"version": "0.1.0", "inputs": {"scenario.toml": {"sha256": "ab" * 32}}},
        figures={"PC by distance": pc_vs_distance_figure(_sites())},
    )
    arguments.update(overrides)
    write_report(path, **arguments)
    return path.read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def report_html(tmp_path_factory) -> str:
    """The report written once for the read-only checks."""
    return _write(tmp_path_factory.mktemp("report") / "report.html")


def _summary_body(text: str) -> str:
    """The <tbody> of the summary table."""
    match = re.search(r'<table class="summary">.*?<tbody>(.*?)</tbody>', text, re.S)
    assert match
    return match.group(1)


def test_report_contains_every_site_name_escaped(report_html):
    """Every site name appears HTML-escaped; names holding HTML markup never appear raw."""
    for name in NAMES:
        assert html.escape(name, quote=True) in report_html
    # The report has no script, so backtick, $ and backslash are inert there; only markup
    # must not survive.
    for raw in (NAMES[0], NAMES[2]):
        assert raw not in report_html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in report_html
    assert "&lt;img src=x onerror=alert(1)&gt;" in report_html
    assert "<b>SSSI</b>" not in report_html and "&lt;b&gt;SSSI&lt;/b&gt;" in report_html


def test_summary_table_has_one_row_per_site(report_html):
    """The summary table body holds exactly one row per site."""
    body = _summary_body(report_html)
    assert body.count("<tr") == len(NAMES)
    assert body.count('class="site-row"') == len(NAMES)


def test_summary_shows_formatted_figures_and_verdict_styles(report_html):
    """Numbers are formatted to 3 significant digits; verdicts carry a style class."""
    body = _summary_body(report_html)
    assert ">123<" in body and ">1.23<" in body  # 123.4 and 1.234 at 3 significant digits
    assert 'class="verdict verdict-above"' in body
    assert 'class="verdict verdict-below"' in body
    assert 'class="verdict verdict-none"' in body
    assert "n/a" in body  # the not-assessed site's missing figures


def test_images_are_inlined_data_urls(report_html):
    """Figures are <img> elements with PNG data URLs, and nothing else."""
    sources = re.findall(r'<img src="([^"]*)"', report_html)
    assert sources
    assert all(s.startswith("data:image/png;base64,") for s in sources)


def test_no_external_references(report_html):
    """The report loads nothing from outside: no script src, no external links or CSS."""
    lowered = report_html.lower()
    assert "<script" not in lowered
    assert "<link" not in lowered
    assert not re.search(r'(src|href)\s*=\s*"?(https?:)?//', lowered)
    assert "@import" not in lowered


def test_sections_cautions_and_print_css(report_html):
    """All seven sections exist, cautions are shown at the top and in full, print CSS is set."""
    for heading in (
        "1. Summary",
        "2. Inputs",
        "3. Method and assumptions",
        "4. Figures",
        "5. Warnings",
        "6. Cautions",
        "7. Run record",
    ):
        assert f">{heading}</h2>" in report_html
    assert report_html.index('class="caution-line"') < report_html.index("<h1>")
    for caution in CAUTIONS:
        assert html.escape(caution) in report_html
    assert "tr, img, figure, pre { page-break-inside: avoid" in report_html


def test_inputs_echo_non_empty_columns_and_sources(report_html):
    """Source columns with values are shown, empty ones left out; habitat sources escaped."""
    assert "factor_nh3_kg_per_place_yr" in report_html
    assert "empty_column" not in report_html
    assert "key B, p. 12 &amp; &lt;note&gt;" in report_html
    assert "Invented &lt;station&gt;" in report_html
    assert "weather record is short &lt;1 yr&gt;" in report_html


def test_run_record_is_pretty_printed(report_html):
    """The run record shows as indented JSON with the SHA-256 of the inputs."""
    record = re.search(r'<pre class="record">(.*?)</pre>', report_html, re.S).group(1)
    assert json.loads(html.unescape(record))["inputs"]["scenario.toml"]["sha256"] == "ab" * 32
    assert '\n  "version"' in html.unescape(record)


def test_missing_summary_column_raises_and_writes_nothing(tmp_path):
    """A sites table without a verdict column is refused before the file is written."""
    path = tmp_path / "report.html"
    with pytest.raises(InputError, match="verdict"):
        _write(path, sites=_sites().drop(columns="verdict"))
    assert not path.exists()


def test_figure_png_returns_png_bytes():
    """figure_png renders a plain Figure with the Agg canvas to PNG bytes."""
    fig = Figure(figsize=(2, 2))
    fig.add_subplot().plot([0, 1], [0, 1])
    assert figure_png(fig).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_with_hostile_names():
    """Names with $ and backslashes are drawn as plain text (no mathtext error)."""
    assert pc_vs_distance_figure(_sites()).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_without_positive_values():
    """A table without positive deposition still gives a PNG (a note instead of points)."""
    sites = _sites().assign(pc_dep_max_kg_n_ha_yr=0.0)
    assert pc_vs_distance_figure(sites).startswith(PNG_MAGIC)


def test_deposition_figure_returns_png():
    """The deposition figure draws grid, site outlines, sources and a contour."""
    rows, cols = np.mgrid[0:30, 0:40]
    grid = 20.0 * np.exp(-np.hypot(rows - 15, cols - 20) / 6.0)  # synthetic, spans ~0.01-20
    grid[0, 0] = np.nan
    sites = gpd.GeoDataFrame({"name": ["a$b$\\c"]}, geometry=[box(100, -300, 300, -100)])
    sources = gpd.GeoDataFrame({"source_id": ["H1"]}, geometry=[Point(500, -375)])
    png = deposition_figure(
        grid,
        west_m=0.0,
        north_m=0.0,
        cell_m=25.0,
        sites=sites,
        sources=sources,
        contours=[(1.0, "1 $kg$")],
        crs_label="EPSG:32632",
    )
    assert png.startswith(PNG_MAGIC)


def test_class_edges_follow_the_data_range():
    """Class edges come from the 1-3-10 series, topped by the first edge above the maximum."""
    edges = deposition_class_edges(np.array([[0.5, 20.0], [np.nan, 1.0]]))
    np.testing.assert_allclose(edges, [0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30])  # analytic
    assert deposition_class_edges(np.full((2, 2), np.nan))[-1] == pytest.approx(30.0)


def test_format_number_significant_digits():
    """format_number keeps 3 significant digits, adds the unit and marks missing values."""
    assert format_number(0.012345, "kg N/ha/yr") == "0.0123 kg N/ha/yr"
    assert format_number(1234.5) == "1230"
    assert format_number(np.nan, "%") == "n/a"
    assert format_number(0.0) == "0"
