"""CSV tables that a spreadsheet opens safely.

A text cell that would begin with = + - @ (a site name, say) is written with a leading
apostrophe, so a spreadsheet shows it as text and never evaluates it as a formula; numbers and
coordinates are written as they are.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from siting.readers.csv_cells import spreadsheet_safe

COORDINATE_COLUMNS = ("x", "y", "x_m", "y_m")


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    """CSV with 6 significant figures, except coordinates, which keep centimetres.

    Text cells are made spreadsheet-safe (:func:`spreadsheet_safe`).

    Parameters
    ----------
    frame : pandas.DataFrame
        The table.
    path : Path
        The file to write.
    """
    out = frame.copy()
    for col in out.columns:
        if pd.api.types.is_object_dtype(out[col]) or pd.api.types.is_string_dtype(out[col]):
            out[col] = out[col].map(spreadsheet_safe)
    for col in COORDINATE_COLUMNS:
        if col in out.columns:
            out[col] = out[col].map(lambda v: f"{v:.2f}")
    out.to_csv(path, index=False, float_format="%.6g")
