"""`siting demo`: the invented demo scenario (or its hourly variant) screened into maps/."""

from __future__ import annotations

from pathlib import Path

from siting.cli.screen import screen_scenario
from siting.readers.resources import demo_dir


def run(args) -> int:

    name, scenario = (
        ("demo_hourly", "scenario_hourly.toml") if args.hourly else ("demo", "scenario.toml")
    )
    out = Path(args.out_dir) if args.out_dir else Path("maps") / name
    return screen_scenario(
        demo_dir() / scenario, out, args.overwrite, False, args.quiet, command="demo", pdf=args.pdf
    )
