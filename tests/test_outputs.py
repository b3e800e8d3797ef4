"""The output folder's staging (outputs.staged_folder): atomic, replaced only with overwrite."""

import os
import stat

import pytest

from siting.errors import OutputExistsError
from siting.output.folder import OUTPUT_MARKER, check_output_dir, staged_folder


def _old_result(out_dir):
    """An earlier output folder of siting (its marker) holding one file."""
    out_dir.mkdir()
    (out_dir / OUTPUT_MARKER).write_text("{}", encoding="utf-8")
    (out_dir / "old.txt").write_text("old result", encoding="utf-8")
    return out_dir


def test_failure_inside_the_block_leaves_nothing(tmp_path):
    """An exception in the block removes the staging folder, writes no output and propagates."""
    out_dir = tmp_path / "out"
    with pytest.raises(RuntimeError, match="half way"):
        with staged_folder(out_dir, overwrite=False) as staging:
            (staging / "part.txt").write_text("partial", encoding="utf-8")
            raise RuntimeError("failed half way")
    assert not staging.exists()
    assert list(tmp_path.iterdir()) == []  # no output folder, no staging or backup left


def test_success_moves_the_staging_folder_into_place(tmp_path):
    """A block that ends normally leaves exactly its files in out_dir and nothing beside it."""
    out_dir = tmp_path / "new" / "out"  # the parent is created too
    with staged_folder(out_dir, overwrite=False) as staging:
        assert staging.parent == out_dir.parent and staging.name.endswith(".partial")
        (staging / "result.txt").write_text("done", encoding="utf-8")
    assert not staging.exists()
    assert sorted(p.name for p in out_dir.iterdir()) == [OUTPUT_MARKER, "result.txt"]
    assert [p.name for p in out_dir.parent.iterdir()] == ["out"]


def test_existing_folder_without_overwrite_is_refused_and_kept(tmp_path):
    """overwrite=False with an existing folder raises OutputExistsError before the block runs."""
    out_dir = _old_result(tmp_path / "out")
    ran = False
    with pytest.raises(OutputExistsError, match="pass overwrite to replace it"):
        with staged_folder(out_dir, overwrite=False):
            ran = True
    assert not ran
    assert sorted(p.name for p in out_dir.iterdir()) == [OUTPUT_MARKER, "old.txt"]
    assert (out_dir / "old.txt").read_text(encoding="utf-8") == "old result"
    assert [p.name for p in tmp_path.iterdir()] == ["out"]  # no staging folder left


def test_overwrite_replaces_the_old_folder_after_success(tmp_path):
    """overwrite=True: the old folder stays whole while the block runs, then is replaced."""
    out_dir = _old_result(tmp_path / "out")
    with staged_folder(out_dir, overwrite=True) as staging:
        (staging / "new.txt").write_text("new result", encoding="utf-8")
        assert (out_dir / "old.txt").read_text(encoding="utf-8") == "old result"
    assert sorted(p.name for p in out_dir.iterdir()) == [OUTPUT_MARKER, "new.txt"]
    assert [p.name for p in tmp_path.iterdir()] == ["out"]  # the backup is deleted


def test_overwrite_keeps_the_old_folder_when_the_block_fails(tmp_path):
    """overwrite=True and a failure in the block: the old folder is left intact."""
    out_dir = _old_result(tmp_path / "out")
    with pytest.raises(RuntimeError, match="failed"):
        with staged_folder(out_dir, overwrite=True) as staging:
            (staging / "new.txt").write_text("new result", encoding="utf-8")
            raise RuntimeError("failed")
    assert sorted(p.name for p in out_dir.iterdir()) == [OUTPUT_MARKER, "old.txt"]
    assert (out_dir / "old.txt").read_text(encoding="utf-8") == "old result"
    assert [p.name for p in tmp_path.iterdir()] == ["out"]


@pytest.mark.skipif(os.name != "posix", reason="POSIX permission bits")
def test_final_folder_has_ordinary_permissions(tmp_path):
    """The output folder is mode 0o755, not mkdtemp's private 0o700 (documented choice)."""
    out_dir = tmp_path / "out"
    with staged_folder(out_dir, overwrite=False):
        pass
    assert stat.S_IMODE(out_dir.stat().st_mode) == 0o755


def test_overwrite_refuses_a_folder_siting_did_not_write(tmp_path):
    """--overwrite replaces only siting's own output folders: a folder of notes is refused and
    kept whole (nothing lost; common practice, no source)."""
    notes = tmp_path / "notes"
    notes.mkdir()
    (notes / "letter.docx").write_text("not an output", encoding="utf-8")
    with pytest.raises(OutputExistsError, match="not a folder siting wrote"):
        with staged_folder(notes, overwrite=True):
            pass
    assert [p.name for p in notes.iterdir()] == ["letter.docx"]


def test_overwrite_refuses_the_current_folder_its_parents_and_input_folders(tmp_path, monkeypatch):
    """Never the current folder or a parent of it, never a folder holding an input, even one
    siting wrote (an output folder whose inputs/ copy is being re-run)."""
    work = _old_result(tmp_path / "work")
    monkeypatch.chdir(work)
    with pytest.raises(OutputExistsError, match="current folder"):
        check_output_dir(work, overwrite=True)
    with pytest.raises(OutputExistsError, match="current folder"):
        check_output_dir(tmp_path, overwrite=True)
    monkeypatch.chdir(tmp_path.parent)
    (work / "inputs").mkdir()
    scenario = work / "inputs" / "scenario.toml"
    scenario.write_text("", encoding="utf-8")
    with pytest.raises(OutputExistsError, match="holds an input.*scenario.toml"):
        check_output_dir(work, overwrite=True, inputs=[scenario])
    check_output_dir(work, overwrite=True, inputs=[tmp_path / "elsewhere.toml"])  # allowed


def test_older_run_records_are_recognised(tmp_path):
    """A folder of an earlier version (a run.json with its inputs, no marker) may be replaced."""
    old = tmp_path / "old"
    old.mkdir()
    (old / "run.json").write_text('{"version": "0.0.9", "inputs": {}}', encoding="utf-8")
    check_output_dir(old, overwrite=True)
    (old / "run.json").write_text("not json", encoding="utf-8")
    with pytest.raises(OutputExistsError, match="not a folder siting wrote"):
        check_output_dir(old, overwrite=True)


def test_csv_text_that_a_spreadsheet_would_evaluate_is_made_literal(tmp_path):
    """A designation "=HYPERLINK(...)" is written with a leading apostrophe (OWASP CSV-injection
    advice, common practice); numbers, negative ones included, are left as numbers; read back
    by verify's reader it is the original text."""
    import pandas as pd

    from siting.output.tables import write_csv
    from siting.readers.submission import _read_csv

    frame = pd.DataFrame(
        {
            "name": ['=HYPERLINK("http://x","y")', "+cmd", "Moss", "-3.5"],
            "x_m": [-12.5, 1.0, 2.0, 3.0],
            "value": [-1.0, 2.0, 3.0, 4.0],
        }
    )
    write_csv(frame, tmp_path / "t.csv")
    text = (tmp_path / "t.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in text and "'+cmd" in text and ",-12.50," in text
    assert "'-3.5" not in text  # a number written as text stays a number
    back = _read_csv(tmp_path / "t.csv", "test")
    assert list(back["name"]) == ['=HYPERLINK("http://x","y")', "+cmd", "Moss", "-3.5"]


def _dead_pid() -> int:
    import subprocess
    import sys

    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_a_run_killed_mid_swap_loses_nothing(tmp_path):
    """Killed between the two renames (the old result moved aside, the new one not yet in
    place): the next run puts the old result back and removes the dead run's staging folder."""
    import json

    out_dir = tmp_path / "out"
    backup = _old_result(tmp_path / ".out.abc123.old")
    partial = tmp_path / ".out.abc123.partial"
    partial.mkdir()
    (partial / OUTPUT_MARKER).write_text(json.dumps({"pid": _dead_pid()}), encoding="utf-8")
    check_output_dir(out_dir, overwrite=True)
    assert (out_dir / "old.txt").read_text(encoding="utf-8") == "old result"
    assert not backup.exists() and not partial.exists()


def test_stale_staging_of_a_dead_run_is_removed_and_a_live_one_kept(tmp_path):
    """A staging folder whose run is gone is removed; one whose run still goes is left alone."""
    import json
    import os

    dead = tmp_path / ".out.dead.partial"
    live = tmp_path / ".out.live.partial"
    for folder, pid in ((dead, _dead_pid()), (live, os.getpid())):
        folder.mkdir()
        (folder / OUTPUT_MARKER).write_text(json.dumps({"pid": pid}), encoding="utf-8")
    check_output_dir(tmp_path / "out", overwrite=False)
    assert not dead.exists() and live.exists()


_HOLDER = """
import sys
from siting.output.folder import staged_folder
with staged_folder(sys.argv[1], overwrite=True) as staging:
    (staging / "first.txt").write_text("first run", encoding="utf-8")
    print("writing", flush=True)
    sys.stdin.readline()  # hold the folder until the test says go
"""


def test_a_second_run_into_a_folder_being_written_stops_with_a_line(tmp_path):
    """While one process writes a folder (it holds the lock), another run into the same folder
    is refused before any work and at its own writing, naming the writer; the first run then
    finishes and leaves no lock (issue 12 item 2: one wins, the others exit 2)."""
    import subprocess
    import sys

    out_dir = tmp_path / "out"
    holder = subprocess.Popen(
        [sys.executable, "-c", _HOLDER, str(out_dir)],
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        text=True,
    )
    try:
        assert holder.stdout.readline().strip() == "writing"  # synchronised, not timed
        message = rf"another siting run \(process {holder.pid}\) is writing this folder now"
        with pytest.raises(OutputExistsError, match=message):
            check_output_dir(out_dir, overwrite=True)
        with pytest.raises(OutputExistsError, match=message):
            with staged_folder(out_dir, overwrite=True):
                pass
        holder.communicate("go\n", timeout=60)
    finally:
        holder.kill()
    assert holder.returncode == 0
    assert (out_dir / "first.txt").read_text(encoding="utf-8") == "first run"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]  # no lock, no staging left


def test_a_lock_left_by_a_dead_run_is_taken_over(tmp_path):
    """A lock whose process is gone (a killed run) does not block the next run."""
    import json
    import subprocess
    import sys

    dead = subprocess.run(
        [sys.executable, "-c", "import os; print(os.getpid())"],
        capture_output=True,
        text=True,
        check=True,
    )
    out_dir = tmp_path / "out"
    (tmp_path / ".out.lock").write_text(json.dumps({"pid": int(dead.stdout)}), encoding="utf-8")
    with staged_folder(out_dir, overwrite=False) as staging:
        (staging / "new.txt").write_text("new", encoding="utf-8")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_too_little_free_space_is_refused_before_any_work(tmp_path, monkeypatch):
    """A folder whose disk lacks room for the run's estimate is refused early, with the sizes
    (issue 12 item 3); the old result stays."""
    import shutil
    from collections import namedtuple

    usage = namedtuple("usage", "total used free")
    monkeypatch.setattr(
        shutil, "disk_usage", lambda path: usage(10**9, 10**9 - 5_000_000, 5_000_000)
    )
    with pytest.raises(OutputExistsError, match=r"not enough free space .*MB needed, 5 MB free"):
        check_output_dir(tmp_path / "out", overwrite=False, need_bytes=1_000_000)
    old = _old_result(tmp_path / "old")
    with pytest.raises(OutputExistsError, match="not enough free space"):
        check_output_dir(old, overwrite=True)
    assert (old / "old.txt").read_text(encoding="utf-8") == "old result"
