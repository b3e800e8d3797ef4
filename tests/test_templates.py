"""Tests of the jinja2 templates behind report.html and verify.html (siting/presentation/templates/):
user text with markup is escaped in both pages, and a name a template uses but is not given
fails loudly instead of leaving a blank."""

from __future__ import annotations

import html

import jinja2
import pandas as pd
import pytest
from synthetic import hostile_sites

import siting.presentation.report as report
import siting.presentation.verify_report as verify_report
from siting.presentation.html_parts import render

#: A site name holding a script element, an ampersand and double quotes.
MARKUP_NAME = '<script>alert(1)</script> & "x"'
#: The same name as the pages show it: html.escape(MARKUP_NAME, quote=True) of the Python
#: standard library, written out by hand (the entities the pages used before the templates).
ESCAPED_NAME = "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;x&quot;"


def _report_arguments() -> dict:
    """A small screening report: the synthetic sites, the first one named MARKUP_NAME."""
    sites = hostile_sites()
    sites.loc[0, "name"] = MARKUP_NAME
    return {
        "title": f"Farm {MARKUP_NAME}",
        "version": "0.1.0",
        "run_time": "2024-05-01T12:00:00Z",
        "scenario_file": "scenario.toml",
        "sites": sites,
        "sources": pd.DataFrame({"source_id": ["H1"], "nh3_kg_yr": [100.0]}),
        "weather_summary": {"station": "Invented"},
        "habitat_values": pd.DataFrame({"habitat": ["raised_bog"]}),
        "warnings": [],
        "cautions": ["Screening estimate only; local rules decide."],
        "method_notes": ["Gaussian plume."],
        "run_record": {"tool": "siting"},
        "figures": {},
    }


def _verify_arguments() -> dict:
    """A small verification report: one site, MARKUP_NAME, in the differences and the
    sensitivity tables, and a finding about it."""
    long = pd.DataFrame(
        {
            "site": [MARKUP_NAME] * 2,
            "variant": ["central", "deposition velocity high"],
            "pct_load": [0.9, 1.2],
            "pct_level": [0.3, 0.4],
            "verdict": ["below threshold", "above threshold"],
        }
    )
    summary = pd.DataFrame(
        {
            "site": [MARKUP_NAME],
            "central_pct_load": [0.9],
            "min_pct_load": [0.9],
            "max_pct_load": [1.2],
            "central_verdict": ["below threshold"],
            "verdict_flips": [True],
            "flipping_variants": ["deposition velocity high"],
        }
    )
    return {
        "submission": "applications/out",
        "submitted_version": "0.1.0",
        "this_version": "0.1.0",
        "run_time": "2025-03-14T10:22:05Z",
        "verdict": "Not consistent: 1 figure differs.",
        "exit_code": 1,
        "integrity": [],
        "differences": [
            {
                "table": "sites",
                "id": MARKUP_NAME,
                "column": "pc_pct_load",
                "submitted": 1.0,
                "recomputed": 1.1,
                "relative_difference": 0.1,
                "explained_by": "",
            },
        ],  # fmt: skip
        "tolerance_text": "relative 1e-3",
        "findings": [
            {
                "code": "SITE_NOTE",
                "severity": "info",
                "subject": f"site {MARKUP_NAME}",
                "message": "A note.",
                "evidence": {"site": MARKUP_NAME},
            },
        ],  # fmt: skip
        "sensitivity": long,
        "sensitivity_summary": summary,
        "cautions": ["Screening estimate only; local rules decide."],
    }


def test_markup_in_a_site_name_is_escaped_in_the_screening_report():
    """The site name and the title are text in report.html: escaped wherever they appear, the
    script element never raw (common practice, no source: user text is never markup)."""
    page = report.render_report(**_report_arguments())
    assert MARKUP_NAME not in page
    assert "<script" not in page.lower()
    summary = page[page.index('<table class="summary') : page.index("</table>")]
    assert f'<span class="site-name">{ESCAPED_NAME}</span>' in summary
    assert f'<h1 class="doc-title">Farm {ESCAPED_NAME}</h1>' in page
    assert f"<title>Farm {ESCAPED_NAME} · siting report</title>" in page


def test_markup_in_a_site_name_is_escaped_in_the_verification_report():
    """The same name in verify.html (differences, findings, evidence, sensitivity): escaped
    everywhere, the script element never raw (common practice, no source)."""
    page = verify_report.render_verify_report(**_verify_arguments())
    assert MARKUP_NAME not in page
    assert "<script" not in page.lower()
    # differences table, finding subject, evidence, both sensitivity tables, flip lead
    assert page.count(ESCAPED_NAME) >= 6
    assert f'<span class="site-name">{ESCAPED_NAME}</span>' in page
    assert f'<tr class="step-group"><th colspan="4">{ESCAPED_NAME}</th></tr>' in page
    assert html.unescape(ESCAPED_NAME) == MARKUP_NAME  # the check string is the name itself


def _context(monkeypatch, module, arguments: dict) -> tuple[str, dict]:
    """The template name and the values `module`'s page function hands to render()."""
    seen = {}

    def capture(template, /, **context):
        seen["template"], seen["context"] = template, context
        return render(template, **context)

    monkeypatch.setattr(module, "render", capture)
    page_function = getattr(module, "render_report", None) or module.render_verify_report
    page_function(**arguments)
    return seen["template"], seen["context"]


@pytest.mark.parametrize(
    ("module", "arguments", "left_out"),
    [
        (report, _report_arguments, "verdict_counts"),
        (report, _report_arguments, "run_record"),
        (verify_report, _verify_arguments, "tolerance"),
        (verify_report, _verify_arguments, "sensitivity"),
    ],
)
def test_a_value_the_template_needs_but_is_not_given_fails_loudly(
    monkeypatch, module, arguments, left_out
):
    """Leaving one value out of a page's context raises UndefinedError naming it, instead of
    rendering a blank (StrictUndefined; jinja2 documentation). The whole context renders."""
    template, context = _context(monkeypatch, module, arguments())
    assert render(template, **context).startswith("<!DOCTYPE html>")
    del context[left_out]
    with pytest.raises(jinja2.UndefinedError, match=left_out):
        render(template, **context)


def test_an_attribute_missing_from_a_value_fails_loudly(monkeypatch):
    """A key missing inside a value the page does get (the report's summary without its rows)
    raises too: the template reads it, and StrictUndefined refuses to print or loop over it."""
    template, context = _context(monkeypatch, report, _report_arguments())
    del context["summary"]["rows"]
    with pytest.raises(jinja2.UndefinedError, match="rows"):
        render(template, **context)
