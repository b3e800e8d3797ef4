"""The options of a scenario ([[option]]) screened in the same run as the base.

Each option is the base scenario with its sources changed (:meth:`Scenario.with_option`),
screened on the base's grid and sites with the base's tables and rule set. The runs share one
:class:`~siting.runs.run_cache.RunCache`: a source whose release (position, height, outlet,
footprint, hourly weights) is the same as in a run before reuses that run's dispersion, scaled
by its new emission (the concentration is linear in the emission); a source whose release
changed is computed afresh. Options have no sensitivity of their own (the base's is the run's).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from siting.readers.scenario_options import BASE_NAME
from siting.runs.comparing import site_changes


@dataclass
class OptionRuns:
    """A scenario's options screened beside its base.

    Attributes
    ----------
    runs : dict of str to ScreenResult
        Option name -> its run (no sensitivity), in the scenario's order.
    descriptions : dict of str to str
        Option name -> its description ("" when the scenario gives none).
    changes : dict of str to str
        Option name -> what it changes, in words (:func:`change_words`).
    table : pandas.DataFrame
        One row per site and option, the base first (:func:`options_table`).
    differences : dict of str to ndarray
        Option name -> its deposition minus the base's [kg N ha-1 yr-1]
        (:func:`difference_fields`).
    """

    runs: dict
    descriptions: dict[str, str]
    changes: dict[str, str]
    table: pd.DataFrame
    differences: dict[str, np.ndarray]


def screen_options(result, run, *, cache, progress: bool = False) -> OptionRuns:
    """Every option of the base run's scenario, screened like the base.

    Parameters
    ----------
    result : ScreenResult
        The base run (its scenario's [[option]] tables, tables and rule set).
    run : callable
        :func:`siting.runs.screening.screen` (passed in: this module is below it).
    cache : RunCache
        Shared with the base run, so unchanged releases reuse its dispersion.
    progress : bool
        Show each option's progress bar.

    Returns
    -------
    OptionRuns
        The options' runs, their table against the base and their deposition differences.
    """
    scenario = result.scenario
    runs = {
        option.name: run(
            scenario.with_option(option.name),
            progress=progress,
            tables=result.tables,
            sensitivity=False,
            cache=cache,
            rules=result.rules,
        )
        for option in scenario.options
    }
    return OptionRuns(
        runs,
        {o.name: o.description or "" for o in scenario.options},
        {o.name: change_words(o) for o in scenario.options},
        options_table(result.sites, runs),
        difference_fields(result.fields, runs),
    )


def change_words(option) -> str:
    """What an option changes, in words: "H1: abatement none; H9 added (only in this option)".

    Parameters
    ----------
    option : OptionSpec
        The option.

    Returns
    -------
    str
        Each changed source's keys and new values, "; "-separated.
    """
    parts = []
    for sid, change in option.change.items():
        keys = change.model_dump(exclude_unset=True)
        if keys.pop("include", True) is False:
            parts.append(f"{sid} left out")
            continue
        parts.append(f"{sid}: " + ", ".join(f"{k} {_value(v)}" for k, v in keys.items()))
    return "; ".join(parts)


def _value(value) -> str:
    """A changed key's value in words: numbers short (1600, 12.5), text as given."""
    return f"{value:g}" if isinstance(value, float) else str(value)


def options_table(base_sites, runs: dict) -> pd.DataFrame:
    """One row per site and option, the base first: the sites' figures and their change.

    Parameters
    ----------
    base_sites : pandas.DataFrame
        The base run's sites table.
    runs : dict of str to ScreenResult
        The options' runs.

    Returns
    -------
    pandas.DataFrame
        ``option`` ("base" for the base), the sites table's own columns, then the change
        against the base (:func:`~siting.runs.comparing.site_changes`: the judged
        contribution's concentration, deposition and shares, in the same units).
    """
    base = pd.DataFrame(base_sites.drop(columns="geometry", errors="ignore"))
    parts = []
    for name, sites in [(BASE_NAME, base_sites), *((n, r.sites) for n, r in runs.items())]:
        sites = pd.DataFrame(sites.drop(columns="geometry", errors="ignore"))
        changes = site_changes(base.reset_index(drop=True), sites.reset_index(drop=True))
        part = pd.concat([sites.reset_index(drop=True), changes], axis=1)
        part.insert(0, "option", name)
        parts.append(part)
    return pd.concat(parts, ignore_index=True)


def difference_fields(base_fields: dict, runs: dict) -> dict[str, np.ndarray]:
    """Each option's deposition field minus the base's [kg N ha-1 yr-1].

    Parameters
    ----------
    base_fields : dict of str to ndarray
        The base run's fields.
    runs : dict of str to ScreenResult
        The options' runs, on the base's grid.

    Returns
    -------
    dict of str to ndarray
        Option name -> the installation's PC deposition of the option minus the base's, the
        grid's shape.
    """
    base = base_fields["pc_dep_kg_n_ha_yr"]
    return {name: run.fields["pc_dep_kg_n_ha_yr"] - base for name, run in runs.items()}
