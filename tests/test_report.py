"""Tests of siting.presentation.report: report.html structure, escaping, inlined figures, helpers."""

from __future__ import annotations

import html
import json
import re

import numpy as np
import pandas as pd
import pytest
from synthetic import NAMES, hostile_sites

from siting.errors import InputError
from siting.output.screen import write_report
from siting.presentation.figures import figure_png, pc_vs_distance_figure

CAUTIONS = [
    "Screening estimate from a simplified model (flat terrain, no building wake, long-term means);"
    " not a substitute for detailed modelling by qualified practitioners.",
    "Emission factors and deposition velocities carry wide uncertainty.",
    "Local regulations and the competent authority decide.",
]


FLAG = "reduction 95 % is outside the published range 70-90 % for <scrubber>"
LONG_CITATION = "invented key, Table 9, " + "a long citation text " * 12 + "(from memory)"


def _sources(n_extra: int = 0) -> pd.DataFrame:
    """Two sources with a partial emission derivation, plus `n_extra` plain ones."""
    sources = pd.DataFrame(
        {
            "source_id": ["H1", "STORE<1>"],
            "kind": ["point", "area"],
            "role": ["proposed", "existing"],
            "x_m": [500123.4, 500200.0],
            "y_m": [5800456.7, 5800300.0],
            "places": [2000.0, np.nan],
            "factor_nh3_kg_per_place_yr": [2.813, np.nan],
            "factor_source": [LONG_CITATION, "given in scenario"],
            "nh3_unabated_kg_yr": [5626.0, 300.0],
            "abatement": ["acid_scrubber", ""],
            "reduction_percent": [95.0, np.nan],
            "reduction_flag": [FLAG, ""],
            "treated_air_fraction": [0.5, np.nan],
            "nh3_kg_yr": [2953.65, 300.0],
            "emission_g_s": [0.0935975, 0.0095066],
            "empty_column": [np.nan, None],
            "stack_diameter_m": [1.2, np.nan],
        }
    )
    extra = pd.DataFrame(
        {
            "source_id": [f"X{i}" for i in range(n_extra)],
            "kind": "volume",
            "role": "other",
            "x_m": 501000.0,
            "y_m": 5801000.0,
            "nh3_kg_yr": 100.0,
            "emission_g_s": 0.00317,
        }
    )
    return pd.concat([sources, extra], ignore_index=True) if n_extra else sources


WEATHER = {
    "station": "Invented <station>",
    "sectors": 12,
    "speed_classes_m_s": [1.5, 3.0, 5.0, 8.0],
    "mean_speed_m_s": 4.50287580435,
    "stability_share": {"A": 0.0131608995, "B": 0.06139564970000001, "D": 0.9254434508},
    "prevailing_from_deg": 240.0,
    "share_raised_to_min_speed": 0.0,
    "calm_fraction": 0.021,
}

RUN_RECORD = {
    "tool": "siting",
    "version": "0.1.0",
    "inputs": {
        "scenario": {"path": "/data/farm/scenario.toml", "sha256": "ab" * 32},
        "weather": {"path": "/data/farm/weather <x>.csv", "sha256": "cd" * 32},
    },
    "parameters": {
        "crs": "EPSG:32632",
        "weather": {"land_type": "rural", "mixing_height_m": None, "min_wind_speed_m_s": 1.0},
        "deposition": {"plume_depletion": True},
        "source": [{"id": "H1"}],
    },
    "versions": {"python": "3.11.7", "numpy": "2.4.6"},
    "warnings": ["weather record is short <1 yr>"],
}


def _write(path, **overrides) -> str:
    """Write a report with synthetic inputs and return its HTML."""
    habitat_values = pd.DataFrame(
        {
            "habitat": ["raised_bog", "oak_woodland"],
            "habitat_name": ["Raised bog", "Oak woodland"],
            "critical_load_min_kg_n_ha_yr": [5.0, 10.0],
            "critical_load_max_kg_n_ha_yr": [10.0, 15.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 10.0],
            "critical_level_ug_m3": [1.0, 1.0],
            "land_cover": ["short_vegetation", "woodland"],
            "deposition_velocity_m_s": [0.02, 0.03],
            "deposition_velocity_source": ["velocity key, Table 2", "velocity key, Table 2"],
            "source": ["key A, Table 1 (from memory)", "key B, p. 12 & <note>"],
        }
    )
    arguments = {
        "title": "Farm <Nord>",
        "version": "0.1.0",
        "run_time": "2024-05-01T12:00:00Z",
        "scenario_file": "scenario.toml",
        "sites": hostile_sites(),
        "sources": _sources(),
        "weather_summary": WEATHER,
        "habitat_values": habitat_values,
        "warnings": ["weather record is short <1 yr>"],
        "cautions": CAUTIONS,
        "method_notes": ["Sector-averaged Gaussian plume, flat terrain."],
        "run_record": RUN_RECORD,
        "figures": {"PC by distance": figure_png(pc_vs_distance_figure(hostile_sites()))},
    }
    arguments.update(overrides)
    write_report(path, **arguments)
    return path.read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def report_html(tmp_path_factory) -> str:
    """The report written once for the read-only checks."""
    return _write(tmp_path_factory.mktemp("report") / "report.html")


def _summary_body(text: str) -> str:
    """The <tbody> of the summary table."""
    match = re.search(r'<table class="summary[^"]*">.*?<tbody>(.*?)</tbody>', text, re.S)
    assert match
    return match.group(1)


def _between(text: str, start: str, end: str) -> str:
    """The part of `text` from `start` up to `end` (both must occur, in that order)."""
    i = text.index(start)
    return text[i : text.index(end, i)]


def _derivation_tables(text: str) -> list[str]:
    """Every block of the transposed sources table."""
    return re.findall(r'<table class="derivation">.*?</table>', text, re.S)


def _row(table: str, label: str) -> str:
    """The <tr> of a transposed table whose row header is `label`."""
    match = re.search(r"<tr[^>]*><th scope=\"row\">" + re.escape(label) + r"</th>.*?</tr>", table)
    assert match, label
    return match.group(0)


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
    assert "STORE&lt;1&gt;" in report_html and "STORE<1>" not in report_html


def test_summary_table_has_one_row_per_site(report_html):
    """The summary table body holds exactly one row per site."""
    body = _summary_body(report_html)
    assert body.count("<tr") == len(NAMES)
    assert body.count('class="site-row"') == len(NAMES)


def test_summary_puts_site_and_verdict_first(report_html):
    """Each summary row opens with the site (designation below its name), then the verdict."""
    rows = re.findall(r'<tr class="site-row">(.*?)</tr>', _summary_body(report_html), re.S)
    for row, name in zip(rows, NAMES):
        cells = re.findall(r"<td[^>]*>(.*?)</td>", row, re.S)
        assert html.escape(name, quote=True) in cells[0]
        assert 'class="verdict ' in cells[1]
    assert 'class="sub">&lt;b&gt;SSSI&lt;/b&gt;</span>' in rows[1]  # designation under the name
    assert len(re.findall(r"<td", rows[0])) == 10  # compact: no separate designation column


def test_summary_shows_formatted_figures_and_verdict_styles(report_html):
    """Concentrations keep 3 significant digits, percentages 1 decimal; verdicts are styled."""
    body = _summary_body(report_html)
    assert ">1.23<" in body  # 1.234 ug/m3 at 3 significant digits
    assert ">123.4<" in body and ">250.0<" in body  # % of level / load to 1 decimal
    assert ">0.4<" in body and ">1.0<" in body  # % of load; threshold 1 %
    assert 'class="num over">250.0<' in body  # above the 1 % threshold: marked
    assert 'class="verdict verdict-above"' in body
    assert 'class="verdict verdict-below"' in body
    assert 'class="verdict verdict-none"' in body
    assert "n/a" in body  # the not-assessed site's missing figures


def test_summary_keeps_decimals_where_rounding_would_meet_the_threshold(tmp_path):
    """1.04 % against a 1 % threshold shows as 1.04, not as 1.0 (which would read as equal)."""
    sites = hostile_sites()
    sites.loc[1, ["pc_pct_load", "threshold_percent"]] = [1.04, 1.0]
    body = _summary_body(_write(tmp_path / "report.html", sites=sites))
    assert 'class="num over">1.04<' in body


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
        "4. Cautious choices and sensitivity",
        "5. Figures",
        "6. Warnings",
        "7. Cautions",
        "8. Run record",
    ):
        assert f">{heading}</h2>" in report_html
    assert report_html.index('class="caution-line"') < report_html.index("<h1")
    for caution in CAUTIONS:
        assert html.escape(caution) in report_html
    assert "tr, img, figure { page-break-inside: avoid; break-inside: avoid; }" in report_html
    assert "thead { display: table-header-group; }" in report_html
    assert "@media print" in report_html


def test_sources_table_is_transposed_with_a_column_per_source(report_html):
    """One column per source headed by its id, one row per derivation step in plain words."""
    (table,) = _derivation_tables(report_html)
    head = re.search(r"<thead>(.*?)</thead>", table, re.S).group(1)
    assert re.findall(r"<th[^>]*>(.*?)</th>", head) == ["Source id", "H1 ⚠", "STORE&lt;1&gt;"]
    labels = re.findall(r'<th scope="row">(.*?)</th>', table)
    assert labels.index("Kind of source") < labels.index("Emission factor [kg NH3/place/yr]")
    assert labels.index("NH3 emitted [kg/yr]") < labels.index("Source strength [g/s]")
    assert "Stack diameter [m]" in labels  # a column outside the known steps: label from its name
    assert "empty_column" not in report_html and "Empty column" not in report_html  # all empty
    assert "factor_nh3_kg_per_place_yr" not in table  # raw names give way to labels
    for row in re.findall(r"<tr[^>]*>(.*?)</tr>", table.split("<tbody>")[1], re.S):
        if "step-group" not in row and "colspan" not in row:
            assert len(re.findall(r"<td", row)) == 2  # one cell per source


def test_sources_table_formats_by_column_meaning(report_html):
    """Coordinates to 0.1 m, places whole, g/s to 4 and kg/yr to 4 significant digits."""
    (table,) = _derivation_tables(report_html)
    assert ">500123.4<" in _row(table, "Position x (easting) [m]")  # not 500000
    assert ">5800456.7<" in _row(table, "Position y (northing) [m]")
    assert ">2000<" in _row(table, "Animal places")
    assert ">2.813<" in _row(table, "Emission factor [kg NH3/place/yr]")
    assert ">0.0936<" in _row(table, "Source strength [g/s]")  # 0.0935975 at 4 digits
    assert ">2954<" in _row(table, "NH3 emitted [kg/yr]")  # large: whole kg
    assert ">50.0<" in _row(
        table, "Share of the ammonia treated over the year [%]"
    )  # fraction 0.5 as %
    assert ">95.0<" in _row(table, "Reduction by the technique [%]")


def test_sources_table_citations_wrap_and_flag_stands_out(report_html):
    """A citation is a numbered mark in its cell, its text listed once under the table (issue
    16: status notes such as "from memory" as footnotes); a reduction flag is a warning cell
    and a notice."""
    (table,) = _derivation_tables(report_html)
    row = _row(table, "Where the factor comes from")
    assert re.findall(r'<td class="note-mark"><sup class="ref">\[(\d+)\]</sup></td>', row) == [
        "1",
        "2",
    ]
    assert "from memory" not in table  # the status stands in the note, not in the cell
    notes = _between(report_html, '</table>\n<div class="table-notes">', "</ol>")
    items = re.findall(r"<li>(.*?)</li>", notes)
    assert items == [html.escape(LONG_CITATION), "given in scenario"]
    assert f'<td class="flag">⚠ {html.escape(FLAG)}</td>' in table
    assert '<th class="flagged" scope="col">H1 ⚠</th>' in table
    summary = _between(report_html, 'id="summary"', 'id="inputs"')
    assert "outside its published range" in summary


def test_sources_table_is_split_into_blocks_that_fit_the_page(tmp_path):
    """Eight sources give two blocks, of six and two columns."""
    text = _write(tmp_path / "report.html", sources=_sources(n_extra=6))
    blocks = _derivation_tables(text)
    assert len(blocks) == 2
    assert [b.split("</thead>")[0].count('scope="col"') - 1 for b in blocks] == [6, 2]


def test_weather_summary_is_readable(report_html):
    """Labels in plain words with units, shares as %, lists joined; no raw dict or list."""
    weather = _between(report_html, "<h3>Weather</h3>", "<h3>Habitats")
    assert "{" not in weather and "}" not in weather and "[1.5" not in weather
    assert "0.0131608995" not in weather
    assert "Wind speed classes [m/s]" in weather and ">1.5, 3, 5, 8<" in weather
    assert "<th>A</th>" in weather and ">1.3 %<" in weather and ">92.5 %<" in weather
    assert ">4.5<" in weather  # mean speed at 3 significant digits
    assert "240 (WSW)" in weather
    assert "Calm [%]" in weather and ">2.1<" in weather  # unknown key: label from its name
    assert "Invented &lt;station&gt;" in weather


def test_habitat_values_cite_sources_as_numbered_notes(report_html):
    """Each distinct source text is listed once under the table and referenced by number."""
    habitats = _between(report_html, "<h3>Habitats", "<h3>Screening thresholds")
    notes = re.search(r'<ol class="cite-list">(.*?)</ol>', habitats, re.S).group(1)
    assert notes.count("<li>") == 3  # two habitat sources + one shared velocity source
    assert notes.count("velocity key, Table 2") == 1
    assert "key B, p. 12 &amp; &lt;note&gt;" in notes
    assert ">5–10<" in habitats  # critical load range
    assert "Oak woodland" in habitats and "oak_<wbr>woodland" in habitats


def test_thresholds_and_model_settings_are_shown(report_html):
    """The screening thresholds used and the scenario's model settings are in section 2."""
    inputs = _between(report_html, 'id="inputs"', 'id="method"')
    assert "<h3>Screening thresholds used</h3>" in inputs
    settings = _between(inputs, "<h3>Model settings</h3>", "</table>")
    # labels in words with units; a value left at its default says so, a none says what it
    # means; "not set" is never shown (issue 16 items 2 and 3)
    assert re.search(r"Land type of the dispersion coefficients</th><td>rural <span[^>]*>"
                     r"\(default\)", settings)  # fmt: skip
    assert re.search(r"Mixing height: a reflecting lid \[m\]</th><td>none: no lid <span", settings)
    assert re.search(r"Plume depleted by what it deposits</th><td>yes</td>", settings)  # set
    assert "not set" not in settings
    assert ">H1<" not in settings  # sources are section 2's derivation, not repeated


def test_run_record_is_shown_as_tables_and_raw_json(report_html):
    """Inputs list file name and SHA-256 (monospace), versions are a table; raw JSON is kept."""
    record = _between(report_html, 'id="run-record"', "</section>")
    files = _between(record, "<h4>Input files</h4>", "</table>")
    assert "<td>scenario.toml<" in files and "/data/farm" in files
    assert "weather &lt;x&gt;.csv" in files
    assert f'<td class="mono">{"ab" * 32}</td>' in files
    versions = _between(record, "<h4>Software versions</h4>", "</table>")
    assert "<th>numpy</th>" in versions and ">2.4.6<" in versions
    raw = re.search(r'<details><summary>.*?</summary><pre class="record">(.*?)</pre>', record, re.S)
    parsed = json.loads(html.unescape(raw.group(1)))
    assert parsed["inputs"]["scenario"]["sha256"] == "ab" * 32
    assert '\n  "version"' in html.unescape(raw.group(1))


def test_missing_summary_column_raises_and_writes_nothing(tmp_path):
    """A sites table without a verdict column is refused before the file is written."""
    path = tmp_path / "report.html"
    with pytest.raises(InputError, match="verdict"):
        _write(path, sites=hostile_sites().drop(columns="verdict"))
    assert not path.exists()


def test_net_change_table_lists_each_site():
    """The net-change/in-combination table shows each site's net change when present."""
    import pandas as pd

    from siting.presentation.report import _change_table

    sites = pd.DataFrame(
        {
            "name": ["A", "B"],
            "net_conc_max_ug_m3": [0.012, -0.3],
            "net_pct_load": [1.5, -4.0],
            "background_dep_kg_n_ha_yr": [None, None],
        }
    )
    html_text = _change_table(sites)
    assert "Net change" in html_text and html_text.count("<tr>") == 3
    assert "Background" not in html_text.split("<thead>")[1].split("</thead>")[0]
    assert _change_table(pd.DataFrame({"name": ["A"]})) == ""


def test_weather_figures_follow_the_weather_summary(tmp_path):
    """Weather charts sit in section 2 right after the weather table, not among the figures."""
    png = figure_png(pc_vs_distance_figure(hostile_sites()))
    text = _write(tmp_path / "report.html", weather_figures={"Wind rose <of the table>": png})
    weather = _between(text, '<div class="weather" id="weather"><h3>Weather</h3>', "<h3>Habitats")
    table_end = weather.index("</table>")
    figure = weather.index('<figure><img src="data:image/png;base64,')
    assert table_end < figure
    assert "<figcaption>Wind rose &lt;of the table&gt;</figcaption>" in weather
    figures = _between(text, 'id="figures"', "</section>")
    assert "Wind rose" not in figures and "section 2, under Weather" in figures


def test_no_weather_figures_by_default(report_html):
    """Without weather figures the weather part holds the table only, and no empty note."""
    weather = _between(report_html, "<h3>Weather</h3>", "<h3>Habitats")
    assert "<figure" not in weather and 'class="empty"' not in weather


def test_weather_figure_that_is_not_png_is_refused(tmp_path):
    """A weather figure that is not PNG bytes raises before anything is written."""
    path = tmp_path / "report.html"
    with pytest.raises(InputError, match="Wind rose"):
        _write(path, weather_figures={"Wind rose": b"GIF89a"})
    assert not path.exists()


def test_print_css_sets_a4_and_keeps_blocks_whole(report_html):
    """Print CSS: A4 portrait, headings kept with what follows, figures capped in height."""
    assert "@page { size: A4 portrait;" in report_html
    print_css = report_html[report_html.index("@media print") : report_html.index("</style>")]
    assert "h1, h2, h3, h4 { page-break-after: avoid; break-after: avoid; }" in print_css
    assert "tr.step-group { page-break-after: avoid; break-after: avoid; }" in print_css
    assert "figure img { max-height:" in print_css


def test_many_sites_all_in_the_summary_in_layer_order(tmp_path):
    """400 sites (the four synthetic ones 100 times): every one has its summary row, in
    layer order, and each row reads as the same site's row in the four-site report
    (cross-check of the column-wise, remembered cell formatting against the small report)."""
    many = pd.concat([hostile_sites()] * 100, ignore_index=True)
    many["name"] = [f"{name} #{i}" for i, name in enumerate(many["name"])]
    body = _summary_body(_write(tmp_path / "many.html", sites=many, figures={}))
    rows = re.findall(r'<tr class="site-row">(.*?)</tr>', body, re.S)
    assert len(rows) == len(many)
    small = re.findall(
        r'<tr class="site-row">(.*?)</tr>',
        _summary_body(_write(tmp_path / "few.html", figures={})),
        re.S,
    )
    for i in (0, 1, 2, 3, 397, 398, 399):
        suffix = html.escape(f" #{i}")
        assert rows[i].replace(suffix, "", 1) == small[i % 4], i


def test_remembered_cells_keep_types_apart():
    """The cell memory tells True, 1 and 1.0 apart (they hash alike but may format apart)."""
    from siting.presentation.report import _cached

    calls = []
    cell = _cached(lambda value: calls.append(value) or type(value).__name__)
    assert [cell(True), cell(1), cell(1.0), cell(1.0)] == ["bool", "int", "float", "float"]
    assert len(calls) == 3  # the second 1.0 was remembered


def test_threshold_sources_are_numbered_notes(tmp_path):
    """Each designation's threshold cites its source by a numbered mark; a source shared by
    two designations is one note, listed once under the table with its status words."""
    sites = hostile_sites()
    shared = "rule set key, Table 1 (from memory)"
    sites["tier"] = ["international", "national", "local", "international"]
    sites["designation"] = ["SAC", "SSSI", "local", "SPA"]
    sites["threshold_source"] = [shared, "another key, p. 4 (confirmed)", "", shared]
    text = _write(tmp_path / "report.html", sites=sites)
    part = _between(text, "<h3>Screening thresholds used</h3>", "<h3>Model settings</h3>")
    table = part[: part.index("</table>")]
    marks = re.findall(r'<td class="note-mark"><sup class="ref">\[(\d+)\]</sup></td>', table)
    assert marks == ["1", "2", "1"]  # SAC, SSSI, SPA; the local tier has no source
    assert "from memory" not in table and "confirmed" not in table
    notes = re.findall(r"<li>(.*?)</li>", part[part.index('<div class="table-notes">') :])
    assert notes == [shared, "another key, p. 4 (confirmed)"]
