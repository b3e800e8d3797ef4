"""Files of a regional run (``siting region``): GeoTIFFs, tables, report.html and run.json.

Written into a staging folder and moved into place when complete (``outputs.staged_folder``).
The run itself is ``region.py``.
"""

from __future__ import annotations

import json
import platform
from dataclasses import asdict
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from siting._version import __version__
from siting.output.folder import staged_folder
from siting.output.geotiff import write_large_geotiff
from siting.output.records import output_hashes, sha256_of
from siting.output.tables import write_csv
from siting.physics.constants import deposition_kg_n_ha_yr
from siting.presentation.formats import shown_path
from siting.presentation.region_report import render_region_report, shown_warnings
from siting.presentation.webmap_region import render_region_map

if TYPE_CHECKING:  # the type only: a run's result is written, never computed, here
    from siting.runs.regional import RegionResult


SITE_COLUMNS = [
    "site_id",
    "name",
    "designation",
    "tier",
    "habitat",
    "land_cover",
    "deposition_velocity_m_s",
    "critical_level_ug_m3",
    "critical_load_used_kg_n_ha_yr",
    "incomb_conc_max_ug_m3",
    "incomb_conc_mean_ug_m3",
    "incomb_dep_max_kg_n_ha_yr",
    "incomb_dep_mean_kg_n_ha_yr",
    "incomb_pct_level",
    "incomb_pct_load",
    "max_x_m",
    "max_y_m",
    "verdict",
    "passes",
    "deciding_rule",
    "basis",
    "rules",
]
FARM_COLUMNS = [
    "farm_id",
    "kind",
    "x_m",
    "y_m",
    "release_height_m",
    "footprint_area_m2",
    "class_release_height_m",
    "class_footprint_side_m",
    "nh3_kg_yr",
    "emission_g_s",
    "emission_from",
]


def _farm_table(farms: pd.DataFrame) -> pd.DataFrame:
    out = farms.copy()
    out["class_release_height_m"] = [c.release_height_m for c in farms["release_class"]]
    out["class_footprint_side_m"] = [c.footprint_side_m for c in farms["release_class"]]
    return out[FARM_COLUMNS]


def _region_report(result: RegionResult, record: dict, out_dir: Path) -> str:
    """report.html of the run (:func:`siting.presentation.region_report.render_region_report`):
    input paths shown relative to ``out_dir``, the final folder (not the staging one)."""
    return render_region_report(
        title=f"Farms of {result.inputs.input_files['farms'].name}, all together",
        sites=None if result.sites is None else pd.DataFrame(result.sites.drop(columns="geometry")),
        contributors=result.contributors,
        farms=result.inputs.farms,
        record=record,
        cautions=result.cautions,
        warnings=result.warnings,
        out_dir=out_dir,
    )


ACCURACY_NOTE = (
    "Grid: per release class, the FFT convolution of the farms' emissions (spread bilinearly on "
    "the four surrounding cell centres) with the class's unit-source kernel, plus a near-field "
    "correction that makes every cell within {w} cells of a farm the direct sum at the farm's "
    "true position (to about 1e-14). Farther out the bilinear placement leaves an error that "
    "falls as 1/distance: at most 1.5 % at 10 cells, 0.75 % at 20, 0.4 % at 40 (measured for "
    "one farm at random sub-cell positions, point 3-10 m and volume classes, 25 and 100 m "
    "cells, against the engine at the true position; tests/test_convolution.py). FFT round-off "
    "is about 1e-15 of the field's largest value. Site figures and contributors are direct "
    "sums at the sites' own points, not read from the grid."
)


def _portable(record: dict, out_dir: Path) -> dict:
    """The record with every file's path as the report shows it (:func:`shown_path`: relative
    to the output folder, ``siting/...`` for siting's own tables), never absolute."""
    record["warnings"] = shown_warnings(record, record["warnings"], out_dir)
    for section in ("inputs", "config_tables"):
        for entry in record[section].values():
            entry["path"] = shown_path(entry["path"], out_dir)
    record["rules"]["path"] = shown_path(record["rules"]["path"], out_dir)
    return record


def region_record(result: RegionResult, run_time: str) -> dict:
    """What run.json holds: inputs, tables and rule set with SHA-256, options, grid, plan, classes.

    Parameters
    ----------
    result : RegionResult
        The regional run.
    run_time : str
        Time of the run, ISO 8601 UTC.

    Returns
    -------
    dict
        The run record, ready for JSON.
    """
    import dask
    import rasterio
    import scipy

    inputs = result.inputs
    grid = result.grid
    counts = inputs.farms["release_class"].value_counts()
    return {
        "tool": "siting",
        "command": "region",
        "version": __version__,
        "run_time_utc": run_time,
        "inputs": {
            key: {"path": str(path), "sha256": sha256_of(path)}
            for key, path in inputs.input_files.items()
        },
        "config_tables": {
            name: {"path": str(inputs.tables.folder / name), "sha256": digest}
            for name, digest in inputs.tables.files_sha256.items()
        },
        "options": {**asdict(inputs.options), "rules": inputs.rules.id},
        "rules": {
            "id": inputs.rules.id,
            "title": inputs.rules.title,
            "path": str(inputs.rules.path),
            "sha256": sha256_of(inputs.rules.path),
            "judged": "each site's all-farms total, by the set's in-combination stages only",
        },
        "crs": inputs.crs,
        "grid": {
            "west_m": grid.west_m,
            "north_m": grid.north_m,
            "cell_m": grid.cell_m,
            "n_cols": grid.n_cols,
            "n_rows": grid.n_rows,
            "crs": grid.crs,
            "deposition_velocity_m_s": inputs.grid_deposition_velocity_m_s,
            "land_cover": inputs.grid_land_cover,
        },
        "plan": {**asdict(result.plan), "peak_estimate_bytes": result.plan.peak_bytes},
        "release_classes": [
            {
                "kind": c.kind,
                "release_height_m": c.release_height_m,
                "footprint_side_m": c.footprint_side_m,
                "farms": int(counts[c]),
            }
            for c in inputs.classes
        ],
        "emission_total_nh3_kg_yr": float(inputs.farms["nh3_kg_yr"].sum()),
        "weather_summary": inputs.weather_summary,
        "accuracy": ACCURACY_NOTE.format(w=inputs.options.near_field_cells),
        "timings_s": result.timings_s,
        "warnings": result.warnings,
        "cautions": result.cautions,
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "pandas": pd.__version__,
            "dask": dask.__version__,
            "rasterio": rasterio.__version__,
        },
    }


def _region_map(result: RegionResult, run_time: str) -> str:
    """map.html of the run (:func:`siting.presentation.webmap_region.render_region_map`)."""
    grid = result.grid
    return render_region_map(
        title=f"Farms of {result.inputs.input_files['farms'].name}, all together",
        crs=result.inputs.crs,
        west_m=grid.west_m,
        north_m=grid.north_m,
        cell_m=grid.cell_m,
        deposition_kg_n_ha_yr=result.deposition_kg_n_ha_yr,
        sites=result.sites,
        farms=result.inputs.farms,
        contributors=result.contributors,
        cautions=result.cautions,
        version=__version__,
        run_time=run_time,
    )


def write_region_outputs(
    result: RegionResult, out_dir: str | Path, overwrite: bool = False
) -> Path:
    """Write deposition.tif, concentration.tif, sites.csv, contributors.csv, farms.csv,
    report.html, run.json atomically into ``out_dir``; returns it.

    Parameters
    ----------
    result : RegionResult
        From :func:`siting.runs.regional.region`.
    out_dir : str or Path
        The output folder.
    overwrite : bool
        Replace an existing output folder of siting.

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
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    grid = result.grid
    # room for two float32 rasters, uncompressed, with their overviews (a third more), before
    # any file is written (the grid is known only once the farms are read)
    need_bytes = int(2 * 4 * grid.n_rows * grid.n_cols * 4 / 3)
    with staged_folder(out_dir, overwrite, need_bytes=need_bytes) as staging:
        write_large_geotiff(
            staging / "concentration.tif",
            grid,
            result.concentration_ug_m3,
            "annual mean NH3 concentration, all farms of the layer (screening estimate)",
            "ug/m3",
        )
        scale = float(deposition_kg_n_ha_yr(1.0, result.inputs.grid_deposition_velocity_m_s))
        write_large_geotiff(
            staging / "deposition.tif",
            grid,
            result.concentration_ug_m3,
            "dry deposition of N from NH3, all farms of the layer, short "
            "vegetation velocity (screening estimate)",
            "kg N/ha/yr",
            scale,
        )
        if result.sites is not None:
            table = pd.DataFrame(result.sites[SITE_COLUMNS])
            for col in ("max_x_m", "max_y_m"):  # coordinates keep centimetres
                table[col] = table[col].map(lambda v: f"{v:.2f}")
            write_csv(table, staging / "sites.csv")
            write_csv(result.contributors, staging / "contributors.csv")
        write_csv(_farm_table(result.inputs.farms), staging / "farms.csv")
        (staging / "map.html").write_bytes(_region_map(result, run_time).encode("utf-8"))
        record = region_record(result, run_time)
        # the report shows the record so far (its version, time, inputs); hashed with the rest
        (staging / "report.html").write_text(_region_report(result, record, out_dir), "utf-8")
        record = _portable(record, out_dir)  # as the report shows them: nothing of the machine
        record["outputs"] = output_hashes(staging)  # every file above, hashed
        (staging / "run.json").write_text(
            json.dumps(record, indent=2, default=str), encoding="utf-8"
        )
    return out_dir
