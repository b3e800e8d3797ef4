"""Time siting's start-up and the demo end to end, as a user runs them (prints figures; not a test).

    python bench/bench_startup.py [--repeat 5]

Each command runs in a fresh interpreter (this one, ``sys.executable``), so imports are counted
as a user meets them: the demo end to end (imports, computation and every output written),
``siting --help``, ``import siting`` and, as the floor under all three, an interpreter that
does nothing. Prints the best (shortest) wall-clock seconds of ``--repeat`` runs of each, and
the median beside it: on a shared machine the best is the figure least disturbed by others.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _seconds(command: list[str], repeat: int) -> list[float]:
    """Wall-clock seconds of each of ``repeat`` runs of ``command`` (after one unmeasured run
    that warms the file cache); a run that fails stops the benchmark with its message."""
    times = []
    for i in range(repeat + 1):
        start = time.perf_counter()
        done = subprocess.run(command, capture_output=True, text=True)
        elapsed = time.perf_counter() - start
        if done.returncode != 0:
            raise SystemExit(f"{' '.join(command)} failed:\n{done.stderr}")
        if i:
            times.append(elapsed)
    return times


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5, help="runs of each command (5)")
    args = parser.parse_args()
    python = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        out = str(Path(tmp) / "demo")
        commands = {
            "demo end to end": [
                python,
                "-m",
                "siting",
                "demo",
                "--out",
                out,
                "--overwrite",
                "--quiet",
            ],  # fmt: skip
            "siting --help": [python, "-m", "siting", "--help"],
            "import siting": [python, "-c", "import siting"],
            "python, nothing": [python, "-c", "pass"],
        }
        rows = [(name, _seconds(command, args.repeat)) for name, command in commands.items()]
    print(f"{'command':<20}{'best s':>9}{'median s':>10}   ({args.repeat} runs each)")
    for name, times in rows:
        print(f"{name:<20}{min(times):>9.3f}{statistics.median(times):>10.3f}")


if __name__ == "__main__":
    main()
