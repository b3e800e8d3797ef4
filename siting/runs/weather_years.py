"""Screening by the worst single weather year: each point takes the year that is worst for it.

An hourly record of several years is screened by default by the worst single year
(``[weather] screen_by = "worst_year"``, the cautious choice), or as one long-term mean over all
its hours (``screen_by = "all_years"``). By the worst year, each calendar year is dispersed on
its own, and at every receptor (grid node, named point, site sample point)
the year that gives the highest contribution the rule set judges is taken, with all its roles'
figures (proposed, existing, removed, other) from that same year, so a net or in-combination
figure is always one year's. A site's maximum is then the highest of the single years' site
maxima, and the site's worst year is the year whose figure gives that maximum (in
``sites.csv``'s ``weather_year``). This errs towards the higher PC: it is never below the
all-years mean, nor below any single year. The placement search (``siting place``), which adds
one field per source, takes each source's worst year at each point on its own: a sum of worst
years, never below the worst single year of the sum (cautious again).

Years with fewer than ``MIN_YEAR_HOURS`` hours used are left out of the choice (a part-year,
one season, could be "worst" for the season's wind alone), with a warning; with fewer than two
years left the run is screened by all years, and says so.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

from siting.errors import WeatherWarning
from siting.readers.scenario_sources import ROLES

#: A year needs at least this many hours used to be a candidate worst year (half a common
#: year: our choice, no source).
MIN_YEAR_HOURS = 4380


def judged_concentration(conc_by_role: dict, basis: str) -> np.ndarray:
    """The contribution a rule set judges, from the roles' concentrations.

    Parameters
    ----------
    conc_by_role : dict of str to ndarray
        Role -> concentration [ug m-3].
    basis : {"proposal", "installation", "net"}
        The rule set's basis: the proposal alone, the installation (proposed + existing),
        or the net change (proposed - removed).

    Returns
    -------
    ndarray
        The judged concentration [ug m-3].
    """
    return {
        "proposal": lambda: conc_by_role["proposed"],
        "installation": lambda: conc_by_role["proposed"] + conc_by_role["existing"],
        "net": lambda: conc_by_role["proposed"] - conc_by_role["removed"],
    }[basis]()


def screened_years(weather, summary: dict, screen_by: str) -> tuple[int, ...]:
    """The years screened one by one (empty: all years together).

    Adds ``screened_by`` (in words) to ``summary``; a WeatherWarning for years left out and
    for a worst-year request that cannot be met.

    Parameters
    ----------
    weather : HourlyWeather
        The record.
    summary : dict
        Its summary (``screened_by`` is added).
    screen_by : {"all_years", "worst_year"}
        The scenario's ``[weather] screen_by``.

    Returns
    -------
    tuple of int
        The years dispersed one by one; empty for all years together.
    """
    years, counts = np.unique(weather.years, return_counts=True)
    if screen_by != "worst_year":
        summary["screened_by"] = f"all years together ({_listed(years)})"
        return ()
    if len(years) == 1:  # one calendar year: its own mean is the worst single year
        summary["screened_by"] = f"the record's one calendar year ({_listed(years)})"
        return ()
    kept = tuple(int(y) for y, n in zip(years, counts) if n >= MIN_YEAR_HOURS)
    short = [f"{int(y)} ({int(n)} h)" for y, n in zip(years, counts) if n < MIN_YEAR_HOURS]
    if short:
        warnings.warn(
            WeatherWarning(
                f"screen_by = worst_year: year(s) {', '.join(short)} have fewer than "
                f"{MIN_YEAR_HOURS} hours used and are not candidates for the worst year",
                parameters=("screen_by",),
            ),
            stacklevel=2,
        )
    if len(kept) < 2:
        warnings.warn(
            WeatherWarning(
                "screen_by = worst_year needs two or more years of at least "
                f"{MIN_YEAR_HOURS} hours each; this record has {len(kept)}, so it is "
                "screened by all years together",
                parameters=("screen_by",),
            ),
            stacklevel=2,
        )
        summary["screened_by"] = f"all years together ({_listed(years)}; worst_year asked)"
        return ()
    summary["screened_by"] = (
        f"the worst single year at each point, of {_listed(kept)} (each point takes the year "
        "that gives it the highest judged contribution; each site's year in sites.csv "
        "weather_year)"
    )
    return kept


def worst_year_by_role(prep, element_lists, x_m, y_m, settings=None, advance=None, pick=None):
    """Each role's concentration [ug m-3] from each receptor's worst year, and the choice.

    Parameters
    ----------
    prep : Prepared
        The run's inputs with ``weather_years`` set.
    element_lists, x_m, y_m, settings, advance
        As for :meth:`Prepared.concentration_by_role_ug_m3`.
    pick : ndarray of int, optional
        The year (an index into ``prep.weather_years``) to take at each receptor; None picks
        the year of the highest judged contribution.

    Returns
    -------
    by_role : dict of str to ndarray
        Role -> concentration [ug m-3].
    pick : ndarray of int
        The year taken at each receptor, an index into ``prep.weather_years``.
    """
    per_year = [
        prep.of_year(year).concentration_by_role_ug_m3(element_lists, x_m, y_m, settings, advance)
        for year in prep.weather_years
    ]
    if pick is None:
        judged = np.stack([judged_concentration(c, prep.rules.basis) for c in per_year])
        pick = np.argmax(judged, axis=0)
    by_role = {
        role: np.take_along_axis(np.stack([c[role] for c in per_year]), pick[None, :], 0)[0]
        for role in ROLES
    }
    return by_role, pick


def site_years(years: tuple[int, ...], pick, judged, member_site, member_receptor, n_sites):
    """Each site's worst year: the year taken at the receptor of its highest judged figure.

    Parameters
    ----------
    years : tuple of int
        ``Prepared.weather_years``.
    pick : ndarray of int
        The year taken at each receptor (an index into ``years``).
    judged : ndarray
        The judged concentration at each receptor [ug m-3].
    member_site, member_receptor : ndarray of int
        Which receptors belong to which site (``_Receptors``).
    n_sites : int
        Number of sites.

    Returns
    -------
    list
        Each site's year (int), None for a site with no receptor.
    """
    out = [None] * n_sites
    if len(member_site) == 0:
        return out
    frame = pd.DataFrame(
        {
            "site": np.asarray(member_site),
            "receptor": np.asarray(member_receptor),
            "value": np.asarray(judged)[np.asarray(member_receptor)],
        }
    )
    at_max = frame.loc[frame.groupby("site")["value"].idxmax()]
    for site, receptor in zip(at_max["site"], at_max["receptor"]):
        out[int(site)] = int(years[int(pick[int(receptor)])])
    return out


def _listed(years) -> str:
    return ", ".join(str(int(y)) for y in years)
