"""End-to-end checks of the demo's report.html against its sites.csv, read with html.parser."""

from __future__ import annotations

from html.parser import HTMLParser

import pandas as pd
import pytest

from siting.presentation.formats import format_for_column, format_percent, is_missing

SECTION_ORDER = [
    "summary",
    "inputs",
    "method",
    "cautious",
    "figures",
    "warnings",
    "cautions",
    "run-record",
]

#: Cells of a summary row after Site | Verdict | Habitat, by the header of their column
#: (label + unit as the page shows them) -> the sites.csv column they show.
SUMMARY_NUMBER_HEADERS = {
    "Critical levelµg NH3/m³": "critical_level_ug_m3",
    "PC maxµg NH3/m³": "pc_conc_max_ug_m3",
    "PC% of level": "pc_pct_level",
    "Critical loadkg N/ha/yr": "critical_load_used_kg_n_ha_yr",
    "PC maxkg N/ha/yr": "pc_dep_max_kg_n_ha_yr",
    "PC% of load": "pc_pct_load",
    "In-comb.% of load": "incomb_pct_load",
    "Threshold%": "threshold_percent",
}

#: Headers of the net-change table -> the sites.csv column each shows.
CHANGE_HEADERS = {
    "Net changeµg NH3/m³": "net_conc_max_ug_m3",
    "Net change% of level": "net_pct_level",
    "Net changekg N/ha/yr": "net_dep_max_kg_n_ha_yr",
    "Net change% of load": "net_pct_load",
    "In-combinationkg N/ha/yr": "incomb_dep_max_kg_n_ha_yr",
    "In-combination% of load": "incomb_pct_load",
    "Backgroundkg N/ha/yr": "background_dep_kg_n_ha_yr",
    "Background + PCkg N/ha/yr": "pec_dep_kg_n_ha_yr",
    "Background + PC% of load": "pec_pct_load",
}

#: Percentages the summary compares with the site's threshold (shown with extra decimals
#: where one decimal would make them read as equal to it).
THRESHOLD_COMPARED = {"pc_pct_level", "pc_pct_load"}


class _Cell:
    """One table cell: its class, its whole text and the text inside each classed <span>."""

    def __init__(self, css: str) -> None:
        self.css = css
        self.parts: list[str] = []
        self.spans: dict[str, str] = {}

    @property
    def text(self) -> str:
        """The cell's text with runs of whitespace collapsed."""
        return " ".join("".join(self.parts).split())


class _Table:
    """A parsed table: its class, the ids of the elements around it, header and body rows."""

    def __init__(self, css: str, inside: tuple[str, ...]) -> None:
        self.css = css
        self.inside = inside
        self.head: list[list[_Cell]] = []
        self.body: list[list[_Cell]] = []
        self.in_head = False


class _ReportParser(HTMLParser):
    """Collects sections, tables, images and every src/href value of a page."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.sections: list[str] = []
        self.tables: list[_Table] = []
        self.images: list[dict[str, object]] = []
        self.urls: list[str] = []
        self._ids: list[str | None] = []  # id of each open element that may hold others
        self._open_tables: list[_Table] = []
        self._cell: _Cell | None = None
        self._spans: list[str] = []

    def handle_starttag(self, tag, attrs):
        """Track containers, tables, rows, cells, spans and images."""
        attributes = dict(attrs)
        for name in ("src", "href"):
            if attributes.get(name) is not None:
                self.urls.append(attributes[name])
        css = attributes.get("class") or ""
        if tag == "section":
            self.sections.append(attributes.get("id") or "")
        if tag in ("section", "div", "figure"):
            self._ids.append(attributes.get("id"))
        inside = tuple(i for i in self._ids if i)
        if tag == "img":
            self.images.append(
                {"src": attributes.get("src") or "", "alt": attributes.get("alt"), "inside": inside}
            )
        elif tag == "table":
            table = _Table(css, inside)
            self.tables.append(table)
            self._open_tables.append(table)
        elif tag == "span" and self._cell is not None:
            self._spans.append(css)
        elif len(self._open_tables) == 1:  # rows and cells of a table inside a cell are its text
            table = self._open_tables[-1]
            if tag == "thead":
                table.in_head = True
            elif tag == "tbody":
                table.in_head = False
            elif tag == "tr":
                (table.head if table.in_head else table.body).append([])
            elif tag in ("td", "th"):
                self._cell = _Cell(css)
                (table.head if table.in_head else table.body)[-1].append(self._cell)

    def handle_endtag(self, tag):
        """Close containers, tables, cells and spans."""
        if tag in ("section", "div", "figure") and self._ids:
            self._ids.pop()
        elif tag == "table" and self._open_tables:
            self._open_tables.pop()
        elif tag in ("td", "th") and len(self._open_tables) == 1:
            self._cell = None
            self._spans.clear()
        elif tag == "span" and self._spans:
            self._spans.pop()

    def handle_data(self, data):
        """Text goes to the open cell, and to the innermost classed span inside it."""
        if self._cell is None:
            return
        self._cell.parts.append(data)
        if self._spans and self._spans[-1]:
            key = self._spans[-1]
            self._cell.spans[key] = self._cell.spans.get(key, "") + data


@pytest.fixture(scope="module")
def demo_out(demo_output):
    """The table-mode demo run once (`siting demo --quiet`, report.pdf too; the session's run
    of conftest.py): its output folder."""
    return demo_output


@pytest.fixture(scope="module")
def demo(demo_out):
    """The demo's (parsed report.html, its raw text, sites.csv)."""
    text = (demo_out / "report.html").read_text(encoding="utf-8")
    parser = _ReportParser()
    parser.feed(text)
    parser.close()
    return parser, text, pd.read_csv(demo_out / "sites.csv")


def _tables_in(parser: _ReportParser, section: str, css: str) -> list[_Table]:
    """Tables of a section whose class list holds `css`, in page order."""
    return [t for t in parser.tables if section in t.inside and css in t.css.split()]


def _percent_as_shown(value, threshold) -> str:
    """A % compared with the threshold as the summary shows it: 1 decimal, and more while the
    rounded value would read as the threshold (1.04 against 1 shows "1.04", not "1.0")."""
    if is_missing(value) or is_missing(threshold):
        return format_for_column(value, "pc_pct_load")
    value, threshold = float(value), float(threshold)
    decimals = 1
    text = format_percent(value, decimals)
    while value != threshold and text == format_percent(threshold, decimals) and decimals < 6:
        decimals += 1
        text = format_percent(value, decimals)
    return text


def _number_headers(table: _Table) -> list[str]:
    """Header (label + unit) of each number column of the summary, left to right.

    The summary has two header rows: Site, Verdict, Habitat and Threshold span both, the
    concentration and deposition groups hold the other number columns in the second row.
    """
    top, sub = table.head
    assert [c.text for c in top[:3]] == ["Sitedesignation", "Verdict", "Habitat"]
    return [c.text for c in sub] + [top[-1].text]


def test_sections_come_in_the_documented_order(demo):
    """Summary, inputs, method, figures, warnings, cautions, run record: in that order."""
    parser, _, _ = demo
    assert parser.sections == SECTION_ORDER


def test_summary_table_equals_sites_csv(demo):
    """Each summary row shows its sites.csv row, formatted by the presentation helpers."""
    parser, _, sites = demo
    table = _tables_in(parser, "summary", "summary")[0]
    columns = [SUMMARY_NUMBER_HEADERS[h] for h in _number_headers(table)]
    assert [c for c in columns if c != "incomb_pct_load"] == [
        "critical_level_ug_m3", "pc_conc_max_ug_m3", "pc_pct_level",
        "critical_load_used_kg_n_ha_yr", "pc_dep_max_kg_n_ha_yr", "pc_pct_load",
        "threshold_percent"]  # fmt: skip
    assert len(table.body) == len(sites)
    for row, (_, site) in zip(table.body, sites.iterrows()):
        site_cell, verdict_cell, habitat_cell, *numbers = row
        assert site_cell.spans["site-name"] == site["name"]
        designation = None if is_missing(site["designation"]) else site["designation"]
        assert site_cell.spans.get("sub") == designation
        assert (
            verdict_cell.spans[next(k for k in verdict_cell.spans if k.startswith("verdict "))]
            == site["verdict"]
        )
        habitat = site["habitat_name"] if not is_missing(site["habitat_name"]) else site["habitat"]
        assert habitat_cell.text == habitat
        assert len(numbers) == len(columns)
        for cell, column in zip(numbers, columns):
            if column in THRESHOLD_COMPARED:
                expected = _percent_as_shown(site[column], site["threshold_percent"])
            else:
                expected = format_for_column(site[column], column)
            assert cell.text == expected, (site["name"], column)


def test_net_change_table_equals_sites_csv(demo):
    """The net-change table shows every filled net_* column and the deposition in-combination
    and background + PC columns of sites.csv, each value as formatted by format_for_column."""
    parser, _, sites = demo
    tables = _tables_in(parser, "summary", "summary")
    # the summary, the net-change table, then the demo's options side by side
    assert len(tables) == 3
    table = tables[1]
    shown = [CHANGE_HEADERS[h] for h in (c.text for c in table.head[0][1:]) if h in CHANGE_HEADERS]
    assert len(shown) == len(table.head[0]) - 1  # every header is a known sites.csv column
    filled = [c for c in sites.columns if sites[c].notna().any()]
    for column in ("net_conc_max_ug_m3", "net_pct_level", "net_dep_max_kg_n_ha_yr",
                   "net_pct_load", "incomb_dep_max_kg_n_ha_yr", "incomb_pct_load",
                   "pec_dep_kg_n_ha_yr", "pec_pct_load"):  # fmt: skip
        assert (column in shown) == (column in filled), column
    assert len(table.body) == len(sites)
    for row, (_, site) in zip(table.body, sites.iterrows()):
        assert row[0].text == site["name"]
        for cell, column in zip(row[1:], shown):
            assert cell.text == format_for_column(site[column], column), (site["name"], column)


def test_every_image_is_an_inline_png(demo):
    """Every <img> is a data: URL, so the report opens offline."""
    parser, _, _ = demo
    assert parser.images
    assert all(str(i["src"]).startswith("data:image/png;base64,") for i in parser.images)


def test_weather_part_holds_the_wind_rose(demo):
    """The weather subsection of the inputs shows a wind rose of the frequency table."""
    parser, _, _ = demo
    roses = [i for i in parser.images if "weather" in i["inside"]]
    assert roses and "inputs" in roses[0]["inside"]
    assert any("wind rose" in str(i["alt"]).lower() for i in roses)


def test_no_external_urls(demo):
    """No src or href points outside the file (only #anchors and data: URLs)."""
    parser, text, _ = demo
    assert parser.urls
    for url in parser.urls:
        assert not url.lower().startswith(("http://", "https://", "//")), url
        assert url.startswith(("#", "data:")), url
    assert "<script" not in text.lower()


class _Headings(HTMLParser):
    """The text of every <h2> and <h3> of a page, and of its cautions list."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.headings: list[str] = []
        self.cautions: list[str] = []
        self._in: str | None = None
        self._in_cautions = False

    def handle_starttag(self, tag, attrs):
        """Open a heading, or a caution inside the cautions box."""
        if tag in ("h2", "h3"):
            self._in = tag
            self.headings.append("")
        elif tag == "div" and dict(attrs).get("class") == "cautions":
            self._in_cautions = True
        elif tag == "li" and self._in_cautions:
            self._in = "li"
            self.cautions.append("")

    def handle_endtag(self, tag):
        """Close what was open."""
        if tag == self._in:
            self._in = None
        elif tag == "div":
            self._in_cautions = False

    def handle_data(self, data):
        """Text of the open heading or caution."""
        if self._in in ("h2", "h3"):
            self.headings[-1] += data
        elif self._in == "li":
            self.cautions[-1] += data


def _words(text: str) -> str:
    """Text with every run of whitespace one space (a PDF breaks lines where it likes)."""
    return " ".join(text.split())


def test_report_pdf_is_the_report_laid_out_for_print(demo_out, demo):
    """report.pdf (read with pypdf) opens, has pages, holds every section heading and caution
    of report.html (read from the page, not written out here), "Page 1 of N" at the foot and
    the [project] reference of the demo scenario at the head of later pages."""
    import tomllib

    from pypdf import PdfReader

    from siting.readers.resources import demo_dir

    _, text, _ = demo
    page = _Headings()
    page.feed(text)
    assert len(page.headings) > 8 and page.cautions
    reader = PdfReader(demo_out / "report.pdf")
    n = len(reader.pages)
    assert n >= 2
    pages = [_words(p.extract_text()) for p in reader.pages]
    whole = " ".join(pages)
    for heading in page.headings:
        assert _words(heading) in whole, heading
    for caution in page.cautions:
        assert _words(caution) in whole, caution
    for i, shown in enumerate(pages, start=1):
        assert f"Page {i} of {n}" in shown
    with open(demo_dir() / "scenario.toml", "rb") as handle:
        reference = tomllib.load(handle)["project"]["reference"]
    assert reference in pages[0]  # the cover
    assert all(reference in shown for shown in pages[1:])  # the running header
    assert '"sha256":' not in whole  # the raw run record (collapsed on screen) is left out


def test_the_pdf_is_hashed_in_run_json(demo_out):
    """report.pdf is written before run.json, which records its SHA-256 and size."""
    import hashlib
    import json

    record = json.loads((demo_out / "run.json").read_text(encoding="utf-8"))
    data = (demo_out / "report.pdf").read_bytes()
    assert record["outputs"]["report.pdf"] == {
        "sha256": hashlib.sha256(data).hexdigest(),
        "bytes": len(data),
    }
