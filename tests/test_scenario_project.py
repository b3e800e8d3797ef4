"""The scenario's optional [project] table (siting.readers.scenario_sections.ProjectSection):
validated like every section, recorded in run.json and shown at the top of the report.

Expected values are read from the demo scenario file itself (tomllib), or are this project's
own contract for messages (STYLE.md section 5). That a [project] table changes no figure is
checked by tests/test_demo_unchanged.py: the demo carries one, and its tables match the golden
files.
"""

from __future__ import annotations

import datetime
import html
import re
import shutil
import tomllib
from pathlib import Path

import pytest

import siting.presentation.report as report
from siting.errors import InputError
from siting.output.records import _project_record
from siting.readers.resources import demo_dir
from siting.readers.scenario import load_scenario


def _demo_project() -> dict:
    """The demo scenario's [project] table as TOML reads it."""
    with open(demo_dir() / "scenario.toml", "rb") as handle:
        return tomllib.load(handle)["project"]


@pytest.fixture
def scenario_with(tmp_path):
    """A copy of the demo whose [project] table is replaced by the given TOML lines."""

    def make(lines: str) -> Path:
        folder = tmp_path / "demo"
        shutil.copytree(demo_dir(), folder, dirs_exist_ok=True)
        path = folder / "scenario.toml"
        text = path.read_text(encoding="utf-8")
        start = text.index("[project]\n")
        end = text.index("\n[weather]")
        path.write_text(text[:start] + "[project]\n" + lines + "\n" + text[end:], encoding="utf-8")
        return path

    return make


def test_the_demo_project_is_read():
    """The demo's [project] values come through as written; the TOML date is a date."""
    project = load_scenario(demo_dir() / "scenario.toml").project
    expected = _demo_project()
    assert isinstance(expected["date"], datetime.date)
    for key, value in expected.items():
        assert getattr(project, key) == value, key


def test_an_unknown_project_key_is_refused_with_a_suggestion(scenario_with):
    """A misspelt key: one line naming the section and the key, with the closest known key."""
    with pytest.raises(
        InputError, match=r'project: unknown key aplicant; did you mean "applicant"'
    ):
        load_scenario(scenario_with('aplicant = "Someone"'))


def test_project_texts_lose_control_characters(scenario_with):
    """Line breaks and tabs become one space, escapes and bidirectional overrides are dropped,
    the ends stripped (the text is shown on one line of a page)."""
    path = scenario_with(
        'site = "  Lane 3\\n\\tVillage\\u001b[31m  "\nauthor = "A\\u202eB\\u0000C"'
    )
    project = load_scenario(path).project
    assert project.site == "Lane 3 Village[31m"
    assert project.author == "ABC"


@pytest.mark.parametrize(
    "lines, match",
    [
        ('reference = "' + "R" * 101 + '"', r"project: reference: must be at most 100 characters"),
        ('site = "' + "S" * 301 + '"', r"project: site: must be at most 300 characters"),
        ('applicant = "  \\n "', r"project: applicant: must not be blank"),
        ("applicant = 42", r"project: applicant must be text in quotes, got 42"),
        ('date = "14/03/2025"', r"project: date: must be an ISO date YYYY-MM-DD"),
        ("date = 2025-03-14T10:00:00", r"project: date: must be a date without a time"),
    ],
    ids=["reference too long", "site too long", "blank", "not text", "not ISO", "a time"],
)
def test_bad_project_values_are_refused(scenario_with, lines, match):
    """Each bad value: one InputError naming the key and what is expected."""
    with pytest.raises(InputError, match=match):
        load_scenario(scenario_with(lines))


def test_a_long_refused_text_is_cut_in_the_message(scenario_with):
    """The message repeats a refused text only in part (a page of it would drown the line)."""
    with pytest.raises(InputError) as caught:
        load_scenario(scenario_with('reference = "' + "R" * 5000 + '"'))
    assert len(str(caught.value)) < 250 and "(5000 characters)" in str(caught.value)


def test_an_iso_date_text_is_a_date(scenario_with):
    """The date may be given as ISO text too."""
    project = load_scenario(scenario_with('date = "2024-11-30"')).project
    assert project.date == datetime.date.fromisoformat("2024-11-30")


def test_run_json_records_the_project_as_given():
    """run.json's "project" holds the keys given, the date as ISO text; none without one."""
    scenario = load_scenario(demo_dir() / "scenario.toml")
    recorded = _project_record(scenario)["project"]
    expected = _demo_project()
    assert recorded == {
        k: (v.isoformat() if isinstance(v, datetime.date) else v) for k, v in expected.items()
    }
    assert _project_record(scenario.model_copy(update={"project": None})) == {}


def test_the_report_shows_the_project_at_the_top(tmp_path):
    """The cover lists each given key under the title, escaped; the reference cell sets the
    running header's text (class doc-ref); a key not given gets no row."""
    from test_templates import _report_arguments

    arguments = _report_arguments()
    arguments["run_record"] = {
        "tool": "siting",
        "project": {"applicant": "Invented <Farm> & Co", "reference": "REF/1"},
    }
    page = report.render_report(**arguments)
    cover = page[page.index('<header class="cover">') : page.index("</header>")]
    rows = re.findall(r'<tr><th scope="row">(.*?)</th><td([^>]*)>(.*?)</td></tr>', cover)
    assert rows == [
        ("Applicant", "", html.escape("Invented <Farm> & Co")),
        ("Reference", ' class="doc-ref"', "REF/1"),
    ]
    assert page.index("</header>") < page.index('id="summary"')
    assert "project: see the top of the report" in page.lower()
