"""`siting region`: many farms over a region on dask, and its summary."""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import EXIT_OK, plain, print_warnings
from siting.output.folder import check_output_dir
from siting.output.region import write_region_outputs
from siting.readers.farms import FarmFields
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
                plain(row.name),
                str(row.tier),
                f"{row.pc_dep_max_kg_n_ha_yr:.3g}",
                f"{row.pc_pct_load:.1f}",
                f"{row.pc_pct_level:.1f}",
                f"[{style}]{row.verdict}[/]",
                top,
            )
        console.print(table)
    print_warnings(console, result.warnings, flags_by_parameter("region"))
    console.print(
        f"Outputs in {out_dir} (deposition.tif, concentration.tif, sites.csv, "
        "contributors.csv, farms.csv, run.json)."
    )
    console.print(
        "Screening estimate only; local rules and the competent authority decide.", style="dim"
    )
