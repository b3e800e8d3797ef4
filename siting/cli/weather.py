"""`siting weather`: the products of an hourly weather record (frequency table, charts, summary)."""

from __future__ import annotations

import sys
from pathlib import Path

from siting.cli.options import flags_by_parameter
from siting.cli.terminal import EXIT_OK, print_warnings
from siting.errors import InputError, collect_warnings
from siting.output.folder import check_output_dir
from siting.output.weather import write_weather_outputs
from siting.readers.hourly_record import read_hourly_record
from siting.readers.weather_formats import source_of


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
    layouts = sorted({s["layout"] for s in summary["sources"].values()})
    table.add_row("format", "; ".join(layouts))
    removed = _removed_words(summary["sources"])
    if removed:
        table.add_row("missing codes, flags", removed)
    station = summary["record_position"]
    table.add_row(
        "record's position",
        f"{station['position']}, {station['distance_km']:.1f} km from the site"
        if station["position"]
        else "not given (give the station's position for its distance from the site)",
    )
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
            f"{t['min']:.1f} / {t['mean']:.1f} / {t['max']:.1f} °C (min / mean / max)",
        )
    if len(summary["by_year"]) > 1:
        for year in summary["by_year"]:
            table.add_row(
                f"year {year['year']}",
                f"{year['hours_used']} h used, calms {year['calm_percent']:.1f} %, mean "
                f"{year['mean_speed_m_s']:.2f} m/s, prevailing {year['prevailing_from_words']}",
            )
    console.print(table)
    print_warnings(console, warnings_, flags_by_parameter("weather"), soft_wrap=False)
    per_year = (
        " by_year/frequency_table_<year>.csv, years.csv," if len(summary["by_year"]) > 1 else ""
    )
    console.print(
        f"Outputs in {out_dir} (frequency_table.csv,{per_year} wind_rose.png, "
        "stability_by_speed.png, summary.json)."
    )


def _removed_words(sources: dict) -> str:
    """What the files' missing codes and quality flags removed, in words ('' for nothing)."""
    groups = (
        ("missing_codes", "missing values"),
        ("not_in_oktas", "not in oktas"),
        ("flags_rejected", "quality flag not accepted"),
    )
    parts = []
    for group, words in groups:
        totals: dict[str, int] = {}
        for source in sources.values():
            for what, n in (source.get(group) or {}).items():
                totals[what] = totals.get(what, 0) + int(n)
        shown = [f"{what} {n}" for what, n in totals.items() if n]
        if shown:
            parts.append(f"{words}: {', '.join(shown)}")
    return "; ".join(parts)


def run(args) -> int:

    if not -90.0 <= args.latitude_deg <= 90.0:
        raise InputError(f"--lat must be within -90..90 (degrees north), got {args.latitude_deg}")
    if not -180.0 <= args.longitude_deg <= 180.0:
        raise InputError(f"--lon must be within -180..180 (degrees east), got {args.longitude_deg}")
    if not 4 <= args.n_sectors <= 360:
        raise InputError(f"--sectors must be within 4..360, got {args.n_sectors}")
    out_dir = Path(args.out_dir).resolve()
    paths = [Path(p) for p in args.hourly]
    check_output_dir(out_dir, args.overwrite, paths)
    source = source_of(args)  # the options' dests are WeatherSource's own names
    with collect_warnings() as reading:  # the record's warnings, for the summary and its file
        weather, summary = read_hourly_record(
            paths,
            args.latitude_deg,
            args.longitude_deg,
            anemometer_height_m=args.anemometer_height_m,
            utc_offset_h=args.utc_offset_h,
            calm_threshold_m_s=args.calm_threshold_m_s,
            min_wind_speed_m_s=args.min_wind_speed_m_s,
            max_missing_percent=args.max_missing_percent,
            source=source,
            station_latitude_deg=args.station_latitude_deg,
            station_longitude_deg=args.station_longitude_deg,
        )
    written, warnings_ = write_weather_outputs(
        out_dir,
        weather,
        summary,
        reading.messages,
        n_sectors=args.n_sectors,
        overwrite=args.overwrite,
        input_paths=paths,
    )
    _print_weather_summary(summary, warnings_, written, args.quiet)
    return EXIT_OK
