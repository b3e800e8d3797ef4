"""Presentation helpers shared by the report, the map and the figures.

Number formatting (:func:`format_number`, and :func:`format_for_column`, which picks the precision
from the unit suffix of a column name), the test for a missing value, the colour of each verdict,
and the logarithmic deposition classes with their colour map. :mod:`siting.presentation.report`,
:mod:`siting.presentation.webmap` and :mod:`siting.presentation.figures` all use them, so a number
or a colour reads the same in report.html, map.html and the figures. No physics lives here, and
nothing is drawn or written: these functions return text, class edges and colours. HTML escaping,
page layout and plotting belong to the modules that use them."""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from siting.errors import InputError

__all__ = [
    "PACKAGE_MARK",
    "shown_path",
    "DEPOSITION_COLORMAP",
    "MISSING_TEXT",
    "VERDICT_COLOURS",
    "verdict_classes",
    "deposition_class_colours",
    "deposition_class_edges",
    "format_for_column",
    "format_number",
    "format_percent",
    "is_missing",
]

#: Perceptually uniform matplotlib colour map used for the deposition classes (map and report).
DEPOSITION_COLORMAP = "cividis"

#: Colour of each class of verdict (map outlines, report figure points); our own choice. A
#: rule set words its verdicts its own way; what colours them is whether they pass.
VERDICT_COLOURS = {
    "passes": "#2f6fad",
    "does not pass": "#c2543a",
    "not assessed": "#8a8a8a",
}
#: The class of the verdict words of tables written before rule sets (no ``passes`` column).
_OLD_VERDICT_CLASSES = {"below threshold": "passes", "above threshold": "does not pass"}


def verdict_classes(frame: Any) -> list[str]:
    """Each site's class of verdict, a key of VERDICT_COLOURS: from its ``passes`` column, or
    for a table without one (written before rule sets) from the verdict words.

    Parameters
    ----------
    frame : pandas.DataFrame
        A sites table with ``verdict`` (and ``passes``, ``assessed`` when present).

    Returns
    -------
    list of str
    """
    n = len(frame)
    verdicts = list(frame["verdict"]) if "verdict" in frame else [None] * n
    assessed = list(frame["assessed"]) if "assessed" in frame else [True] * n
    passes = list(frame["passes"]) if "passes" in frame else [None] * n
    out = []
    for verdict, judged, ok in zip(verdicts, assessed, passes):
        if is_missing(verdict) or str(verdict).strip().lower() == "not assessed" or judged is False:
            out.append("not assessed")
        elif ok is None or is_missing(ok):
            out.append(_OLD_VERDICT_CLASSES.get(str(verdict).strip().lower(), "not assessed"))
        else:
            out.append("passes" if str(ok).strip().lower() in ("true", "1") else "does not pass")
    return out


#: The 1-3-10 series of class edges [kg N ha-1 yr-1] from which the shown classes are picked.
_CLASS_EDGE_SERIES_KG_N_HA_YR = tuple(
    float(f"{mantissa}e{exponent}") for exponent in range(-5, 5) for mantissa in (1, 3)
)

#: Shown for a missing value (None, NaN, blank) wherever a number or text would be.
MISSING_TEXT = "n/a"

#: Column names holding projected coordinates [m]: 0.1 m, no thousands grouping.
_COORDINATE_COLUMNS = frozenset(
    {"x", "y", "x_m", "y_m", "west_m", "east_m", "north_m", "south_m", "easting_m", "northing_m"}
)

#: Column names holding counts: whole numbers.
_COUNT_COLUMNS = frozenset({"places", "rows", "sectors", "n_cols", "n_rows", "receptors"})


def is_missing(value: Any) -> bool:
    """True for None, NaN, pandas NA/NaT and blank strings; False for anything else.

    Parameters
    ----------
    value : any
        A table cell or other value; list-like values count as present.

    Returns
    -------
    missing : bool
    """
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    if np.ndim(value) != 0:
        return False
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def format_number(value: Any, unit: str = "", significant_digits: int = 3) -> str:
    """A number as short readable text with a fixed count of significant digits.

    Parameters
    ----------
    value : float, int, str or None
        The value; None, NaN and blank strings become ``"n/a"``; strings are returned unchanged
        (not escaped: callers escape).
    unit : str, optional
        Appended after a space when given, e.g. ``"kg N/ha/yr"``.
    significant_digits : int, optional
        Significant digits shown [-], >= 1. Values >= 10**significant_digits show as integers.

    Returns
    -------
    text : str
        E.g. ``"0.0123 kg N/ha/yr"``, ``"1230"``, ``"4.56e-06"`` (below 1e-4 in scientific
        notation to stay short).
    """
    if is_missing(value):
        return MISSING_TEXT
    if isinstance(value, str):
        return value
    if isinstance(value, (bool, np.bool_)):
        text = "yes" if value else "no"
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            return str(value)
        if math.isinf(number):
            text = "∞" if number > 0 else "−∞"
        elif number == 0.0:
            text = "0"
        elif abs(number) < 1e-4:
            text = f"{number:.{max(significant_digits - 1, 0)}e}"
        else:
            text = np.format_float_positional(
                number, precision=significant_digits, unique=False, fractional=False, trim="-"
            )
    return f"{text} {unit}" if unit else text


def format_for_column(value: Any, column: str) -> str:
    """A value as text, formatted by what its column measures, read from the column name.

    The unit suffix of the name (``_m``, ``_g_s``, ``_kg_yr``, ``_percent``, ...) picks the
    precision, so a value reads the same in every table of the report:

    ======================================================  ===================================
    column name                                             shown as
    ======================================================  ===================================
    coordinates: ``x``, ``y``, ``x_m``, ``y_m``,            0.1 m, no grouping: ``500123.4``
    ``west_m``, ``north_m``, ...
    counts: ``places``, ``rows``, ``n_cols``, ...           whole number: ``2400``
    percentages: ``*_percent``, ``*_pct``, ``*_pct_*``      1 decimal: ``5.1`` (a small non-zero
                                                            value keeps 1 significant digit:
                                                            ``0.04``)
    ``*_g_s``                                               4 significant digits: ``0.02141``
    ``*_kg_yr``, ``*_m3_yr``, ``*_per_place_yr``, ``*_m``   4 significant digits, whole numbers
                                                            from 1000: ``675.1``, ``6751``
    anything else (``*_ug_m3``, ``*_kg_n_ha_yr``, ...)      3 significant digits: ``0.0512``
    ======================================================  ===================================

    Other integer values (Python or numpy ints) show in full. Missing values, strings and
    booleans are handled as in :func:`format_number`.

    Parameters
    ----------
    value : float, int, str or None
        The value, in the unit its column name says.
    column : str
        Column or key name carrying the unit suffix, e.g. ``"emission_g_s"``.

    Returns
    -------
    text : str
        The formatted value without a unit (the header carries it).
    """
    if is_missing(value) or isinstance(value, (str, bool, np.bool_)):
        return format_number(value)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(number):
        return format_number(number)
    name = str(column).strip().lower()
    if name in _COORDINATE_COLUMNS or name.endswith(("_x_m", "_y_m")):
        return f"{number:.1f}"
    if name.endswith(("_percent", "_pct")) or "_pct_" in name or name.startswith("pct_"):
        return format_percent(number)
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if name in _COUNT_COLUMNS or name.endswith(("_places", "_count")):
        return f"{round(number):d}"
    if name.endswith("_g_s"):
        return format_number(number, significant_digits=4)
    if name.endswith(("_kg_yr", "_m3_yr", "_per_place_yr", "_m")):
        if abs(number) >= 1000.0:
            return f"{round(number):d}"
        return format_number(number, significant_digits=4)
    return format_number(number)


def format_percent(percent: float, decimals: int = 1) -> str:
    """A percentage as text with a fixed count of decimals, never showing a small one as 0.

    Parameters
    ----------
    percent : float
        The percentage [%].
    decimals : int, optional
        Decimals shown [-], >= 0.

    Returns
    -------
    text : str
        ``percent`` to ``decimals`` decimals, without the ``%`` sign; a non-zero value that would
        show as 0 keeps one significant digit instead (0.042 -> ``"0.04"``), so a small
        contribution never reads as none.
    """
    text = f"{percent:.{decimals}f}"
    if percent != 0.0 and float(text) == 0.0:
        return format_number(percent, significant_digits=1)
    return text


def deposition_class_edges(deposition_kg_n_ha_yr: np.ndarray, max_classes: int = 7) -> np.ndarray:
    """Log-spaced class edges [kg N ha-1 yr-1] adapted to the range of a deposition grid.

    The edges come from the 1-3-10 series (..., 0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30, ...). The top
    edge is the first series value above the largest finite value; the classes reach down
    ``max_classes`` steps from there (about three and a half decades), and values below the
    lowest edge are not coloured.

    Parameters
    ----------
    deposition_kg_n_ha_yr : ndarray
        Deposition values [kg N ha-1 yr-1]; NaN ignored.
    max_classes : int, optional
        Number of classes (edges minus one), >= 1.

    Returns
    -------
    edges_kg_n_ha_yr : ndarray
        Increasing class edges [kg N ha-1 yr-1], ``max_classes + 1`` of them. When the grid has
        no positive finite value the default edges 0.01 ... 30 are returned for 7 classes.
    """
    if max_classes < 1:
        raise InputError(f"deposition classes: max_classes must be >= 1, got {max_classes}")
    series = np.asarray(_CLASS_EDGE_SERIES_KG_N_HA_YR)
    values = np.asarray(deposition_kg_n_ha_yr, dtype=float)
    finite = values[np.isfinite(values) & (values > 0.0)]
    if finite.size == 0:
        top_index = int(np.searchsorted(series, 30.0))
    else:
        top_index = int(np.searchsorted(series, float(finite.max()), side="right"))
        top_index = min(top_index, series.size - 1)
    top_index = max(top_index, max_classes)
    return series[top_index - max_classes : top_index + 1].copy()


def deposition_class_colours(n_classes: int) -> list[str]:
    """Hex colours of ``n_classes`` deposition classes, low to high, from DEPOSITION_COLORMAP.

    Parameters
    ----------
    n_classes : int
        Number of classes, >= 1.

    Returns
    -------
    colours : list of str
        ``"#rrggbb"`` strings sampled evenly along the colour map.
    """
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    cmap = colormaps[DEPOSITION_COLORMAP]
    positions = np.linspace(0.0, 1.0, n_classes) if n_classes > 1 else np.array([0.5])
    return [to_hex(cmap(float(p))) for p in positions]


def most_affected_order(sites: pd.DataFrame) -> np.ndarray:
    """Row positions of the sites, the highest PC as a share of the screening threshold first.

    Parameters
    ----------
    sites : DataFrame
        One row per site. The share is the larger of ``pc_pct_level`` and ``pc_pct_load`` [%]
        (the one the verdict compares, :func:`siting.physics.assess.verdict`) over
        ``threshold_percent`` [%]; a missing share half is ignored. Without a threshold column
        the larger % itself ranks, and without any of the columns ``pc_dep_max_kg_n_ha_yr``.

    Returns
    -------
    order : ndarray of int, shape (n_sites,)
        Positions (for ``iloc``), most affected first; sites with no figure (not assessed)
        last; ties keep the layer's order.
    """
    n = len(sites)

    def column(name: str) -> np.ndarray:
        if name not in sites:
            return np.full(n, np.nan)
        return np.asarray(pd.to_numeric(sites[name], errors="coerce"), dtype=float)

    with np.errstate(invalid="ignore", divide="ignore"):
        worst_percent = np.fmax(column("pc_pct_level"), column("pc_pct_load"))
        if "threshold_percent" in sites:
            threshold = column("threshold_percent")
            score = np.where(threshold > 0, worst_percent / threshold, worst_percent)
        else:
            score = worst_percent
        if np.isnan(score).all():
            score = column("pc_dep_max_kg_n_ha_yr")
    score = np.where(np.isnan(score), -np.inf, score)
    return np.argsort(-score, kind="stable")


#: How a file inside the installed siting package is shown: ``siting/config/...``, as the
#: screening run's record names siting's bundled files.
PACKAGE_MARK = "siting"

#: The package's own folder (bundled config tables, rule sets and demo data live below it).
_PACKAGE = Path(__file__).resolve().parents[1]


def shown_path(path: Any, out_dir: str | Path) -> str:
    """A file's path as the report shows it: never absolute.

    Parameters
    ----------
    path : str or Path
        The file (absolute or relative to the working folder).
    out_dir : str or Path
        The output folder the report is written to.

    Returns
    -------
    str
        ``siting/<path below the package>`` for a file of the installed package; else the path
        relative to ``out_dir`` (POSIX separators) where the two share a folder below the root of
        the file system; else the file's name alone.
    """
    file = Path(os.path.abspath(path))
    out = Path(os.path.abspath(out_dir))
    if file.is_relative_to(_PACKAGE):
        return f"{PACKAGE_MARK}/{file.relative_to(_PACKAGE).as_posix()}"
    try:
        common = Path(os.path.commonpath([file, out]))
    except ValueError:  # another drive
        return file.name
    if common == Path(common.anchor):
        return file.name
    return Path(os.path.relpath(file, out)).as_posix()
