"""`siting compare`: separate screening runs side by side, and a site x run summary."""

from __future__ import annotations

import sys
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import EXIT_OK, SUMMARY_MAX_SITES, plain, print_warnings
from siting.output.compare import difference_file_name, write_compare_outputs
from siting.runs.comparing import compare


def run(args) -> int:
    out_dir = Path(args.out_dir).resolve()
    result = compare(args.run_folders, out_dir=out_dir)  # refuses bad runs before writing
    written = write_compare_outputs(result, out_dir, overwrite=args.overwrite)
    if not args.quiet:
        _print_compare_summary(result, written)
    return EXIT_OK


def _cell(row) -> str:
    """One run's figure at one site: deposition maximum (judged, else PC) and its verdict."""
    dep = getattr(row, "judged_dep_max_kg_n_ha_yr", None)
    if dep is None or dep != dep:
        dep = getattr(row, "pc_dep_max_kg_n_ha_yr", float("nan"))
    verdict = getattr(row, "verdict", None)
    text = "-" if dep != dep else f"{float(dep):.3g}"
    return text if verdict is None or verdict != verdict else f"{text} {verdict}"


def _print_compare_summary(result, out_dir: Path) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    table = Table(
        title=plain(
            "Deposition maximum at each site [kg N/ha/yr] and verdict, by run "
            f"(changes against {result.run_names[0]} in comparison.csv)"
        ),
        title_justify="left",
    )
    table.add_column("Site", justify="left", no_wrap=True)
    for name in result.run_names:
        table.add_column(plain(name), justify="right")
    by_run = {
        name: list(part.itertuples(index=False)) for name, part in result.table.groupby("run")
    }
    sites = [row.name for row in by_run[result.run_names[0]]]
    for i, site in enumerate(sites[:SUMMARY_MAX_SITES]):
        table.add_row(plain(site), *[plain(_cell(by_run[n][i])) for n in result.run_names])
    console.print(table)
    if len(sites) > SUMMARY_MAX_SITES:
        console.print(f"... and {len(sites) - SUMMARY_MAX_SITES} more sites in comparison.csv.")
    print_warnings(console, result.warnings, flags_by_parameter("compare"))
    files = ", ".join(
        ["comparison.csv", *[difference_file_name(s) for s in result.file_stems[1:]], "run.json"]
    )
    console.print(f"Outputs in {plain(out_dir)} ({plain(files)}).")
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )
