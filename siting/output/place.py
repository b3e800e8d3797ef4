"""Writing a placement search's outputs: suitability.tif, positions.csv, run.json, map.html.

An adapter: everything goes through outputs.staged_folder, so a failed run leaves nothing
half-written and an existing folder is replaced only with ``overwrite``. No physics here.
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path

from siting._version import __version__
from siting.output.folder import check_output_dir, staged_folder
from siting.output.geotiff import write_geotiff
from siting.output.portable import portable_record
from siting.output.records import output_hashes, package_inputs, run_record_base
from siting.output.tables import write_csv
from siting.presentation.place_report import render_place_report
from siting.presentation.webmap_place import render_place_map
from siting.readers.map_context import read_map_context, source_footprints
from siting.readers.tables import default_reduction_percent

#: How many of the best positions the map marks.
TOP_POSITIONS = 10


def write_place_map(path: Path, **map_arguments) -> None:
    """Write the placement map (map.html of ``siting place``): the page is rendered whole, then written.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    **map_arguments
        The keyword arguments of :func:`siting.presentation.webmap_place.render_place_map`.

    Raises
    ------
    InputError, AssetError
        As the renderer raises them; the page is rendered before the file is opened, so a
        refused map leaves no file.
    """
    Path(path).write_bytes(render_place_map(**map_arguments).encode("utf-8"))


def write_place_outputs(
    result, out_dir: Path, overwrite: bool = False, top: int = TOP_POSITIONS
) -> Path:
    """Write the placement outputs atomically into ``out_dir``; returns it.

    Files: suitability.tif, positions.csv, position_ways.csv (the best positions' ways side by
    side), report.html, run.json and map.html, written into a staging folder
    and moved into place when complete (:func:`siting.output.folder.staged_folder`).

    Parameters
    ----------
    result : PlaceResult
        From :func:`siting.runs.placing.place`.
    out_dir : str or Path
        The output folder.
    overwrite : bool
        Replace an existing output folder of siting.
    top : int
        Best positions shown on the map.

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
    import geopandas as gpd
    import shapely

    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite)
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    prep = result.prepared
    scenario = prep.scenario
    with staged_folder(out_dir, overwrite) as staging:
        write_geotiff(
            staging / "suitability.tif",
            result.grid,
            result.suitability_pct_load,
            f"worst process contribution of house {result.house_id} over all habitat "
            "sites as % of critical load, by house position (screening estimate)",
            "% of critical load",
        )
        write_csv(result.positions, staging / "positions.csv")
        write_csv(result.side_by_side, staging / "position_ways.csv")
        (staging / "report.html").write_text(
            render_place_report(
                title=f"{scenario.title}: where could {result.house_id} go?",
                version=__version__,
                run_time=run_time,
                house=result.house_id,
                rules=prep.rules.id,
                positions=result.positions,
                side_by_side=result.side_by_side,
                cautions=list(prep.cautions),
                warnings=list(result.warnings),
                top=top,
            ),
            encoding="utf-8",
        )
        record = run_record_base(prep, run_time, holding=True)
        record.update(
            {
                "command": "place",
                "house": result.house_id,
                "holding": {
                    "spacing_m": result.grid.cell_m,
                    "positions": len(result.positions),
                    "allowed_area_ha": result.allowed_area.area / 1e4,
                    "holding_area_ha": result.holding.area / 1e4,
                },
                "abatement_options": {
                    o["id"]: default_reduction_percent(o) for o in result.options
                },
                "timings_s": result.timings_s,
                "warnings": result.warnings,
            }
        )
        ranked = result.positions  # the map numbers `top` distinct ones of them
        write_place_map(
            staging / "map.html",
            title=f"{scenario.title}: where could {result.house_id} go?",
            crs=scenario.crs,
            west_m=result.grid.west_m,
            north_m=result.grid.north_m,
            cell_m=result.grid.cell_m,
            share_of_threshold=result.share_of_threshold,
            cheapest_cost_eur_yr=result.cheapest_cost,
            side_by_side=result.side_by_side,
            allowed_area=gpd.GeoDataFrame(geometry=[result.allowed_area], crs=scenario.crs),
            holding=gpd.GeoDataFrame(geometry=[result.holding], crs=scenario.crs),
            positions=gpd.GeoDataFrame(
                ranked.copy(), geometry=shapely.points(ranked["x"], ranked["y"]), crs=scenario.crs
            ),
            sites=prep.sites,
            cautions=list(prep.cautions),
            version=__version__,
            run_time=run_time,
            top=top,
            sources=source_footprints(scenario, prep.sources, leave_out=result.house_id),
            context=read_map_context(scenario),
            tables=prep.tables,
        )
        record["package"] = package_inputs(prep, staging)
        record = portable_record(record, prep)  # no folder of the machine in run.json
        record["outputs"] = output_hashes(staging)  # every file above, hashed
        (staging / "run.json").write_text(
            json.dumps(record, indent=2, default=str), encoding="utf-8"
        )
    return out_dir
