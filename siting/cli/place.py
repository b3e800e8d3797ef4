"""`siting place`: the placement search for one house over the holding, and its summary."""

from __future__ import annotations

import sys
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import EXIT_OK, plain, print_warnings
from siting.errors import InputError
from siting.output.folder import check_output_dir
from siting.output.place import write_place_outputs
from siting.output.records import input_paths
from siting.presentation.place_report import cheapest_position
from siting.readers.rules import load_rule_set
from siting.readers.scenario import load_scenario
from siting.readers.tables import load_tables
from siting.runs.placing import place

#: The placement table's site column, as the placement report heads it.
LIMITING = "Limiting site"


def run(args) -> int:

    if args.spacing_m is not None and not 0 < args.spacing_m <= 500:
        raise InputError(f"--spacing must be in (0, 500] m, got {args.spacing_m:g}")
    if args.top < 1:
        raise InputError(f"--top must be >= 1, got {args.top}")
    scenario = load_scenario(args.scenario)
    out_dir = (
        Path(args.out_dir)
        if args.out_dir
        else Path("maps") / f"{scenario.name}_place_{args.house_id}"
    )
    check_output_dir(out_dir.resolve(), args.overwrite, input_paths(scenario, holding=True))
    tiers = [tier["id"] for tier in load_tables(scenario.assessment.config_dir).thresholds]
    rules = load_rule_set(  # checked before any computing
        scenario.assessment.rules if args.rules is None else args.rules, tiers
    )
    result = place(scenario, args.house_id, spacing_m=args.spacing_m, rules=rules)
    written = write_place_outputs(result, out_dir, overwrite=args.overwrite, top=args.top)
    if not args.quiet:
        _print_place_summary(result, written, args.top)
    return EXIT_OK


def _print_what_it_takes(console, positions) -> None:
    """What it takes to pass at the best position, and the cheapest position (positions.csv's
    cheapest_option), when the search costed the ways."""
    if "cheapest_option" not in positions or not len(positions):
        return
    first = positions.iloc[0]
    console.print(
        f"What it takes at rank 1 ({first.x:.0f}, {first.y:.0f}): "
        f"{plain(str(first.cheapest_option))}."
    )
    at = cheapest_position(positions)
    if at > 0:
        row = positions.iloc[at]
        console.print(
            f"Cheapest anywhere, rank {at + 1} ({row.x:.0f}, {row.y:.0f}): "
            f"{plain(str(row.cheapest_option))}."
        )
    console.print(
        "(techniques at the lower end of their published range, costed at the scenario's "
        "\\[appraisal] prices; positions.csv has every position's cheapest way)",
        style="dim",
    )


def _print_place_summary(result, out_dir: Path, top: int) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    t = result.timings_s
    rules = result.prepared.rules
    passing = int(result.positions["passes_as_described"].sum())
    best = "Best positions" if passing else "Least affecting positions (none passes)"
    table = Table(
        title=f"{best} for {result.house_id} ({t['positions']:,} positions searched), judged "
        f"by rule set {rules.id}; contribution judged: {rules.basis_words}",
        title_justify="left",
    )
    for col in (  # the words and units of the placement report's table
        "Rank",
        "x\n[m]",
        "y\n[m]",
        LIMITING,
        "Worst % of\ncritical load",
        "Worst % of\ncritical level",
        "Share of what\npasses",
        "Reduction\nneeded %",
        "Places\nunabated",
        "Verdict\nthere",
    ):
        table.add_column(
            col, justify="left" if col == LIMITING else "right", no_wrap=col == LIMITING
        )
    for row in result.positions.head(top).itertuples():
        places = getattr(row, "max_places_unabated", float("nan"))
        table.add_row(
            str(row.Index + 1),
            f"{row.x:.0f}",
            f"{row.y:.0f}",
            plain(row.limiting_site),
            f"{row.worst_pct_load:.1f}",
            f"{row.worst_pct_level:.1f}",
            "never"
            if row.limiting_share_of_threshold == float("inf")
            else f"{row.limiting_share_of_threshold:.2f}",
            f"{row.required_reduction_percent:.0f}",
            "-" if places != places else f"{places:.0f}",
            plain(str(row.verdict)),
        )
    console.print(table)
    console.print(
        f"{passing:,} of {len(result.positions):,} positions pass at every site under "
        f"{rules.id} with the house as described."
    )
    _print_what_it_takes(console, result.positions)
    print_warnings(console, result.warnings, flags_by_parameter("place"))
    console.print(
        f"Outputs in {out_dir} (report.html, map.html, positions.csv, position_ways.csv, suitability.tif)."
    )
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )
