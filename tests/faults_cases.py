"""The table of tests/test_faults.py: bad inputs, refused output folders and interrupts, one
record per case, and the helpers the records use (a per-case workspace, snapshots of folders,
edits of TOML, CSV, vector layers and run.json, and patches that interrupt or break a run at a
chosen point).

Every case runs one command of the CLI in-process (``siting.cli.main``) inside a workspace of its
own (``Workspace``): ``inputs/`` (a copy of the invented demo, its grid made coarse so the few
cases that compute stay quick), ``work/`` (the current folder of the run), ``farms/`` (a three-
farm layer for ``siting region``) and, for some cases, ``out/`` (a previous output folder,
copied from an earlier successful run with --overwrite) and ``sub/`` (a submission package for
``siting verify``).

Where each expectation comes from is the case's ``source``:

* "README exit-code table": the exit codes and "one line on stderr names the key or file, and
  nothing is written" of README.md ("Using it").
* "README --overwrite rule": "Every command's --overwrite replaces only a folder siting wrote
  ..., never the current folder or one of its parents, and never a folder holding any input of
  the run ...: those are refused with exit 2 and a line saying why, before any work", and
  "found before any work" for output locations that cannot be written.
* "issue item (fault suite)": the issue item this suite answers (a message naming the culprit
  key, file or line; nothing written, nothing lost; interrupts at each stage of writing).
* "common practice, no source": what a user needs to find the culprit (the line of a bad row,
  the name of the bad feature), stated by STYLE.md section 5 as this project's habit.
"""

from __future__ import annotations

import datetime
import errno
import hashlib
import json
import math
import os
import re
import shutil
import signal
import time
import tomllib
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

README_EXIT = "README exit-code table"
README_OVERWRITE = "README --overwrite rule"
ISSUE = "issue item (fault suite)"
PRACTICE = "common practice, no source"

#: The demo scenario's grid, made coarse (25 -> 200 m, 2500 -> 600 m margin): the few cases that
#: compute then take about a second; validation does not depend on the grid.
COARSE_GRID = {"spacing_m": 200.0, "margin_m": 600.0}
#: The demo's hourly record cut to its first week (header + 168 hours): quick to read.
SHORT_HOURS = 168


# --------------------------------------------------------------------------------------------
# files: TOML, CSV, layers
# --------------------------------------------------------------------------------------------


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, datetime.date):  # a TOML date (the demo's [project] date)
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(v)}" for k, v in value.items()) + " }"
    raise TypeError(f"no TOML for {value!r}")


def _is_table_array(value) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


def dump_toml(data: dict, prefix: str = "") -> str:
    """TOML text of a dict as tomllib reads it (tables, arrays of tables, nan and inf)."""
    lines = [
        f"{k} = {_toml_value(v)}"
        for k, v in data.items()
        if not isinstance(v, dict) and not _is_table_array(v)
    ]
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            lines += ["", f"[{name}]", dump_toml(value, name + ".")]
        elif _is_table_array(value):
            for item in value:
                lines += ["", f"[[{name}]]", dump_toml(item, name + ".")]
    return "\n".join(lines) + "\n"


def sub_text(path: Path, pattern: str, replacement: str, count: int = 1) -> None:
    """Replace ``pattern`` (regex, multiline) in a text file; the pattern must be found."""
    text = path.read_text(encoding="utf-8")
    new, n = re.subn(pattern, replacement, text, count=count, flags=re.MULTILINE)
    assert n, f"{pattern!r} not found in {path}"
    path.write_text(new, encoding="utf-8")


def set_cell(path: Path, line: int, column: str, value: str) -> None:
    """Set one cell of a plain CSV (no quoted commas): ``line`` 1-based, header = line 1."""
    lines = path.read_text(encoding="utf-8").splitlines()
    header = lines[0].split(",")
    cells = lines[line - 1].split(",")
    cells[header.index(column)] = value
    lines[line - 1] = ",".join(cells)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def map_column(path: Path, column: str, fn: Callable[[str], str]) -> None:
    """Apply ``fn`` to every data cell of one CSV column."""
    lines = path.read_text(encoding="utf-8").splitlines()
    k = lines[0].split(",").index(column)
    out = [lines[0]]
    for line in lines[1:]:
        cells = line.split(",")
        cells[k] = fn(cells[k])
        out.append(",".join(cells))
    path.write_text("\n".join(out) + "\n", encoding="utf-8")


def delete_lines(path: Path, first: int, last: int) -> None:
    """Delete lines ``first``..``last`` (1-based, inclusive) of a text file."""
    lines = path.read_text(encoding="utf-8").splitlines()
    del lines[first - 1 : last]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def edit_layer(path: Path, fn) -> None:
    """Read a vector layer, let ``fn`` return the new GeoDataFrame, write it back (GPKG)."""
    import geopandas as gpd

    gdf = fn(gpd.read_file(path))
    path.unlink()
    with warnings.catch_warnings():  # a layer written without CRS on purpose warns
        warnings.filterwarnings("ignore", message="'crs' was not provided")
        gdf.to_file(path, driver="GPKG")


def edit_json(path: Path, fn) -> None:
    record = json.loads(path.read_text(encoding="utf-8"))
    record = fn(record) or record
    path.write_text(json.dumps(record, indent=2), encoding="utf-8")


def write_farms(path: Path, rows: list[dict] | None = None, crs="EPSG:32632") -> None:
    """A small farms layer for ``siting region``: three invented farms near the demo holding
    (two points, one house footprint), or ``rows`` (dicts with a ``geometry``)."""
    import geopandas as gpd
    import shapely

    if rows is None:
        rows = [
            {
                "id": "F1",
                "nh3_kg_per_year": 2000.0,
                "height_m": 6.0,
                "geometry": shapely.Point(499500.0, 5799500.0),
            },
            {
                "id": "F2",
                "nh3_kg_per_year": 1500.0,
                "height_m": 5.0,
                "geometry": shapely.Point(500600.0, 5800300.0),
            },
            {
                "id": "F3",
                "nh3_kg_per_year": 900.0,
                "height_m": 4.0,
                "geometry": shapely.box(500100.0, 5799100.0, 500160.0, 5799125.0),
            },
        ]
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.exists():
        path.unlink()
    frame = gpd.GeoDataFrame(
        [{k: v for k, v in r.items() if k != "geometry"} for r in rows],
        geometry=[r["geometry"] for r in rows],
        crs=crs,
    )
    frame.to_file(path, driver="GPKG")


# --------------------------------------------------------------------------------------------
# snapshots
# --------------------------------------------------------------------------------------------


def snapshot(root: Path) -> dict[str, tuple]:
    """Every folder, file and link under ``root``: folder -> ("dir",), file -> (size, sha256),
    link -> ("link", target). Hidden entries (staging and backup folders) included."""
    state: dict[str, tuple] = {}
    for dirpath, dirnames, filenames in os.walk(root):
        here = Path(dirpath)
        for name in dirnames + filenames:
            path = here / name
            rel = path.relative_to(root).as_posix()
            if path.is_symlink():
                state[rel] = ("link", os.readlink(path))
            elif path.is_dir():
                state[rel] = ("dir",)
            else:
                data = path.read_bytes()
                state[rel] = (len(data), hashlib.sha256(data).hexdigest())
    return state


def describe_changes(before: dict, after: dict, limit: int = 12) -> str:
    """What changed between two snapshots, in words (for assertion messages)."""
    added = sorted(set(after) - set(before))
    lost = sorted(set(before) - set(after))
    changed = sorted(k for k in set(before) & set(after) if before[k] != after[k])
    parts = []
    for label, names in (("written", added), ("lost", lost), ("changed", changed)):
        if names:
            more = f" (+{len(names) - limit} more)" if len(names) > limit else ""
            parts.append(f"{label}: {', '.join(names[:limit])}{more}")
    return "; ".join(parts) or "no change"


# --------------------------------------------------------------------------------------------
# the workspace of one case
# --------------------------------------------------------------------------------------------


class Workspace:
    """The folders of one case under ``root`` (see the module docstring)."""

    def __init__(self, root: Path, template: Path, prior: Path):
        self.root = root
        self.template = template
        self.prior_source = prior  # an earlier successful run's output folder (read only)
        self.cwd = root / "work"

    @classmethod
    def create(cls, root: Path, template: Path, prior: Path) -> Workspace:
        ws = cls(root, template, prior)
        root.mkdir(parents=True)
        for name in ("inputs", "farms"):
            shutil.copytree(template / name, root / name)
        (root / "work").mkdir()
        return ws

    def __truediv__(self, relative: str) -> Path:
        return self.root / relative

    @property
    def out(self) -> Path:
        return self.root / "out"

    @property
    def inputs(self) -> Path:
        return self.root / "inputs"

    def copy_prior(self, to: str = "out") -> Path:
        """A previous output folder (marker, run record, every file) at ``to``."""
        target = self.root / to
        shutil.copytree(self.prior_source, target, symlinks=True)
        return target

    def mark(self, relative: str) -> Path:
        """Make a folder look like one siting wrote (its marker, copied from a real output), so
        that the only reason left to refuse it is the rule under test."""
        folder = self.root / relative
        folder.mkdir(parents=True, exist_ok=True)
        shutil.copy2(self.prior_source / ".siting-output", folder / ".siting-output")
        return folder

    def edit_toml(self, relative: str, fn) -> None:
        """Parse a TOML file, let ``fn`` change the dict in place, write it back."""
        path = self.root / relative
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        fn(data)
        path.write_text(dump_toml(data), encoding="utf-8")

    def scenario(self, fn, relative: str = "inputs/scenario.toml") -> None:
        self.edit_toml(relative, fn)

    def config(self) -> Path:
        """A user copy of the config tables, named by the scenario's [assessment] config_dir."""
        from siting.readers.resources import config_dir

        folder = self.inputs / "my_config"
        if not folder.exists():
            shutil.copytree(config_dir(), folder)
            self.scenario(lambda d: d.setdefault("assessment", {}).update(config_dir="my_config"))
        return folder


def make_template(folder: Path) -> Path:
    """The inputs every case starts from (copied per case): the invented demo with a coarse grid,
    the hourly record cut to a week and named by scenario_hourly.toml, and a farms layer."""
    from siting.readers.resources import demo_dir

    inputs = folder / "inputs"
    shutil.copytree(demo_dir(), inputs, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    for name in ("scenario.toml", "scenario_hourly.toml"):
        path = inputs / name
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        data["grid"].update(COARSE_GRID)
        if "hourly" in data["weather"]:
            data["weather"]["hourly"] = "hourly_short.csv"
        path.write_text(dump_toml(data), encoding="utf-8")
    lines = (inputs / "hourly_weather.csv").read_text(encoding="utf-8").splitlines()
    (inputs / "hourly_short.csv").write_text(
        "\n".join(lines[: SHORT_HOURS + 1]) + "\n", encoding="utf-8"
    )
    write_farms(folder / "farms" / "farms.gpkg")
    return folder


# --------------------------------------------------------------------------------------------
# patches: interrupt or break a run at a chosen point (no timing involved)
# --------------------------------------------------------------------------------------------


def interrupt_now(how: str = "KeyboardInterrupt") -> None:
    """Interrupt here: raise KeyboardInterrupt (Ctrl-C), or send this process SIGTERM / SIGHUP,
    whose handler (installed by cli.main) raises it at once."""
    if how == "KeyboardInterrupt":
        raise KeyboardInterrupt
    sig = getattr(signal, how)
    if not callable(signal.getsignal(sig)):
        raise AssertionError(f"{how}: siting installed no handler; sending it would kill pytest")
    os.kill(os.getpid(), sig)
    time.sleep(0.01)  # the Python-level handler runs at the latest here
    raise AssertionError(f"{how} was sent but did not interrupt the run")


def wrap(
    mp,
    owner,
    name: str,
    *,
    when=None,
    nth: int = 1,
    after: bool = True,
    how: str = "KeyboardInterrupt",
    error: BaseException | None = None,
) -> None:
    """Patch ``owner.name``: on the ``nth`` call for which ``when(*args, **kwargs)`` holds,
    interrupt (``how``) or raise ``error`` -- after the real call (``after``) or instead of it."""
    real = getattr(owner, name)
    calls = [0]

    def patched(*args, **kwargs):
        if when is None or when(*args, **kwargs):
            calls[0] += 1
            if calls[0] == nth:
                if after:
                    real(*args, **kwargs)
                if error is not None:
                    raise error
                interrupt_now(how)
        return real(*args, **kwargs)

    for attr in ("avoids_symlink_attacks",):  # shutil.rmtree's flag, kept
        if hasattr(real, attr):
            setattr(patched, attr, getattr(real, attr))
    mp.setattr(owner, name, patched)


def _mod(name: str):
    """A module by name (``siting.runs.screening`` and ``siting.runs.placing`` are also functions of the
    package, so ``import siting.runs.screening`` then ``siting.runs.screening`` gives the function)."""
    import importlib

    return importlib.import_module(name)


def _in_staging(path) -> bool:
    return any(part.endswith(".partial") for part in Path(path).parts)


def _name(arg) -> str:
    return Path(arg).name


def stage_staging_created(ws, mp):
    """The staging folder has just been made (its mkdir returned), nothing in it yet."""
    wrap(mp, Path, "mkdir", when=lambda self, *a, **k: self.name.endswith(".partial"))


def stage_marker_written(ws, mp):
    """The staging folder's .siting-output marker has just been written."""
    wrap(
        mp,
        Path,
        "write_text",
        when=lambda self, *a, **k: self.name == ".siting-output" and _in_staging(self),
    )


def stage_first_file(ws, mp):
    """The first output file (concentration.tif) has just been written."""
    wrap(mp, _mod("siting.output.screen"), "write_geotiff")


def stage_sites_csv(ws, mp):
    """sites.csv (the middle of the tables) has just been written."""
    wrap(
        mp,
        _mod("siting.output.screen"),
        "write_csv",
        when=lambda frame, path: _name(path) == "sites.csv",
    )


def stage_packing_inputs(ws, mp):
    """The second input has just been copied into inputs/ (packing half done)."""
    wrap(mp, shutil, "copy2", nth=2, when=lambda src, dst, *a, **k: _in_staging(dst))


def stage_map_sigterm(ws, mp):
    """map.html has just been written; then SIGTERM (as `timeout` or CI sends)."""
    wrap(mp, _mod("siting.output.screen"), "write_screen_map", how="SIGTERM")


def stage_report_sighup(ws, mp):
    """report.html has just been written; then SIGHUP (the terminal closed)."""
    wrap(mp, _mod("siting.output.screen"), "write_report", how="SIGHUP")


def stage_run_json(ws, mp):
    """run.json, the last file, has just been written: every file is there, nothing swapped."""
    wrap(
        mp,
        Path,
        "write_text",
        when=lambda self, *a, **k: self.name == "run.json" and _in_staging(self),
    )


def stage_before_swap(ws, mp):
    """The staged folder is complete and the final check before the swap begins."""

    def complete(out_dir, *a, **k):
        out_dir = Path(out_dir)
        return any(
            (p / "run.json").is_file() for p in out_dir.parent.glob(f".{out_dir.name}.*.partial")
        )

    wrap(mp, _mod("siting.output.folder"), "check_output_dir", when=complete, after=False)


def stage_between_renames(ws, mp):
    """The previous folder has just been renamed aside (.old); the new one not yet in place."""
    wrap(
        mp,
        Path,
        "rename",
        when=lambda self, target: Path(target).name.endswith(".old") and self.name == "out",
    )


def stage_after_swap(ws, mp):
    """The new folder has just been renamed into place; the previous one (.old) not yet deleted."""
    wrap(
        mp,
        Path,
        "rename",
        when=lambda self, target: self.name.endswith(".partial") and Path(target).name == "out",
    )


def stage_removing_backup(ws, mp):
    """The swap is done and the previous folder (.old) is about to be deleted."""
    wrap(mp, shutil, "rmtree", after=False, when=lambda path, *a, **k: str(path).endswith(".old"))


def during_dispersion(ws, mp):
    """In the middle of the computation (the first source's dispersion), before any writing."""
    wrap(mp, _mod("siting.runs.screening_inputs"), "source_concentration_g_m3_per_g_s", after=False)


def weather_second_chart(ws, mp):
    """siting weather: the wind rose is written, the stability chart is being drawn."""
    wrap(mp, _mod("siting.presentation.weather_figures"), "stability_by_speed_figure", after=False)


def place_positions_csv(ws, mp):
    """siting place: positions.csv has just been written."""
    wrap(mp, _mod("siting.output.place"), "write_csv")


def region_second_geotiff(ws, mp):
    """siting region: the second GeoTIFF (deposition.tif) has just been written; SIGTERM."""
    wrap(mp, _mod("siting.output.region"), "write_large_geotiff", nth=2, how="SIGTERM")


def verify_report_written(ws, mp):
    """siting verify: findings.json and verify.html are written, the swap not yet done."""
    wrap(mp, _mod("siting.output.verify"), "write_verify_report")


def bug_in(module: str, name: str, after: bool = False):
    """A patch that makes ``module.name`` raise RuntimeError (a stand-in for a bug)."""

    def patch(ws, mp):
        import importlib

        wrap(
            mp,
            importlib.import_module(module),
            name,
            after=after,
            error=RuntimeError(f"forced for the test in {name}"),
        )

    return patch


def disk_full_at(module: str, name: str, file_name: str, code: int = errno.ENOSPC):
    """A patch that makes the writer ``module.name`` fail as a full (or read-only) disk does,
    when it writes ``file_name``."""

    def patch(ws, mp):
        import importlib

        target = ws.out / file_name
        wrap(
            mp,
            importlib.import_module(module),
            name,
            after=False,
            when=lambda *a, **k: any(_name(x) == file_name for x in a if isinstance(x, Path)),
            error=OSError(code, os.strerror(code), str(target)),
        )

    return patch


# --------------------------------------------------------------------------------------------
# argv builders
# --------------------------------------------------------------------------------------------


def cli(*tokens):
    """An argv builder: a token "@rel" becomes the absolute path ws.root / rel."""

    def build(ws: Workspace) -> list[str]:
        return [str(ws.root / t[1:]) if t.startswith("@") else t for t in tokens]

    return build


SCREEN = ("screen", "@inputs/scenario.toml", "--out", "@out", "--quiet", "--no-pdf")
HOURLY_SCREEN = ("screen", "@inputs/scenario_hourly.toml", "--out", "@out", "--quiet", "--no-pdf")
WEATHER = (
    "weather",
    "@inputs/hourly_short.csv",
    "--lat",
    "52.3",
    "--lon",
    "9.7",
    "--out",
    "@out",
    "--quiet",
)
PLACE = (
    "place",
    "@inputs/scenario.toml",
    "--house",
    "H2",
    "--spacing",
    "50",
    "--out",
    "@out",
    "--quiet",
)
REGION = (
    "region",
    "@farms/farms.gpkg",
    "--weather",
    "@inputs/weather_table.csv",
    "--spacing",
    "500",
    "--margin",
    "1000",
    "--scheduler",
    "none",
    "--out",
    "@out",
    "--quiet",
)
VERIFY = ("verify", "@sub", "--out", "@out", "--quiet")


def screen(*extra):
    return cli(*SCREEN, *extra)


def hourly_screen(*extra):
    return cli(*HOURLY_SCREEN, *extra)


def weather(*extra):
    return cli(*WEATHER, *extra)


def place(*extra):
    return cli(*PLACE, *extra)


def region(*extra):
    return cli(*REGION, *extra)


def verify(*extra):
    return cli(*VERIFY, *extra)


# --------------------------------------------------------------------------------------------
# the case record
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Case:
    """One fault: what to break, how to run, what must come out.

    id : readable name, also the pytest id.
    argv : ws -> the command line.
    rc : the exit code expected.
    message : regex the single stderr line must contain (re.search): the culprit.
    source : where the expectation comes from (see the module docstring).
    setup : ws -> None, changes the copied inputs before the run (and before the snapshot).
    patch : (ws, monkeypatch) -> None, active during the run only (interrupts, bugs).
    prior : ws/out holds a previous output folder (argv then usually has --overwrite); it must
        come out byte-identical (or be put back by the next run, for interrupts).
    before_work : the refusal must come before any work: the command's computation is replaced
        by one that fails the test if it is ever called (README: "before any work").
    written : the run completes and writes its output folder (exit 0 or 1): only ws/out may
        appear, nothing else may change.
    cached_screen : the screening computation is replaced by the result of the earlier run (the
        case tests writing, not computing; it saves ~1.5 s).
    cwd : the current folder of the run, relative to ws.root.
    check : (ws, line) -> None, more assertions.
    needs_permissions : skipped as root, who ignores folder permissions.
    """

    id: str
    argv: Callable
    rc: int
    message: str
    source: str
    setup: Callable | None = None
    patch: Callable | None = None
    prior: bool = False
    before_work: bool = False
    written: bool = False
    cached_screen: bool = False
    cwd: str = "work"
    check: Callable | None = None
    needs_permissions: bool = False


CASES: list[Case] = []


def case(*args, **kwargs) -> None:
    CASES.append(Case(*args, **kwargs))


def scenario_edit(fn, relative: str = "inputs/scenario.toml"):
    """A setup that edits the parsed scenario dict in place."""
    return lambda ws: ws.scenario(fn, relative)


def _source(data: dict, source_id: str) -> dict:
    return next(s for s in data["source"] if s["id"] == source_id)


def set_source(source_id: str, **values):
    return scenario_edit(lambda d: _source(d, source_id).update(values))


def set_key(section: str, **values):
    return scenario_edit(lambda d: d.setdefault(section, {}).update(values))


def drop_key(section: str | None, key: str, source_id: str | None = None):
    def edit(d):
        target = _source(d, source_id) if source_id else (d[section] if section else d)
        del target[key]

    return scenario_edit(edit)


def steps(*setups):
    """Several setups in turn."""

    def run(ws):
        for s in setups:
            s(ws)

    return run


# ============================================================================================
# 1. --overwrite refusals (README --overwrite rule: exit 2, a line saying why, before any work,
#    nothing lost)
# ============================================================================================

HOLDS_INPUT = r"holds an input of this run"
CURRENT = r"is the current folder or one of its parents"
NOT_OURS = r"is not a folder siting wrote"

case(
    "overwrite-out-is-scenario-folder",
    cli(
        "screen", "@inputs/scenario.toml", "--out", "@inputs", "--overwrite", "--quiet", "--no-pdf"
    ),
    2,
    HOLDS_INPUT + r" \(scenario\.toml\)",
    README_OVERWRITE,
    setup=lambda ws: ws.mark("inputs"),
    before_work=True,
)
case(
    "overwrite-out-is-symlink-to-scenario-folder",
    cli("screen", "@inputs/scenario.toml", "--out", "@link", "--overwrite", "--quiet", "--no-pdf"),
    2,
    HOLDS_INPUT,
    README_OVERWRITE,
    setup=lambda ws: (ws.mark("inputs"), (ws / "link").symlink_to(ws.inputs)),
    before_work=True,
)
case(
    "overwrite-out-is-ancestor-of-scenario",
    cli(
        "screen", "@out/nested/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"
    ),
    2,
    HOLDS_INPUT + r" \(scenario\.toml\)",
    README_OVERWRITE,
    setup=lambda ws: shutil.copytree(ws.inputs, ws.out / "nested"),
    prior=True,
    before_work=True,
)
case(
    "overwrite-out-is-cwd",
    cli("screen", "@inputs/scenario.toml", "--out", ".", "--overwrite", "--quiet", "--no-pdf"),
    2,
    CURRENT,
    README_OVERWRITE,
    setup=lambda ws: ws.mark("work"),
    before_work=True,
)
case(
    "overwrite-out-is-parent-of-cwd",
    cli("screen", "@inputs/scenario.toml", "--out", "..", "--overwrite", "--quiet", "--no-pdf"),
    2,
    CURRENT,
    README_OVERWRITE,
    setup=lambda ws: ws.mark("."),
    before_work=True,
)
case(
    "overwrite-out-is-grandparent-of-cwd",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"),
    2,
    CURRENT,
    README_OVERWRITE,
    prior=True,
    cwd="out/a/b",
    setup=lambda ws: (ws.out / "a" / "b").mkdir(parents=True),
    before_work=True,
)
case(
    "overwrite-out-not-a-siting-folder",
    cli("screen", "@inputs/scenario.toml", "--out", "@notes", "--overwrite", "--quiet", "--no-pdf"),
    2,
    NOT_OURS,
    README_OVERWRITE,
    setup=lambda ws: (
        (ws / "notes").mkdir(),
        (ws / "notes" / "letter.txt").write_text("keep me", encoding="utf-8"),
    ),
    before_work=True,
)
case(
    "overwrite-out-empty-foreign-folder",
    cli("screen", "@inputs/scenario.toml", "--out", "@empty", "--overwrite", "--quiet", "--no-pdf"),
    2,
    NOT_OURS,
    README_OVERWRITE,
    setup=lambda ws: (ws / "empty").mkdir(),
    before_work=True,
)
case(
    "overwrite-out-holds-frequency-table",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"),
    2,
    HOLDS_INPUT + r" \(weather_table\.csv\)",
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copy2(ws.inputs / "weather_table.csv", ws.out / "weather_table.csv"),
        set_key("weather", frequency_table="../out/weather_table.csv"),
    ),
    before_work=True,
)
case(
    "overwrite-out-holds-habitats",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"),
    2,
    HOLDS_INPUT + r" \(habitats\.gpkg\)",
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copy2(ws.inputs / "habitats.gpkg", ws.out / "habitats.gpkg"),
        set_key("habitats", file="../out/habitats.gpkg"),
    ),
    before_work=True,
)
case(
    "overwrite-out-holds-receptors",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"),
    2,
    HOLDS_INPUT + r" \(receptors\.csv\)",
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copy2(ws.inputs / "receptors.csv", ws.out),
        set_key("receptors", file="../out/receptors.csv"),
    ),
    before_work=True,
)
case(
    "overwrite-out-holds-config-dir",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--overwrite", "--quiet", "--no-pdf"),
    2,
    HOLDS_INPUT,
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copytree(ws.out / "inputs" / "_config", ws.out / "tables"),
        set_key("assessment", config_dir="../out/tables"),
    ),
    before_work=True,
)
case(
    "overwrite-out-exists-without-flag",
    cli("screen", "@inputs/scenario.toml", "--out", "@out", "--quiet", "--no-pdf"),
    2,
    r"out: output folder exists; pass --overwrite",
    README_OVERWRITE,
    prior=True,
    before_work=True,
)
case(
    "overwrite-out-is-a-file",
    cli("screen", "@inputs/scenario.toml", "--out", "@afile", "--overwrite", "--quiet", "--no-pdf"),
    2,
    r"afile: exists and is not a folder",
    README_OVERWRITE,
    setup=lambda ws: (ws / "afile").write_text("not a folder", encoding="utf-8"),
    before_work=True,
)
case(
    "demo-overwrite-out-is-cwd",
    cli("demo", "--out", ".", "--overwrite", "--quiet"),
    2,
    CURRENT,
    README_OVERWRITE,
    setup=lambda ws: ws.mark("work"),
    before_work=True,
)
case(
    "weather-overwrite-record-folder",
    cli(
        "weather",
        "@inputs/hourly_short.csv",
        "--lat",
        "52.3",
        "--lon",
        "9.7",
        "--out",
        "@inputs",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(hourly_short\.csv\)",
    README_OVERWRITE,
    setup=lambda ws: ws.mark("inputs"),
    before_work=True,
)


def _split_record(ws):
    """The week's record as two files: days 1-3 in inputs/, days 4-7 in year2/ (marked)."""
    lines = (ws.inputs / "hourly_short.csv").read_text(encoding="utf-8").splitlines()
    (ws.inputs / "part1.csv").write_text("\n".join(lines[:73]) + "\n", encoding="utf-8")
    ws.mark("year2")
    (ws / "year2" / "part2.csv").write_text(
        "\n".join([lines[0]] + lines[73:]) + "\n", encoding="utf-8"
    )


case(
    "weather-overwrite-second-record-folder",
    cli(
        "weather",
        "@inputs/part1.csv",
        "@year2/part2.csv",
        "--lat",
        "52.3",
        "--lon",
        "9.7",
        "--out",
        "@year2",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(part2\.csv\)",
    README_OVERWRITE,
    setup=_split_record,
    before_work=True,
)
case(
    "region-overwrite-farms-folder",
    cli(
        "region",
        "@farms/farms.gpkg",
        "--weather",
        "@inputs/weather_table.csv",
        "--out",
        "@farms",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(farms\.gpkg\)",
    README_OVERWRITE,
    setup=lambda ws: ws.mark("farms"),
    before_work=True,
)
case(
    "region-overwrite-weather-folder",
    cli(
        "region",
        "@farms/farms.gpkg",
        "--weather",
        "@inputs/weather_table.csv",
        "--out",
        "@inputs",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(weather_table\.csv\)",
    README_OVERWRITE,
    setup=lambda ws: ws.mark("inputs"),
    before_work=True,
)
case(
    "region-overwrite-habitats-folder",
    cli(
        "region",
        "@farms/farms.gpkg",
        "--weather",
        "@farms/../inputs/weather_table.csv",
        "--habitats",
        "@out/region_habitats.gpkg",
        "--out",
        "@out",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(region_habitats\.gpkg\)",
    README_OVERWRITE,
    prior=True,
    setup=lambda ws: shutil.copy2(ws.inputs / "region_habitats.gpkg", ws.out),
    before_work=True,
)
case(
    "verify-overwrite-package-itself",
    cli("verify", "@out", "--out", "@out", "--overwrite", "--quiet"),
    2,
    HOLDS_INPUT,
    README_OVERWRITE,
    prior=True,
    before_work=True,
)
case(
    "verify-overwrite-results-folder",
    cli(
        "verify",
        "@inputs/scenario.toml",
        "--results",
        "@out/sites.csv",
        "--out",
        "@out",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(sites\.csv\)",
    README_OVERWRITE,
    prior=True,
    before_work=True,
)
case(
    "verify-overwrite-weather-folder",
    cli(
        "verify",
        "@sub",
        "--weather",
        "@out/weather_table.csv",
        "--out",
        "@out",
        "--overwrite",
        "--quiet",
    ),
    2,
    HOLDS_INPUT + r" \(weather_table\.csv\)",
    README_OVERWRITE,
    prior=True,
    setup=lambda ws: (ws.copy_prior("sub"), shutil.copy2(ws.inputs / "weather_table.csv", ws.out)),
    before_work=True,
)
case(
    "place-overwrite-holding-folder",
    cli(
        "place", "@inputs/scenario.toml", "--house", "H2", "--out", "@out", "--overwrite", "--quiet"
    ),
    2,
    HOLDS_INPUT + r" \(holding\.gpkg\)",
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copy2(ws.inputs / "holding.gpkg", ws.out),
        set_key("holding", file="../out/holding.gpkg"),
    ),
    before_work=True,
)
case(
    "place-overwrite-exclusion-folder",
    cli(
        "place", "@inputs/scenario.toml", "--house", "H2", "--out", "@out", "--overwrite", "--quiet"
    ),
    2,
    HOLDS_INPUT + r" \(dwellings\.gpkg\)",
    README_OVERWRITE,
    prior=True,
    setup=steps(
        lambda ws: shutil.copy2(ws.inputs / "dwellings.gpkg", ws.out),
        scenario_edit(lambda d: d["holding"]["exclusion"][0].update(file="../out/dwellings.gpkg")),
    ),
    before_work=True,
)

# ============================================================================================
# 2. output locations that cannot be written (README exit-code table: exit 2, found before any
#    work, nothing written)
# ============================================================================================


def A_FILE(ws):  # noqa: N802 (a setup used like a constant)
    (ws / "afile").write_text("a file, not a folder", encoding="utf-8")


LONG = "n" * 300
LONG_MULTIBYTE = "\u00e9" * 130  # 130 characters, 260 bytes in UTF-8
#: The line names the --out given (whole or cut short with "..."), not a file derived from it
#: (a hidden lock, staging or backup name), and says it is too long (README: "a name over 255
#: bytes ... found before any work").
TOO_LONG = r"{}+(\.\.\.)?: .*(longer than 255 bytes|[Tt]oo long)"

case(
    "out-parent-is-file",
    screen("--out", "@afile/out"),
    2,
    r"afile is a file, not a folder",
    README_EXIT,
    setup=A_FILE,
    before_work=True,
)
case(
    "out-grandparent-is-file",
    screen("--out", "@afile/a/b"),
    2,
    r"afile is a file, not a folder",
    README_EXIT,
    setup=A_FILE,
    before_work=True,
)
case(
    "out-name-too-long",
    screen("--out", "@" + LONG),
    2,
    TOO_LONG.format("n"),
    README_EXIT,
    before_work=True,
)
case(
    "out-name-too-long-in-bytes",
    screen("--out", "@" + LONG_MULTIBYTE),
    2,
    TOO_LONG.format("\u00e9"),
    README_EXIT,
    before_work=True,
)
case(
    "out-folder-on-the-way-too-long",
    screen("--out", "@" + LONG + "/out"),
    2,
    r"n{40}.*(longer than 255 bytes|too long)",
    README_EXIT,
    before_work=True,
)
case(
    "out-default-maps-is-a-file",
    cli("screen", "@inputs/scenario.toml", "--quiet", "--no-pdf"),
    2,
    r"maps is a file, not a folder",
    README_EXIT,
    setup=lambda ws: (ws / "work" / "maps").write_text("x", encoding="utf-8"),
    before_work=True,
)
case(
    "out-parent-read-only",
    screen("--out", "@locked/out"),
    2,
    r"locked.*(no permission|Permission denied)",
    README_EXIT,
    setup=lambda ws: ((ws / "locked").mkdir(), (ws / "locked").chmod(0o555)),
    before_work=True,
    needs_permissions=True,
)
case(
    "weather-out-parent-is-file",
    weather("--out", "@afile/out"),
    2,
    r"afile is a file, not a folder",
    README_EXIT,
    setup=A_FILE,
    before_work=True,
)
case(
    "place-out-parent-is-file",
    place("--out", "@afile/out"),
    2,
    r"afile is a file, not a folder",
    README_EXIT,
    setup=A_FILE,
    before_work=True,
)
case(
    "region-out-name-too-long",
    region("--out", "@" + LONG),
    2,
    TOO_LONG.format("n"),
    README_EXIT,
    before_work=True,
)
case(
    "verify-out-parent-is-file",
    verify("--out", "@afile/out"),
    2,
    r"afile is a file, not a folder",
    README_EXIT,
    setup=lambda ws: (A_FILE(ws), ws.copy_prior("sub")),
    before_work=True,
)

# ============================================================================================
# 3. the scenario file (README exit-code table: exit 2, the line names the key; STYLE.md 5)
# ============================================================================================

SC = r"scenario\.toml"

case(
    "scenario-unknown-top-key",
    screen(),
    2,
    SC + r".*unknown key titel",
    README_EXIT,
    setup=scenario_edit(lambda d: d.update(titel="x")),
)
case(
    "scenario-unknown-grid-key",
    screen(),
    2,
    SC + r", grid: unknown key spacing\b",
    README_EXIT,
    setup=set_key("grid", spacing=10.0),
)
case(
    "scenario-unknown-source-key",
    screen(),
    2,
    SC + r', source "H2": unknown key heigth_m',
    README_EXIT,
    setup=set_source("H2", heigth_m=3.5),
)
case(
    "scenario-missing-crs",
    screen(),
    2,
    SC + r".*missing key crs",
    README_EXIT,
    setup=drop_key(None, "crs"),
)
case(
    "scenario-missing-habitats-file-key",
    screen(),
    2,
    SC + r", habitats: missing key file",
    README_EXIT,
    setup=drop_key("habitats", "file"),
)
case(
    "scenario-missing-source-x",
    screen(),
    2,
    SC + r', source "H1": missing key x',
    README_EXIT,
    setup=drop_key(None, "x", "H1"),
)
case(
    "scenario-no-source", screen(), 2, SC + r".*source", README_EXIT, setup=drop_key(None, "source")
)
case(
    "scenario-spacing-is-text",
    screen(),
    2,
    SC + r", grid: spacing_m\b.*'25'",
    README_EXIT,
    setup=set_key("grid", spacing_m="25"),
)
case(
    "scenario-depletion-is-text",
    screen(),
    2,
    SC + r", deposition: plume_depletion\b.*'yes'",
    README_EXIT,
    setup=set_key("deposition", plume_depletion="yes"),
)
case(
    "scenario-places-is-text",
    screen(),
    2,
    SC + r', source "H1": places\b.*' + "'many'",
    README_EXIT,
    setup=set_source("H1", places="many"),
)
case(
    "scenario-spacing-nan",
    screen(),
    2,
    SC + r", grid: spacing_m.*nan",
    README_EXIT,
    setup=set_key("grid", spacing_m=math.nan),
)
case(
    "scenario-margin-inf",
    screen(),
    2,
    SC + r", grid: margin_m.*inf",
    README_EXIT,
    setup=set_key("grid", margin_m=math.inf),
)
case(
    "scenario-source-x-nan",
    screen(),
    2,
    SC + r', source "H1": x\b.*nan',
    README_EXIT,
    setup=set_source("H1", x=math.nan),
)
case(
    "scenario-emission-inf",
    screen(),
    2,
    SC + r', source "M1": nh3_kg_per_year.*inf',
    README_EXIT,
    setup=set_source("M1", nh3_kg_per_year=math.inf),
)
case(
    "scenario-exit-velocity-inf",
    screen(),
    2,
    SC + r', source "H1": exit_velocity_m_s.*inf',
    README_EXIT,
    setup=set_source("H1", exit_velocity_m_s=math.inf),
)
case(
    "scenario-mixing-height-nan",
    screen(),
    2,
    SC + r", weather: mixing_height_m.*nan",
    README_EXIT,
    setup=set_key("weather", mixing_height_m=math.nan),
)
case(
    "scenario-height-negative",
    screen(),
    2,
    SC + r', source "H2": height_m\b.*-6',
    README_EXIT,
    setup=set_source("H2", height_m=-6.0),
)
case(
    "scenario-places-negative",
    screen(),
    2,
    SC + r', source "H1": places\b.*-1',
    README_EXIT,
    setup=set_source("H1", places=-1),
)
case(
    "scenario-anemometer-zero",
    screen(),
    2,
    SC + r", weather: anemometer_height_m\b.*\b0(\.0)?\b",
    README_EXIT,
    setup=set_key("weather", anemometer_height_m=0.0),
)
case(
    "scenario-reduction-over-100",
    screen(),
    2,
    SC + r', source "H1": reduction_percent\b.*150',
    README_EXIT,
    setup=set_source("H1", reduction_percent=150.0, reduction_basis="invented certificate"),
)
case(
    "scenario-land-type-unknown",
    screen(),
    2,
    SC + r", weather: land_type\b.*suburban",
    README_EXIT,
    setup=set_key("weather", land_type="suburban"),
)
case(
    "scenario-title-empty",
    screen(),
    2,
    SC + r".*\btitle\b.*(empty|at least 1 character)",
    README_EXIT,
    setup=scenario_edit(lambda d: d.update(title="")),
)
case(
    "scenario-crs-geographic",
    screen(),
    2,
    SC + r'.*crs "EPSG:4326".*geographic',
    README_EXIT,
    setup=scenario_edit(lambda d: d.update(crs="EPSG:4326")),
)
case(
    "scenario-crs-unknown",
    screen(),
    2,
    SC + r'.*crs "EPSG:999999"',
    README_EXIT,
    setup=scenario_edit(lambda d: d.update(crs="EPSG:999999")),
)
case(
    "scenario-crs-in-feet",
    screen(),
    2,
    SC + r".*crs.*EPSG:2227.*(foot|feet|metre)",
    README_EXIT,
    setup=scenario_edit(lambda d: d.update(crs="EPSG:2227")),
)
case(
    "scenario-both-weather-records",
    screen(),
    2,
    SC + r", weather.*frequency_table.*hourly",
    README_EXIT,
    setup=set_key("weather", hourly="hourly_short.csv"),
)
case(
    "scenario-duplicate-source-id",
    screen(),
    2,
    SC + r'.*duplicate source id "H1"',
    README_EXIT,
    setup=set_source("H2", id="H1"),
)
case(
    "scenario-volume-without-width",
    screen(),
    2,
    SC + r', source "H2".*width_m',
    README_EXIT,
    setup=drop_key(None, "width_m", "H2"),
)
case(
    "scenario-unknown-livestock",
    screen(),
    2,
    r'source "H1".*livestock "finishing_pigs".*"finishing_pig"',
    README_EXIT,
    setup=set_source("H1", livestock="finishing_pigs"),
)
case(
    "scenario-unknown-abatement",
    screen(),
    2,
    r'source "H1".*abatement "acid_scrub"',
    README_EXIT,
    setup=set_source("H1", abatement="acid_scrub"),
)
case(
    "scenario-grid-too-large",
    screen(),
    2,
    r"grid.*spacing_m",
    README_EXIT,
    setup=set_key("grid", spacing_m=1.0, margin_m=20000.0),
)
case(
    "scenario-missing-frequency-table-file",
    screen(),
    2,
    SC + r".*weather\.frequency_table.*nothere\.csv.*not found",
    README_EXIT,
    setup=set_key("weather", frequency_table="nothere.csv"),
)
case(
    "scenario-missing-habitats-file",
    screen(),
    2,
    SC + r".*habitats\.file.*nothere\.gpkg.*not found",
    README_EXIT,
    setup=set_key("habitats", file="nothere.gpkg"),
)
case(
    "scenario-missing-receptors-file",
    screen(),
    2,
    SC + r".*receptors\.file.*nothere\.csv.*not found",
    README_EXIT,
    setup=set_key("receptors", file="nothere.csv"),
)
case(
    "scenario-missing-config-dir",
    screen(),
    2,
    SC + r".*assessment\.config_dir.*nothere.*not found",
    README_EXIT,
    setup=set_key("assessment", config_dir="nothere"),
)
case(
    "scenario-not-toml",
    screen(),
    2,
    SC + r".*TOML.*line 2\b",
    README_EXIT,
    setup=lambda ws: (ws.inputs / "scenario.toml").write_text(
        'title = "x"\ncrs = "EPSG:32632\n[grid]\n', encoding="utf-8"
    ),
)
case(
    "scenario-not-utf8",
    screen(),
    2,
    SC + r".*(UTF-8|utf-8|TOML)",
    README_EXIT,
    setup=lambda ws: (ws.inputs / "scenario.toml").write_bytes(
        (ws.inputs / "scenario.toml").read_bytes().replace(b"Hollowmere", b"Hollow\xe9mere")
    ),
)
case(
    "scenario-file-missing",
    cli("screen", "@inputs/nothere.toml", "--out", "@out", "--quiet", "--no-pdf"),
    2,
    r"nothere\.toml.*not found",
    README_EXIT,
)
case(
    "scenario-is-a-folder",
    cli("screen", "@inputs", "--out", "@out", "--quiet", "--no-pdf"),
    2,
    r"inputs.*(not found|not a file|folder)",
    README_EXIT,
)
case(
    "scenario-overwrite-kept-unknown-livestock",
    screen("--overwrite"),
    2,
    r'source "H1".*livestock "pig"',
    README_OVERWRITE,
    prior=True,
    setup=set_source("H1", livestock="pig"),
)

# ============================================================================================
# 4. the weather frequency table (README exit-code table; the line of a bad row: practice)
# ============================================================================================

WT = r"weather_table\.csv"


def table_cell(line: int, column: str, value: str):
    return lambda ws: set_cell(ws.inputs / "weather_table.csv", line, column, value)


case(
    "weather-freq-sum-0.5",
    screen(),
    2,
    WT + r".*sum.*\b0\.5\b",
    README_EXIT,
    setup=lambda ws: map_column(
        ws.inputs / "weather_table.csv", "frequency", lambda v: repr(float(v) / 2)
    ),
)
# the value as the user wrote it ('nan'), not as numpy prints it (np.float64(nan)): STYLE.md 5
case(
    "weather-freq-nan",
    screen(),
    2,
    WT + r", line 5: frequency must be a finite number, got '?nan'?$",
    PRACTICE,
    setup=table_cell(5, "frequency", "nan"),
)
case(
    "weather-freq-inf",
    screen(),
    2,
    WT + r", line 6: frequency must be a finite number, got '?inf'?$",
    PRACTICE,
    setup=table_cell(6, "frequency", "inf"),
)
case(
    "weather-freq-1e308",
    screen(),
    2,
    WT + r".*(line 7|1e\+308)",
    README_EXIT,
    setup=table_cell(7, "frequency", "1e308"),
)
case(
    "weather-freq-1e308-twice",
    screen(),
    2,
    WT + r".*(line 7|overflow)",
    README_EXIT,
    setup=steps(table_cell(7, "frequency", "1e308"), table_cell(8, "frequency", "1e308")),
)
case(
    "weather-freq-negative",
    screen(),
    2,
    WT + r".*frequency.*(line 9|-0\.25)",
    README_EXIT,
    setup=table_cell(9, "frequency", "-0.25"),
)
case(
    "weather-speed-negative",
    screen(),
    2,
    WT + r".*speed_m_s.*(line 10|-1\.5)",
    README_EXIT,
    setup=table_cell(10, "speed_m_s", "-1.5"),
)
case(
    "weather-speed-inf",
    screen(),
    2,
    WT + r", line 11: speed_m_s must be a finite number, got '?inf'?$",
    PRACTICE,
    setup=table_cell(11, "speed_m_s", "inf"),
)
case(
    "weather-stability-G",
    screen(),
    2,
    WT + r", line 4: stability\b.*'G'",
    README_EXIT,
    setup=table_cell(4, "stability", "G"),
)
case(
    "weather-direction-400",
    screen(),
    2,
    WT + r", line 12: direction_deg.*400",
    README_EXIT,
    setup=table_cell(12, "direction_deg", "400"),
)
case(
    "weather-direction-text",
    screen(),
    2,
    WT + r", line 13: direction_deg.*'north'",
    README_EXIT,
    setup=table_cell(13, "direction_deg", "north"),
)
case(
    "weather-missing-column",
    screen(),
    2,
    WT + r".*missing column.*\bfrequency\b",
    README_EXIT,
    setup=lambda ws: sub_text(ws.inputs / "weather_table.csv", r"^(.*),frequency$", r"\1,freq"),
)
case(
    "weather-uneven-sectors",
    screen(),
    2,
    WT + r".*evenly spaced",
    README_EXIT,
    # the 30 deg rows moved to 35 deg: the frequencies still sum to 1, the sectors are uneven
    setup=lambda ws: sub_text(ws.inputs / "weather_table.csv", r"^30,", "35,", count=0),
)
case(
    "weather-table-no-rows",
    screen(),
    2,
    WT + r".*no rows",
    README_EXIT,
    setup=lambda ws: (ws.inputs / "weather_table.csv").write_text(
        "direction_deg,speed_m_s,stability,frequency\n", encoding="utf-8"
    ),
)
case(
    "weather-table-empty-file",
    screen(),
    2,
    WT,
    README_EXIT,
    setup=lambda ws: (ws.inputs / "weather_table.csv").write_bytes(b""),
)
case(
    "region-weather-freq-nan",
    region(),
    2,
    WT + r", line 5: frequency.*got '?NaN'?$",
    PRACTICE,
    setup=table_cell(5, "frequency", "NaN"),
)

# ============================================================================================
# 5. hourly weather records: siting weather and [weather] hourly (README exit-code table)
# ============================================================================================

HW = r"hourly_short\.csv"


def hourly_cell(line: int, column: str, value: str, name: str = "hourly_short.csv"):
    return lambda ws: set_cell(ws.inputs / name, line, column, value)


case(
    "hourly-utc-offset-minutes-99",
    weather(),
    2,
    HW + r", line 3: .*\+01:99",
    README_EXIT,
    setup=hourly_cell(3, "time", "2025-01-01T01:00+01:99"),
)
case(
    "hourly-utc-offset-beyond-14h",
    weather(),
    2,
    HW + r", line 4: .*\+15:00",
    README_EXIT,
    setup=hourly_cell(4, "time", "2025-01-01T02:00+15:00"),
)
case(
    "hourly-speed-inf",
    weather(),
    2,
    HW + r", line 4: speed_m_s\b.*'inf'",
    README_EXIT,
    setup=hourly_cell(4, "speed_m_s", "inf"),
)
case(
    "hourly-speed-negative",
    weather(),
    2,
    HW + r", line 5: speed_m_s\b.*-2",
    README_EXIT,
    setup=hourly_cell(5, "speed_m_s", "-2"),
)
case(
    "hourly-speed-text",
    weather(),
    2,
    HW + r", line 6: speed_m_s.*'calm'",
    README_EXIT,
    setup=hourly_cell(6, "speed_m_s", "calm"),
)
case(
    "hourly-direction-400",
    weather(),
    2,
    HW + r", line 7: direction_deg\b.*400",
    README_EXIT,
    setup=hourly_cell(7, "direction_deg", "400"),
)
case(
    "hourly-temperature-1e308",
    weather(),
    2,
    HW + r", line 8: temperature_c\b.*1e308",
    README_EXIT,
    setup=hourly_cell(8, "temperature_c", "1e308"),
)
case(
    "hourly-temperature-inf",
    weather(),
    2,
    HW + r", line 9: temperature_c.*inf",
    README_EXIT,
    setup=hourly_cell(9, "temperature_c", "-inf"),
)
case(
    "hourly-cloud-9",
    weather(),
    2,
    HW + r", line 10: cloud_oktas\b.*\b9\b",
    README_EXIT,
    setup=hourly_cell(10, "cloud_oktas", "9"),
)
case(
    "hourly-time-not-on-hour",
    weather(),
    2,
    HW + r", line 11: time\b.*09:30",
    README_EXIT,
    setup=hourly_cell(11, "time", "2025-01-01T09:30+01:00"),
)
case(
    "hourly-time-repeated",
    weather(),
    2,
    HW + r", line 12: time\b.*line 11\b",
    README_EXIT,
    setup=hourly_cell(12, "time", "2025-01-01T09:00+01:00"),
)
case(
    "hourly-time-garbage",
    weather(),
    2,
    HW + r", line 13: time\b.*yesterday",
    README_EXIT,
    setup=hourly_cell(13, "time", "yesterday"),
)
case(
    "hourly-time-impossible-date",
    weather(),
    2,
    HW + r", line 2: time\b.*2025-02-30",
    README_EXIT,
    setup=hourly_cell(2, "time", "2025-02-30T00:00+01:00"),
)
case(
    "hourly-naive-times-without-offset",
    weather(),
    2,
    HW + r", line 2: .*(UTC )?offset",
    README_EXIT,
    setup=lambda ws: map_column(
        ws.inputs / "hourly_short.csv", "time", lambda t: t.replace("+01:00", "")
    ),
)
case(
    "hourly-missing-column",
    weather(),
    2,
    HW + r", line 1: .*missing column.*\bspeed_m_s\b",
    README_EXIT,
    setup=lambda ws: sub_text(
        ws.inputs / "hourly_short.csv", r"^time,direction_deg,speed_m_s", "time,direction_deg,wind"
    ),
)
case(
    "hourly-row-too-long",
    weather(),
    2,
    HW + r", line 14: .*\b7\b",
    README_EXIT,
    setup=hourly_cell(14, "temperature_c", "3.0,extra"),
)
case(
    "hourly-too-many-missing-hours",
    weather(),
    2,
    HW + r".*missing",
    README_EXIT,
    setup=lambda ws: delete_lines(ws.inputs / "hourly_short.csv", 20, 60),
)
case(
    "hourly-overlapping-files",
    cli(
        "weather",
        "@inputs/hourly_short.csv",
        "@inputs/copy.csv",
        "--lat",
        "52.3",
        "--lon",
        "9.7",
        "--out",
        "@out",
        "--quiet",
    ),
    2,
    r"copy\.csv.*line 2\b.*overlap.*hourly_short\.csv|hourly_short\.csv.*overlap.*copy\.csv",
    README_EXIT,
    setup=lambda ws: shutil.copy2(ws.inputs / "hourly_short.csv", ws.inputs / "copy.csv"),
)
case(
    "hourly-file-missing",
    cli(
        "weather",
        "@inputs/nothere.csv",
        "--lat",
        "52.3",
        "--lon",
        "9.7",
        "--out",
        "@out",
        "--quiet",
    ),
    2,
    r"nothere\.csv.*not found",
    README_EXIT,
)
case(
    "weather-overwrite-kept-bad-offset",
    weather("--overwrite"),
    2,
    HW + r", line 3: .*\+01:99",
    README_OVERWRITE,
    prior=True,
    setup=hourly_cell(3, "time", "2025-01-01T01:00+01:99"),
)
# the same record errors through a scenario's [weather] hourly
# an hour without the temperature hour-by-hour emission needs is a missing hour, counted
# like any other: with no missing hour allowed, the record is refused naming the share
case(
    "scenario-hourly-temperature-nan",
    hourly_screen(),
    2,
    HW + r".*expected hours are missing \(1 h\)",
    PRACTICE,  # missing hours are never filled
    setup=steps(
        hourly_cell(10, "temperature_c", "NaN"),
        scenario_edit(
            lambda d: d["weather"].update(max_missing_percent=0.0),
            "inputs/scenario_hourly.toml",
        ),
    ),
)
case(
    "scenario-hourly-utc-offset-bad",
    hourly_screen(),
    2,
    HW + r", line 3: .*\+01:99",
    README_EXIT,
    setup=hourly_cell(3, "time", "2025-01-01T01:00+01:99"),
)
case(
    "scenario-hourly-speed-inf",
    hourly_screen(),
    2,
    HW + r", line 5: speed_m_s.*inf",
    README_EXIT,
    setup=hourly_cell(5, "speed_m_s", "inf"),
)
case(
    "scenario-hourly-utc-offset-h-20",
    hourly_screen(),
    2,
    r"scenario_hourly\.toml, weather: utc_offset_h\b.*20",
    README_EXIT,
    setup=scenario_edit(
        lambda d: d["weather"].update(utc_offset_h=20.0), "inputs/scenario_hourly.toml"
    ),
)
case(
    "scenario-hourly-file-missing",
    hourly_screen(),
    2,
    r"scenario_hourly\.toml.*weather\.hourly.*nothere\.csv.*not found",
    README_EXIT,
    setup=scenario_edit(
        lambda d: d["weather"].update(hourly="nothere.csv"), "inputs/scenario_hourly.toml"
    ),
)

# ============================================================================================
# 6. command-line options of weather, place, region (README exit-code table: the line names
#    the option; NaN, inf, negative, out of range)
# ============================================================================================

for cid, extra, pattern in [
    ("weather-opt-lat-nan", ("--lat", "nan"), r"--lat\b.*\bnan\b"),
    ("weather-opt-lat-91", ("--lat", "91"), r"--lat\b.*\b91\b"),
    ("weather-opt-lon-inf", ("--lon", "inf"), r"--lon\b.*\binf\b"),
    ("weather-opt-lon-negative-181", ("--lon", "-181"), r"--lon .*-181"),
    ("weather-opt-sectors-3", ("--sectors", "3"), r"--sectors\b.*\b3\b"),
    (
        "weather-opt-calm-threshold-nan",
        ("--calm-threshold", "nan"),
        r"(--calm-threshold|calm_threshold_m_s).*nan",
    ),
    (
        "weather-opt-calm-threshold-negative",
        ("--calm-threshold", "-0.5"),
        r"(--calm-threshold|calm_threshold_m_s).*-0\.5",
    ),
    (
        "weather-opt-min-speed-zero",
        ("--min-speed", "0"),
        r"(--min-speed|min_wind_speed_m_s)\b.*\b0\b",
    ),
    ("weather-opt-min-speed-inf", ("--min-speed", "inf"), r"(--min-speed|min_wind_speed_m_s).*inf"),
    (
        "weather-opt-max-missing-nan",
        ("--max-missing-percent", "nan"),
        r"(--max-missing-percent|max_missing_percent).*nan",
    ),
    (
        "weather-opt-max-missing-101",
        ("--max-missing-percent", "101"),
        r"(--max-missing-percent|max_missing_percent).*101",
    ),
    ("weather-opt-utc-offset-15", ("--utc-offset", "15"), r"(--utc-offset|utc_offset_h).*15"),
    ("weather-opt-utc-offset-nan", ("--utc-offset", "nan"), r"(--utc-offset|utc_offset_h).*nan"),
    (
        "weather-opt-anemometer-inf",
        ("--anemometer-height", "inf"),
        r"(--anemometer-height|anemometer_height_m).*inf",
    ),
    (
        "weather-opt-anemometer-negative",
        ("--anemometer-height", "-10"),
        r"(--anemometer-height|anemometer_height_m).*-10",
    ),
    ("weather-opt-lat-text", ("--lat", "north"), r"--lat.*'north'"),
]:
    case(cid, weather(*extra), 2, pattern, README_EXIT)

for cid, extra, pattern in [
    ("place-opt-spacing-nan", ("--spacing", "nan"), r"--spacing\b.*\bnan\b"),
    ("place-opt-spacing-negative", ("--spacing", "-5"), r"--spacing\b.*-5\b"),
    ("place-opt-spacing-inf", ("--spacing", "inf"), r"--spacing\b.*\binf\b"),
    ("place-opt-top-0", ("--top", "0"), r"--top\b.*\b0\b"),
    ("place-opt-house-unknown", ("--house", "H9"), r'--house "H9"'),
]:
    case(cid, place(*extra), 2, pattern, README_EXIT)

case(
    "place-no-holding-table",
    place(),
    2,
    SC + r".*\[holding\]",
    README_EXIT,
    setup=drop_key(None, "holding"),
)
case(
    "place-holding-is-points",
    place(),
    2,
    r"holding\.file dwellings\.gpkg.*(polygon|Point)",
    README_EXIT,
    setup=set_key("holding", file="dwellings.gpkg"),
)
case(
    "place-holding-spacing-nan",
    place(),
    2,
    SC + r".*holding.*spacing_m.*nan",
    README_EXIT,
    setup=set_key("holding", spacing_m=math.nan),
)
case(
    "place-exclusion-file-missing",
    place(),
    2,
    SC + r".*holding\.exclusion #1.*nothere\.gpkg.*not found",
    README_EXIT,
    setup=scenario_edit(lambda d: d["holding"]["exclusion"][0].update(file="nothere.gpkg")),
)
case(
    "place-exclusion-buffer-negative",
    place(),
    2,
    r"holding\.exclusion.*(#1|dwellings|\b1\b).*buffer_m|buffer_m.*(#1|dwellings)",
    PRACTICE,
    setup=scenario_edit(lambda d: d["holding"]["exclusion"][0].update(buffer_m=-5.0)),
)
case(
    "place-overwrite-kept-house-unknown",
    place("--house", "H9", "--overwrite"),
    2,
    r'--house "H9"',
    README_OVERWRITE,
    prior=True,
)

for cid, extra, pattern in [
    ("region-opt-spacing-nan", ("--spacing", "nan"), r"--spacing\b.*\bnan\b"),
    ("region-opt-spacing-negative", ("--spacing", "-100"), r"--spacing .*-100"),
    ("region-opt-spacing-inf", ("--spacing", "inf"), r"--spacing .*inf"),
    ("region-opt-margin-nan", ("--margin", "nan"), r"--margin .*nan"),
    ("region-opt-margin-below-spacing", ("--margin", "100"), r"--margin\b.*\b100\b"),
    ("region-opt-memory-nan", ("--memory-mb", "nan"), r"--memory-mb\b.*\bnan\b"),
    ("region-opt-memory-negative", ("--memory-mb", "-1"), r"--memory-mb\b.*-1\b"),
    ("region-opt-memory-inf", ("--memory-mb", "inf"), r"--memory-mb.*inf"),
    ("region-opt-workers-0", ("--workers", "0"), r"--workers\b.*\b0\b"),
    ("region-opt-tile-size-8", ("--tile-size", "8"), r"--tile-size\b.*\b8\b"),
    ("region-opt-top-0", ("--top", "0"), r"--top\b.*\b0\b"),
    ("region-opt-reach-nan", ("--reach-m", "nan"), r"--reach-m .*nan"),
    ("region-opt-reach-negative", ("--reach-m", "-1"), r"--reach-m .*-1"),
    ("region-opt-near-field-negative", ("--near-field", "-1"), r"--near-field\b.*-1\b"),
    ("region-opt-anemometer-inf", ("--anemometer-height", "inf"), r"--anemometer-height.*inf"),
    ("region-opt-anemometer-nan", ("--anemometer-height", "nan"), r"--anemometer-height.*nan"),
    ("region-opt-crs-geographic", ("--crs", "EPSG:4326"), r"--crs\b.*EPSG:4326.*geographic"),
    ("region-opt-crs-garbage", ("--crs", "metres please"), r'--crs\b.*"metres please"'),
    ("region-opt-layer-missing", ("--layer", "nolayer"), r"farms layer farms\.gpkg.*nolayer"),
    ("region-opt-id-field-missing", ("--id-field", "farm"), r'--id-field "farm"'),
    ("region-opt-emission-field-missing", ("--emission-field", "kg"), r'--emission-field "kg"'),
    ("region-opt-spacing-text", ("--spacing", "fine"), r"--spacing.*'fine'"),
]:
    case(cid, region(*extra), 2, pattern, README_EXIT)

# ============================================================================================
# 7. farms layers of siting region (README exit-code table; the farm by its id: practice)
# ============================================================================================

FL = r"farms layer farms\.gpkg"


def farms_edit(fn):
    return lambda ws: edit_layer(ws / "farms" / "farms.gpkg", fn)


def _set(column, index, value):
    def fn(gdf):
        gdf[column] = gdf[column].astype(object)
        gdf.loc[index, column] = value
        return gdf

    return fn


def _geometry(index, geom):
    def fn(gdf):
        gdf.loc[index, "geometry"] = geom
        return gdf

    return fn


def _point():
    import shapely

    return shapely.Point(500000.0, 5800000.0)


def _line():
    import shapely

    return shapely.LineString([(500000.0, 5800000.0), (500100.0, 5800100.0)])


case(
    "region-farm-emission-text",
    region(),
    2,
    FL + r', farm "F2": nh3_kg_per_year.*lots',
    README_EXIT,
    setup=farms_edit(_set("nh3_kg_per_year", 1, "lots")),
)
case(
    "region-farm-emission-inf",
    region(),
    2,
    FL + r', farm "F1": nh3_kg_per_year.*inf',
    README_EXIT,
    setup=farms_edit(_set("nh3_kg_per_year", 0, math.inf)),
)
case(
    "region-farm-emission-negative",
    region(),
    2,
    FL + r', farm "F3": nh3_kg_per_year.*-5',
    README_EXIT,
    setup=farms_edit(_set("nh3_kg_per_year", 2, -5.0)),
)
case(
    "region-farm-height-500",
    region(),
    2,
    FL + r', farm "F1": height_m\b.*500',
    README_EXIT,
    setup=farms_edit(_set("height_m", 0, 500.0)),
)
case(
    "region-farm-duplicate-id",
    region(),
    2,
    FL + r'.*duplicate.*"F1"',
    README_EXIT,
    setup=farms_edit(_set("id", 1, "F1")),
)
case(
    "region-farm-line-geometry",
    region(),
    2,
    FL + r', farm "F2": .*LineString',
    README_EXIT,
    setup=lambda ws: write_farms(
        ws / "farms" / "farms.gpkg",
        [
            {"id": "F1", "nh3_kg_per_year": 100.0, "geometry": _point()},
            {"id": "F2", "nh3_kg_per_year": 100.0, "geometry": _line()},
        ],
    ),
)
case(
    "region-farm-empty-layer",
    region(),
    2,
    r"farms layer farms\.gpkg.*no features",
    README_EXIT,
    setup=farms_edit(lambda g: g.iloc[0:0]),
)
case(
    "region-farm-no-crs",
    region(),
    2,
    r"farms layer farms\.gpkg.*no CRS",
    README_EXIT,
    setup=farms_edit(lambda g: g.set_crs(None, allow_override=True)),
)
case(
    "region-farm-geographic-crs",
    region(),
    2,
    FL + r".*is geographic.*--crs",
    README_EXIT,
    setup=farms_edit(lambda g: g.to_crs("EPSG:4326")),
)
case(
    "region-farm-unknown-livestock",
    region(),
    2,
    FL + r', farm "F3": .*livestock "goats"',
    README_EXIT,
    setup=farms_edit(
        lambda g: g.assign(
            nh3_kg_per_year=[2000.0, 1500.0, None],
            livestock=[None, None, "goats"],
            housing=[None, None, "straw"],
            places=[None, None, 100.0],
        )
    ),
)
case(
    "region-farm-no-emission",
    region(),
    2,
    FL + r', farm "F3": .*emission',
    README_EXIT,
    setup=farms_edit(_set("nh3_kg_per_year", 2, None)),
)
case(
    "region-farm-file-missing",
    cli(
        "region",
        "@farms/nothere.gpkg",
        "--weather",
        "@inputs/weather_table.csv",
        "--out",
        "@out",
        "--quiet",
    ),
    2,
    r"farms layer nothere\.gpkg.*not found",
    README_EXIT,
)
case(
    "region-farm-not-a-layer",
    region(),
    2,
    FL + r".*(cannot read|not recognized)",
    README_EXIT,
    setup=lambda ws: (ws / "farms" / "farms.gpkg").write_text("id,x,y\nF1,1,2\n", encoding="utf-8"),
)
case(
    "region-weather-file-missing",
    cli(
        "region",
        "@farms/farms.gpkg",
        "--weather",
        "@inputs/nothere.csv",
        "--out",
        "@out",
        "--quiet",
    ),
    2,
    r"--weather nothere\.csv.*not found",
    README_EXIT,
)
case(
    "region-habitats-duplicate-names",
    region("--habitats", "@inputs/region_habitats.gpkg"),
    2,
    r'region_habitats\.gpkg.*features 1, 2\b.*"Fernwhistle Moss"',
    README_EXIT,
    setup=lambda ws: edit_layer(
        ws.inputs / "region_habitats.gpkg", _set("name", 1, "Fernwhistle Moss")
    ),
)
case(
    "region-habitats-name-field-missing",
    region("--habitats", "@inputs/region_habitats.gpkg", "--name-field", "nom"),
    2,
    r'"nom".*region_habitats\.gpkg|--name-field "nom"',
    README_EXIT,
)
case(
    "region-overwrite-kept-farm-duplicate-id",
    region("--overwrite"),
    2,
    FL + r'.*duplicate.*"F1"',
    README_OVERWRITE,
    prior=True,
    setup=farms_edit(_set("id", 1, "F1")),
)

# ============================================================================================
# 8. habitat layers (README exit-code table; the feature and site by name: STYLE.md 5)
# ============================================================================================

HB = r"habitats\.file habitats\.gpkg"


def habitats_edit(fn):
    return lambda ws: edit_layer(ws.inputs / "habitats.gpkg", fn)


case(
    "habitats-text-in-background",
    screen(),
    2,
    HB + r', feature 2 \("Gorseburrow Heath"\): background_dep_kg_n_ha_yr\b.*' + "'high'",
    README_EXIT,
    setup=habitats_edit(_set("background_dep_kg_n_ha_yr", 1, "high")),
)
case(
    "habitats-background-negative",
    screen(),
    2,
    HB + r', feature 1 \("Fernwhistle Moss"\): background_dep_kg_n_ha_yr\b.*-3',
    README_EXIT,
    setup=habitats_edit(_set("background_dep_kg_n_ha_yr", 0, -3.0)),
)
case(
    "habitats-background-inf",
    screen(),
    2,
    HB + r', feature 3 \("Thimbleden Wood"\): background_conc_ug_m3\b.*\binf\b',
    README_EXIT,
    setup=habitats_edit(_set("background_conc_ug_m3", 2, math.inf)),
)
case(
    "habitats-critical-load-inf",
    screen(),
    2,
    HB + r', feature 3 \("Thimbleden Wood"\): cl\b.*\binf\b',
    README_EXIT,
    setup=steps(
        habitats_edit(lambda g: g.assign(cl=[10.0, 10.0, math.inf, 10.0])),
        set_key("habitats", critical_load_field="cl"),
    ),
)
case(
    "habitats-critical-level-zero",
    screen(),
    2,
    HB + r', feature 4 \("Peewit Slack"\): level\b.*\b0(\.0)?\b',
    README_EXIT,
    setup=steps(
        habitats_edit(lambda g: g.assign(level=[1.0, 1.0, 3.0, 0.0])),
        set_key("habitats", critical_level_field="level"),
    ),
)
case(
    "habitats-duplicate-names",
    screen(),
    2,
    HB + r'.*features 2, 4\b.*"Gorseburrow Heath"',
    README_EXIT,
    setup=habitats_edit(_set("name", 3, "Gorseburrow Heath")),
)
case(
    "habitats-empty-layer",
    screen(),
    2,
    HB + r".*no features",
    README_EXIT,
    setup=habitats_edit(lambda g: g.iloc[0:0]),
)
case(
    "habitats-points",
    screen(),
    2,
    HB + r', feature 1 \("Fernwhistle Moss"\): .*Point',
    README_EXIT,
    setup=habitats_edit(lambda g: g.set_geometry(g.geometry.centroid)),
)
case(
    "habitats-empty-geometry",
    screen(),
    2,
    HB + r', feature 2 \("Gorseburrow Heath"\): .*empty',
    README_EXIT,
    setup=habitats_edit(_geometry(1, None)),
)
case(
    "habitats-unknown-habitat",
    screen(),
    2,
    HB + r', feature 2 \("Gorseburrow Heath"\): .*"dry_heathh".*"dry_heath"',
    README_EXIT,
    setup=habitats_edit(_set("habitat", 1, "dry_heathh")),
)
case(
    "habitats-name-field-missing",
    screen(),
    2,
    r'habitats\.name_field.*"nom".*habitats\.gpkg',
    README_EXIT,
    setup=set_key("habitats", name_field="nom"),
)
case(
    "habitats-no-crs",
    screen(),
    2,
    HB + r".*no CRS",
    README_EXIT,
    setup=habitats_edit(lambda g: g.set_crs(None, allow_override=True)),
)
case(
    "habitats-lichens-field-unclear",
    screen(),
    2,
    HB + r', feature 1 \("Fernwhistle Moss"\): lichens\b.*' + "'maybe'",
    README_EXIT,
    setup=steps(
        habitats_edit(lambda g: g.assign(lichens=["maybe", "yes", "no", "yes"])),
        set_key("habitats", lichens_bryophytes_field="lichens"),
    ),
)
case(
    "habitats-not-a-layer",
    screen(),
    2,
    HB + r".*(cannot read|not recognized)",
    README_EXIT,
    setup=lambda ws: (ws.inputs / "habitats.gpkg").write_bytes(b"\x00garbage" * 100),
)
case(
    "habitats-overwrite-kept-duplicate-names",
    screen("--overwrite"),
    2,
    HB + r'.*features 2, 4\b.*"Gorseburrow Heath"',
    README_OVERWRITE,
    prior=True,
    setup=habitats_edit(_set("name", 3, "Gorseburrow Heath")),
)

# ============================================================================================
# 9. named receptor points (README exit-code table; the line: practice)
# ============================================================================================

RC = r"receptors\.file receptors\.csv"


def receptors_cell(line, column, value):
    return lambda ws: set_cell(ws.inputs / "receptors.csv", line, column, value)


case(
    "receptors-x-inf",
    screen(),
    2,
    RC + r", line 3: x\b",
    README_EXIT,
    setup=receptors_cell(3, "x", "inf"),
)
case(
    "receptors-y-text",
    screen(),
    2,
    RC + r", line 4: y\b",
    README_EXIT,
    setup=receptors_cell(4, "y", "north"),
)
case(
    "receptors-y-nan",
    screen(),
    2,
    RC + r", line 2: y\b",
    README_EXIT,
    setup=receptors_cell(2, "y", "nan"),
)
case(
    "receptors-unknown-land-cover",
    screen(),
    2,
    RC + r".*land_cover.*forest",
    README_EXIT,
    setup=receptors_cell(5, "land_cover", "forest"),
)
case(
    "receptors-missing-column",
    screen(),
    2,
    RC + r".*missing column.*\by\b",
    README_EXIT,
    setup=lambda ws: sub_text(ws.inputs / "receptors.csv", r"^id,x,y,", "id,x,why,"),
)
case(
    "receptors-duplicate-id",
    screen(),
    2,
    RC + r".*duplicate.*'moss_monitoring_post'",
    README_EXIT,
    setup=receptors_cell(3, "id", "moss_monitoring_post"),
)
case(
    "receptors-empty-file",
    screen(),
    2,
    RC + r".*(cannot read|no rows|missing)",
    README_EXIT,
    setup=lambda ws: (ws.inputs / "receptors.csv").write_bytes(b""),
)

# ============================================================================================
# 10. config tables copied to a user folder ([assessment] config_dir; README exit-code table:
#     the file, the row and the key; STYLE.md 4)
# ============================================================================================


def config_sub(name: str, pattern: str, replacement: str, count: int = 1):
    return lambda ws: sub_text(ws.config() / name, pattern, replacement, count)


def config_toml(name: str, fn):
    def setup(ws):
        folder = ws.config()
        ws.edit_toml(f"inputs/my_config/{name}", fn)
        assert (folder / name).is_file()

    return setup


case(
    "config-factor-nan",
    screen(),
    2,
    r"emission_factors\.toml, \[\[factor\]\] row 1\b.*nh3_kg_per_place_yr.*\bnan\b",
    README_EXIT,
    setup=config_sub(
        "emission_factors.toml", r"^nh3_kg_per_place_yr = 13\.0", "nh3_kg_per_place_yr = nan"
    ),
)
case(
    "config-factor-negative",
    screen(),
    2,
    r"emission_factors\.toml, \[\[factor\]\] row 2\b.*nh3_kg_per_place_yr.*-2\.813",
    README_EXIT,
    setup=config_sub(
        "emission_factors.toml", r"^nh3_kg_per_place_yr = 2\.813", "nh3_kg_per_place_yr = -2.813"
    ),
)
case(
    "config-factor-text",
    screen(),
    2,
    r"emission_factors\.toml, \[\[factor\]\] row 2\b.*nh3_kg_per_place_yr.*'2\.813'",
    README_EXIT,
    setup=config_sub(
        "emission_factors.toml", r"^nh3_kg_per_place_yr = 2\.813", 'nh3_kg_per_place_yr = "2.813"'
    ),
)
case(
    "config-level-row-missing",
    screen(),
    2,
    r'critical_levels\.toml.*"higher_plants"',
    README_EXIT,
    setup=config_toml(
        "critical_levels.toml",
        lambda d: d.update(level=[r for r in d["level"] if r["id"] != "higher_plants"]),
    ),
)
case(
    "config-tier-section-missing",
    screen(),
    2,
    r"thresholds\.toml.*\[\[tier\]\]",
    README_EXIT,
    setup=config_toml("thresholds.toml", lambda d: d.pop("tier")),
)
case(
    "config-source-missing",
    screen(),
    2,
    r'abatement\.toml, \[\[technique\]\] row 1 \("acid_scrubber"\).*\bsource\b',
    README_EXIT,
    setup=config_toml("abatement.toml", lambda d: d["technique"][0].pop("source")),
)
case(
    "config-threshold-text",
    screen(),
    2,
    r"thresholds\.toml, \[\[tier\]\] row 1 \(\"international\"\).*threshold_percent.*'4'",
    README_EXIT,
    setup=config_sub("thresholds.toml", r"^threshold_percent = 4\.0", 'threshold_percent = "4"'),
)
case(
    "config-deposition-velocity-inf",
    screen(),
    2,
    r"deposition_velocities\.toml, \[\[land_cover\]\] row 1\b.*deposition_velocity_m_s.*\binf\b",
    README_EXIT,
    setup=config_toml(
        "deposition_velocities.toml",
        lambda d: d["land_cover"][0].update(deposition_velocity_m_s=math.inf),
    ),
)
case(
    "config-critical-load-min-above-max",
    screen(),
    2,
    r'critical_loads\.toml.*"saltmarsh_upper".*critical_load_min_kg_n_ha_yr',
    README_EXIT,
    setup=config_toml(
        "critical_loads.toml", lambda d: d["habitat"][0].update(critical_load_min_kg_n_ha_yr=40.0)
    ),
)
case(
    "config-habitat-row-missing",
    screen(),
    2,
    r'feature 2 \("Gorseburrow Heath"\): .*"dry_heath".*critical_loads\.toml',
    README_EXIT,
    setup=config_toml(
        "critical_loads.toml",
        lambda d: d.update(habitat=[r for r in d["habitat"] if r["id"] != "dry_heath"]),
    ),
)
case(
    "config-table-file-missing",
    screen(),
    2,
    r"my_config/dispersion\.toml.*not found",
    README_EXIT,
    setup=lambda ws: (ws.config() / "dispersion.toml").unlink(),
)
case(
    "config-not-toml",
    screen(),
    2,
    r"thresholds\.toml.*TOML.*line 1",
    README_EXIT,
    setup=lambda ws: (ws.config() / "thresholds.toml").write_text(
        "[[tier]\nid = 1\n", encoding="utf-8"
    ),
)
case(
    "config-dispersion-class-missing",
    screen(),
    2,
    r"dispersion\.toml.*[Bb]riggs.*\bG\b|dispersion\.toml.*rural.*\bF\b",
    README_EXIT,
    setup=config_sub(
        "dispersion.toml",
        r'^stability = "F"\n(sigma_y.*\n)(sigma_z.*\n)',
        'stability = "G"\n\\1\\2',
    ),
)
# a NaN coefficient of the neutral class D (rural): the loader must refuse it (STYLE.md 1: every
# number finite); left through, it turns the demo's PC into 0 at every site ("below threshold")
case(
    "config-dispersion-sigma-z-nan",
    screen(),
    2,
    r"dispersion\.toml.*(\bD\b|row \d+).*sigma_z|"
    r"dispersion\.toml.*sigma_z.*(\bD\b|row \d+)",
    README_EXIT,
    setup=config_sub("dispersion.toml", r"sigma_z = \{ a = 0\.06,", "sigma_z = { a = nan,"),
)
case(
    "config-dispersion-sigma-y-nan",
    screen(),
    2,
    r"dispersion\.toml.*(\bD\b|row \d+).*sigma_y|"
    r"dispersion\.toml.*sigma_y.*(\bD\b|row \d+)",
    README_EXIT,
    setup=config_sub("dispersion.toml", r"sigma_y = \{ a = 0\.08,", "sigma_y = { a = nan,"),
)
case(
    "config-dispersion-sigma-text",
    screen(),
    2,
    r"dispersion\.toml.*sigma_z",
    README_EXIT,
    setup=config_sub("dispersion.toml", r"sigma_z = \{ a = 0\.06,", 'sigma_z = { a = "0.06",'),
)
case(
    "config-wind-exponent-missing",
    screen(),
    2,
    r"dispersion\.toml.*wind_exponent",
    README_EXIT,
    setup=config_sub("dispersion.toml", r"^\[\[wind_exponent\]\]", "[[wind_exponents]]", count=0),
)
case(
    "config-abatement-min-above-max",
    screen(),
    2,
    r'abatement\.toml.*"acid_scrubber".*\bmin\b.*\b95\b',
    README_EXIT,
    setup=config_sub(
        "abatement.toml", r"^reduction_percent_min = 70\.0", "reduction_percent_min = 95.0"
    ),
)
case(
    "config-uncertainty-nan",
    screen(),
    2,
    r"emission_factors\.toml, \[uncertainty\].*emission_factor_percent.*\bnan\b",
    README_EXIT,
    setup=config_sub(
        "emission_factors.toml",
        r"^emission_factor_percent = 30\.0",
        "emission_factor_percent = nan",
    ),
)
case(
    "config-designations-not-a-list",
    screen(),
    2,
    r'thresholds\.toml, \[\[tier\]\] row 1 \("international"\).*designations',
    README_EXIT,
    setup=config_toml(
        "thresholds.toml",
        lambda d: d["tier"][0].update(designations="Special Area of Conservation"),
    ),
)
case(
    "config-dir-is-a-file",
    screen(),
    2,
    r"config_dir|my_config",
    README_EXIT,
    setup=steps(
        lambda ws: (ws.inputs / "my_config").write_text("x", encoding="utf-8"),
        set_key("assessment", config_dir="my_config"),
    ),
)
case(
    "config-overwrite-kept-factor-nan",
    screen("--overwrite"),
    2,
    r"emission_factors\.toml.*nh3_kg_per_place_yr",
    README_OVERWRITE,
    prior=True,
    setup=config_sub(
        "emission_factors.toml", r"^nh3_kg_per_place_yr = 13\.0", "nh3_kg_per_place_yr = nan"
    ),
)

# ============================================================================================
# 11. siting verify: the submission package (README exit-code table: 2 when it cannot be read)
# ============================================================================================

RJ = r"sub/run\.json"


def with_sub(*more):
    """Copy the earlier run's output folder to ws/sub (the package verified), then edit it."""
    return steps(lambda ws: ws.copy_prior("sub"), *more)


def sub_record(fn):
    return lambda ws: edit_json(ws / "sub" / "run.json", fn)


case(
    "verify-run-json-malformed",
    verify(),
    2,
    RJ + r".*JSON",
    README_EXIT,
    setup=with_sub(
        lambda ws: (ws / "sub" / "run.json").write_text('{"inputs": ', encoding="utf-8")
    ),
)
case(
    "verify-run-json-a-list",
    verify(),
    2,
    RJ + r".*(run record|object)",
    README_EXIT,
    setup=with_sub(lambda ws: (ws / "sub" / "run.json").write_text("[1, 2]", encoding="utf-8")),
)
case(
    "verify-run-json-missing",
    verify(),
    2,
    r"sub\b.*run\.json",
    README_EXIT,
    setup=with_sub(lambda ws: (ws / "sub" / "run.json").unlink()),
)
case(
    "verify-package-path-escapes",
    verify(),
    2,
    RJ + r".*package\.files\.scenario.*'\.\./\.\./\.\./etc/passwd'.*outside",
    README_EXIT,
    setup=with_sub(
        sub_record(lambda r: r["package"]["files"].update(scenario="../../../etc/passwd"))
    ),
)
case(
    "verify-package-path-absolute",
    verify(),
    2,
    RJ + r".*package\.files\.habitats.*'/etc/hosts'.*outside",
    README_EXIT,
    setup=with_sub(sub_record(lambda r: r["package"]["files"].update(habitats="/etc/hosts"))),
)
case(
    "verify-package-config-escapes",
    verify(),
    2,
    RJ + r".*package\.config.*'\.\./\.\.'",
    README_EXIT,
    setup=with_sub(sub_record(lambda r: r["package"].update(config="../.."))),
)
case(
    "verify-outputs-key-escapes",
    verify(),
    2,
    RJ + r".*outputs.*'?\.\./\.\./x.*outside",
    README_EXIT,
    setup=with_sub(sub_record(lambda r: r["outputs"].update({"../../x": {"sha256": "0" * 64}}))),
)
case(
    "verify-sha256-not-text",
    verify(),
    2,
    RJ + r".*inputs\.scenario.*sha256",
    README_EXIT,
    setup=with_sub(sub_record(lambda r: r["inputs"]["scenario"].update(sha256=5))),
)
case(
    "verify-no-package-map",
    verify(),
    2,
    RJ + r".*\bpackage\b",
    README_EXIT,
    setup=with_sub(sub_record(lambda r: r.pop("package"))),
)
case(
    "verify-submission-missing",
    cli("verify", "@nothere", "--out", "@out", "--quiet"),
    2,
    r"nothere\b.*(no such|not found)",
    README_EXIT,
)
case(
    "verify-scenario-without-results",
    cli("verify", "@inputs/scenario.toml", "--out", "@out", "--quiet"),
    2,
    SC + r".*--results",
    README_EXIT,
)
case(
    "verify-results-file-missing",
    cli(
        "verify",
        "@inputs/scenario.toml",
        "--results",
        "@inputs/nothere.csv",
        "--out",
        "@out",
        "--quiet",
    ),
    2,
    r"--results\b.*nothere\.csv.*not found",
    README_EXIT,
)
case(
    "verify-packed-scenario-broken",
    verify(),
    2,
    r"re-run.*scenario\.toml.*unknown key titel",
    README_EXIT,
    setup=with_sub(
        lambda ws: sub_text(
            ws / "sub" / "inputs" / "scenario.toml", r"^title = ", 'titel = "x"\ntitle = '
        )
    ),
)
case(
    "verify-weather-file-missing",
    verify("--weather", "@inputs/nothere.csv"),
    2,
    r"nothere\.csv.*(not found|No such file)",
    README_EXIT,
    setup=with_sub(),
)
case(
    "verify-habitats-unreadable",
    verify("--habitats", "@inputs/receptors.csv"),
    2,
    r"--habitats .*receptors\.csv.*(cannot read|not recognized)",
    README_EXIT,
    setup=with_sub(),
)
case(
    "verify-overwrite-kept-malformed-run-json",
    verify("--overwrite"),
    2,
    RJ + r".*JSON",
    README_OVERWRITE,
    prior=True,
    setup=with_sub(lambda ws: (ws / "sub" / "run.json").write_text("{", encoding="utf-8")),
)

# ============================================================================================
# 12. --fail-on-exceed with no site assessed (README exit-code table: exit 1, "or no site could
#     be assessed at all"), bugs (exit 3) and a full disk (exit 2)
# ============================================================================================


def _sites_far_away(ws):
    from shapely import affinity

    edit_layer(
        ws.inputs / "habitats.gpkg",
        lambda g: g.set_geometry([affinity.translate(geom, 100_000.0, 0.0) for geom in g.geometry]),
    )


def _traceback_named(exception: str):
    """The line names a file that holds the traceback with ``exception``; the file is removed."""

    def check(ws, line):
        named = [Path(m.rstrip(".;,)")) for m in re.findall(r"/\S+", line)]
        files = [p for p in named if p.is_file()]
        assert files, f"no existing traceback file named in: {line}"
        path = files[-1]
        text = path.read_text(encoding="utf-8")
        path.unlink()
        assert "Traceback" in text and exception in text, text[-500:]

    return check


def _sites_csv_written(ws, line):
    assert (ws.out / "sites.csv").is_file() and (ws.out / "run.json").is_file()


case(
    "fail-on-exceed-no-site-assessed",
    screen("--fail-on-exceed"),
    1,
    r"--fail-on-exceed.*no habitat site could be assessed",
    README_EXIT,
    setup=_sites_far_away,
    written=True,
    check=_sites_csv_written,
)

BUG = r"(internal error|bug).*RuntimeError.*traceback.*/\S+"

case(
    "bug-in-dispersion",
    screen("--overwrite"),
    3,
    BUG,
    README_EXIT,
    prior=True,
    patch=bug_in("siting.runs.screening_inputs", "source_concentration_g_m3_per_g_s"),
    check=_traceback_named("RuntimeError: forced for the test"),
)
case(
    "bug-while-writing-geotiff",
    screen("--overwrite"),
    3,
    BUG,
    README_EXIT,
    prior=True,
    cached_screen=True,
    patch=bug_in("siting.output.screen", "write_geotiff"),
    check=_traceback_named("RuntimeError: forced for the test"),
)
case(
    "bug-in-weather-table",
    weather(),
    3,
    BUG,
    README_EXIT,
    patch=bug_in("siting.readers.hourly_table", "frequency_table_from_hourly"),
    check=_traceback_named("RuntimeError: forced for the test"),
)
case(
    "bug-in-region-tile",
    region("--scheduler", "threads"),
    3,
    BUG,
    README_EXIT,
    patch=bug_in("siting.runs.region_tasks", "_task_tile"),
    check=_traceback_named("RuntimeError: forced for the test"),
)
case(
    "disk-full-writing-sites-csv",
    screen("--overwrite"),
    2,
    r"sites\.csv.*No space left on device",
    README_EXIT,
    prior=True,
    cached_screen=True,
    patch=disk_full_at("siting.output.screen", "write_csv", "sites.csv"),
)
case(
    "permission-denied-writing-map",
    screen("--overwrite"),
    2,
    r"map\.html.*Permission denied",
    README_EXIT,
    prior=True,
    cached_screen=True,
    patch=disk_full_at("siting.output.screen", "write_screen_map", "map.html", errno.EACCES),
)

# ============================================================================================
# 13. interrupts at each stage of writing (README exit-code table: 130, nothing written, an
#     earlier output folder kept; README: the next run removes a dead run's staging folder and
#     puts the previous result back if it died mid-swap). The signal is raised at the point by a
#     patch, never by timing.
# ============================================================================================

INTERRUPTED = r"interrupted"

for cid, stage in [
    ("interrupt-screen-staging-created", stage_staging_created),
    ("interrupt-screen-marker-written", stage_marker_written),
    ("interrupt-screen-first-file", stage_first_file),
    ("interrupt-screen-sites-csv", stage_sites_csv),
    ("interrupt-screen-packing-inputs", stage_packing_inputs),
    ("interrupt-screen-map-sigterm", stage_map_sigterm),
    ("interrupt-screen-report-sighup", stage_report_sighup),
    ("interrupt-screen-run-json-written", stage_run_json),
    ("interrupt-screen-before-swap", stage_before_swap),
    ("interrupt-screen-between-renames", stage_between_renames),
]:
    case(
        cid,
        screen("--overwrite"),
        130,
        INTERRUPTED,
        README_EXIT,
        prior=True,
        cached_screen=True,
        patch=stage,
    )


def _new_result_in_place(ws, line) -> None:
    """The new result is whole in ws/out and nothing of the old one is left beside it."""
    assert (ws.out / "run.json").is_file() and (ws.out / ".siting-output").is_file()
    assert not [p.name for p in ws.out.parent.iterdir() if p.name.startswith(".out.")]


# once the new folder is in place the result is committed: an interrupt during the tidying
# after it says so (exit 130) and leaves the new, complete result (README exit-code table)
for cid, stage in [
    ("interrupt-screen-after-swap", stage_after_swap),
    ("interrupt-screen-removing-backup", stage_removing_backup),
]:
    case(
        cid,
        screen("--overwrite"),
        130,
        r"interrupted after .* was complete",
        README_EXIT,
        prior=True,
        cached_screen=True,
        patch=stage,
        written=True,
        check=_new_result_in_place,
    )

case(
    "interrupt-screen-first-run-report",
    screen(),
    130,
    INTERRUPTED,
    README_EXIT,
    cached_screen=True,
    patch=stage_report_sighup,
)
case(
    "interrupt-screen-during-dispersion",
    screen("--overwrite"),
    130,
    INTERRUPTED,
    README_EXIT,
    prior=True,
    patch=during_dispersion,
)
case(
    "interrupt-weather-second-chart",
    weather("--overwrite"),
    130,
    INTERRUPTED,
    README_EXIT,
    prior=True,
    patch=weather_second_chart,
)
case(
    "interrupt-place-positions-csv",
    place("--overwrite"),
    130,
    INTERRUPTED,
    README_EXIT,
    prior=True,
    patch=place_positions_csv,
)
case(
    "interrupt-region-second-geotiff",
    region("--overwrite"),
    130,
    INTERRUPTED,
    README_EXIT,
    prior=True,
    patch=region_second_geotiff,
)
case(
    "interrupt-verify-report-written",
    verify("--overwrite"),
    130,
    INTERRUPTED,
    README_EXIT,
    prior=True,
    setup=with_sub(),
    patch=verify_report_written,
)


_ids = [c.id for c in CASES]
assert len(_ids) == len(set(_ids)), sorted({i for i in _ids if _ids.count(i) > 1})
