"""`siting screen`: a scenario screened into an output folder, and the summary it prints."""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import (
    EXIT_EXCEEDS,
    EXIT_OK,
    SUMMARY_MAX_FLIPS,
    SUMMARY_MAX_SITES,
    SUMMARY_MAX_WARNINGS,
    plain,
    print_warnings,
)
from siting.output.folder import check_output_dir
from siting.output.records import input_paths
from siting.output.screen import estimate_screen_bytes, write_outputs
from siting.presentation.formats import most_affected_order
from siting.readers.rules import load_rule_set
from siting.readers.scenario import load_scenario
from siting.readers.tables import load_tables
from siting.runs.screening import screen
from siting.runs.screening_sites import screen_grid

#: The first columns' headers of the site tables, as the report writes them.
SITE, TIER = "Site", "Tier"


def _summary_rows(sites):
    """The sites to print and how many are left out: all in layer order when they fit, else
    the :data:`SUMMARY_MAX_SITES` most affected (highest PC as a share of the threshold) first."""

    if len(sites) <= SUMMARY_MAX_SITES:
        return sites, 0
    shown = sites.iloc[most_affected_order(sites)[:SUMMARY_MAX_SITES]]
    return shown, len(sites) - SUMMARY_MAX_SITES


def _site_table(result, shown, n_more: int):
    """The rich table of the shown sites."""
    from rich.table import Table

    rules = result.rules
    title = (
        f"{result.scenario.title}\njudged by rule set {rules.id} ({rules.title})\n"
        f"contribution judged: {rules.basis_words}; net change: proposed less removed"
    )
    if n_more:
        title += (
            f": the {len(shown)} of {len(result.sites)} with the highest PC as a share "
            "of their threshold"
        )
    table = Table(title=title, title_justify="left")
    for col, justify in (  # the words and units of the report's site table
        (SITE, "left"),
        (TIER, "left"),
        ("PC\n% of level", "right"),
        ("PC max\nkg N/ha/yr", "right"),
        ("PC\n% of load", "right"),
        ("Net change\nkg N/ha/yr", "right"),
        ("Verdict\n(deciding rule)", "left"),
    ):
        table.add_column(col, justify=justify, no_wrap=col in (SITE, TIER))

    def fmt(v, spec=".3g"):
        return "-" if v != v else format(v, spec)

    for row in shown.itertuples():
        style = "yellow" if not row.assessed else ("green" if row.passes else "bold red")
        rule = str(row.deciding_rule).split(":", 1)[0].split("/", 1)[-1]
        table.add_row(
            plain(row.name),
            str(row.tier),
            fmt(row.judged_pct_level, ".1f"),
            fmt(row.judged_dep_max_kg_n_ha_yr),
            fmt(row.judged_pct_load, ".1f"),
            fmt(row.net_dep_max_kg_n_ha_yr, "+.3g"),
            f"[{style}]{plain(str(row.verdict))}[/]" + (f" ({plain(rule)})" if rule else ""),
        )
    return table


def _options_table(result, shown):
    """The rich table of the shown sites under the base and each option: the judged % of the
    critical load, ✓ (green) where the site passes, ✗ (red) where it does not, ? (yellow) where
    it is not assessed; None without options."""
    from rich.table import Table

    if getattr(result, "options", None) is None:
        return None
    runs = {"base": result, **result.options.runs}
    table = Table(
        title="Options: PC % of load (judged); ✓ passes the rule set, ✗ does not "
        "(options.csv, report section 1)",
        title_justify="left",
    )
    table.add_column(SITE, no_wrap=True)
    for name in runs:
        table.add_column(plain(name), justify="right")
    for position in shown.index:
        cells = []
        for run in runs.values():
            row = run.sites.loc[position]
            style, mark = (
                ("yellow", "?")
                if not row.assessed
                else (("green", "✓") if row.passes else ("bold red", "✗"))
            )
            value = row.judged_pct_load
            text = "-" if value != value else format(value, ".1f")
            cells.append(f"[{style}]{text} {mark}[/]")
        table.add_row(plain(row["name"]), *cells)
    return table


def _print_flips(console, result) -> None:
    """One line per site whose verdict a sensitivity variant flips, at most
    :data:`SUMMARY_MAX_FLIPS` (the most affected sites first when there are more)."""
    summary = result.sensitivity_summary
    if summary is None or not len(summary) or not summary["verdict_flips"].any():
        return
    flips = summary[summary["verdict_flips"]]
    if len(flips) > SUMMARY_MAX_FLIPS:
        rank = {}
        for position in most_affected_order(result.sites):
            rank.setdefault(str(result.sites["name"].iloc[position]), len(rank))
        order = sorted(
            range(len(flips)), key=lambda i: rank.get(str(flips["site"].iloc[i]), len(rank))
        )
        flips = flips.iloc[order[:SUMMARY_MAX_FLIPS]]
    for row in flips.itertuples():
        console.print(
            f"[yellow]sensitivity:[/] the verdict for {plain(row.site)} "
            f"flips under {plain(row.flipping_variants)} (report section 4, "
            "sensitivity.csv)",
            markup=True,
        )
    n_more = int(summary["verdict_flips"].sum()) - len(flips)
    if n_more:
        console.print(
            f"[yellow]sensitivity:[/] and {n_more} more sites (sensitivity.csv)", markup=True
        )


def _print_summary(result, out_dir: Path, quiet: bool, command: str = "screen") -> None:
    """The screen summary: a table of at most :data:`SUMMARY_MAX_SITES` sites, the counts by
    verdict when some are left out, the first warnings and verdict flips, where the outputs are."""
    from rich.console import Console

    if quiet:
        return
    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    shown, n_more = _summary_rows(result.sites)
    console.print(_site_table(result, shown, n_more))
    options = _options_table(result, shown)
    if options is not None:
        console.print(options)
    if n_more:
        counts = result.sites["verdict"].value_counts()
        console.print(
            f"{n_more} more sites in sites.csv; all {len(result.sites)}: "
            + ", ".join(f"{n} {plain(v)}" for v, n in counts.items())
            + "."
        )
    print_warnings(console, result.warnings[:SUMMARY_MAX_WARNINGS], flags_by_parameter(command))
    if len(result.warnings) > SUMMARY_MAX_WARNINGS:
        console.print(
            f"[yellow]warning:[/] and {len(result.warnings) - SUMMARY_MAX_WARNINGS} "
            "more warnings (report.html section 6, run.json)",
            markup=True,
        )
    _print_flips(console, result)
    by_site = (getattr(result, "weather_summary", None) or {}).get("worst_year_by_site")
    if by_site:
        years = ", ".join(f"{plain(str(name))} {year}" for name, year in by_site.items())
        console.print(
            f"weather: screened by the worst single year at each point ({years}; "
            "sites.csv weather_year)"
        )
    ways = getattr(result, "what_it_takes", None)
    for row in [] if ways is None else ways.itertuples():
        console.print(
            f"what it takes for {plain(row.source_id)} to let every site pass: "
            f"{plain(str(row.cheapest_option))} (what_it_takes.csv)"
        )
    more = ", options.csv" if getattr(result, "options", None) is not None else ""
    console.print(f"Outputs in {out_dir} (report.html, map.html, sites.csv{more}, GeoTIFFs).")
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )


def screen_scenario(
    scenario_path: Path,
    out: Path | None,
    overwrite: bool,
    fail_on_exceed: bool,
    quiet: bool,
    command: str = "screen",
    rules: str | None = None,
    pdf: bool = True,
) -> int:

    scenario = load_scenario(scenario_path)
    # the rule set read and checked before any computing: a faulty one stops the run at once
    tables = load_tables(scenario.assessment.config_dir)
    rule_set = load_rule_set(
        scenario.assessment.rules if rules is None else rules,
        [tier["id"] for tier in tables.thresholds],
    )
    screen_grid(scenario)  # a grid too large is refused before the room for it is looked at
    out_dir = out if out is not None else Path("maps") / scenario.name
    check_output_dir(
        out_dir.resolve(),
        overwrite,
        input_paths(scenario),
        need_bytes=estimate_screen_bytes(scenario),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        result = screen(
            scenario, progress=not quiet and sys.stderr.isatty(), tables=tables, rules=rule_set
        )
    written = write_outputs(result, out_dir, overwrite=overwrite, pdf=pdf)
    _print_summary(result, written, quiet, command)
    if fail_on_exceed and not result.sites["assessed"].any():
        print(
            "siting: --fail-on-exceed: no habitat site could be assessed, so none is shown to pass",
            file=sys.stderr,
        )
        return EXIT_EXCEEDS
    judged = result.sites["assessed"].to_numpy(bool)
    if fail_on_exceed and not result.sites["passes"].to_numpy(bool)[judged].all():
        return EXIT_EXCEEDS
    return EXIT_OK


def run(args) -> int:
    return screen_scenario(
        Path(args.scenario),
        Path(args.out_dir) if args.out_dir else None,
        args.overwrite,
        args.fail_on_exceed,
        args.quiet,
        rules=args.rules,
        pdf=args.pdf,
    )
