"""report.pdf (siting.presentation.report_pdf, written by siting.output.screen): made offline
from the report page, and when WeasyPrint cannot load, report.html alone with one warning.

The PDF's contents are read with pypdf, an independent library; the demo's report.pdf itself
is checked in tests/test_report_output.py.
"""

from __future__ import annotations

import importlib.abc
import io
import json
import shutil
import sys
import urllib.request

import pytest
from pypdf import PdfReader

from siting.cli import main
from siting.errors import AccuracyWarning
from siting.presentation.report_pdf import pdf_unavailable, report_pdf
from siting.readers.resources import demo_dir

#: A page that asks for things from outside: an image over https, a style sheet over http and
#: a file of the machine. The PDF must be made without fetching any of them.
_GREEDY_PAGE = """<!DOCTYPE html><html><head><meta charset="utf-8">
<link rel="stylesheet" href="http://example.invalid/style.css">
<style>@page { @bottom-right { content: "Page " counter(page) " of " counter(pages); } }</style>
</head><body><h1>Offline</h1><img src="https://example.invalid/x.png">
<img src="file:///etc/hostname"><p style="break-before: page">Second page</p></body></html>"""


def test_the_pdf_renders_offline(monkeypatch):
    """No URL but data: is opened: urllib's opener is never asked for http, https or file,
    and the PDF is still made, with its two pages numbered (pypdf reads them)."""
    opened = []
    original = urllib.request.OpenerDirector.open

    def watching(self, url, *args, **kwargs):
        opened.append(url if isinstance(url, str) else url.full_url)
        return original(self, url, *args, **kwargs)

    monkeypatch.setattr(urllib.request.OpenerDirector, "open", watching)
    reader = PdfReader(io.BytesIO(report_pdf(_GREEDY_PAGE)))
    assert [u for u in opened if not u.startswith("data:")] == []
    assert len(reader.pages) == 2
    assert "Page 2 of 2" in reader.pages[1].extract_text()


class _NoPango(importlib.abc.MetaPathFinder):
    """Makes ``import weasyprint`` fail as it does without the Pango library (OSError)."""

    def find_spec(self, name, path=None, target=None):
        if name == "weasyprint" or name.startswith("weasyprint."):
            raise OSError("cannot load library 'libpango-1.0-0': no such file (test)")
        return None


@pytest.fixture
def no_pango(monkeypatch):
    """WeasyPrint as it is on a machine without Pango, for the test's length."""
    for name in [m for m in sys.modules if m == "weasyprint" or m.startswith("weasyprint.")]:
        monkeypatch.delitem(sys.modules, name)
    monkeypatch.setattr(sys, "meta_path", [_NoPango(), *sys.meta_path])


@pytest.fixture
def no_weasyprint(monkeypatch):
    """WeasyPrint not installed (import raises ImportError), for the test's length."""
    monkeypatch.setitem(sys.modules, "weasyprint", None)


def test_what_is_missing_is_said(no_pango):
    """Without Pango the reason names the library and the Debian packages."""
    assert "Pango" in pdf_unavailable() and "libpango-1.0-0" in pdf_unavailable()


def test_no_weasyprint_is_said(no_weasyprint):
    """Without WeasyPrint the reason says to install it."""
    assert "WeasyPrint is not installed" in pdf_unavailable()


@pytest.fixture(scope="module")
def coarse_demo(tmp_path_factory):
    """A copy of the demo on a coarse grid (quick; the point is which files are written)."""
    folder = tmp_path_factory.mktemp("pdf") / "demo"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    text = scenario.read_text(encoding="utf-8")
    scenario.write_text(text.replace("spacing_m = 25.0", "spacing_m = 100.0", 1), "utf-8")
    return scenario


def test_without_pango_the_run_writes_the_html_and_warns(coarse_demo, tmp_path, no_pango):
    """The Python API: report.html written, no report.pdf, one AccuracyWarning naming what is
    missing, and the run's warnings (so report.html and run.json) list it."""
    from siting.output.screen import write_outputs
    from siting.readers.scenario import load_scenario
    from siting.runs.screening import screen

    result = screen(load_scenario(coarse_demo))
    out = tmp_path / "out"
    with pytest.warns(AccuracyWarning, match=r"report\.pdf not written: .*Pango") as caught:
        write_outputs(result, out)
    assert len([w for w in caught if issubclass(w.category, AccuracyWarning)]) == 1
    assert (out / "report.html").is_file() and not (out / "report.pdf").exists()
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    assert any("report.pdf not written" in w for w in record["warnings"])
    assert "report.pdf" not in record["outputs"]
    section = (out / "report.html").read_text(encoding="utf-8").split('id="warnings"')[1]
    assert "report.pdf not written" in section.split("</section>")[0]


def test_without_weasyprint_the_command_still_succeeds(
    coarse_demo, tmp_path, capsys, no_weasyprint
):
    """`siting screen`: exit 0, report.html but no report.pdf, and the warning line printed."""
    out = tmp_path / "out"
    assert main(["screen", str(coarse_demo), "--out", str(out)]) == 0
    assert (out / "report.html").is_file() and not (out / "report.pdf").exists()
    printed = capsys.readouterr().out
    assert "report.pdf not written: WeasyPrint is not installed" in " ".join(printed.split())


def test_no_pdf_leaves_the_pdf_out(coarse_demo, tmp_path):
    """--no-pdf: no report.pdf and no warning about it."""
    out = tmp_path / "out"
    assert main(["screen", str(coarse_demo), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    assert (out / "report.html").is_file() and not (out / "report.pdf").exists()
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    assert not any("report.pdf" in w for w in record["warnings"])
