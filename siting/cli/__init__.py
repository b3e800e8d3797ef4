"""Command-line interface: argument parsing and reporting only.

Each command is a short function over the Python API. A :class:`~siting.errors.SitingError`
becomes one line on stderr and exit code 2; nothing is written in that case.
Exit codes: 0 ok; 1 only with --fail-on-exceed when a site is above its threshold; 2 bad input.
Commands: screen, demo (optionally on the hourly demo record), weather (products of an hourly
record), place, verify, region (many farms over a region).
"""

from __future__ import annotations

import argparse
import sys
import warnings
from pathlib import Path

from siting.errors import SitingError


def _plain(text) -> str:
    """User text (site names, messages) shown as itself in rich output, never as markup."""
    from rich.markup import escape

    return escape(str(text))


def _print_warnings(console, messages, **options) -> None:
    """One "warning:" line per message, the message shown as itself."""
    for message in messages:
        console.print(f"[yellow]warning:[/] {_plain(message)}", markup=True, **options)


EXIT_OK, EXIT_EXCEEDS, EXIT_BAD_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


#: Most site rows, verdict-flip lines and warnings the screen summary prints; the rest are
#: counted in one line that names the file holding them all. A terminal shows a screenful;
#: common practice, no source.
SUMMARY_MAX_SITES = 25
SUMMARY_MAX_FLIPS = 10
SUMMARY_MAX_WARNINGS = 10


def _summary_rows(sites):
    """The sites to print and how many are left out: all in layer order when they fit, else
    the :data:`SUMMARY_MAX_SITES` most affected (highest PC as a share of the threshold) first."""
    from siting.presentation.formats import most_affected_order

    if len(sites) <= SUMMARY_MAX_SITES:
        return sites, 0
    shown = sites.iloc[most_affected_order(sites)[:SUMMARY_MAX_SITES]]
    return shown, len(sites) - SUMMARY_MAX_SITES


def _site_table(result, shown, n_more: int):
    """The rich table of the shown sites."""
    from rich.table import Table

    title = f"{result.scenario.title}\nprocess contribution (PC) by site"
    if n_more:
        title += (
            f": the {len(shown)} of {len(result.sites)} with the highest PC as a share "
            "of their threshold"
        )
    table = Table(title=title, title_justify="left")
    for col, justify in (
        ("site", "left"),
        ("tier", "left"),
        ("PC ug NH3/m3", "right"),
        ("% level", "right"),
        ("PC kg N/ha/yr", "right"),
        ("% load", "right"),
        ("threshold %", "right"),
        ("verdict", "left"),
    ):
        table.add_column(col, justify=justify, no_wrap=col in ("site", "tier", "verdict"))

    def fmt(v, spec=".3g"):
        return "-" if v != v else format(v, spec)

    for row in shown.itertuples():
        style = {"above threshold": "bold red", "below threshold": "green"}.get(
            row.verdict, "yellow"
        )
        table.add_row(
            _plain(row.name),
            str(row.tier),
            fmt(row.pc_conc_max_ug_m3),
            fmt(row.pc_pct_level, ".1f"),
            fmt(row.pc_dep_max_kg_n_ha_yr),
            fmt(row.pc_pct_load, ".1f"),
            f"{row.threshold_percent:g}",
            f"[{style}]{row.verdict}[/]",
        )
    return table


def _print_flips(console, result) -> None:
    """One line per site whose verdict a sensitivity variant flips, at most
    :data:`SUMMARY_MAX_FLIPS` (the most affected sites first when there are more)."""
    summary = result.sensitivity_summary
    if summary is None or not len(summary) or not summary["verdict_flips"].any():
        return
    flips = summary[summary["verdict_flips"]]
    if len(flips) > SUMMARY_MAX_FLIPS:
        from siting.presentation.formats import most_affected_order

        rank = {}
        for position in most_affected_order(result.sites):
            rank.setdefault(str(result.sites["name"].iloc[position]), len(rank))
        order = sorted(
            range(len(flips)), key=lambda i: rank.get(str(flips["site"].iloc[i]), len(rank))
        )
        flips = flips.iloc[order[:SUMMARY_MAX_FLIPS]]
    for row in flips.itertuples():
        console.print(
            f"[yellow]sensitivity:[/] the verdict for {_plain(row.site)} "
            f"flips under {_plain(row.flipping_variants)} (report section 4, "
            "sensitivity.csv)",
            markup=True,
        )
    n_more = int(summary["verdict_flips"].sum()) - len(flips)
    if n_more:
        console.print(
            f"[yellow]sensitivity:[/] and {n_more} more sites (sensitivity.csv)", markup=True
        )


def _print_summary(result, out_dir: Path, quiet: bool) -> None:
    """The screen summary: a table of at most :data:`SUMMARY_MAX_SITES` sites, the counts by
    verdict when some are left out, the first warnings and verdict flips, where the outputs are."""
    from rich.console import Console

    if quiet:
        return
    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    shown, n_more = _summary_rows(result.sites)
    console.print(_site_table(result, shown, n_more))
    if n_more:
        counts = result.sites["verdict"].value_counts()
        console.print(
            f"{n_more} more sites in sites.csv; all {len(result.sites)}: "
            + ", ".join(f"{n} {_plain(v)}" for v, n in counts.items())
            + "."
        )
    _print_warnings(console, result.warnings[:SUMMARY_MAX_WARNINGS])
    if len(result.warnings) > SUMMARY_MAX_WARNINGS:
        console.print(
            f"[yellow]warning:[/] and {len(result.warnings) - SUMMARY_MAX_WARNINGS} "
            "more warnings (report.html section 6, run.json)",
            markup=True,
        )
    _print_flips(console, result)
    console.print(f"Outputs in {out_dir} (report.html, map.html, sites.csv, GeoTIFFs).")
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )


def _run_screen(
    scenario_path: Path, out: Path | None, overwrite: bool, fail_on_exceed: bool, quiet: bool
) -> int:
    from siting.output.files import (
        check_output_dir,
        estimate_screen_bytes,
        input_paths,
        write_outputs,
    )
    from siting.readers.scenario import load_scenario
    from siting.runs.screen import screen

    scenario = load_scenario(scenario_path)
    out_dir = out if out is not None else Path("maps") / scenario.name
    check_output_dir(
        out_dir.resolve(),
        overwrite,
        input_paths(scenario),
        need_bytes=estimate_screen_bytes(scenario),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        result = screen(scenario, progress=not quiet and sys.stderr.isatty())
    written = write_outputs(result, out_dir, overwrite=overwrite)
    _print_summary(result, written, quiet)
    if fail_on_exceed and not result.sites["assessed"].any():
        print(
            "siting: --fail-on-exceed: no habitat site could be assessed, so none is shown "
            "below threshold",
            file=sys.stderr,
        )
        return EXIT_EXCEEDS
    if fail_on_exceed and (result.sites["verdict"] == "above threshold").any():
        return EXIT_EXCEEDS
    return EXIT_OK


def cmd_screen(args) -> int:
    return _run_screen(
        Path(args.scenario),
        Path(args.out) if args.out else None,
        args.overwrite,
        args.fail_on_exceed,
        args.quiet,
    )


def cmd_demo(args) -> int:
    from siting.readers.resources import demo_dir

    name, scenario = (
        ("demo_hourly", "scenario_hourly.toml") if args.hourly else ("demo", "scenario.toml")
    )
    out = Path(args.out) if args.out else Path("maps") / name
    return _run_screen(demo_dir() / scenario, out, args.overwrite, False, args.quiet)


def _print_weather_summary(summary: dict, warnings_: list[str], out_dir: Path, quiet: bool) -> None:
    from rich.console import Console
    from rich.table import Table

    if quiet:
        return
    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    table = Table(
        title=f"Hourly weather record: {', '.join(summary['files'])}",
        title_justify="left",
        show_header=False,
    )
    table.add_column("what", style="bold")
    table.add_column("value")
    table.add_row("period (UTC)", f"{summary['first_time_utc']} to {summary['last_time_utc']}")
    table.add_row("hours used", f"{summary['hours_used']} of {summary['hours_expected']} expected")
    longest = (
        f"; longest gap {summary['gaps'][0]['hours']} h from {summary['gaps'][0]['start_utc']}"
        if summary["gaps"]
        else ""
    )
    table.add_row(
        "missing (not filled)",
        f"{summary['hours_missing']} h "
        f"({summary['missing_percent']:.2f} %) in "
        f"{summary['gap_count']} gap(s){longest}",
    )
    table.add_row(
        "calms",
        f"{summary['calm_hours']} h ({summary['calm_percent']:.1f} %) below "
        f"{summary['calm_threshold_m_s']:g} m/s, raised to "
        f"{summary['min_wind_speed_m_s']:g} m/s",
    )
    table.add_row(
        "light winds raised", f"{summary['raised_to_min_speed_percent']:.1f} % of the hours"
    )
    table.add_row(
        "mean wind speed",
        f"{summary['mean_speed_m_s']:.2f} m/s (after raising; "
        f"{summary['mean_observed_speed_m_s']:.2f} m/s observed)",
    )
    table.add_row("prevailing wind", summary["prevailing_from_words"])
    table.add_row(
        "stability A-F",
        "  ".join(f"{k} {100 * v:.1f} %" for k, v in summary["stability_share"].items()),
    )
    table.add_row("stability from", summary["stability_method"])
    if summary["temperature_c"]:
        t = summary["temperature_c"]
        table.add_row(
            "temperature",
            f"{t['min']:.1f} / {t['mean']:.1f} / {t['max']:.1f} deg C (min / mean / max)",
        )
    console.print(table)
    _print_warnings(console, warnings_, soft_wrap=False)
    console.print(
        f"Outputs in {out_dir} (frequency_table.csv, wind_rose.png, "
        "stability_by_speed.png, summary.json)."
    )


def cmd_weather(args) -> int:
    from siting.errors import InputError
    from siting.output.files import check_output_dir
    from siting.output.weather import write_weather_outputs
    from siting.readers.hourly_record import read_hourly_record

    if not -90.0 <= args.lat <= 90.0:
        raise InputError(f"--lat must be within -90..90 (degrees north), got {args.lat}")
    if not -180.0 <= args.lon <= 180.0:
        raise InputError(f"--lon must be within -180..180 (degrees east), got {args.lon}")
    if not 4 <= args.sectors <= 360:
        raise InputError(f"--sectors must be within 4..360, got {args.sectors}")
    out_dir = Path(args.out).resolve()
    paths = [Path(p) for p in args.hourly]
    check_output_dir(out_dir, args.overwrite, paths)
    weather, summary, warnings_ = read_hourly_record(
        paths,
        args.lat,
        args.lon,
        anemometer_height_m=args.anemometer_height,
        utc_offset_h=args.utc_offset,
        calm_threshold_m_s=args.calm_threshold,
        min_wind_speed_m_s=args.min_speed,
        max_missing_percent=args.max_missing_percent,
    )
    written, warnings_ = write_weather_outputs(
        out_dir,
        weather,
        summary,
        warnings_,
        n_sectors=args.sectors,
        overwrite=args.overwrite,
        input_paths=paths,
    )
    _print_weather_summary(summary, warnings_, written, args.quiet)
    return EXIT_OK


def cmd_place(args) -> int:
    from siting.errors import InputError
    from siting.output.files import check_output_dir, input_paths
    from siting.output.place import write_place_outputs
    from siting.readers.scenario import load_scenario
    from siting.runs.place import place

    if args.spacing is not None and not 0 < args.spacing <= 500:
        raise InputError(f"--spacing must be in (0, 500] m, got {args.spacing:g}")
    if args.top < 1:
        raise InputError(f"--top must be >= 1, got {args.top}")
    scenario = load_scenario(args.scenario)
    out_dir = Path(args.out) if args.out else Path("maps") / f"{scenario.name}_place_{args.house}"
    check_output_dir(out_dir.resolve(), args.overwrite, input_paths(scenario, holding=True))
    result = place(scenario, args.house, spacing_m=args.spacing, in_combination=args.in_combination)
    written = write_place_outputs(result, out_dir, overwrite=args.overwrite, top=args.top)
    if not args.quiet:
        _print_place_summary(result, written, args.top)
    return EXIT_OK


def _print_place_summary(result, out_dir: Path, top: int) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    t = result.timings_s
    table = Table(
        title=f"Best positions for {result.house_id} ({t['positions']:,} positions searched)",
        title_justify="left",
    )
    for col in (
        "rank",
        "x",
        "y",
        "limiting site",
        "worst % load",
        "worst % level",
        "share of threshold",
        "reduction needed %",
        "max places unabated",
    ):
        table.add_column(
            col,
            justify="left" if col == "limiting site" else "right",
            no_wrap=col == "limiting site",
        )
    for row in result.positions.head(top).itertuples():
        places = getattr(row, "max_places_unabated", float("nan"))
        table.add_row(
            str(row.Index + 1),
            f"{row.x:.0f}",
            f"{row.y:.0f}",
            _plain(row.limiting_site),
            f"{row.worst_pct_load:.1f}",
            f"{row.worst_pct_level:.1f}",
            f"{row.limiting_share_of_threshold:.2f}",
            f"{row.required_reduction_percent:.0f}",
            "-" if places != places else f"{places:.0f}",
        )
    console.print(table)
    passing = int(result.positions["passes_as_described"].sum())
    console.print(
        f"{passing:,} of {len(result.positions):,} positions pass every site's "
        "threshold with the house as described."
    )
    _print_warnings(console, result.warnings)
    console.print(f"Outputs in {out_dir} (map.html, positions.csv, suitability.tif).")
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )


def cmd_verify(args) -> int:
    from siting.output.files import check_output_dir
    from siting.runs.verify import verify, write_verify_outputs

    out_dir = Path(args.out)
    submission = Path(args.submission)
    read = [submission] + (list(submission.rglob("*")) if submission.is_dir() else [])
    read += [Path(p) for p in (args.results, args.habitats, *args.weather) if p]
    check_output_dir(out_dir.resolve(), args.overwrite, read)
    result = verify(
        Path(args.submission),
        results=Path(args.results) if args.results else None,
        reference_habitats=Path(args.habitats) if args.habitats else None,
        name_field=args.name_field,
        weather_files=[Path(p) for p in args.weather],
    )
    written = write_verify_outputs(result, out_dir, overwrite=args.overwrite)
    if not args.quiet:
        _print_verify_summary(result, written)
    return result.exit_code


def _print_verify_summary(result, out_dir: Path) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    style = "green" if result.consistent else "bold red"
    console.print(
        f"[{style}]{'Consistent' if result.consistent else 'Not consistent'}[/] "
        f"(submitted with siting {result.submitted_version or '?'}, checked with "
        f"siting {result.this_version})",
        markup=True,
    )
    changed = [r for r in result.integrity if r["status"] != "ok"]
    console.print(
        f"inputs: {len(result.integrity) - len(changed)} of {len(result.integrity)} "
        f"intact; figures differing beyond tolerance: {len(result.differences)}"
    )
    if result.findings:
        table = Table(title="Findings", title_justify="left")
        for col in ("severity", "code", "subject", "message"):
            table.add_column(col, no_wrap=col != "message")
        for f in result.findings:
            colour = {"high": "red", "medium": "yellow"}.get(f.severity, "")
            table.add_row(
                f"[{colour}]{f.severity}[/]" if colour else f.severity,
                f.code,
                _plain(f.subject),
                _plain(f.message),
            )
        console.print(table)
    flips = result.sensitivity_summary
    flips = flips[flips["verdict_flips"]] if len(flips) else flips
    for row in flips.itertuples():
        console.print(
            f"[yellow]verdict flips[/] at {_plain(row.site)}: {_plain(row.flipping_variants)}",
            markup=True,
        )
    console.print(f"Outputs in {out_dir} (verify.html, findings.json).")


def cmd_region(args) -> int:
    from siting.output.files import check_output_dir
    from siting.output.region import write_region_outputs
    from siting.runs.region import FarmFields, RegionOptions, region

    options = RegionOptions(
        spacing_m=args.spacing,
        margin_m=args.margin,
        tile_size=args.tile_size,
        memory_mb=args.memory_mb,
        scheduler=None if args.scheduler.lower() == "none" else args.scheduler,
        workers=args.workers,
        reach_m=args.reach_m,
        top=args.top,
        land_type=args.land_type,
        anemometer_height_m=args.anemometer_height,
        plume_depletion=args.depletion and not args.no_depletion,
        near_field_cells=args.near_field,
        critical_load_end=args.critical_load_end,
        critical_load_review=args.critical_load_review,
        wind_below_anemometer=args.wind_below_anemometer,
    )
    options.check()
    farms = Path(args.farms)
    out_dir = Path(args.out) if args.out else Path("maps") / f"{farms.stem}_region"
    check_output_dir(
        out_dir.resolve(),
        args.overwrite,
        [farms, Path(args.weather), Path(args.habitats) if args.habitats else None],
    )
    fields = FarmFields(
        id_field=args.id_field,
        emission_field=args.emission_field,
        height_field=args.height_field,
        layer=args.layer,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        result = region(
            farms,
            Path(args.weather),
            Path(args.habitats) if args.habitats else None,
            options,
            fields,
            crs=args.crs,
            habitats_layer=args.habitats_layer,
            name_field=args.name_field,
            habitat_field=args.habitat_field,
            designation_field=args.designation_field,
        )
    written = write_region_outputs(result, out_dir, overwrite=args.overwrite)
    if not args.quiet:
        _print_region_summary(result, written)
    return EXIT_OK


def _print_region_summary(result, out_dir: Path) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    grid, t = result.grid, result.timings_s
    console.print(
        f"{t['farms']:,} farms in {t['release_classes']} release class(es); grid "
        f"{grid.n_cols} x {grid.n_rows} cells of {grid.cell_m:g} m in {t['tiles']} "
        f"tile(s); {t['total_s']:.1f} s with {t['workers']} worker(s)"
    )
    if result.sites is not None:
        table = Table(title="All farms together, by habitat site", title_justify="left")
        for col in (
            "site",
            "tier",
            "kg N/ha/yr",
            "% load",
            "% level",
            "verdict",
            "largest contributor",
        ):
            table.add_column(
                col,
                justify="right" if col in ("kg N/ha/yr", "% load", "% level") else "left",
                no_wrap=col in ("site", "verdict"),
            )
        first = result.contributors[result.contributors["rank"] == 1].set_index("site_id")
        for row in result.sites.itertuples():
            style = {"above threshold": "bold red", "below threshold": "green"}.get(
                row.verdict, "yellow"
            )
            top = (
                f"{first.loc[row.site_id, 'farm_id']} "
                f"({first.loc[row.site_id, 'share_of_site_total_percent']:.0f} %)"
                if row.site_id in first.index
                else "-"
            )
            table.add_row(
                _plain(row.name),
                str(row.tier),
                f"{row.pc_dep_max_kg_n_ha_yr:.3g}",
                f"{row.pc_pct_load:.1f}",
                f"{row.pc_pct_level:.1f}",
                f"[{style}]{row.verdict}[/]",
                top,
            )
        console.print(table)
    _print_warnings(console, result.warnings)
    console.print(
        f"Outputs in {out_dir} (deposition.tif, concentration.tif, sites.csv, "
        "contributors.csv, farms.csv, run.json)."
    )
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )


class _OneLineParser(argparse.ArgumentParser):
    """argparse with the tool's error rule: a bad command line is one line on stderr (no usage
    block) naming the option, and exit 2."""

    def error(self, message: str):
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    """The `siting` command line: the top-level options and one sub-parser per command, in
    the order ``siting --help`` lists them."""
    from siting._version import __version__

    parser = _OneLineParser(
        prog="siting",
        description="Screen livestock-housing ammonia against protected habitats: process "
        "contribution vs critical levels and loads (screening estimate).",
    )
    parser.add_argument("--version", action="version", version=f"siting {__version__}")
    sub = parser.add_subparsers(
        dest="command", required=True, metavar="COMMAND", parser_class=_OneLineParser
    )

    common = _common_options()
    for add_command in (_add_screen, _add_demo, _add_weather, _add_place, _add_verify, _add_region):
        add_command(sub, common)
    return parser


def _common_options() -> argparse.ArgumentParser:
    """The options every command takes (--overwrite, --quiet), as a parent parser."""
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument(
        "--overwrite",
        action="store_true",
        help="replace an existing output folder (only once the new run is complete)",
    )
    common.add_argument("--quiet", action="store_true", help="no summary table or progress")
    return common


def _add_screen(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting screen`: a scenario file screened into an output folder."""
    p = sub.add_parser(
        "screen",
        parents=[common],
        help="assess a scenario file",
        description="Full screening assessment of a scenario (TOML).",
    )
    p.add_argument("scenario", help="scenario file (TOML)")
    p.add_argument("--out", help="output folder (default: maps/<scenario file name>)")
    p.add_argument(
        "--fail-on-exceed",
        action="store_true",
        help="exit with code 1 when any site is above its screening threshold",
    )
    p.set_defaults(func=cmd_screen)


def _add_demo(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting demo`: the bundled invented demo (or its hourly variant) screened."""
    p = sub.add_parser(
        "demo",
        parents=[common],
        help="run the bundled invented demo",
        description="Run the invented demo scenario into ./maps/demo/.",
    )
    p.add_argument("--out", help="output folder (default: maps/demo, or maps/demo_hourly)")
    p.add_argument(
        "--hourly",
        action="store_true",
        help="run the demo on its invented hourly weather record "
        "(scenario_hourly.toml) into maps/demo_hourly",
    )
    p.set_defaults(func=cmd_demo)


def _add_weather(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting weather`: an hourly station record checked and binned into a frequency table
    and charts."""
    p = sub.add_parser(
        "weather",
        parents=[common],
        help="frequency table and charts from an hourly weather record",
        description="Check an hourly station record (one or more CSV files in "
        "time order) and write frequency_table.csv (usable as a "
        "scenario's frequency_table), wind_rose.png, "
        "stability_by_speed.png and summary.json.",
    )
    p.add_argument(
        "hourly",
        nargs="+",
        metavar="HOURLY.csv",
        help="hourly record: time,direction_deg,speed_m_s and stability or "
        "cloud_oktas (optional ceiling_ft, temperature_c)",
    )
    p.add_argument(
        "--lat",
        type=float,
        required=True,
        help="site latitude [deg north], -90..90 (sets the sun for Turner's method)",
    )
    p.add_argument("--lon", type=float, required=True, help="site longitude [deg east], -180..180")
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument(
        "--utc-offset",
        type=float,
        default=None,
        metavar="H",
        help="offset of the file's clock from UTC in hours, for times written "
        "without an offset (e.g. 1 for UTC+1)",
    )
    p.add_argument(
        "--sectors",
        type=int,
        default=12,
        help="direction sectors of the frequency table (default 12)",
    )
    p.add_argument(
        "--calm-threshold",
        type=float,
        default=0.5,
        metavar="M_S",
        help="speeds below this are calms [m/s] (default 0.5)",
    )
    p.add_argument(
        "--min-speed",
        type=float,
        default=1.0,
        metavar="M_S",
        help="calms and lighter winds are raised to this speed [m/s] (default 1.0)",
    )
    p.add_argument(
        "--max-missing-percent",
        type=float,
        default=10.0,
        metavar="PERCENT",
        help="refuse a record with more missing hours than this (default 10)",
    )
    p.add_argument(
        "--anemometer-height",
        type=float,
        default=10.0,
        metavar="M",
        help="height of the wind measurement [m] (default 10)",
    )
    p.set_defaults(func=cmd_weather)


def _add_place(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting place`: the placement search for one house over the holding."""
    p = sub.add_parser(
        "place",
        parents=[common],
        help="where on the holding could a new house go",
        description="Placement search: the screening figures of one house at "
        "every allowed position on the holding ([holding] table of "
        "the scenario), ranked best first.",
    )
    p.add_argument("scenario", help="scenario file (TOML) with a [holding] table")
    p.add_argument(
        "--house",
        required=True,
        metavar="ID",
        help="id of the [[source]] to place (its x/y are ignored)",
    )
    p.add_argument("--out", help="output folder (default: maps/<scenario>_place_<ID>)")
    p.add_argument(
        "--spacing",
        type=float,
        metavar="M",
        help="candidate spacing in metres (default: holding.spacing_m)",
    )
    p.add_argument(
        "--in-combination",
        action="store_true",
        default=None,
        help="add the other sources' contribution at each site",
    )
    p.add_argument(
        "--top",
        type=int,
        default=10,
        metavar="N",
        help="positions listed on the terminal and marked on the map (default 10)",
    )
    p.set_defaults(func=cmd_place)


def _add_verify(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting verify`: a submitted run re-run and questioned."""
    p = sub.add_parser(
        "verify",
        parents=[common],
        help="re-run and question a submitted assessment",
        description="Verify a submission: input hashes, a re-run with this "
        "version, a plausibility review and a sensitivity analysis. "
        "Exit code 0 when consistent, 1 when a difference or a "
        "high-severity finding stands, 2 when it cannot be read.",
    )
    p.add_argument(
        "submission",
        help="output folder of `siting screen`, or a scenario file (then give --results)",
    )
    p.add_argument("--out", required=True, help="folder for verify.html and findings.json")
    p.add_argument("--results", help="the applicant's sites.csv (with a scenario file)")
    p.add_argument(
        "--habitats",
        help="reference habitat layer: flags sites within the search "
        "distance left out of the submission",
    )
    p.add_argument(
        "--name-field",
        help="site name field of the reference layer (default: the scenario's name_field)",
    )
    p.add_argument(
        "--weather",
        action="append",
        default=[],
        metavar="FILE",
        help="another weather year (frequency table or hourly record) for the "
        "sensitivity analysis; repeatable",
    )
    p.set_defaults(func=cmd_verify)


def _add_region(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting region`: many farms over a region. Its options come in three groups after the
    inputs and --out (run, fields, model), in the order --help lists them."""
    p = sub.add_parser(
        "region",
        parents=[common],
        help="in-combination deposition of many farms over a region",
        description="Concentration and deposition of every farm of a layer "
        "together, over a tiled grid (FFT convolution, on dask), "
        "with each habitat site's figures and its top contributing "
        "farms. Farms: points (point sources) or polygons (house "
        "footprints, volume sources), with an annual NH3 emission "
        "or livestock, housing and places.",
    )
    p.add_argument("farms", metavar="FARMS", help="farms layer (any vector format geopandas reads)")
    p.add_argument(
        "--weather",
        required=True,
        metavar="TABLE.csv",
        help="weather frequency table: direction_deg,speed_m_s,stability,frequency",
    )
    p.add_argument(
        "--habitats",
        metavar="FILE",
        help="habitat sites layer, fields as in a scenario's [habitats]; without "
        "it only the grids are written",
    )
    p.add_argument("--out", help="output folder (default: maps/<FARMS name>_region)")
    _add_region_run_options(p)
    _add_region_field_options(p)
    _add_region_model_options(p)
    p.set_defaults(func=cmd_region)


def _add_region_run_options(p: argparse.ArgumentParser) -> None:
    """`siting region`: the grid, its tiles, the dask scheduler, the farms' reach and the
    contributors listed."""
    p.add_argument(
        "--spacing",
        type=float,
        default=100.0,
        metavar="M",
        help="grid cell size in metres (default 100)",
    )
    p.add_argument(
        "--margin",
        type=float,
        default=2000.0,
        metavar="M",
        help="grid = the farms' bounding box + this margin in metres (default 2000)",
    )
    p.add_argument(
        "--crs", help="projected CRS in metres to work in (default: the farms layer's own)"
    )
    p.add_argument(
        "--tile-size",
        type=int,
        metavar="CELLS",
        help="tile side in cells (default: the whole grid when it fits the memory "
        "budget, else the largest tile that does)",
    )
    p.add_argument(
        "--memory-mb",
        type=float,
        default=2000.0,
        metavar="MB",
        help="memory budget of the run in MB (default 2000)",
    )
    p.add_argument(
        "--scheduler",
        default="threads",
        metavar="ADDRESS",
        help="threads (default: dask threads on this machine), synchronous, none "
        "(no dask), or a dask.distributed scheduler address such as "
        "tcp://10.0.0.5:8786 (needs pip install 'siting[region]')",
    )
    p.add_argument(
        "--workers",
        type=int,
        metavar="N",
        help="threads for the threads scheduler (default: the machine's cores)",
    )
    p.add_argument(
        "--reach-m",
        type=float,
        metavar="M",
        help="count farms only within this distance of a cell or site point "
        "(default: every farm everywhere)",
    )
    p.add_argument(
        "--top",
        type=int,
        default=10,
        metavar="N",
        help="contributors listed per site in contributors.csv (default 10)",
    )


def _add_region_field_options(p: argparse.ArgumentParser) -> None:
    """`siting region`: the layers and field names of the farms and habitats files."""
    p.add_argument("--layer", help="layer of the farms file (default: its first)")
    p.add_argument("--id-field", metavar="FIELD", help="farm id field (default: id)")
    p.add_argument(
        "--emission-field",
        metavar="FIELD",
        help="annual emission in kg NH3 per year (default: nh3_kg_per_year; where "
        "empty, livestock, housing and places fields are used)",
    )
    p.add_argument(
        "--height-field",
        metavar="FIELD",
        help="release height in m (default: height_m; where absent, 6 m for points "
        "and 4 m for polygons)",
    )
    p.add_argument("--habitats-layer", metavar="LAYER", help="layer of the habitats file")
    p.add_argument("--name-field", default="name", help="site name field (default: name)")
    p.add_argument(
        "--habitat-field",
        default="habitat",
        help="habitat id field, ids of config/critical_loads.toml (default: habitat)",
    )
    p.add_argument(
        "--designation-field",
        default="designation",
        help="designation field (default: designation)",
    )


def _add_region_model_options(p: argparse.ArgumentParser) -> None:
    """`siting region`: critical loads, dispersion coefficients, wind, depletion and the
    near field."""
    p.add_argument(
        "--critical-load-end",
        choices=("lower", "middle", "upper"),
        default="lower",
        help="end of each habitat's critical load range used (default: lower)",
    )
    p.add_argument(
        "--land-type",
        choices=("rural", "urban"),
        default="rural",
        help="dispersion coefficients (default: rural)",
    )
    p.add_argument(
        "--anemometer-height",
        type=float,
        default=10.0,
        metavar="M",
        help="height of the wind measurement in m (default 10)",
    )
    p.add_argument(
        "--depletion",
        action="store_true",
        help="deplete the plume by deposition on its way (default: no depletion, "
        "the cautious choice)",
    )
    p.add_argument("--no-depletion", action="store_true", help=argparse.SUPPRESS)
    p.add_argument(
        "--critical-load-review",
        choices=("2022", "2011"),
        default="2022",
        help="which review's critical load ranges (default: 2022)",
    )
    p.add_argument(
        "--wind-below-anemometer",
        choices=("power_law", "unchanged"),
        default="power_law",
        help="wind at a release height below the anemometer: power_law (default, "
        "cautious) or unchanged (the measured speed)",
    )
    p.add_argument(
        "--near-field",
        type=int,
        default=10,
        metavar="CELLS",
        help="cells around each farm where the grid is made the direct sum at the "
        "farm's true position (default 10; 0 = none)",
    )


def _interrupt_on_termination() -> dict:
    """SIGTERM and SIGHUP (what CI, `timeout` and service managers send) end a run like Ctrl-C:
    the staging folder is removed and an existing output folder is left as it was. Returns the
    handlers replaced, to be put back."""
    import signal

    def stop(signum, frame):
        raise KeyboardInterrupt

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            try:
                previous[name] = signal.signal(getattr(signal, name), stop)
            except ValueError:  # not the main thread (an embedding program): leave it be
                pass
    return previous


def _restore_signals(previous: dict) -> None:
    import signal

    for name, handler in previous.items():
        signal.signal(getattr(signal, name), handler)


def main(argv: list[str] | None = None) -> int:
    from siting.output.files import InterruptedAfterWriting

    parser = build_parser()
    args = parser.parse_args(argv)
    previous = _interrupt_on_termination()
    try:
        return args.func(args)
    except SitingError as exc:
        print(f"siting: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except InterruptedAfterWriting as exc:
        print(
            f"siting: interrupted after {exc.out_dir} was complete: it holds this run's whole "
            "result (only tidying up was cut short)",
            file=sys.stderr,
        )
        return 130
    except KeyboardInterrupt:
        print("siting: interrupted; nothing was written", file=sys.stderr)
        return 130
    except OSError as exc:  # the machine, not the input: a full disk, a read-only folder
        where = f" {exc.filename}" if getattr(exc, "filename", None) else ""
        print(
            f"siting: error: cannot read or write{where}: {exc.strerror or exc}; nothing was "
            "written",
            file=sys.stderr,
        )
        return EXIT_BAD_INPUT
    except Exception as exc:  # a bug: one line, and the traceback kept for the report
        print(
            f"siting: internal error (a bug, please report it): {type(exc).__name__}: {exc}; "
            f"the traceback is in {_write_traceback()}",
            file=sys.stderr,
        )
        return EXIT_INTERNAL
    finally:
        _restore_signals(previous)


def _write_traceback() -> str:
    """Write the current exception's traceback to a new file in the temp folder; its path."""
    import tempfile
    import traceback

    try:
        handle, path = tempfile.mkstemp(prefix="siting-traceback-", suffix=".txt")
        with open(handle, "w", encoding="utf-8") as out:
            out.write(traceback.format_exc())
        return path
    except OSError:
        return "(could not be written)"
