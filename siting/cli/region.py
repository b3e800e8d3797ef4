"""`siting region`: many farms over a region on dask, and its summary."""

from __future__ import annotations

import sys
import warnings
from dataclasses import replace
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import EXIT_OK, plain, print_warnings
from siting.output.folder import check_output_dir
from siting.output.region import write_region_outputs
from siting.readers.farms import FarmFields
from siting.readers.rules import DEFAULT_RULES, load_rule_set
from siting.readers.tables import load_tables
from siting.runs.region_inputs import RegionOptions
from siting.runs.regional import region


def run(args) -> int:

    options = RegionOptions(
        spacing_m=args.spacing_m,
        margin_m=args.margin_m,
        tile_size=args.tile_size,
        memory_mb=args.memory_mb,
        scheduler=None if args.scheduler.lower() == "none" else args.scheduler,
        workers=args.workers,
        reach_m=args.reach_m,
        top=args.top,
        land_type=args.land_type,
        anemometer_height_m=args.anemometer_height_m,
        plume_depletion=args.depletion and not args.no_depletion,
        near_field_cells=args.near_field_cells,
        critical_load_end=args.critical_load_end,
        critical_load_review=args.critical_load_review,
        wind_below_anemometer=args.wind_below_anemometer,
    )
    options.check()
    tiers = [tier["id"] for tier in load_tables().thresholds]
    rules = load_rule_set(  # read and checked before any computing
        DEFAULT_RULES if args.rules is None else args.rules, tiers
    )
    options = replace(options, rules=rules)
    farms = Path(args.farms)
    out_dir = Path(args.out_dir) if args.out_dir else Path("maps") / f"{farms.stem}_region"
    habitats = Path(args.habitats_path) if args.habitats_path else None
    check_output_dir(out_dir.resolve(), args.overwrite, [farms, Path(args.weather_path), habitats])
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
            Path(args.weather_path),
            habitats,
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

    console = Console(highlight=False, width=None if sys.stdout.isatty() else 110)
    grid, t = result.grid, result.timings_s
    console.print(
        f"{t['farms']:,} farms in {t['release_classes']} release class(es); grid "
        f"{grid.n_cols} x {grid.n_rows} cells of {grid.cell_m:g} m in {t['tiles']} "
        f"tile(s); {t['total_s']:.1f} s with {t['workers']} worker(s)"
    )
    if result.sites is not None:
        _print_site_table(console, result)
    print_warnings(console, result.warnings, flags_by_parameter("region"))
    console.print(
        f"Outputs in {out_dir} (report.html, map.html, deposition.tif, concentration.tif, "
        "sites.csv, contributors.csv, farms.csv, run.json)."
    )
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )


def _print_site_table(console, result) -> None:
    """The all-farms (in-combination) figures and verdict of every site, and the rule set."""
    from rich.table import Table

    rules = result.inputs.rules
    table = Table(
        title="All farms together, in combination (incomb_* in sites.csv), by habitat site",
        title_justify="left",
    )
    numbers = (
        "In-combination\nkg N/ha/yr",
        "In-combination\n% of load",
        "In-combination\n% of level",
    )
    for col in ("Site", "Tier", *numbers, "Verdict", "Largest\ncontributor"):
        table.add_column(col, justify="right" if col in numbers else "left", no_wrap=col == "Site")
    first = result.contributors[result.contributors["rank"] == 1].set_index("site_id")
    no_rule = f"no in-combination rule in {rules.id}"
    for row in result.sites.itertuples():
        if row.passes:
            style = "green"
        elif row.verdict == no_rule:
            style = "yellow"
        else:
            style = "bold red"
        top = (
            f"{first.loc[row.site_id, 'farm_id']} "
            f"({first.loc[row.site_id, 'share_of_site_total_percent']:.0f} %)"
            if row.site_id in first.index
            else "-"
        )
        table.add_row(
            plain(row.name),
            str(row.tier),
            f"{row.incomb_dep_max_kg_n_ha_yr:.3g}",
            f"{row.incomb_pct_load:.1f}",
            f"{row.incomb_pct_level:.1f}",
            f"[{style}]{plain(row.verdict)}[/]",
            top,
        )
    console.print(table)
    console.print(
        f"Verdicts: rule set {rules.id}, its in-combination stages only, on all farms of the "
        "layer together (deciding rules in sites.csv)."
    )
    lacking = sorted(set(result.sites.loc[result.sites["verdict"] == no_rule, "tier"]))
    if lacking:
        example = "" if rules.id == "germany-2021" else "; --rules germany-2021 is a set with one"
        console.print(
            f"Rule set {rules.id} has no in-combination rule for tier(s) {', '.join(lacking)}: "
            f"those sites are not judged (`siting rules {rules.id}`{example}).",
            style="yellow",
        )
