"""Step 2 of ``siting verify``: the submitted figures against the re-run's, at a stated tolerance.

:func:`compare_figures` gives one row per site or receptor figure (and verdict) that differs
beyond the tolerance (``TOLERANCE_TEXT``), and per site present in one table only.
"""

from __future__ import annotations

import math

import pandas as pd

from siting.readers.submission import Submission

#: Site figures compared between the submission and the re-run.
SITE_FIGURES = [
    "critical_level_ug_m3",
    "critical_load_used_kg_n_ha_yr",
    "threshold_percent",
    "pc_conc_max_ug_m3",
    "pc_dep_max_kg_n_ha_yr",
    "pc_pct_level",
    "pc_pct_load",
    "net_conc_max_ug_m3",
    "net_dep_max_kg_n_ha_yr",
    "incomb_conc_max_ug_m3",
    "incomb_dep_max_kg_n_ha_yr",
    "pec_dep_kg_n_ha_yr",
]
RECEPTOR_FIGURES = ["conc_ug_m3", "dep_kg_n_ha_yr"]
RELATIVE_TOLERANCE = 1e-3
ABSOLUTE_TOLERANCE = 1e-9
TOLERANCE_TEXT = (
    "Figures agree when they differ by at most 0.1 % (relative) or 1e-9 (absolute). The tables "
    "are written to 6 significant figures (rounding below 5e-6 relative), so 0.1 % leaves room "
    "for differences between library versions and platforms while any edit of a reported "
    "figure at its third significant digit is caught."
)


def _differs(a, b) -> tuple[bool, float | None]:
    if isinstance(a, str) or isinstance(b, str):
        return (str(a) != str(b)), None
    a, b = float(a), float(b)
    if math.isnan(a) and math.isnan(b):
        return False, None
    if math.isnan(a) != math.isnan(b):
        return True, None
    scale = max(abs(a), abs(b))
    rel = abs(a - b) / scale if scale > 0 else 0.0
    return abs(a - b) > max(RELATIVE_TOLERANCE * scale, ABSOLUTE_TOLERANCE), rel


def compare_figures(sub: Submission, result, explanation: str) -> list[dict]:
    """Submitted vs recomputed figures: one row per figure beyond the tolerance.

    Parameters
    ----------
    sub : Submission
        The submission (its sites and receptors tables).
    result : ScreenResult
        The re-run.
    explanation : str
        What explains a difference (a changed input, a version change), copied to every row.

    Returns
    -------
    list of dict
        table, id, column, submitted, recomputed, relative_difference, explained_by.
    """
    recomputed = pd.DataFrame(result.sites.drop(columns="geometry")).set_index("name")
    submitted = sub.sites.set_index("name") if "name" in sub.sites else sub.sites
    rows = _site_rows(submitted, recomputed)
    if sub.receptors is not None and len(sub.receptors):
        rows += _receptor_rows(sub.receptors.set_index("id"), result.receptors.set_index("id"))
    for row in rows:
        row["explained_by"] = explanation
    return rows


def _row(table: str, name, column: str, submitted, recomputed, rel: float | None) -> dict:
    """One difference (``explained_by`` is added by :func:`compare_figures`)."""
    return {
        "table": table,
        "id": str(name),
        "column": column,
        "submitted": submitted,
        "recomputed": recomputed,
        "relative_difference": rel,
    }


def _site_rows(submitted: pd.DataFrame, recomputed: pd.DataFrame) -> list[dict]:
    """The sites table's differences, by name: each submitted site in order (absent from the
    re-run, or its figures and verdict beyond the tolerance), then the sites only the re-run
    has."""
    rows = []
    for name in submitted.index:
        if name not in recomputed.index:
            rows.append(_row("sites", name, "(site)", "present", "absent", None))
            continue
        for column in [*SITE_FIGURES, "verdict"]:
            if column not in submitted.columns or column not in recomputed.columns:
                continue
            a, b = submitted.at[name, column], recomputed.at[name, column]
            differs, rel = _differs(a, b)
            if differs:
                rows.append(_row("sites", name, column, a, b, rel))
    for name in recomputed.index.difference(submitted.index):
        rows.append(_row("sites", name, "(site)", "absent", "present", None))
    return rows


def _receptor_rows(submitted: pd.DataFrame, recomputed: pd.DataFrame) -> list[dict]:
    """The receptors table's differences, by id (receptors the re-run lacks are left out)."""
    rows = []
    for rid, row in submitted.iterrows():
        if rid not in recomputed.index:
            continue
        for column in RECEPTOR_FIGURES:
            differs, rel = _differs(row[column], recomputed.at[rid, column])
            if differs:
                rows.append(
                    _row("receptors", rid, column, row[column], recomputed.at[rid, column], rel)
                )
    return rows
