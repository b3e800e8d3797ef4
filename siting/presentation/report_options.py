"""The report's side-by-side section of a run's [[option]] tables: the values its template shows.

:func:`options_view` turns options.csv's rows (one per site and option, the base first) and
what run.json records of each option into the section's two tables: the options with what
they change, and the sites with each option's verdict, share of the critical load and level,
and change against the base.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from siting.presentation.formats import MISSING_TEXT, format_number, format_percent, is_missing
from siting.presentation.html_parts import text, verdict

__all__ = ["installation_emission_kg_yr", "options_view"]

#: The base scenario's name in options.csv.
_BASE = "base"


def _signed(value: Any, unit: str) -> str:
    """A change as shown: ``+1.5 %`` or ``−0.2 kg``; ``±0`` when none; the missing mark."""
    if is_missing(value):
        return MISSING_TEXT
    number = float(value)
    if number == 0:
        return "±0"
    sign = "+" if number > 0 else "−"
    return f"{sign}{format_percent(abs(number)) if unit == '%' else format_number(abs(number))}"


def _share(value: Any) -> str:
    return MISSING_TEXT if is_missing(value) else f"{format_percent(value)} %"


def installation_emission_kg_yr(sources: pd.DataFrame) -> float:
    """The installation's annual emission (proposed + existing sources) [kg NH3 yr-1].

    Parameters
    ----------
    sources : pandas.DataFrame
        A run's sources table (columns ``role`` and ``nh3_kg_yr``).

    Returns
    -------
    float
        [kg NH3 yr-1].
    """
    own = sources["role"].isin(["proposed", "existing"])
    return float(sources.loc[own, "nh3_kg_yr"].sum())


def options_view(
    table: pd.DataFrame, options: list[dict], base_sources: pd.DataFrame | None = None
) -> dict[str, Any] | None:
    """The side-by-side section's values; None without options.

    Parameters
    ----------
    table : pandas.DataFrame
        options.csv's rows: ``option``, ``name``, ``verdict``, ``passes``, the judged shares
        ``judged_pct_load`` and ``judged_pct_level`` [%] and ``change_pct_load`` [percentage
        points] (missing columns show as "n/a").
    options : list of dict
        Per option (run.json's ``options``): ``name``, ``description``, ``changes`` and
        ``installation_nh3_kg_yr`` [kg NH3 yr-1].
    base_sources : pandas.DataFrame, optional
        The base run's sources table: the base's row in the options table, with its emission.

    Returns
    -------
    dict or None
        ``names`` (base first), ``options`` (name, description, changes, emission as text),
        ``rows`` (site name, then per option its Verdict, % of load, % of level and the
        change of % of load).
    """
    if table is None or not options:
        return None
    names = [_BASE, *(o["name"] for o in options)]
    by_option = dict(list(table.groupby("option", sort=False)))
    base = by_option.get(_BASE)
    if base is None:
        return None
    rows = []
    for i, site in enumerate(base["name"].tolist()):
        cells = []
        for name in names:
            row = by_option[name].iloc[i]
            cells.append(
                (
                    verdict(row.get("verdict"), row.get("passes")),
                    _share(row.get("judged_pct_load")),
                    _share(row.get("judged_pct_level")),
                    "" if name == _BASE else _signed(row.get("change_pct_load"), "%"),
                )
            )
        rows.append((text(site), cells))
    base_row = []
    if base_sources is not None and {"role", "nh3_kg_yr"} <= set(base_sources.columns):
        emission = format_number(installation_emission_kg_yr(base_sources))
        base_row = [(_BASE, "the scenario as its sources describe it", "", emission)]
    return {
        "names": names,
        "options": base_row
        + [
            (
                text(o["name"]),
                text(o.get("description") or ""),
                text(o.get("changes") or ""),
                format_number(o.get("installation_nh3_kg_yr")),
            )
            for o in options
        ],
        "rows": rows,
    }
