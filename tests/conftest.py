"""Shared fixtures: the bundled dispersion table and its sigma schemes, the demo run once, and
the headless Chromium of the browser tests.

The runs several modules read (``siting demo``, ``siting place`` of the demo's H2, the demo
screened on a 100 m grid as a submission to verify) are made once per test session and only
read afterwards. Under pytest-xdist (``-n 2``) each worker is a
process of its own, so session fixtures would run once per worker; these runs are made once for
the whole session instead (``_once_per_session``: the first worker to need one makes it under a
file lock in the session's shared temporary folder, the others wait for it and read the same
folder)."""

import contextlib
import io
import json
import os
import shutil
from pathlib import Path

import pytest

from siting.readers.tables import load_dispersion, sigma_scheme, wind_exponents

try:
    import fcntl
except ImportError:  # Windows: each xdist worker then makes its own copy
    fcntl = None


def pytest_collection_modifyitems(items):
    """Under pytest-xdist, the files holding a ``slow`` test go first, the rest as collected.

    tests/test_packaging.py (a wheel installed into a fresh venv) takes a minute or more and is
    one file, which ``--dist loadfile`` gives one worker: started first, it runs beside all the
    rest; started last it would run alone at the end. The order within each file is kept (with
    ``--no-loadscope-reorder`` xdist hands the files out in this order)."""
    if os.environ.get("PYTEST_XDIST_WORKER") is None:
        return  # a serial run keeps pytest's own order
    slow_files = {item.path for item in items if item.get_closest_marker("slow") is not None}
    items.sort(key=lambda item: item.path not in slow_files)  # a stable sort


@pytest.fixture(scope="session")
def dispersion():
    return load_dispersion()


@pytest.fixture(scope="session")
def briggs_rural(dispersion):
    return sigma_scheme(dispersion, "rural", "briggs")


@pytest.fixture(scope="session")
def briggs_urban(dispersion):
    return sigma_scheme(dispersion, "urban", "briggs")


@pytest.fixture(scope="session")
def pasquill_gifford(dispersion):
    return sigma_scheme(dispersion, "rural", "pasquill_gifford")


@pytest.fixture(scope="session")
def rural_exponents(dispersion):
    return wind_exponents(dispersion, "rural")


#: Names under which Chromium is looked up on PATH (Debian: chromium; Ubuntu: chromium-browser).
_CHROMIUM_NAMES = ("chromium", "chromium-browser")


@pytest.fixture(scope="session")
def chromium_executable() -> Path:
    """Chromium for the browser tests: $SITING_CHROMIUM, else chromium on PATH; skip if none."""
    configured = os.environ.get("SITING_CHROMIUM")
    if configured:
        path = shutil.which(configured)
        if path is None:  # asked for explicitly: a wrong path is an error, not a skip
            pytest.fail(f"SITING_CHROMIUM={configured!r} is not an executable file")
        return Path(path)
    for name in _CHROMIUM_NAMES:
        path = shutil.which(name)
        if path is not None:
            return Path(path)
    pytest.skip(
        "no Chromium found: set SITING_CHROMIUM to its executable or put one of "
        f"{', '.join(_CHROMIUM_NAMES)} on PATH (Debian: apt-get install chromium)"
    )


def _once_per_session(tmp_path_factory, name: str, make) -> dict:
    """``make(folder)`` run once per test session, into a folder of its own; its result (a dict
    of JSON values) for every caller.

    Serial runs call it once (the fixtures using it are session-scoped). Under pytest-xdist the
    workers share the session's temporary folder (the parent of each worker's own): the first
    to get the lock makes the folder and records the result; the others read the record. A
    worker whose ``make`` failed leaves no record, so the next one tries again (and fails the
    same way, in its own tests)."""
    if os.environ.get("PYTEST_XDIST_WORKER") is None or fcntl is None:
        return make(tmp_path_factory.mktemp(name))
    shared = tmp_path_factory.getbasetemp().parent
    record = shared / f"{name}.json"
    with open(shared / f"{name}.lock", "w", encoding="utf-8") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)  # released when the file closes, also on an error
        if record.is_file():
            return json.loads(record.read_text(encoding="utf-8"))
        folder = shared / name
        shutil.rmtree(folder, ignore_errors=True)  # what a failed attempt left
        folder.mkdir()
        result = make(folder)
        record.write_text(json.dumps(result), encoding="utf-8")
        return result


def _cli(argv: list[str]) -> tuple[int, str]:
    """The command line in-process: (exit code, what it printed on stdout)."""
    from siting.cli import main

    stdout = io.StringIO()
    with contextlib.redirect_stdout(stdout):
        rc = main(argv)
    return rc, stdout.getvalue()


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory) -> dict:
    """`siting demo --quiet` run once per session: exit code ``rc``, ``stdout`` and the output
    folder ``out`` (alone in its parent folder: nothing else is ever written beside it)."""

    def make(folder: Path) -> dict:
        out = folder / "demo"
        rc, stdout = _cli(["demo", "--out", str(out), "--quiet"])
        return {"rc": rc, "stdout": stdout, "out": str(out)}

    run = _once_per_session(tmp_path_factory, "demo", make)
    return {**run, "out": Path(run["out"])}


@pytest.fixture(scope="session")
def demo_output(demo_run) -> Path:
    """Output folder of `siting demo --quiet`, run once per session (read it, never write)."""
    assert demo_run["rc"] == 0
    return demo_run["out"]


@pytest.fixture(scope="session")
def demo_place_run(tmp_path_factory) -> tuple[int, Path]:
    """`siting place` on the demo for H2 at a 25 m spacing, once per session: (exit code,
    output folder); read it, never write."""

    def make(folder: Path) -> dict:
        from siting.readers.resources import demo_dir

        out = folder / "out"
        rc, _ = _cli(
            ["place", str(demo_dir() / "scenario.toml"), "--house", "H2", "--spacing", "25",
             "--out", str(out), "--quiet"]
        )  # fmt: skip
        return {"rc": rc, "out": str(out)}

    run = _once_per_session(tmp_path_factory, "place_h2", make)
    return run["rc"], Path(run["out"])


@pytest.fixture(scope="session")
def coarse_demo_submission(tmp_path_factory) -> Path:
    """`siting screen --quiet --no-pdf` of a copy of the demo on a 100 m grid (quick), once per
    session: the submission folder tests/test_verify.py and test_verify_rules.py verify (read
    it, never write: a test that changes it works on its own copy)."""

    def make(folder: Path) -> dict:
        from siting.readers.resources import demo_dir

        inputs = folder / "in"
        shutil.copytree(demo_dir(), inputs)
        scenario = inputs / "scenario.toml"
        text = scenario.read_text(encoding="utf-8")
        scenario.write_text(text.replace("spacing_m = 25.0", "spacing_m = 100.0", 1), "utf-8")
        out = folder / "sub"
        rc, _ = _cli(["screen", str(scenario), "--out", str(out), "--quiet", "--no-pdf"])
        return {"rc": rc, "out": str(out)}

    run = _once_per_session(tmp_path_factory, "coarse_demo_submission", make)
    assert run["rc"] == 0
    return Path(run["out"])


@pytest.fixture(scope="session")
def demo_screen():
    """``screen()`` of the bundled demo scenario (the Python call, defaults), once per session
    (per xdist worker: a result in memory): read it, never change it."""
    from siting.readers.resources import demo_dir
    from siting.runs.screening import screen

    return screen(demo_dir() / "scenario.toml")
