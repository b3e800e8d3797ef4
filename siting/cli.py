"""Command-line interface: argument parsing and reporting only.

Each command is a short function over the Python API. A :class:`~siting.errors.SitingError`
becomes one line on stderr and exit code 2; nothing is written in that case.
Exit codes: 0 ok; 1 only with --fail-on-exceed when a site is above its threshold; 2 bad input.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from pathlib import Path

from siting.errors import SitingError

EXIT_OK, EXIT_EXCEEDS, EXIT_BAD_INPUT = 0, 1, 2


def _print_summary(result, out_dir: Path, quiet: bool) -> None:
    from rich.console import Console
    from rich.table import Table

    if quiet:
        return
    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    table = Table(title=f"{result.scenario.title}\nprocess contribution (PC) by site",
                  title_justify="left")
    for col, justify in (("site", "left"), ("tier", "left"),
                         ("PC ug NH3/m3", "right"), ("% level", "right"),
                         ("PC kg N/ha/yr", "right"), ("% load", "right"),
                         ("threshold %", "right"), ("verdict", "left")):
        table.add_column(col, justify=justify, no_wrap=col in ("site", "tier", "verdict"))
    for row in result.sites.itertuples():
        def fmt(v, spec=".3g"):
            return "-" if v != v else format(v, spec)
        style = {"above threshold": "bold red", "below threshold": "green"}.get(row.verdict, "yellow")
        table.add_row(str(row.name), str(row.tier),
                      fmt(row.pc_conc_max_ug_m3), fmt(row.pc_pct_level, ".1f"),
                      fmt(row.pc_dep_max_kg_n_ha_yr), fmt(row.pc_pct_load, ".1f"),
                      f"{row.threshold_percent:g}", f"[{style}]{row.verdict}[/]")
    console.print(table)
    for message in result.warnings:
        console.print(f"[yellow]warning:[/] {message}", markup=True)
    console.print(f"Outputs in {out_dir} (report.html, map.html, sites.csv, GeoTIFFs).")
    console.print("Screening estimate only; local rules and the competent authority decide.",
                  style="dim")


def _run_screen(scenario_path: Path, out: Path | None, overwrite: bool, fail_on_exceed: bool,
                quiet: bool) -> int:
    from siting.outputs import check_output_dir, write_outputs
    from siting.scenario import load_scenario
    from siting.screen import screen

    scenario = load_scenario(scenario_path)
    out_dir = out if out is not None else Path("maps") / scenario.name
    check_output_dir(out_dir.resolve(), overwrite)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        result = screen(scenario, progress=not quiet and sys.stderr.isatty())
    written = write_outputs(result, out_dir, overwrite=overwrite)
    _print_summary(result, written, quiet)
    if fail_on_exceed and (result.sites["verdict"] == "above threshold").any():
        return EXIT_EXCEEDS
    return EXIT_OK


def cmd_screen(args) -> int:
    return _run_screen(Path(args.scenario), Path(args.out) if args.out else None,
                       args.overwrite, args.fail_on_exceed, args.quiet)


def cmd_demo(args) -> int:
    from siting.resources import demo_dir

    out = Path(args.out) if args.out else Path("maps") / "demo"
    return _run_screen(demo_dir() / "scenario.toml", out, args.overwrite, False, args.quiet)


def build_parser() -> argparse.ArgumentParser:
    from siting import __version__

    parser = argparse.ArgumentParser(
        prog="siting",
        description="Screen livestock-housing ammonia against protected habitats: process "
                    "contribution vs critical levels and loads (screening estimate).")
    parser.add_argument("--version", action="version", version=f"siting {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--overwrite", action="store_true",
                        help="replace an existing output folder (only once the new run is complete)")
    common.add_argument("--quiet", action="store_true", help="no summary table or progress")

    p = sub.add_parser("screen", parents=[common], help="assess a scenario file",
                       description="Full screening assessment of a scenario (TOML).")
    p.add_argument("scenario", help="scenario file (TOML)")
    p.add_argument("--out", help="output folder (default: maps/<scenario file name>)")
    p.add_argument("--fail-on-exceed", action="store_true",
                   help="exit with code 1 when any site is above its screening threshold")
    p.set_defaults(func=cmd_screen)

    p = sub.add_parser("demo", parents=[common], help="run the bundled invented demo",
                       description="Run the invented demo scenario into ./maps/demo/.")
    p.add_argument("--out", help="output folder (default: maps/demo)")
    p.set_defaults(func=cmd_demo)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except SitingError as exc:
        print(f"siting: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("siting: interrupted; nothing was written", file=sys.stderr)
        return 130
