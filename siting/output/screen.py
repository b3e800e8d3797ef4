"""The files of ``siting screen``: tables, results.gpkg, GeoTIFFs, run.json, report.html, map.html.

Written into a staging folder and moved into place when whole (siting.output.folder).
"""

from __future__ import annotations

import json
import warnings
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pandas as pd

from siting._version import __version__
from siting.dispersion.grid import grid_around
from siting.dispersion.hourly import HourlyWeather
from siting.dispersion.inputs import WeatherClasses
from siting.errors import AccuracyWarning, WarningText
from siting.output.folder import check_output_dir, staged_folder
from siting.output.geopackage import write_results_gpkg
from siting.output.geotiff import write_geotiff
from siting.output.portable import portable_record
from siting.output.records import input_paths, output_hashes, package_inputs, run_record_base
from siting.output.screen_options import write_option_files
from siting.output.tables import write_csv
from siting.presentation.figures import deposition_figure, figure_png, pc_vs_distance_figure
from siting.presentation.notes import METHOD_NOTES, cautious_choices
from siting.presentation.report import render_report
from siting.presentation.report_pdf import pdf_unavailable, report_pdf
from siting.presentation.weather_figures import (
    stability_by_speed_figure,
    wind_rose_figure,
    wind_rose_from_table_figure,
)
from siting.presentation.webmap import render_screen_map
from siting.readers.map_context import read_map_context
from siting.readers.toml_values import recorded_toml_values

SITE_COLUMNS = [
    "site_id",
    "name",
    "designation",
    "tier",
    "habitat",
    "habitat_name",
    "area_ha",
    "land_cover",
    "deposition_velocity_m_s",
    "distance_m",
    "critical_level_ug_m3",
    "critical_level_basis",
    "critical_level_source",
    "critical_load_review",
    "critical_load_min_kg_n_ha_yr",
    "critical_load_max_kg_n_ha_yr",
    "critical_load_used_kg_n_ha_yr",
    "critical_load_source",
    "threshold_percent",
    "threshold_source",
    "assessed",
    "pc_conc_max_ug_m3",
    "pc_conc_mean_ug_m3",
    "pc_dep_max_kg_n_ha_yr",
    "pc_dep_mean_kg_n_ha_yr",
    "pc_dep_max_mol_n_ha_yr",
    "pc_dep_max_keq_ha_yr",
    "pc_pct_level",
    "pc_pct_load",
    "net_conc_max_ug_m3",
    "net_dep_max_kg_n_ha_yr",
    "net_pct_level",
    "net_pct_load",
    "incomb_conc_max_ug_m3",
    "incomb_dep_max_kg_n_ha_yr",
    "incomb_pct_level",
    "incomb_pct_load",
    "background_conc_ug_m3",
    "background_dep_kg_n_ha_yr",
    "pec_conc_ug_m3",
    "pec_dep_kg_n_ha_yr",
    "pec_pct_level",
    "pec_pct_load",
    "verdict",
    "passes",
    "deciding_rule",
    "basis",
    "rules",
    "judged_conc_max_ug_m3",
    "judged_dep_max_kg_n_ha_yr",
    "judged_pct_level",
    "judged_pct_load",
    "judged_incomb_dep_max_kg_n_ha_yr",
    "judged_incomb_pct_level",
    "judged_incomb_pct_load",
]

#: Written beside the depleted figures when plume depletion is switched on: what depletion took off.
UNDEPLETED_COLUMNS = [
    "pc_conc_max_undepleted_ug_m3",
    "pc_dep_max_undepleted_kg_n_ha_yr",
    "pc_pct_level_undepleted",
    "pc_pct_load_undepleted",
]


def run_record(result, run_time: str) -> dict:
    """What a screening run's run.json holds: the shared part plus grid, timings, warnings.

    Parameters
    ----------
    result : ScreenResult
        The screening run.
    run_time : str
        Time of the run, ISO 8601 UTC.

    Returns
    -------
    dict
        The run record, ready for JSON (the output hashes are added when the folder is done).
    """
    record = run_record_base(result, run_time)
    record.update(
        {
            "grid": {
                "west_m": result.grid.west_m,
                "north_m": result.grid.north_m,
                "cell_m": result.grid.cell_m,
                "n_cols": result.grid.n_cols,
                "n_rows": result.grid.n_rows,
                "crs": result.grid.crs,
            },
            "timings_s": result.timings_s,
            "warnings": result.warnings,
        }
    )
    return record


def _habitat_values(sites) -> pd.DataFrame:
    cols = [
        "habitat",
        "habitat_name",
        "land_cover",
        "deposition_velocity_m_s",
        "deposition_velocity_source",
        "critical_load_min_kg_n_ha_yr",
        "critical_load_max_kg_n_ha_yr",
        "critical_load_used_kg_n_ha_yr",
        "critical_load_source",
        "critical_level_ug_m3",
        "critical_level_source",
    ]
    return pd.DataFrame(sites[cols]).drop_duplicates().reset_index(drop=True)


def _contour_levels(sites) -> list[tuple[float, str]]:
    """Deposition contours at each assessed site's threshold share of its critical load."""
    # sites whose rule set gives no share as its threshold (an absolute rule) draw no contour
    threshold_all = sites["threshold_percent"].to_numpy(dtype=float)
    assessed = sites["assessed"].to_numpy(dtype=bool) & np.isfinite(threshold_all)
    threshold = threshold_all[assessed]
    load = sites["critical_load_used_kg_n_ha_yr"].to_numpy(dtype=float)[assessed]
    levels = {}
    if threshold.size:
        # each distinct (threshold, load) pair once, in layer order: thousands of sites share few
        _, first = np.unique(np.column_stack([threshold, load]), axis=0, return_index=True)
        for i in sorted(first):
            value = float(threshold[i]) / 100.0 * float(load[i])
            levels.setdefault(round(value, 6), f"{threshold[i]:g} % of {load[i]:g} kg N/ha/yr")
    return sorted(levels.items())


def _write_rasters(result, folder: Path) -> None:
    """concentration.tif, deposition.tif and deposition_in_combination.tif."""
    grid, fields = result.grid, result.fields
    for name, key, description, units in (
        ("concentration.tif", "pc_conc_ug_m3",
         "annual mean NH3 concentration, process contribution (screening estimate)", "ug/m3"),
        ("deposition.tif", "pc_dep_kg_n_ha_yr",
         "dry deposition of N from NH3, process contribution (screening estimate)",
         "kg N/ha/yr"),
        ("deposition_in_combination.tif", "incomb_dep_kg_n_ha_yr",
         "dry deposition of N from NH3, process contribution + other sources", "kg N/ha/yr"),
    ):  # fmt: skip
        write_geotiff(folder / name, grid, fields[key], description, units)


def _write_tables(result, folder: Path) -> pd.DataFrame:
    """sites.csv (the undepleted figures beside the depleted ones), receptors.csv, sources.csv
    and sensitivity.csv; returns the sites table as written (results.gpkg repeats it)."""
    sites = result.sites
    columns = list(SITE_COLUMNS)
    at = columns.index("pc_pct_load") + 1  # beside the depleted figures
    columns[at:at] = [c for c in UNDEPLETED_COLUMNS if c in sites.columns]
    if "weather_year" in sites.columns:  # screened by the worst single year (weather_years.py)
        columns.insert(columns.index("judged_conc_max_ug_m3"), "weather_year")
    table = pd.DataFrame(sites[columns])
    write_csv(table, folder / "sites.csv")
    write_csv(result.receptors, folder / "receptors.csv")
    write_csv(result.sources, folder / "sources.csv")
    if result.what_it_takes is not None:
        write_csv(result.what_it_takes, folder / "what_it_takes.csv")
    if result.sensitivity is not None:
        write_csv(result.sensitivity, folder / "sensitivity.csv")
    return table


def write_report(path: Path, **report) -> str:
    """Write report.html: the page rendered from ``report``; nothing is written if it fails.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    **report
        The keyword arguments of :func:`siting.presentation.report.render_report`.

    Returns
    -------
    str
        The page written (report.pdf is laid out from it, :func:`write_report_pdf`).
    """
    page = render_report(**report)
    Path(path).write_text(page, encoding="utf-8")
    return page


def write_report_pdf(path: Path, page: str) -> None:
    """Write report.pdf: the report page laid out for print (A4, page numbers, running head),
    offline; the PDF is made whole before the file is opened.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    page : str
        report.html's text (:func:`write_report`).

    Raises
    ------
    OSError, ImportError
        WeasyPrint cannot be loaded (ask :func:`siting.presentation.report_pdf.pdf_unavailable`
        first).
    """
    Path(path).write_bytes(report_pdf(page))


def _pdf_warning(result, pdf: bool) -> bool:
    """Whether report.pdf can be written; when it was asked for and cannot, one
    AccuracyWarning says what is missing, and the run's warnings (result.warnings, so the
    report, run.json and the printed summary) list it."""
    if not pdf:
        return False
    missing = pdf_unavailable()
    if missing is None:
        return True
    message = f"report.pdf not written: {missing}"
    warnings.warn(AccuracyWarning(message), stacklevel=3)
    if message not in result.warnings:
        result.warnings.append(WarningText(message, AccuracyWarning))
    return False


def _report_figures(result, sources_gdf, contours) -> tuple[dict, dict]:
    """(the report's result figures, its weather figures), each title -> PNG bytes: each
    figure drawn by the presentation layer, then rendered (:func:`figure_png`)."""

    grid, sites = result.grid, result.sites
    figures = {
        "Deposition (process contribution) with habitat sites and sources": deposition_figure(
            result.fields["pc_dep_kg_n_ha_yr"],
            west_m=grid.west_m,
            north_m=grid.north_m,
            cell_m=grid.cell_m,
            sites=sites,
            sources=sources_gdf,
            contours=contours,
            crs_label=result.scenario.crs,
        ),
        "Process contribution at each site against distance from the installation": (
            pc_vs_distance_figure(pd.DataFrame(sites.drop(columns="geometry")))
        ),
    }
    weather_figures = {}  # shown in the report's weather part, after the summary table
    if isinstance(result.weather, HourlyWeather):
        weather_figures["Wind rose of the hourly record (direction the wind blows from)"] = (
            wind_rose_figure(result.weather)
        )
        weather_figures["Stability class by wind speed (Turner's method or as given)"] = (
            stability_by_speed_figure(result.weather)
        )
    elif isinstance(result.weather, WeatherClasses):
        weather_figures["Wind rose of the frequency table (direction the wind blows from)"] = (
            wind_rose_from_table_figure(result.weather)
        )
    return (
        {title: figure_png(fig) for title, fig in figures.items()},
        {title: figure_png(fig) for title, fig in weather_figures.items()},
    )


def write_screen_map(path: Path, **map_arguments) -> None:
    """Write map.html of a screening run: the page is rendered whole, then written.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    **map_arguments
        The keyword arguments of :func:`siting.presentation.webmap.render_screen_map`.

    Raises
    ------
    InputError, AssetError
        As the renderer raises them; the page is rendered before the file is opened, so a
        refused map leaves no file.
    """
    Path(path).write_bytes(render_screen_map(**map_arguments).encode("utf-8"))


def _write_all(result, folder: Path, run_time: str, pdf: bool = True) -> None:
    """Every output of a screening run into ``folder`` (the staging folder): rasters, tables,
    the packed inputs, map.html, report.html, report.pdf (``pdf``, when WeasyPrint loads) and,
    last, run.json with every output hashed. What is shown or written names the files without
    the machine's folders (:func:`siting.output.portable.portable_record`)."""
    import geopandas as gpd

    make_pdf = _pdf_warning(result, pdf)  # first, so that every output lists the warning

    grid, sites = result.grid, result.sites
    _write_rasters(result, folder)
    table = _write_tables(result, folder)
    record = run_record(result, run_time)
    options_table = None
    if result.options is not None:
        record["options"], options_table = write_option_files(result, folder, list(table.columns))
    record["package"] = package_inputs(result, folder)
    sources_gdf = gpd.GeoDataFrame(
        result.sources.copy(), geometry=result.source_geometries, crs=result.scenario.crs
    )
    contours = _contour_levels(sites)
    context = read_map_context(result.scenario)
    # sites, sources, footprints, receptors, the map's contour lines and the holding, styled
    write_results_gpkg(folder / "results.gpkg", result, table, contours, context, run_time)
    write_screen_map(
        folder / "map.html",
        title=result.scenario.title,
        crs=result.scenario.crs,
        west_m=grid.west_m,
        north_m=grid.north_m,
        cell_m=grid.cell_m,
        deposition_kg_n_ha_yr=result.fields["pc_dep_kg_n_ha_yr"],
        sites=sites,
        sources=sources_gdf,
        contours=contours,
        cautions=result.cautions,
        version=__version__,
        run_time=run_time,
        option_deposition=None
        if result.options is None
        else {n: r.fields["pc_dep_kg_n_ha_yr"] for n, r in result.options.runs.items()},
        tables=result.tables,
        context=context,
    )
    figures, weather_figures = _report_figures(result, sources_gdf, contours)
    shown = portable_record(record, result)  # the record as run.json will name its files
    page = write_report(
        folder / "report.html",
        title=result.scenario.title,
        version=__version__,
        run_time=run_time,
        scenario_file=str(shown["parameters"].get("path") or result.scenario.name),
        sites=table,
        sources=result.sources,
        weather_summary=result.weather_summary,
        habitat_values=_habitat_values(sites),
        warnings=result.warnings,
        cautions=result.cautions,
        method_notes=METHOD_NOTES,
        run_record=shown,
        figures=figures,
        weather_figures=weather_figures,
        cautious_choices=cautious_choices(result),
        sensitivity_summary=result.sensitivity_summary,
        options=options_table,
        what_it_takes=result.what_it_takes,
    )
    if make_pdf:  # laid out from the page just written, and hashed with the other outputs
        write_report_pdf(folder / "report.pdf", page)
    # last: every output the run wrote, hashed, so `siting verify` can tell an edited,
    # truncated or deleted one (run.json itself, the marker and the packed inputs aside)
    record["outputs"] = output_hashes(folder)
    # the values of the TOML inputs and tables as read, so verify can say which key changed
    # (after the report, whose run record section they would only lengthen)
    record["toml_values"] = recorded_toml_values(record["inputs"], record["config_tables"])
    record = portable_record(record, result)  # no folder of the machine in run.json
    (folder / "run.json").write_text(json.dumps(record, indent=2, default=str), encoding="utf-8")


def estimate_screen_bytes(scenario) -> int:
    """A generous estimate of a screening run's output folder [bytes], known before any work.

    Three float32 GeoTIFFs and the map's image of the grid, and a difference GeoTIFF and a map
    image per option (uncompressed, 4 bytes a cell), and four times the inputs (their packaged
    copy, and the habitat sites again in results.gpkg, the map and the report).

    Parameters
    ----------
    scenario : Scenario
        The scenario (its sources, grid and input files).

    Returns
    -------
    int
        [bytes].
    """

    grid = grid_around(
        *scenario.layout_points,
        scenario.grid.margin_m,
        scenario.grid.spacing_m,
        scenario.crs,
    )
    inputs = 0
    for path in input_paths(scenario):
        try:
            inputs += Path(path).stat().st_size
        except (OSError, TypeError):
            continue
    rasters = 4 + 2 * len(scenario.options)  # + a difference and a map image per option
    return 4 * rasters * grid.size + 4 * inputs


def write_outputs(result, out_dir: Path, overwrite: bool = False, pdf: bool = True) -> Path:
    """Write every output of a screening run atomically into ``out_dir``; returns it.

    The files of ``siting screen``: sites.csv and results.gpkg, receptors.csv, sources.csv,
    sensitivity.csv, the GeoTIFFs, report.html, report.pdf, map.html, run.json and the packed
    inputs/, written into a staging folder and moved into place when complete
    (:func:`siting.output.folder.staged_folder`).

    Parameters
    ----------
    result : ScreenResult
        From :func:`siting.runs.screening.screen`.
    out_dir : str or Path
        The output folder.
    overwrite : bool
        Replace an existing output folder of siting.
    pdf : bool
        Write report.pdf beside report.html (default; it adds a few seconds). Where WeasyPrint
        cannot be loaded (no Pango library) the rest is written and one AccuracyWarning says
        what is missing; the warning is added to ``result.warnings`` too, so the report,
        run.json and a summary printed afterwards list it.

    Returns
    -------
    Path
        ``out_dir``, absolute.

    Raises
    ------
    OutputExistsError
        ``out_dir`` exists without ``overwrite``, is not a folder siting wrote, holds an input,
        is being written by another run, or its parent cannot be written or lacks the room.
    InterruptedAfterWriting
        Interrupted after the new folder was in place (the result is whole).
    """
    out_dir = Path(out_dir).resolve()
    check_output_dir(
        out_dir,
        overwrite,
        input_paths(result.scenario),
        need_bytes=estimate_screen_bytes(result.scenario),
    )
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    with staged_folder(out_dir, overwrite) as staging:
        _write_all(result, staging, run_time, pdf=pdf)
    return out_dir
