"""The sensitivity section of verify.html: each site's range over the variants, and every run.

Split from :mod:`siting.presentation.verify_report` (which lays out the whole page): the
sensitivity analysis of ``siting verify`` arrives as two tables (one row per site and variant,
and one per site) and leaves as the values the template ``verify.html`` shows, each site
whose verdict flips marked. Text is escaped by the template.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from siting.presentation.formats import format_number, format_percent, is_missing
from siting.presentation.html_parts import is_number, text
from siting.presentation.html_parts import verdict as verdict_view

#: Name of the central (unvaried) run in the sensitivity tables.
_CENTRAL = "central"


def _sites(count: int) -> str:
    """``"1 site"``, ``"3 sites"``."""
    return f"{count} site{'' if count == 1 else 's'}"


def _percent_text(value: Any, decimals: int | None = None) -> str:
    """A percentage without the sign: 2 decimals below 100 %, 1 from there (or `decimals`)."""
    if not is_number(value):
        return format_number(value)
    number = float(value)
    if not np.isfinite(number):
        return format_number(number)
    if decimals is None:
        decimals = 2 if abs(number) < 100.0 else 1
    return format_percent(number, decimals)


def _truthy(value: Any) -> bool:
    """A flag from a table cell: True, 1, "true", "yes" are true; missing is false."""
    if is_missing(value):
        return False
    if isinstance(value, str):
        return value.strip().lower() in {"true", "yes", "1", "y"}
    return bool(value)


def flipping_sites(summary: pd.DataFrame) -> list[str]:
    """Names of the sites whose verdict flips in some variant.

    Parameters
    ----------
    summary : pandas.DataFrame or None
        The sensitivity summary (``site``, ``verdict_flips``).

    Returns
    -------
    list of str
        The sites, in the summary's order.
    """
    if summary is None or not len(summary) or "verdict_flips" not in summary:
        return []
    return [
        str(row.get("site")) for _, row in summary.iterrows() if _truthy(row.get("verdict_flips"))
    ]


def _range_text(low: Any, high: Any) -> str:
    """``"0.84 – 1.12"`` (2 decimals below 100 %)."""
    return f"{_percent_text(low)} – {_percent_text(high)}"


def _summary_rows(summary: pd.DataFrame) -> list[tuple]:
    """Per site: whether its verdict flips and under which variants (None when not given), the
    site, its central verdict and % of critical load, and the two ranges over the variants."""
    rows = []
    for _, row in summary.iterrows():
        variants = row.get("flipping_variants")
        rows.append(
            (
                _truthy(row.get("verdict_flips")),
                None if is_missing(variants) else text(variants),
                text(row.get("site")),
                verdict_view(row.get("central_verdict")),
                _percent_text(row.get("central_pct_load")),
                _range_text(row.get("min_pct_load"), row.get("max_pct_load")),
                _range_text(row.get("min_pct_level"), row.get("max_pct_level")),
            )
        )
    return rows


def _variant_groups(sensitivity: pd.DataFrame) -> list[tuple[str, list[tuple]]]:
    """Every (site, variant) run, grouped by site: (row class, variant, % of load, % of level,
    verdict); a row whose verdict differs from the site's central verdict has the class
    ``flips``, the central run ``central``."""
    groups = []
    for site, group in sensitivity.groupby("site", sort=False, dropna=False):
        central = [
            r["verdict"] for _, r in group.iterrows()
            if str(r["variant"]).strip().lower() == _CENTRAL
        ]  # fmt: skip
        central_verdict = None if not central else str(central[0]).strip().lower()
        rows = []
        for _, r in group.iterrows():
            is_central = str(r["variant"]).strip().lower() == _CENTRAL
            shown = "" if is_missing(r["verdict"]) else str(r["verdict"]).strip().lower()
            flips = central_verdict is not None and not is_central and shown != central_verdict
            css = "flips" if flips else ("central" if is_central else "")
            rows.append((css, text(r["variant"]), _percent_text(r["pct_load"]),
                         _percent_text(r["pct_level"]), verdict_view(r["verdict"])))  # fmt: skip
        groups.append((text(site), rows))
    return groups


def sensitivity_view(sensitivity: pd.DataFrame, summary: pd.DataFrame) -> dict[str, Any] | None:
    """The sensitivity section: the per-site summary (with its lead sentence), then every
    variant by site; None when no sensitivity analysis was run.

    Parameters
    ----------
    sensitivity : pandas.DataFrame
        One row per (site, variant): site, variant, pct_load, pct_level, verdict [%].
    summary : pandas.DataFrame
        One row per site: central_pct_load, min/max_pct_load and _level [%], central_verdict,
        verdict_flips, flipping_variants.

    Returns
    -------
    dict or None
        ``lead``, ``rows`` (the summary) and ``groups`` (every variant by site).
    """
    has_summary = summary is not None and len(summary)
    has_long = sensitivity is not None and len(sensitivity)
    if not has_summary and not has_long:
        return None
    lead, rows = None, None
    if has_summary:
        flips = flipping_sites(summary)
        lead = (
            f"The verdict flips for {len(flips)} of {_sites(len(summary))}: "
            + ", ".join(flips)
            + "."
            if flips
            else f"The verdict holds across every variant for all {_sites(len(summary))}."
        )
        rows = _summary_rows(summary)
    return {
        "lead": lead,
        "rows": rows,
        "groups": _variant_groups(sensitivity) if has_long else None,
    }
