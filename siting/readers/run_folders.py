"""Reading the output folders of separate ``siting screen`` runs for ``siting compare``.

Each folder is one run: its sites table (sites.csv, text cells read back as written by
siting.output.tables) and, where readable, the version its run record (run.json) names. The
rasters are read by the run (this layer reads no raster).
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from siting.errors import InputError
from siting.readers.csv_cells import spreadsheet_text

#: The files every compared run folder must hold.
RUN_FOLDER_FILES = ("sites.csv", "deposition.tif")


def check_run_folder(folder: Path) -> Path:
    """A run folder checked to hold sites.csv and deposition.tif; returns it, absolute.

    Parameters
    ----------
    folder : str or Path
        An output folder of ``siting screen``.

    Returns
    -------
    Path
        The folder, resolved.

    Raises
    ------
    InputError
        The folder does not exist or lacks sites.csv or deposition.tif.
    """
    folder = Path(folder).resolve()
    if not folder.is_dir():
        raise InputError(f"{folder}: not a folder (a run folder written by siting screen)")
    missing = [name for name in RUN_FOLDER_FILES if not (folder / name).is_file()]
    if missing:
        raise InputError(
            f"{folder}: holds no {' and no '.join(missing)}; compare needs the output folder "
            "of a screening run (sites.csv and deposition.tif)"
        )
    return folder


def read_run_sites(folder: Path) -> pd.DataFrame:
    """The sites table of one run folder (sites.csv), text cells as they were before writing.

    Parameters
    ----------
    folder : Path
        An output folder of ``siting screen``.

    Returns
    -------
    pandas.DataFrame
        The table, columns in the file's order; ``site_id`` and ``name`` read as text.

    Raises
    ------
    InputError
        sites.csv cannot be read as CSV or has no ``name`` column.
    """
    path = Path(folder) / "sites.csv"
    try:
        table = pd.read_csv(path, dtype={"site_id": str, "name": str})
    except Exception as exc:  # pandas raises many types
        raise InputError(f"{path}: cannot be read as CSV: {exc}") from exc
    if "name" not in table.columns:
        raise InputError(f"{path}: has no name column (not a sites table of siting screen)")
    for col in table.columns:  # text made spreadsheet-safe by write_csv, read back
        if pd.api.types.is_object_dtype(table[col]) or pd.api.types.is_string_dtype(table[col]):
            table[col] = table[col].map(spreadsheet_text)
    return table


def run_folder_version(folder: Path) -> str | None:
    """The siting version a run folder's run.json names, None when it has none.

    Parameters
    ----------
    folder : Path
        An output folder of ``siting screen``.

    Returns
    -------
    str or None
        The version, or None (no run.json, unreadable, or no version in it).
    """
    try:
        record = json.loads((Path(folder) / "run.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    version = record.get("version") if isinstance(record, dict) else None
    return str(version) if version is not None else None
