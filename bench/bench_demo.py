"""Time the demo screening run phase by phase (prints figures; not a test).

    python bench/bench_demo.py [--repeat 3]

Prints, for the bundled invented demo: seconds for reading inputs, dispersion, assessment and
writing outputs, the number of receptors, and receptor x release-element x weather-class
evaluations per second of dispersion time.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np

from siting.output.screen import write_outputs
from siting.readers.frequency_table import read_frequency_table
from siting.readers.resources import demo_dir
from siting.readers.scenario import load_scenario
from siting.runs.screening import screen
from siting.runs.screening_sources import _source_elements


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    scenario = load_scenario(demo_dir() / "scenario.toml")
    weather, _ = read_frequency_table(scenario.weather.frequency_table)
    n_classes = int(np.count_nonzero(weather.frequency_fraction.sum(axis=0)))
    n_elements = sum(len(_source_elements(s)[0]) for s in scenario.sources)
    rows = []
    for _ in range(args.repeat):
        result = screen(scenario)
        with tempfile.TemporaryDirectory() as tmp:
            start = time.perf_counter()
            write_outputs(result, Path(tmp) / "out")
            write_s = time.perf_counter() - start
        t = result.timings_s
        rows.append((t["inputs_s"], t["dispersion_s"], t["assessment_s"], write_s, t["receptors"]))
    best = min(rows, key=lambda r: r[1])
    evaluations = best[4] * n_elements * n_classes
    print(
        f"demo: {best[4]:,} receptors, {n_elements} release elements, "
        f"{n_classes} speed x stability classes"
    )
    print(f"{'phase':<14}{'seconds':>10}")
    for name, value in zip(("inputs", "dispersion", "assessment", "write"), best[:4]):
        print(f"{name:<14}{value:>10.3f}")
    print(
        f"dispersion rate: {evaluations / best[1] / 1e6:,.1f} million "
        "receptor-element-class evaluations per second"
    )


if __name__ == "__main__":
    main()
