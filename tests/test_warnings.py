"""Warnings as a warning class of the package, collected per run (issue 13 item 6).

Library code issues a SitingWarning (siting/errors.py) where it finds the condition; each run
keeps the messages it raised on its result, in order, each once, and issues them on. Library
messages name Python parameters, never command-line options: the CLI shows each parameter an
error or warning lists as the option of its command.

Expected values: the messages and option names are the ones the code and siting/cli/options.py
define (the property checked is where they end up, not their wording); the demo's empty list is
what ``siting demo`` printed before this change (no "warning:" line; common practice, no source:
observed by hand and kept in the task notes).
"""

from __future__ import annotations

import ast
import re
import warnings
from pathlib import Path

import pytest
from test_screen import _write_case

import siting
from siting.cli import main
from siting.cli.options import build_parser, flags_by_parameter
from siting.cli.terminal import with_flags
from siting.errors import (
    AccuracyWarning,
    InputError,
    InputWarning,
    SitingWarning,
    WarningText,
    WeatherWarning,
    collect_warnings,
    collecting_warnings,
)
from siting.runs.screening import screen

ROOT = Path(siting.__file__).parent

#: A reduction above the published lower end (70 % for the biological scrubber,
#: config/abatement.toml) with no reduction_basis: accepted with an InputWarning.
CLAIM = 'abatement = "biological_scrubber"\nreduction_percent = 90'


def _raise(*messages, category=InputWarning):
    for message in messages:
        warnings.warn(message, category, stacklevel=2)


# --- the collection ----------------------------------------------------------------------------


def test_a_warning_raised_twice_is_kept_once_in_order():
    """Messages in the order raised, a repeat dropped, category and parameters kept."""
    with collect_warnings(reissue=False) as found:
        _raise("first", "second", "first")
        warnings.warn(AccuracyWarning("third", parameters=("spacing_m",)), stacklevel=1)
    assert found.messages == ["first", "second", "third"]
    assert [m.category for m in found.messages] == [InputWarning, InputWarning, AccuracyWarning]
    assert found.messages[2].parameters == ("spacing_m",)
    assert isinstance(found.messages[0], str)  # result.warnings stays a list of str


def test_a_warning_of_another_kind_is_not_collected_but_passes_on():
    """numpy's RuntimeWarning or a deprecation is not the user's warning: not on the list, and
    shown as before."""
    with warnings.catch_warnings(record=True) as outside:
        warnings.simplefilter("always")
        with collect_warnings() as found:
            warnings.warn("divide by zero", RuntimeWarning, stacklevel=1)
            _raise("a doubtful input")
    assert found.messages == ["a doubtful input"]
    assert [(w.category, str(w.message)) for w in outside] == [
        (RuntimeWarning, "divide by zero"),
        (InputWarning, "a doubtful input"),
    ]


def test_collected_warnings_are_issued_on_through_the_filters_outside():
    """Issued on once each when the block ends; an "ignore" outside hides them from the
    display but not from the collection; nested blocks both collect."""
    with warnings.catch_warnings(record=True) as outside:
        warnings.simplefilter("always")
        with collect_warnings() as outer:
            with collect_warnings() as inner:
                _raise("x", "x", "y")
            _raise("z")
    assert inner.messages == ["x", "y"] and outer.messages == ["x", "y", "z"]
    assert [str(w.message) for w in outside] == ["x", "y", "z"]
    with warnings.catch_warnings(record=True) as outside:
        warnings.simplefilter("ignore", SitingWarning)
        with collect_warnings() as hidden:
            _raise("kept")
    assert hidden.messages == ["kept"] and outside == []


def test_an_error_filter_raises_where_the_warning_is_found():
    """simplefilter("error", InputWarning) turns the warning into an exception at once; other
    kinds are still collected."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", InputWarning)
        with collect_warnings(reissue=False) as found:
            _raise("coarse", category=AccuracyWarning)
            with pytest.raises(InputWarning, match="doubtful"):
                _raise("doubtful")
    assert found.messages == ["coarse"]


def test_weather_warnings_are_input_warnings():
    """The kinds nest as documented: filtering InputWarning also catches WeatherWarning."""
    assert issubclass(WeatherWarning, InputWarning) and issubclass(InputWarning, SitingWarning)
    assert issubclass(AccuracyWarning, SitingWarning) and issubclass(SitingWarning, UserWarning)


def test_decorated_run_adds_its_warnings_after_those_it_holds():
    """collecting_warnings: the result's own list first, then what the run raised, once each."""

    class Result:
        def __init__(self):
            self.warnings = ["held"]

    @collecting_warnings
    def run():
        _raise("raised", "held")
        return Result()

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SitingWarning)
        assert run().warnings == ["held", "raised"]


# --- the runs ----------------------------------------------------------------------------------


def test_demo_has_the_warnings_it_showed_before(demo_screen):
    """The demo printed no warning before this change (siting demo, no "warning:" line)."""
    assert demo_screen.warnings == []  # screen(demo_dir() / "scenario.toml"), conftest.py


def test_screen_keeps_and_issues_its_warnings_not_the_sensitivitys(tmp_path):
    """A claim without basis: on the result once, issued once (the sensitivity's re-runs,
    which raise it again, neither add to the list nor show it), and again on a second run
    of the same session."""
    case = _write_case(tmp_path, abatement=CLAIM)
    with warnings.catch_warnings(record=True) as outside:
        warnings.simplefilter("default")  # Python's own: once per place, which a rerun hits
        first = screen(case)
        second = screen(case)
    claim = [w for w in first.warnings if "no reduction_basis" in w]
    assert len(claim) == 1 and claim[0].category is InputWarning
    assert first.warnings == second.warnings and first.sensitivity is not None
    shown = [w for w in outside if "no reduction_basis" in str(w.message)]
    assert len(shown) == 2  # one per run


def test_an_error_filter_stops_the_run(tmp_path):
    """A Python user who makes siting's warnings errors gets the exception from screen()."""
    case = _write_case(tmp_path, abatement=CLAIM)
    with warnings.catch_warnings():
        warnings.simplefilter("error", SitingWarning)
        with pytest.raises(InputWarning, match="no reduction_basis"):
            screen(case)


# --- no command-line options in library messages -----------------------------------------------


def _flags() -> set[str]:
    """Every option string of the command line (top level and every command)."""
    parser = build_parser()
    flags = {s for a in parser._actions for s in a.option_strings}
    commands = next(a for a in parser._actions if a.choices and isinstance(a.choices, dict))
    for sub in commands.choices.values():
        flags |= {s for a in sub._actions for s in a.option_strings}
    return {f for f in flags if f.startswith("--")}


def _literals(tree: ast.AST):
    """(line, text) of every str constant, f-strings' literal parts included."""
    for node in ast.walk(tree):
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            yield node.lineno, node.value


def test_no_library_string_names_a_command_line_option():
    """No string literal in siting/ outside siting/cli/ (docstrings included) contains an
    option of the command line (the list built from siting.cli.options.build_parser())."""
    flags = _flags()
    assert {"--memory-mb", "--overwrite", "--weather"} <= flags  # the parser is read
    pattern = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]*")
    found = []
    for path in sorted(ROOT.rglob("*.py")):
        if "cli" in path.relative_to(ROOT).parts:
            continue
        for line, text in _literals(ast.parse(path.read_text(encoding="utf-8"))):
            named = set(pattern.findall(text)) & flags
            found += [f"{path.relative_to(ROOT)}:{line}: {f}" for f in sorted(named)]
    assert found == []


def test_each_option_is_named_by_the_parameter_it_sets():
    """The table the CLI maps parameters with: argparse's dest -> option string (the options
    as README's command reference names them)."""
    region = flags_by_parameter("region")
    assert region["memory_mb"] == "--memory-mb" and region["spacing_m"] == "--spacing"
    assert region["weather_path"] == "--weather" and region["near_field_cells"] == "--near-field"
    assert flags_by_parameter("verify")["weather_files"] == "--weather"
    assert flags_by_parameter("place")["house_id"] == "--house"
    assert flags_by_parameter("screen")["out_dir"] == "--out"
    assert "spacing_m" not in flags_by_parameter("screen")  # screen has no such option
    assert flags_by_parameter("nonsense") == {}


def test_the_command_line_shows_parameters_as_its_options():
    """Only the parameters the error lists, only where the command has an option for them, not
    inside a path or a longer name, and not written as a scenario key."""
    error = InputError(
        "memory_mb 0.5 is too small; raise memory_mb, use a coarser spacing_m, fewer workers "
        "(memory_mb_total, /data/memory_mb, [grid] memory_mb, grid.memory_mb)",
        parameters=("memory_mb", "spacing_m", "workers"),
    )
    assert with_flags(error, flags_by_parameter("region")) == (
        "--memory-mb 0.5 is too small; raise --memory-mb, use a coarser --spacing, fewer "
        "--workers (memory_mb_total, /data/memory_mb, [grid] memory_mb, grid.memory_mb)"
    )
    assert with_flags(error, flags_by_parameter("screen")) == str(error)  # no such options
    region = flags_by_parameter("region")
    assert with_flags(InputError("workers must be >= 1"), region) == "workers must be >= 1"
    warning = WarningText("the utc_offset_h given (1) is not used", InputWarning, ["utc_offset_h"])
    assert with_flags(warning, flags_by_parameter("weather")) == (
        "the --utc-offset given (1) is not used"
    )


def test_a_region_error_names_the_option_on_the_terminal_and_the_parameter_in_python(
    tmp_path, capsys
):
    """RegionOptions(memory_mb=-1): Python says memory_mb, `siting region` says --memory-mb."""
    from siting.runs.region_inputs import RegionOptions

    with pytest.raises(InputError, match=r"^memory_mb must be a finite number > 0") as refused:
        RegionOptions(memory_mb=-1.0).check()
    assert refused.value.parameters == ("memory_mb",)
    argv = ["region", str(tmp_path / "farms.gpkg"), "--weather", str(tmp_path / "w.csv")]
    assert main([*argv, "--memory-mb", "-1", "--out", str(tmp_path / "out")]) == 2
    assert "siting: error: --memory-mb must be a finite number > 0" in capsys.readouterr().err
