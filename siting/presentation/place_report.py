"""The placement search's report (report.html of ``siting place``) as text.

A short page: the summary with what it takes at the best and at the cheapest position, the
best positions, their ways side by side (as planned, each technique, half the places), and
the cautions and warnings. Values are formatted here; the template escapes every text.
"""

from __future__ import annotations

import math

import pandas as pd

from siting.presentation.formats import format_number
from siting.presentation.html_parts import render, text

__all__ = ["cheapest_position", "render_place_report"]


def cheapest_position(positions: pd.DataFrame) -> int:
    """The row (0 = the best position) whose cheapest way to pass costs least; 0 when no
    position passes in any way.

    Parameters
    ----------
    positions : DataFrame
        positions.csv's rows, best first (column cheapest_cost_eur_yr [EUR yr-1]).

    Returns
    -------
    int
    """
    costs = positions["cheapest_cost_eur_yr"].astype(float).reset_index(drop=True)
    return int(costs.idxmin()) if costs.notna().any() else 0


def _share(value: float) -> str:
    return "never" if value == math.inf else f"{value:.2f}"


def render_place_report(
    *,
    title: str,
    version: str,
    run_time: str,
    house: str,
    rules: str,
    positions: pd.DataFrame,
    side_by_side: pd.DataFrame,
    cautions: list[str],
    warnings: list[str],
    top: int = 10,
) -> str:
    """report.html of a placement search.

    Parameters
    ----------
    title : str
        The scenario's title (user text, escaped by the template).
    version, run_time : str
        siting's version and the time of the run, as shown.
    house : str
        The source placed.
    rules : str
        The rule set's id.
    positions : DataFrame
        positions.csv's rows, best first (x, y [m], limiting_site, worst_pct_load [%],
        limiting_share_of_threshold [-], verdict, passes_as_described, cheapest_option,
        cheapest_cost_eur_yr [EUR yr-1]).
    side_by_side : DataFrame
        position_ways.csv's rows (rank, way, passes, share_of_allowed, cost_eur_yr).
    cautions, warnings : list of str
        The run's cautions and warnings.
    top : int
        Best positions listed.

    Returns
    -------
    str
        The whole page.
    """
    best = positions.head(top)
    passing = int(positions["passes_as_described"].sum())
    summary = (
        f"{passing:,} of {len(positions):,} allowed positions of house {house} pass every "
        f"site under rule set {rules} as planned."
    )
    at = cheapest_position(positions)
    cheapest = positions.iloc[at]
    ways = list(dict.fromkeys(side_by_side["way"]))
    return render(
        "place_report.html",
        page_title=f"{title} · siting placement report",
        title=text(title),
        version=text(version),
        run_time=text(run_time),
        house=text(house),
        rules=text(rules),
        summary=summary,
        best_way=text(positions["cheapest_option"].iloc[0]) if len(positions) else "",
        cheapest_way=""
        if at == 0
        else f"rank {at + 1} ({cheapest.x:.0f}, {cheapest.y:.0f}): {cheapest.cheapest_option}",
        positions=[
            (
                rank,
                f"{row.x:.0f}, {row.y:.0f}",
                text(row.limiting_site),
                format_number(row.worst_pct_load),
                _share(float(row.limiting_share_of_threshold)),
                text(row.verdict),
                text(row.cheapest_option),
            )
            for rank, row in enumerate(best.itertuples(), start=1)
        ],
        way_names=[text(w) for w in ways],
        side_rows=[
            (
                int(rank),
                [
                    (
                        "✓" if w.passes else "✗",
                        _share(float(w.share_of_allowed)),
                        format_number(w.cost_eur_yr),
                    )
                    for w in part.itertuples()
                ],
            )
            for rank, part in side_by_side.groupby("rank", sort=True)
        ],  # fmt: skip
        cautions=[text(c) for c in cautions],
        warnings=[text(w) for w in warnings],
    )
