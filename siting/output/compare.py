"""The files of ``siting compare``: comparison.csv, difference_<run>.tif and run.json.

Written into a staging folder and moved into place when whole (siting.output.folder).
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path

from siting._version import __version__
from siting.output.folder import check_output_dir, staged_folder
from siting.output.geotiff import write_geotiff
from siting.output.records import output_hashes
from siting.output.tables import write_csv


def difference_file_name(stem: str) -> str:
    """The file a later run's deposition difference is written to.

    Parameters
    ----------
    stem : str
        The run's file stem (already made safe by the run).

    Returns
    -------
    str
        ``difference_<stem>.tif``.
    """
    return f"difference_{stem}.tif"


def compare_record(result, run_time: str) -> dict:
    """What a comparison's run.json holds: the runs compared and their hashes, the grid, cautions.

    Parameters
    ----------
    result : CompareResult
        From :func:`siting.runs.comparing.compare`.
    run_time : str
        Time of the run, ISO 8601 UTC.

    Returns
    -------
    dict
        The run record, ready for JSON (the output hashes are added when the folder is done).
    """
    grid = result.grid
    return {
        "tool": "siting",
        "command": "compare",
        "version": __version__,
        "run_time_utc": run_time,
        "runs": [
            {
                "name": name,
                "folder": str(folder),
                "version": version,
                "difference_file": None if i == 0 else difference_file_name(stem),
                **hashes,
            }
            for i, (name, stem, folder, version, hashes) in enumerate(
                zip(
                    result.run_names,
                    result.file_stems,
                    result.folders,
                    result.versions,
                    result.hashes,
                )
            )
        ],
        "reference_run": result.run_names[0],
        "grid": {
            "west_m": grid.west_m,
            "north_m": grid.north_m,
            "cell_m": grid.cell_m,
            "n_cols": grid.n_cols,
            "n_rows": grid.n_rows,
            "crs": grid.crs,
        },
        "cautions": list(result.cautions),
        "warnings": list(result.warnings),
    }


def write_compare_outputs(result, out_dir: Path, overwrite: bool = False) -> Path:
    """Write a comparison's outputs atomically into ``out_dir``; returns it.

    Files: comparison.csv (spreadsheet-safe text cells), one difference_<run>.tif per run
    after the first (float32, the runs' grid, nodata where either run has none, kg N/ha/yr)
    and run.json, written into a staging folder and moved into place when complete
    (:func:`siting.output.folder.staged_folder`).

    Parameters
    ----------
    result : CompareResult
        From :func:`siting.runs.comparing.compare`.
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
        ``out_dir`` exists without ``overwrite``, is not a folder siting wrote, holds a run
        folder, is being written by another run, or its parent cannot be written.
    InterruptedAfterWriting
        Interrupted after the new folder was in place (the result is whole).
    """
    out_dir = Path(out_dir).resolve()
    need = 4 * result.grid.size * len(result.differences)
    check_output_dir(out_dir, overwrite, result.folders, need_bytes=need)
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    reference = result.run_names[0]
    with staged_folder(out_dir, overwrite, need_bytes=need) as staging:
        write_csv(result.table, staging / "comparison.csv")
        for name, stem in zip(result.run_names[1:], result.file_stems[1:]):
            write_geotiff(
                staging / difference_file_name(stem),
                result.grid,
                result.differences[stem],
                f"dry deposition of N from NH3, process contribution: run {name} minus run "
                f"{reference} (screening estimate)",
                "kg N/ha/yr",
            )
        record = compare_record(result, run_time)
        record["outputs"] = output_hashes(staging)
        (staging / "run.json").write_text(
            json.dumps(record, indent=2, default=str), encoding="utf-8"
        )
    return out_dir
