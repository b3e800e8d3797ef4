"""Time siting's start-up and the demo end to end, as a user runs them (prints figures; not a test).

    python bench/bench_startup.py [--repeat 5] [--bytecode]

Each command runs in a fresh interpreter (this one, ``sys.executable``), so imports are counted
as a user meets them: the demo end to end (imports, computation and every output written),
``siting --help``, ``import siting`` and, as the floor under all three, an interpreter that
does nothing. Prints the best (shortest) wall-clock seconds of ``--repeat`` runs of each, the
median beside it, and the best CPU seconds (user + system, of the run and its children): on a
shared machine the best is the figure least disturbed by others, and CPU time is disturbed less
than wall time.

Python compiles a module it finds no bytecode for (``__pycache__``) at every import. Where
PYTHONDONTWRITEBYTECODE is set (some checkouts and containers) that is every module of siting
on every run, which an installed wheel, its bytecode written when it is installed, never pays.
``--bytecode`` adds the demo run from a copy of the package (in a temporary folder, its
bundled config/ and data_demo/ inside it) whose bytecode is compiled first, so both figures are shown.
"""

from __future__ import annotations

import argparse
import compileall
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _seconds(command: list[str], repeat: int, **run_options) -> tuple[list[float], list[float]]:
    """Wall-clock and CPU seconds of each of ``repeat`` runs of ``command`` (after one
    unmeasured run that warms the file cache); a run that fails stops the benchmark with its
    message."""
    walls, cpus = [], []
    for i in range(repeat + 1):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        done = subprocess.run(command, capture_output=True, text=True, **run_options)
        elapsed = time.perf_counter() - start
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        if done.returncode != 0:
            raise SystemExit(f"{' '.join(command)} failed:\n{done.stderr}")
        if i:
            walls.append(elapsed)
            cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return walls, cpus


def _compiled_copy(folder: Path) -> Path:
    """A copy of the package under ``folder`` with its bytecode compiled, as a wheel installs
    it; returns the folder to put on PYTHONPATH."""
    shutil.copytree(
        ROOT / "siting", folder / "siting", ignore=shutil.ignore_patterns("__pycache__")
    )
    if not compileall.compile_dir(folder / "siting", quiet=1):
        raise SystemExit("bench: the copy of the package did not compile")
    return folder


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5, help="runs of each command (5)")
    parser.add_argument(
        "--bytecode",
        action="store_true",
        help="also time the demo from a copy of the package with its bytecode compiled",
    )
    args = parser.parse_args()
    python = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        out = str(Path(tmp) / "demo")
        demo = [python, "-m", "siting", "demo", "--out", out, "--overwrite", "--quiet"]
        commands = {
            "demo end to end": (demo, {}),
            "siting --help": ([python, "-m", "siting", "--help"], {}),
            "import siting": ([python, "-c", "import siting"], {}),
            "python, nothing": ([python, "-c", "pass"], {}),
        }
        if args.bytecode:
            copy = _compiled_copy(Path(tmp) / "compiled")
            # run from the copy's folder: ``python -m`` puts the working folder first on the
            # path, where a checkout's own siting/ would win over PYTHONPATH
            environment = {**os.environ, "PYTHONPATH": str(copy)}
            commands["demo, bytecode"] = (demo, {"env": environment, "cwd": copy})
        rows = [
            (name, *_seconds(command, args.repeat, **options))
            for name, (command, options) in commands.items()
        ]
    print(
        f"{'command':<20}{'best s':>9}{'median s':>10}{'best cpu s':>12}"
        f"   ({args.repeat} runs each)"
    )
    for name, walls, cpus in rows:
        print(f"{name:<20}{min(walls):>9.3f}{statistics.median(walls):>10.3f}{min(cpus):>12.3f}")
    if os.environ.get("PYTHONDONTWRITEBYTECODE"):
        print("(PYTHONDONTWRITEBYTECODE is set: siting's modules are compiled at every run)")


if __name__ == "__main__":
    main()
