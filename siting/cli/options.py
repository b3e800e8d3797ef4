"""The `siting` command line: the top-level options and one sub-parser per command.

argparse only, so `siting --help` and a bad option cost no import of the numerical stack.
Each sub-parser records its command's name; ``siting.cli.main`` runs the module of that name.

An option's ``dest`` is the name of the Python parameter it sets (``--spacing`` ->
``spacing_m``, ``--out`` -> ``out_dir``): library messages name parameters, never options, and
:func:`flags_by_parameter` gives the command line's own name for each.
"""

from __future__ import annotations

import argparse
import functools

from siting._version import __version__
from siting.cli.terminal import EXIT_BAD_INPUT


class _OneLineParser(argparse.ArgumentParser):
    """argparse with the tool's error rule: a bad command line is one line on stderr (no usage
    block) naming the option, and exit 2."""

    def error(self, message: str):
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    """The `siting` command line: the top-level options and one sub-parser per command, in
    the order ``siting --help`` lists them."""

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
    for add_command in (
        _add_screen,
        _add_demo,
        _add_weather,
        _add_place,
        _add_verify,
        _add_region,
        _add_compare,
        _add_rules,
    ):
        add_command(sub, common)
    return parser


def _rules_option(p: argparse.ArgumentParser, what: str) -> None:
    """--rules: the rule set to judge by (a bundled id or a file)."""
    p.add_argument(
        "--rules",
        metavar="ID|FILE",
        help=f"rule set to judge {what} by: a bundled id (`siting rules` lists them) or a "
        "rule set file",
    )


def _add_rules(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting rules`: the bundled rule sets listed, or one printed in words."""
    p = sub.add_parser(
        "rules",
        help="list the bundled rule sets, or print one in words",
        description="Without an id: the bundled rule sets, one per line (id and title). "
        "With an id or a rule set file: its basis and every stage of every tier in words, "
        "with sources (the file is checked as a run would check it).",
    )
    p.add_argument("rule_set", nargs="?", metavar="ID|FILE", help="a bundled id or a file")
    p.set_defaults(command_module="rules")


def _add_compare(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting compare`: separate screening runs side by side against the first."""
    p = sub.add_parser(
        "compare",
        parents=[common],
        help="compare output folders of separate screening runs",
        description="Compare output folders of `siting screen` made on one grid with the same "
        "sites: comparison.csv (every site of every run, with the change against the first "
        "run) and difference_<run>.tif (each later run's deposition minus the first's).",
    )
    p.add_argument(
        "run_folders", nargs="+", metavar="RUN", help="output folders of `siting screen`"
    )
    p.add_argument("--out", dest="out_dir", required=True, help="output folder")
    p.set_defaults(command_module="compare")


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
    p.add_argument(
        "--out", dest="out_dir", help="output folder (default: maps/<scenario file name>)"
    )
    p.add_argument(
        "--fail-on-exceed",
        action="store_true",
        help="exit with code 1 when any site's verdict does not pass its rule set",
    )
    _rules_option(p, "the sites (default: the scenario's [assessment] rules)")
    _pdf_option(p)
    p.set_defaults(command_module="screen")


def _pdf_option(p: argparse.ArgumentParser) -> None:
    """--no-pdf: leave report.pdf out (it adds a few seconds to a run)."""
    p.add_argument(
        "--no-pdf",
        dest="pdf",
        action="store_false",
        help="write report.html only, not report.pdf beside it (a few seconds quicker)",
    )


def _add_demo(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting demo`: the bundled invented demo (or its hourly variant) screened."""
    p = sub.add_parser(
        "demo",
        parents=[common],
        help="run the bundled invented demo",
        description="Run the invented demo scenario into ./maps/demo/.",
    )
    p.add_argument(
        "--out", dest="out_dir", help="output folder (default: maps/demo, or maps/demo_hourly)"
    )
    p.add_argument(
        "--hourly",
        action="store_true",
        help="run the demo on its invented hourly weather record "
        "(scenario_hourly.toml) into maps/demo_hourly",
    )
    _pdf_option(p)
    p.set_defaults(command_module="demo")


def _add_weather(sub: argparse._SubParsersAction, common: argparse.ArgumentParser) -> None:
    """`siting weather`: an hourly station record checked and binned into a frequency table
    and charts."""
    p = sub.add_parser(
        "weather",
        parents=[common],
        help="frequency table and charts from an hourly weather record",
        description="Check an hourly weather record (one or more files in time "
        "order: siting's hourly CSV, any CSV by a column map, ISD-Lite station-year files "
        "or reanalysis CF NetCDF) and write frequency_table.csv (all years; usable as a "
        "scenario's frequency_table), one table per calendar year, wind_rose.png, "
        "stability_by_speed.png and summary.json.",
    )
    p.add_argument(
        "hourly",
        nargs="+",
        metavar="FILE",
        help="hourly record: siting's CSV (time,direction_deg,speed_m_s and stability or "
        "cloud_oktas, optional ceiling_ft, temperature_c), a CSV by --columns, ISD-Lite "
        "files (.gz too) or NetCDF",
    )
    p.add_argument(
        "--lat",
        dest="latitude_deg",
        type=float,
        required=True,
        help="site latitude [deg north], -90..90 (sets the sun for Turner's method)",
    )
    p.add_argument(
        "--lon",
        dest="longitude_deg",
        type=float,
        required=True,
        help="site longitude [deg east], -180..180",
    )
    p.add_argument("--out", dest="out_dir", required=True, help="output folder")
    p.add_argument(
        "--utc-offset",
        dest="utc_offset_h",
        type=float,
        default=None,
        metavar="H",
        help="offset of the file's clock from UTC in hours, for times written "
        "without an offset (e.g. 1 for UTC+1)",
    )
    p.add_argument(
        "--sectors",
        dest="n_sectors",
        type=int,
        default=12,
        help="direction sectors of the frequency table (default 12)",
    )
    p.add_argument(
        "--calm-threshold",
        dest="calm_threshold_m_s",
        type=float,
        default=0.5,
        metavar="M_S",
        help="speeds below this are calms [m/s] (default 0.5)",
    )
    p.add_argument(
        "--min-speed",
        dest="min_wind_speed_m_s",
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
        dest="anemometer_height_m",
        type=float,
        default=10.0,
        metavar="M",
        help="height of the wind measurement [m] (default 10)",
    )
    p.add_argument(
        "--station-lat",
        dest="station_latitude_deg",
        type=float,
        default=None,
        metavar="DEG",
        help="the station's latitude [deg north], for its distance from the site",
    )
    p.add_argument(
        "--station-lon",
        dest="station_longitude_deg",
        type=float,
        default=None,
        metavar="DEG",
        help="the station's longitude [deg east]",
    )
    add_weather_source_options(p)
    p.set_defaults(command_module="weather")


def add_weather_source_options(p: argparse.ArgumentParser) -> None:
    """The options of a weather file's format: what it is, its column map and units, its
    missing codes and flags, and a NetCDF grid's point (``readers/weather_formats.py``)."""
    g = p.add_argument_group("format of the weather files")
    g.add_argument(
        "--format",
        dest="format",
        choices=("auto", "csv", "isd-lite", "netcdf"),
        default="auto",
        help="the files' format (default: detected from the content)",
    )
    g.add_argument(
        "--columns",
        dest="columns",
        default=None,
        metavar="MAP",
        help="a CSV's column map, siting name=column: time (or DATE+HOUR), direction, "
        "speed, cloud or stability, optional ceiling, temperature, NAME_flag; or a NetCDF "
        "file's variables u, v, cloud, ceiling, temperature (e.g. "
        "time=DATE,direction=DD,speed=FF,cloud=N)",
    )
    g.add_argument(
        "--speed-unit",
        dest="speed_unit",
        choices=("m/s", "knots", "km/h"),
        default="m/s",
        help="unit of a mapped CSV's speed (default m/s)",
    )
    g.add_argument(
        "--direction-unit",
        dest="direction_unit",
        choices=("deg", "tens"),
        default="deg",
        help="unit of a mapped CSV's direction: degrees, or tens of degrees (27 = 270)",
    )
    g.add_argument(
        "--cloud-unit",
        dest="cloud_unit",
        choices=("oktas", "fraction", "percent"),
        default="oktas",
        help="unit of a mapped CSV's cloud cover (default oktas)",
    )
    g.add_argument(
        "--ceiling-unit",
        dest="ceiling_unit",
        choices=("ft", "m"),
        default="ft",
        help="unit of a mapped CSV's ceiling (default ft)",
    )
    g.add_argument(
        "--time-format",
        dest="time_format",
        default=None,
        metavar="FORMAT",
        help="a mapped CSV's time format, as strptime writes it (e.g. '%%d.%%m.%%Y %%H:%%M'; "
        "default ISO 8601)",
    )
    g.add_argument(
        "--missing-codes",
        dest="missing_codes",
        default=None,
        metavar="CODES",
        help="comma-separated cell values meaning missing in a mapped CSV (e.g. -999,9999)",
    )
    g.add_argument(
        "--flags-ok",
        dest="flags_ok",
        default=None,
        metavar="FLAGS",
        help="comma-separated quality flags that accept a value (other flags: missing)",
    )
    g.add_argument(
        "--grid-point",
        dest="grid_point",
        choices=("nearest", "bilinear"),
        default="nearest",
        help="a NetCDF grid's value at the site: the nearest grid point (default) or "
        "bilinear interpolation",
    )


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
        dest="house_id",
        required=True,
        metavar="ID",
        help="id of the [[source]] to place (its x/y are ignored)",
    )
    p.add_argument(
        "--out", dest="out_dir", help="output folder (default: maps/<scenario>_place_<ID>)"
    )
    p.add_argument(
        "--spacing",
        dest="spacing_m",
        type=float,
        metavar="M",
        help="candidate spacing in metres (default: holding.spacing_m)",
    )
    p.add_argument(
        "--top",
        type=int,
        default=10,
        metavar="N",
        help="positions listed on the terminal and marked on the map (default 10)",
    )
    _rules_option(p, "the positions (default: the scenario's [assessment] rules)")
    p.set_defaults(command_module="place")


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
    p.add_argument(
        "--out", dest="out_dir", required=True, help="folder for verify.html and findings.json"
    )
    p.add_argument("--results", help="the applicant's sites.csv (with a scenario file)")
    p.add_argument(
        "--habitats",
        dest="reference_habitats",
        help="reference habitat layer: flags sites within the search "
        "distance left out of the submission",
    )
    p.add_argument(
        "--name-field",
        help="site name field of the reference layer (default: the scenario's name_field)",
    )
    p.add_argument(
        "--weather",
        dest="weather_files",
        action="append",
        default=[],
        metavar="FILE",
        help="another weather year (frequency table or hourly record) for the "
        "sensitivity analysis; repeatable",
    )
    _rules_option(p, "the submission by (the regulator's; default: the submission's own rule set)")
    p.set_defaults(command_module="verify")


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
        dest="weather_path",
        required=True,
        metavar="TABLE.csv",
        help="weather frequency table: direction_deg,speed_m_s,stability,frequency",
    )
    p.add_argument(
        "--habitats",
        dest="habitats_path",
        metavar="FILE",
        help="habitat sites layer, fields as in a scenario's [habitats]; without "
        "it only the grids are written",
    )
    p.add_argument(
        "--out", dest="out_dir", help="output folder (default: maps/<FARMS name>_region)"
    )
    _add_region_run_options(p)
    _add_region_field_options(p)
    _add_region_model_options(p)
    _rules_option(p, "the in-combination totals (default: plain)")
    p.set_defaults(command_module="region")


def _add_region_run_options(p: argparse.ArgumentParser) -> None:
    """`siting region`: the grid, its tiles, the dask scheduler, the farms' reach and the
    contributors listed."""
    p.add_argument(
        "--spacing",
        dest="spacing_m",
        type=float,
        default=100.0,
        metavar="M",
        help="grid cell size in metres (default 100)",
    )
    p.add_argument(
        "--margin",
        dest="margin_m",
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
        dest="anemometer_height_m",
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
        dest="near_field_cells",
        type=int,
        default=10,
        metavar="CELLS",
        help="cells around each farm where the grid is made the direct sum at the "
        "farm's true position (default 10; 0 = none)",
    )


@functools.cache
def flags_by_parameter(command: str) -> dict[str, str]:
    """{parameter: option} of one command: each option's ``dest`` (the Python parameter it
    sets) and its long option string, from the definitions above; positionals left out.

    Parameters
    ----------
    command : str
        A sub-command's name ("screen", "region", ...).

    Returns
    -------
    dict of str to str
        E.g. ``{"spacing_m": "--spacing", "out_dir": "--out", ...}``; empty for no such command.
    """
    commands = next(
        action.choices
        for action in build_parser()._actions  # argparse keeps its options only here
        if isinstance(action, argparse._SubParsersAction)
    )
    parser = commands.get(command)
    if parser is None:
        return {}
    return {
        action.dest: max(action.option_strings, key=len)
        for action in parser._actions
        if action.option_strings and not isinstance(action, argparse._HelpAction)
    }
