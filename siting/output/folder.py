"""Output folders, made safe: the overwrite rule, staging, the writing lock, recovery.

Everything is written into a staging folder beside the target (``.<name>.<random>.partial``)
and moved into place only when complete, so a failed run leaves nothing half-written and an
earlier result is replaced only with ``overwrite`` (and only once the new one is whole). Only a
folder siting wrote (its ``.siting-output`` marker) may be replaced, never one that holds an
input. A run holds ``.<name>.lock`` while it writes; the next run into a folder tidies what a
dead run left. Every command's writer uses :func:`check_output_dir` and :func:`staged_folder`.
"""

from __future__ import annotations

import glob
import json
import os
import secrets
import shutil
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from siting._version import __version__
from siting.errors import OutputExistsError

#: Written into every output folder siting makes (by staged_folder): only a folder holding it
#: (or the run record of an older version) may be replaced with ``overwrite``.
OUTPUT_MARKER = ".siting-output"


#: Run records by which folders of versions before the marker are recognised.
_LEGACY_RECORDS = (
    ("run.json", "inputs"),
    ("findings.json", "findings"),
    ("summary.json", "hours_used"),
)


def is_siting_output(folder: Path) -> bool:
    """Whether ``folder`` is an output folder written by siting (its marker or run record).

    Parameters
    ----------
    folder : Path
        The folder.

    Returns
    -------
    bool
        True when it holds the ``.siting-output`` marker or an older version's run record.
    """
    folder = Path(folder)
    if (folder / OUTPUT_MARKER).is_file():
        return True
    for name, key in _LEGACY_RECORDS:
        try:
            record = json.loads((folder / name).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if isinstance(record, dict) and key in record:
            return True
    return False


#: Free space asked for any output folder beyond its own estimate [bytes]: the page assets,
#: report and tables of a small run (common practice, no source).
MIN_FREE_BYTES = 20_000_000


#: Longest output folder name [bytes]: a file name may have 255, and the staging folder beside
#: it is named ".<name>.<8 hex>.partial" (18 more).
MAX_NAME_BYTES = 255 - 18


def _lock_path(out_dir: Path) -> Path:
    return out_dir.parent / f".{out_dir.name}.lock"


def _lock_owner(out_dir: Path):
    """The process id of a run of this machine writing ``out_dir`` now, else None (a lock
    left by a dead run does not count)."""
    pid = _recorded_pid(_lock_path(out_dir))
    return pid if pid is not None and pid != os.getpid() and _alive(pid) else None


def _busy_message(out_dir: Path, pid) -> str:
    return (
        f"{out_dir}: another siting run (process {pid}) is writing this folder now; wait "
        "for it to finish or choose another out_dir"
    )


#: The parameters the refusals below name (messages say "out_dir", "overwrite").
_NAMED = ("out_dir", "overwrite")


@contextmanager
def _writing_lock(out_dir: Path) -> Iterator[None]:
    """Hold ``.<name>.lock`` beside ``out_dir`` while writing it: a second run into the same
    folder stops with OutputExistsError instead of racing the first (created atomically with
    O_EXCL; a lock whose run is gone is taken over)."""
    lock = _lock_path(out_dir)
    body = json.dumps({"written_by": "siting", "pid": os.getpid()}).encode("utf-8")
    for _ in range(2):
        try:
            fd = os.open(lock, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            pid = _lock_owner(out_dir)
            if pid is not None:
                raise OutputExistsError(_busy_message(out_dir, pid), parameters=_NAMED) from None
            lock.unlink(missing_ok=True)  # a dead run's lock
            continue
        with os.fdopen(fd, "wb") as handle:
            handle.write(body)
        break
    else:
        raise OutputExistsError(_busy_message(out_dir, "unknown"), parameters=_NAMED)
    try:
        yield
    finally:
        lock.unlink(missing_ok=True)


def _check_space(folder: Path, need_bytes: int, out_dir: Path) -> None:
    try:
        free = shutil.disk_usage(folder).free
    except OSError:
        return  # unknown: the write itself will tell
    need = int(need_bytes) + MIN_FREE_BYTES
    if free < need:
        raise OutputExistsError(
            f"{out_dir}: not enough free space in {folder} (about "
            f"{need / 1e6:,.0f} MB needed, {free / 1e6:,.0f} MB free); "
            "free some space or choose another out_dir",
            parameters=_NAMED,
        )


def check_output_dir(out_dir: Path, overwrite: bool, inputs=(), need_bytes: int = 0) -> None:
    """Refuse early (before any work) an output folder that must not be written or replaced.

    It must not exist, unless ``overwrite`` is given; and then only a folder siting wrote
    (:func:`is_siting_output`) is replaced, never the current folder or one of its parents,
    and never one that holds any of the run's ``inputs`` (paths). Its parent must be a folder
    we may write in, with room for ``need_bytes`` (the run's estimate) plus MIN_FREE_BYTES,
    and no other run may be writing it now. Each refusal names why.

    Parameters
    ----------
    out_dir : Path
        The output folder.
    overwrite : bool
        Whether an existing folder may be replaced.
    inputs : iterable of Path
        The run's input files and folders (None entries are skipped).
    need_bytes : int
        The run's estimate of what it writes [bytes].

    Raises
    ------
    OutputExistsError
        One of the refusals above, naming why.
    """
    out_dir = Path(out_dir).resolve()
    size = len(out_dir.name.encode("utf-8"))
    if size > MAX_NAME_BYTES:
        raise OutputExistsError(
            f"{out_dir.name[:40]}...: output folder name is too long "
            f"({size} bytes; at most {MAX_NAME_BYTES}, which leaves room for "
            "the staging folder's name beside it); choose a shorter out_dir",
            parameters=_NAMED,
        )
    recover_interrupted(out_dir)
    pid = _lock_owner(out_dir)
    if pid is not None:
        raise OutputExistsError(_busy_message(out_dir, pid), parameters=_NAMED)
    if not out_dir.exists():
        parent = out_dir.parent
        while not parent.exists():
            parent = parent.parent
        if not parent.is_dir():
            raise OutputExistsError(f"{out_dir}: {parent} is a file, not a folder")
        if not os.access(parent, os.W_OK | os.X_OK):
            raise OutputExistsError(
                f"{out_dir}: cannot write in {parent} (no permission); choose another out_dir",
                parameters=_NAMED,
            )
        _check_space(parent, need_bytes, out_dir)
        return
    if not os.access(out_dir.parent, os.W_OK | os.X_OK):
        raise OutputExistsError(
            f"{out_dir}: cannot write in {out_dir.parent} (no permission); choose another out_dir",
            parameters=_NAMED,
        )
    if not overwrite:
        raise OutputExistsError(
            f"{out_dir}: output folder exists; pass overwrite to replace it", parameters=_NAMED
        )
    if not out_dir.is_dir():
        raise OutputExistsError(f"{out_dir}: exists and is not a folder")
    cwd = Path.cwd().resolve()
    if out_dir == cwd or out_dir in cwd.parents:
        raise OutputExistsError(
            f"{out_dir}: is the current folder or one of its parents; "
            "overwrite never replaces it: choose a new out_dir",
            parameters=_NAMED,
        )
    for path in inputs:
        if path is None:
            continue
        resolved = Path(path).resolve()
        if resolved == out_dir or out_dir in resolved.parents:
            raise OutputExistsError(
                f"{out_dir}: holds an input of this run ({resolved.name}); "
                "overwrite never replaces it: choose another out_dir",
                parameters=_NAMED,
            )
    if not is_siting_output(out_dir):
        raise OutputExistsError(
            f"{out_dir}: is not a folder siting wrote (no {OUTPUT_MARKER} "
            "or run record in it); overwrite replaces only siting's own "
            "output folders: choose another out_dir",
            parameters=_NAMED,
        )
    _check_space(out_dir.parent, need_bytes, out_dir)  # the old result stays until the swap


def _alive(pid) -> bool:
    """Whether a process of this machine with that id still runs (unknown counts as alive)."""
    if not isinstance(pid, int) or pid <= 0:
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, but not ours
        return True
    return True


def _recorded_pid(path: Path):
    """The process id a lock or marker file records ({"pid": ...}), None if unreadable."""
    try:
        return json.loads(path.read_text(encoding="utf-8")).get("pid")
    except (OSError, ValueError, AttributeError):
        return None


def _staging_pid(staging: Path):
    return _recorded_pid(staging / OUTPUT_MARKER)


#: A staging folder without its marker (a run killed within moments of making it) counts as
#: dead once it is this old [s] (common practice, no source).
UNMARKED_STAGING_STALE_S = 600


def _dead_staging(partial: Path) -> bool:
    pid = _staging_pid(partial)
    if pid is None and not (partial / OUTPUT_MARKER).exists():
        try:
            return time.time() - partial.stat().st_mtime > UNMARKED_STAGING_STALE_S
        except OSError:
            return False
    return not _alive(pid)


def recover_interrupted(out_dir: Path) -> list[str]:
    """Tidy what a run killed while writing ``out_dir`` left beside it; what was done, in words.

    A staging folder (``.<name>.<random>.partial``) whose run is gone is deleted. A backup of
    the previous result (``.<name>.<random>.old``) whose run is gone is put back as ``out_dir``
    when the swap never finished (``out_dir`` missing), else deleted (the new result is in
    place). Folders of runs still going are left alone.

    Parameters
    ----------
    out_dir : Path
        The output folder.

    Returns
    -------
    list of str
        One line per thing tidied; empty when nothing was left.
    """
    out_dir = Path(out_dir)
    parent = out_dir.parent
    done: list[str] = []
    if not parent.is_dir():
        return done
    lock = _lock_path(out_dir)
    if lock.is_file() and _lock_owner(out_dir) is None and _recorded_pid(lock) != os.getpid():
        lock.unlink(missing_ok=True)
        done.append(f"{lock}: removed the lock of an interrupted run")
    prefix = f".{out_dir.name}."
    for partial in sorted(parent.glob(f"{glob.escape(prefix)}*.partial")):
        if partial.is_dir() and _dead_staging(partial):
            backup = partial.with_name(partial.name.removesuffix(".partial") + ".old")
            if backup.is_dir() and not out_dir.exists():
                backup.rename(out_dir)
                done.append(f"{out_dir}: put back the previous result from an interrupted run")
            shutil.rmtree(partial, ignore_errors=True)
            done.append(f"{partial}: removed the staging folder of an interrupted run")
    for backup in sorted(parent.glob(f"{glob.escape(prefix)}*.old")):
        partial = backup.with_name(backup.name.removesuffix(".old") + ".partial")
        if not backup.is_dir() or partial.exists():
            continue  # its run is still writing (or was handled above)
        if not out_dir.exists():
            backup.rename(out_dir)
            done.append(f"{out_dir}: put back the previous result from an interrupted run")
        elif not _alive(_staging_pid(out_dir)):
            shutil.rmtree(backup, ignore_errors=True)
            done.append(f"{backup}: removed the backup left by an interrupted run")
    return done


@contextmanager
def staged_folder(out_dir: Path, overwrite: bool, need_bytes: int = 0) -> Iterator[Path]:
    """A staging folder beside ``out_dir`` that takes its place only if the block succeeds.

    Parameters
    ----------
    out_dir : Path
        The folder to produce; its parent is created if needed.
    overwrite : bool
        Whether an existing ``out_dir`` may be replaced.
    need_bytes : int, optional
        The run's estimate of what it will write [bytes], checked against the free space on
        entry (:func:`check_output_dir`).

    Yields
    ------
    staging : Path
        A new, empty folder ``.<name>.<random>.partial`` in the parent of ``out_dir``, mode
        0o755 (the result is an ordinary folder).

    Raises
    ------
    OutputExistsError
        On entry, or when the block ends, if ``out_dir`` exists without ``overwrite`` or is
        not a folder (:func:`check_output_dir`); nothing is then changed.

    Notes
    -----
    When the block ends normally the staging folder is renamed to ``out_dir``. An existing
    ``out_dir`` is first renamed aside to this run's own ``.<name>.<random>.old`` and deleted
    only once the new folder is in place (it is put back if that rename fails). When the block
    raises anything (also KeyboardInterrupt), the staging folder is deleted, ``out_dir`` is left
    as it was and the exception propagates; an interrupt after the new folder is in place is
    raised as InterruptedAfterWriting (the result is whole). Both renames stay within one
    folder, so each is atomic on POSIX. The whole swap runs under the folder's lock.
    """
    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite, need_bytes=need_bytes)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    with _writing_lock(out_dir):
        yield from _staged(out_dir, overwrite)


class InterruptedAfterWriting(KeyboardInterrupt):
    """An interrupt (Ctrl-C, SIGTERM, SIGHUP) that came once the new output folder was in
    place: the run's result is complete, only tidying was cut short (``out_dir``)."""

    def __init__(self, out_dir: Path) -> None:
        super().__init__(str(out_dir))
        self.out_dir = out_dir


def _staged(out_dir: Path, overwrite: bool) -> Iterator[Path]:
    """The body of staged_folder, run while this run holds the folder's lock.

    The result is committed at the rename of the staging folder to ``out_dir``: an exception
    before it leaves ``out_dir`` as it was (the previous result renamed back if it had been
    moved aside) and removes the staging folder; an interrupt after it removes the backup of
    the previous result and is raised as InterruptedAfterWriting (the new result is whole).
    """
    staging = backup = None
    try:
        while staging is None:  # a name of its own; named before it is made, so an
            # interrupt just after mkdir still finds and removes it
            staging = out_dir.parent / f".{out_dir.name}.{secrets.token_hex(4)}.partial"
            try:
                staging.mkdir(mode=0o755)
            except FileExistsError:
                staging = None
        staging.chmod(0o755)  # whatever the umask: the result is an ordinary folder

        (staging / OUTPUT_MARKER).write_text(
            json.dumps(
                {
                    "written_by": "siting",
                    "version": __version__,
                    "pid": os.getpid(),
                    "note": "an output folder of siting: a run asked to overwrite it may "
                    "replace it",
                }
            )
            + "\n",
            encoding="utf-8",
        )
        yield staging
        check_output_dir(out_dir, overwrite)  # it may have appeared while the block ran
        if out_dir.exists():
            # a name of this run's own (beside its staging folder), so concurrent runs never
            # share one and an old backup of another run is never deleted
            backup = staging.with_name(staging.name.removesuffix(".partial") + ".old")
            out_dir.rename(backup)
            try:
                staging.rename(out_dir)
            except BaseException:
                if staging.exists() and not out_dir.exists():
                    backup.rename(out_dir)  # the new folder never went in: the old one back
                raise
            shutil.rmtree(backup)
        else:
            try:
                staging.rename(out_dir)
            except OSError:
                if out_dir.exists() and staging.exists():  # made by someone else meanwhile
                    raise OutputExistsError(
                        f"{out_dir}: appeared while this run was writing; "
                        "nothing of this run was kept"
                    ) from None
                raise
    except BaseException as exc:
        committed = staging is not None and not staging.exists() and out_dir.is_dir()
        if not committed:
            if staging is not None:
                shutil.rmtree(staging, ignore_errors=True)
            raise
        if backup is not None and backup.exists():
            try:
                shutil.rmtree(backup, ignore_errors=True)
            except BaseException:  # a second interrupt: the next run removes it
                pass
        if isinstance(exc, KeyboardInterrupt) and not isinstance(exc, InterruptedAfterWriting):
            raise InterruptedAfterWriting(out_dir) from exc
        raise
