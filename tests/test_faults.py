"""Faults and bad input over every command, table-driven (the table: tests/faults_cases.py).

Each case runs one command in-process (``siting.cli.main``) in a workspace of its own and
asserts, from the README's exit-code table and --overwrite rule:

* the exit code;
* exactly one line on stderr, no traceback, and the line names the culprit (the case's regex:
  the key, file, line, feature or option);
* a before/after snapshot of the whole workspace (inputs, the current folder, the output folder
  and its parent; every file by size and SHA-256, every folder, hidden ones included): for a
  refused or failed run nothing is written and nothing is lost or changed, a previous output
  folder given with --overwrite comes out byte-identical, and no staging or backup folder is
  left behind;
* for a refusal "before any work": the computation is never started (it is replaced by a stub
  that fails the case if called);
* for an interrupt (exit 130): the same state, either at once or after the next run into the
  same folder has tidied up (README: "the next run into the same folder removes the dead run's
  staging folder and, if it died mid-swap, puts the previous result back"). The next run is a
  real command (`siting verify <missing> --out <same folder>`) run as if the interrupted process
  had died (``outputs._alive`` says so for this process's id).

Cases that must compute use the demo with a 200 m grid; the interrupt and write-failure cases
of ``screen`` reuse the result of the earlier run (``cached_screen``): they test the writing.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import faults_cases as fc
import pytest

from siting.cli import main

# --------------------------------------------------------------------------------------------
# fixtures: the inputs template and an earlier successful run (once per module)
# --------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def template(tmp_path_factory) -> Path:
    """The inputs every case copies (demo with a coarse grid, a week's hourly record, farms)."""
    return fc.make_template(tmp_path_factory.mktemp("faults_template"))


@pytest.fixture(scope="module")
def earlier_run(template, tmp_path_factory):
    """An earlier successful `siting screen ... --overwrite` of the template's scenario: its
    output folder (copied into cases as the previous output) and its ScreenResult (reused by the
    cases that test writing only)."""
    screen_module = fc._mod("siting.cli.screen")  # where `siting screen` looks it up
    real = screen_module.screen
    kept = {}

    def keep(*args, **kwargs):
        kept["result"] = real(*args, **kwargs)
        return kept["result"]

    out = tmp_path_factory.mktemp("faults_earlier") / "out"
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(screen_module, "screen", keep)
        rc = main(
            [
                "screen",
                str(template / "inputs" / "scenario.toml"),
                "--out",
                str(out),
                "--overwrite",
                "--quiet",
            ]
        )
    assert rc == 0 and (out / "run.json").is_file() and (out / ".siting-output").is_file()
    return out, kept["result"]


# --------------------------------------------------------------------------------------------
# running a case
# --------------------------------------------------------------------------------------------


def _run(argv: list[str]) -> int:
    """The CLI in-process; argparse's own errors end in SystemExit, taken as the exit code."""
    try:
        return main(argv)
    except SystemExit as exc:
        return exc.code if isinstance(exc.code, int) else 1


#: The computation of each command, replaced for "before any work" cases: where each command's
#: module (siting.cli.<command>) looks it up.
_WORK = [
    ("siting.cli.screen", "screen"),
    ("siting.cli.place", "place"),
    ("siting.cli.region", "region"),
    ("siting.cli.verify", "verify"),
    ("siting.cli.weather", "read_hourly_record"),
]


def _no_work(mp) -> None:
    import importlib

    def started(*args, **kwargs):
        raise AssertionError("work began before the output folder was checked")

    for module, name in _WORK:
        mp.setattr(importlib.import_module(module), name, started)


def _next_run_tidies(ws, capsys) -> None:
    """The next run into the same output folder, as if this process had died: a real command
    whose output folder check tidies what an interrupted run left (and which then fails on its
    missing submission, or refuses the existing folder: it writes nothing itself)."""
    outputs = fc._mod("siting.output.folder")
    real_alive = outputs._alive
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(outputs, "_alive", lambda pid: False if pid == os.getpid() else real_alive(pid))
        rc = _run(["verify", str(ws / "no-such-submission"), "--out", str(ws.out), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2, err


@pytest.mark.parametrize("case", fc.CASES, ids=[c.id for c in fc.CASES])
def test_fault(case: fc.Case, tmp_path, monkeypatch, capsys, template, earlier_run):
    """One fault of the table: exit code, one line naming the culprit, nothing written or lost."""
    if case.needs_permissions and os.geteuid() == 0:
        pytest.skip("running as root, who ignores folder permissions")
    prior_out, cached = earlier_run
    ws = fc.Workspace.create(tmp_path / "ws", template, prior_out)
    if case.prior:
        ws.copy_prior()
    if case.setup is not None:
        case.setup(ws)
    argv = case.argv(ws)
    monkeypatch.chdir(ws / case.cwd)
    before = fc.snapshot(ws.root)
    capsys.readouterr()
    with pytest.MonkeyPatch.context() as mp:
        if case.before_work:
            _no_work(mp)
        if case.cached_screen:
            mp.setattr(fc._mod("siting.cli.screen"), "screen", lambda *a, **k: cached)
        if case.patch is not None:
            case.patch(ws, mp)
        rc = _run(argv)
    err = capsys.readouterr().err
    lines = [line for line in err.splitlines() if line.strip()]
    kept = "" if case.rc == 3 else _take_traceback(err)  # an unexpected bug's traceback file
    try:
        # README exit-code table: the exit code, and one line on stderr naming the culprit
        assert rc == case.rc, f"exit code {rc}, expected {case.rc}; stderr: {err[-1500:]}" + (
            f"\ntraceback (file removed):\n{kept}" if kept else ""
        )
        assert "Traceback" not in err, err[-1500:]
        assert len(lines) == 1, f"{len(lines)} lines on stderr, expected one:\n{err[-1500:]}"
        assert re.search(case.message, lines[0]), (
            f"the line does not name the culprit /{case.message}/:\n{lines[0]}"
        )
        if case.check is not None:
            case.check(ws, lines[0])
        after = fc.snapshot(ws.root)
        if case.written:
            # a run that completes: only its output folder appears; nothing else changes
            lost = {
                k
                for k in before
                if after.get(k) != before[k] and not (k == "out" or k.startswith("out/"))
            }  # out: the run's own
            foreign = {
                k for k in set(after) - set(before) if not (k == "out" or k.startswith("out/"))
            }
            assert not lost and not foreign, fc.describe_changes(before, after)
            return
        if case.rc == 130 and after != before:
            # README: the next run into the same folder tidies what the interrupted run left
            _next_run_tidies(ws, capsys)
            after = fc.snapshot(ws.root)
            assert after == before, "after the next run: " + fc.describe_changes(before, after)
        # README exit-code table: nothing written, nothing lost, the earlier folder kept
        assert after == before, fc.describe_changes(before, after)
    finally:
        _take_traceback(err)  # never leave a traceback file in the temp folder
        _make_removable(ws.root)


def _take_traceback(err: str) -> str:
    """The tail of a traceback file named on stderr (exit 3), the file removed (not left in the
    temp folder by every run of the suite); "" if none."""
    match = re.search(r"the traceback is in (\S+)", err)
    if not match or not Path(match.group(1)).is_file():
        return ""
    path = Path(match.group(1))
    text = path.read_text(encoding="utf-8")
    path.unlink()
    return "\n".join(text.splitlines()[-8:])


def _make_removable(root: Path) -> None:
    """Give back write permission taken by a case, so pytest can delete its tmp_path."""
    for dirpath, dirnames, _ in os.walk(root):
        for name in dirnames:
            path = Path(dirpath) / name
            if not path.is_symlink():
                path.chmod(0o755)


def test_the_table_is_large_and_covers_every_command():
    """At least 80 cases, over every command (issue item: the fault suite)."""
    assert len(fc.CASES) >= 80  # issue item: "at least 80 cases over all commands"
    commands = {c.argv(fc.Workspace(Path("/ws"), Path("/t"), Path("/p")))[0] for c in fc.CASES}
    assert commands >= {"screen", "demo", "weather", "place", "verify", "region"}, commands
    interrupts = [c for c in fc.CASES if c.rc == 130]
    assert len(interrupts) >= 10  # issue item: interrupts at each stage of writing
