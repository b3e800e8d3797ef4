"""Checks of report.html of `siting region` (siting.presentation.region_report, written by
siting.output.region).

A small regional run (12 invented farms of tests/test_region.py's generator, 200 m cells, the
demo habitats, rule set germany-2021 so that some sites are judged and some are not) is made
once through the command line. The page is read back with the standard library's html.parser;
expected values are the run's own tables (sites.csv, contributors.csv, run.json) and the
cautions the run carries (siting.runs.regional.CAUTIONS).
"""

from __future__ import annotations

import hashlib
import html
import json
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest
from test_region import _farms

from siting.cli import main
from siting.output.region import write_region_outputs
from siting.presentation.formats import PACKAGE_MARK, shown_path
from siting.presentation.region_report import render_region_report
from siting.readers.resources import config_dir, demo_dir
from siting.runs.region_inputs import RegionOptions
from siting.runs.regional import CAUTIONS, region

SECTIONS = ["summary", "sites", "contributors", "method", "cautions", "warnings", "run-record"]
RULES = "germany-2021"  # has in-combination rules for one tier only (config/rules)


class _Page(HTMLParser):
    """The parts of report.html the checks read: section ids, the rows of the sites and
    contributors tables (their data-site-id and each cell's class and text), the page text."""

    def __init__(self) -> None:
        super().__init__()
        self.sections: list[str] = []
        self.rows: list[tuple[str, str, list[tuple[str, str]]]] = []
        self.badges: dict[str, str] = {}
        self.text: list[str] = []
        self._row = None
        self._cell = None
        self._badge = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section":
            self.sections.append(a.get("id", ""))
        elif tag == "tr" and a.get("class") in ("site-row", "contributor"):
            self._row = (a["class"], a["data-site-id"], [])
            self.rows.append(self._row)
        elif tag == "td" and self._row is not None:
            self._cell = [a.get("class", ""), ""]
        elif tag == "span" and "verdict " in (a.get("class") or "") and self._row is not None:
            self._badge = ""

    def handle_endtag(self, tag):
        if tag == "td" and self._cell is not None:
            self._row[2].append((self._cell[0], self._cell[1].strip()))
            self._cell = None
        elif tag == "span" and self._badge is not None:
            self.badges[self._row[1]] = self._badge
            self._badge = None
        elif tag == "tr":
            self._row = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell[1] += data
        if self._badge is not None:
            self._badge += data


def _parse(page: str) -> _Page:
    parser = _Page()
    parser.feed(page)
    return parser


@pytest.fixture(scope="module")
def farms_file(tmp_path_factory) -> Path:
    """12 invented farms (every third a house footprint) over 5 x 5 km around the demo sites."""
    path = tmp_path_factory.mktemp("report_farms") / "farms.gpkg"
    _farms(12, seed=3, half_side_m=2500.0).to_file(path, driver="GPKG")
    return path


@pytest.fixture(scope="module")
def run(tmp_path_factory, farms_file) -> dict:
    """`siting region` into a folder of its own; the page, its parse and the run's tables."""
    out = tmp_path_factory.mktemp("report_out") / "region"
    code = main(
        ["region", str(farms_file), "--weather", str(demo_dir() / "weather_table.csv"),
         "--habitats", str(demo_dir() / "habitats.gpkg"), "--out", str(out), "--spacing", "200",
         "--margin", "1000", "--scheduler", "none", "--top", "4", "--rules", RULES, "--quiet"]
    )  # fmt: skip
    assert code == 0
    page = (out / "report.html").read_text(encoding="utf-8")
    return {
        "out": out,
        "page": page,
        "parsed": _parse(page),
        "sites": pd.read_csv(out / "sites.csv"),
        "contributors": pd.read_csv(out / "contributors.csv"),
        "record": json.loads((out / "run.json").read_text(encoding="utf-8")),
    }


def test_sections_in_order(run):
    """The page has the seven sections, in order."""
    assert run["parsed"].sections == SECTIONS


def test_sites_table_has_every_site_with_its_verdict(run):
    """Each site of sites.csv is a row of the sites table, its badge its verdict in sites.csv."""
    sites = run["sites"]
    parsed = run["parsed"]
    rows = [r for r in parsed.rows if r[0] == "site-row"]
    assert sorted(r[1] for r in rows) == sorted(sites["site_id"])
    assert parsed.badges == dict(zip(sites["site_id"], sites["verdict"]))
    # the run judged some sites and left others unjudged: both kinds are on the page
    assert sites["verdict"].str.startswith("no in-combination rule").any()
    assert not sites["verdict"].str.startswith("no in-combination rule").all()


def test_site_figures_are_the_sites_table(run):
    """The four figures of each row are sites.csv's, to the page's 3 significant figures or
    1 decimal of a percentage."""
    sites = run["sites"].set_index("site_id")
    columns = ["incomb_conc_max_ug_m3", "incomb_pct_level", "incomb_dep_max_kg_n_ha_yr",
               "incomb_pct_load"]  # fmt: skip
    for _, site_id, cells in (r for r in run["parsed"].rows if r[0] == "site-row"):
        shown = [float(text) for css, text in cells if css == "num"]
        for value, column in zip(shown, columns):
            expected = sites.loc[site_id, column]
            if "pct" in column:
                assert value == pytest.approx(expected, abs=0.05 + 1e-9)  # 1 decimal
            else:
                assert value == pytest.approx(expected, rel=5e-3)  # 3 significant figures


def test_contributors_shares_equal_the_contributions_table(run):
    """Every (site, farm) of contributors.csv is a row with its share of the site's total."""
    table = run["contributors"]
    shown = {}
    for _, site_id, cells in (r for r in run["parsed"].rows if r[0] == "contributor"):
        farm = next(text for css, text in cells if css == "farm")
        share = next(text for css, text in cells if "share" in css.split())
        shown[(site_id, farm)] = float(share)
    assert set(shown) == set(zip(table["site_id"], table["farm_id"]))
    for row in table.itertuples():
        # format_percent: 1 decimal
        expected = row.share_of_site_total_percent
        assert shown[(row.site_id, row.farm_id)] == pytest.approx(expected, abs=0.05 + 1e-9)


def test_summary_counts_the_verdicts(run):
    """The summary's counts: sites that do not pass, pass, and are not judged (sites.csv)."""
    sites = run["sites"]
    unjudged = sites["verdict"] == f"no in-combination rule in {RULES}"
    expected = {
        "count-not-passing": int((~sites["passes"] & ~unjudged).sum()),
        "count-passing": int((sites["passes"] & ~unjudged).sum()),
        "count-not-judged": int(unjudged.sum()),
    }
    for css, count in expected.items():
        assert f'<td class="num {css}">{count}</td>' in run["page"]
    assert sum(expected.values()) == len(sites)


def test_cautions_and_rule_set_are_stated(run):
    """Every caution of the run is on the page, and the rule set by its id and title."""
    text = html.unescape("".join(run["parsed"].text))
    for caution in CAUTIONS:
        assert caution in text
    assert "Screening estimate" in text and "competent authority" in text
    assert run["record"]["rules"]["id"] in text and run["record"]["rules"]["title"] in text


def test_no_absolute_path_in_the_page(run, farms_file, tmp_path_factory):
    """No folder of the machine: not the temporary folders, the package's, nor the home."""
    page = run["page"]
    for folder in (tmp_path_factory.getbasetemp(), run["out"], farms_file.parent,
                   demo_dir().parent, Path.home(), Path.cwd()):  # fmt: skip
        assert str(folder) not in page, folder
    # the farms file relative to the output folder, the demo files below the package
    assert "../../" + farms_file.parent.name + "/farms.gpkg" in page
    assert html.escape(f"{PACKAGE_MARK}/data_demo/weather_table.csv") in page


def test_report_is_hashed_in_run_json(run):
    """run.json lists report.html among the outputs with the file's true SHA-256."""
    entry = run["record"]["outputs"]["report.html"]
    digest = entry["sha256"] if isinstance(entry, dict) else entry
    assert digest == hashlib.sha256((run["out"] / "report.html").read_bytes()).hexdigest()


def test_page_is_offline(run):
    """No script and no link or source outside the page."""
    page = run["page"].lower()
    assert "<script" not in page
    assert "http://" not in page and "https://" not in page and "src=" not in page


def test_warnings_are_listed_without_their_paths(farms_file, tmp_path):
    """A warning naming an input by its absolute path is shown with the path relative."""
    result = region(
        farms_file,
        demo_dir() / "weather_table.csv",
        None,
        RegionOptions(spacing_m=200.0, margin_m=500.0, scheduler=None),
    )
    message = f"farms layer {farms_file}: an invented warning for this test"
    out = write_region_outputs(replace(result, warnings=[message]), tmp_path / "out")
    page = (out / "report.html").read_text(encoding="utf-8")
    assert str(tmp_path) not in page and str(farms_file.parent) not in page
    assert "an invented warning for this test" in page
    parsed = _parse(page)
    assert parsed.sections == SECTIONS and not parsed.rows  # no habitat layer: no site rows
    assert "No habitat layer was given" in page


def test_shown_path_is_never_absolute(tmp_path):
    """shown_path: below the package as siting/..., relative in a shared tree, else the name."""
    table = config_dir() / "thresholds.toml"
    assert shown_path(table, tmp_path) == f"{PACKAGE_MARK}/config/thresholds.toml"
    (tmp_path / "in").mkdir()
    assert shown_path(tmp_path / "in" / "f.gpkg", tmp_path / "out" / "run") == "../../in/f.gpkg"
    assert shown_path("/nowhere-a/b/f.gpkg", "/nowhere-c/d") == "f.gpkg"  # only / in common


def test_markup_in_user_text_is_escaped(run):
    """A site name, farm id and title with markup are text on the page, never markup (common
    practice, no source: user text is never markup)."""
    markup = '<script>alert(1)</script> & "x"'
    sites = run["sites"].assign(name=markup)
    contributors = run["contributors"].assign(farm_id=markup)
    farms = pd.DataFrame({"farm_id": [markup], "nh3_kg_yr": [1000.0]})
    page = render_region_report(
        title=markup, sites=sites, contributors=contributors, farms=farms,
        record=run["record"], cautions=CAUTIONS, warnings=[markup], out_dir=run["out"],
    )  # fmt: skip
    assert markup not in page and "<script" not in page.lower()
    escaped = html.escape(markup, quote=True)
    assert f'<span class="site-name">{escaped}</span>' in page
    assert f'<td class="farm">{escaped}</td>' in page
    assert f"<h1>{escaped}</h1>" in page


def test_no_region_output_names_a_folder_of_the_machine(farms_file, tmp_path):
    """The issue's check for the region command: no output file's text (run.json, report.html,
    map.html, the CSV tables) holds the temporary folder or siting's package folder, even
    with a warning naming an input by its absolute path."""
    import siting

    result = region(
        farms_file,
        demo_dir() / "weather_table.csv",
        None,
        RegionOptions(spacing_m=200.0, margin_m=500.0, scheduler=None),
    )
    message = f"farms layer {farms_file}: an invented warning for this test"
    out = write_region_outputs(replace(result, warnings=[message]), tmp_path / "out")
    package = str(Path(siting.__file__).resolve().parent)
    texts = [p for p in out.rglob("*") if p.suffix in (".json", ".html", ".csv")]
    assert {"run.json", "report.html", "map.html"} <= {p.name for p in texts}
    for path in texts:
        text = path.read_text(encoding="utf-8")
        assert str(tmp_path) not in text and package not in text, path.name
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    assert "an invented warning for this test" in record["warnings"][0]
