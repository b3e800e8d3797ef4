"""Sites judged by a rule set: the figures its conditions test, the verdict and the deciding rule.

The figures come from a sites table's ``judged_*`` columns (the contribution the rule set's
basis names, from screening.py) and ``judged_incomb_*`` (that contribution with the other
sources), the backgrounds, critical values and distances; the arithmetic is
``siting.physics.staging``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from siting.physics import assess
from siting.physics.constants import kg_n_to_mol_n
from siting.physics.staging import FIGURES, Judgement, judge
from siting.presentation.rule_text import rule_words
from siting.readers.rules import RuleSet

#: The columns sites.csv gains from the judging.
VERDICT_COLUMNS = ("basis", "verdict", "passes", "deciding_rule", "rules")


def site_figures(frame: pd.DataFrame, level=None, load=None) -> dict[str, np.ndarray]:
    """Every figure of ``FIGURES`` at each site of a sites table.

    Parameters
    ----------
    frame : pandas.DataFrame
        A sites table with the ``judged_*`` and ``judged_incomb_*`` maxima, backgrounds,
        critical level and load used, and ``distance_m``.
    level, load : ndarray, optional
        Replace the critical level [ug m-3] and load [kg N ha-1 yr-1] (a sensitivity variant).

    Returns
    -------
    dict of str to ndarray
    """
    level = frame["critical_level_ug_m3"].to_numpy(float) if level is None else level
    load = frame["critical_load_used_kg_n_ha_yr"].to_numpy(float) if load is None else load
    conc = frame["judged_conc_max_ug_m3"].to_numpy(float)
    dep = frame["judged_dep_max_kg_n_ha_yr"].to_numpy(float)
    in_conc = frame["judged_incomb_conc_max_ug_m3"].to_numpy(float)
    in_dep = frame["judged_incomb_dep_max_kg_n_ha_yr"].to_numpy(float)
    figures = {
        "pct_level": assess.percent_of(conc, level),
        "pct_load": assess.percent_of(dep, load),
        "conc_ug_m3": conc,
        "dep_kg_n_ha_yr": dep,
        "dep_mol_n_ha_yr": kg_n_to_mol_n(dep),
        "pec_pct_level": assess.percent_of(
            frame["background_conc_ug_m3"].to_numpy(float) + conc, level
        ),
        "pec_pct_load": assess.percent_of(
            frame["background_dep_kg_n_ha_yr"].to_numpy(float) + dep, load
        ),
        "incomb_pct_level": assess.percent_of(in_conc, level),
        "incomb_pct_load": assess.percent_of(in_dep, load),
        "incomb_dep_kg_n_ha_yr": in_dep,
        "distance_m": frame["distance_m"].to_numpy(float),
    }
    # np.maximum, not fmax: a missing share leaves the larger one missing, and a missing
    # figure meets no condition, so such a site falls to its tier's last rule (cautious)
    figures["pct"] = np.maximum(figures["pct_level"], figures["pct_load"])
    figures["incomb_pct"] = np.maximum(figures["incomb_pct_level"], figures["incomb_pct_load"])
    assert set(figures) == set(FIGURES)
    return figures


def judge_sites(frame: pd.DataFrame, rules: RuleSet, level=None, load=None) -> Judgement:
    """Each site's verdict under a rule set.

    Parameters
    ----------
    frame : pandas.DataFrame
        A sites table (see :func:`site_figures`) with ``tier`` and ``assessed``.
    rules : RuleSet
        The rule set.
    level, load : ndarray, optional
        Replace the critical level and load (a sensitivity variant).

    Returns
    -------
    Judgement
    """
    return judge(
        site_figures(frame, level, load),
        frame["tier"].to_numpy(object),
        rules.stages_by_tier,
        frame["assessed"].to_numpy(bool),
        missing=assess.VERDICT_NOT_ASSESSED,
    )


def with_verdicts(frame: pd.DataFrame, rules: RuleSet) -> pd.DataFrame:
    """The sites table with its verdicts under ``rules``: the columns of VERDICT_COLUMNS, and
    ``threshold_percent`` / ``threshold_source`` set from the rule set (the first passing
    share of its tier; NaN where the set's passing rules are not shares).

    Parameters
    ----------
    frame : pandas.DataFrame
        A sites table (see :func:`site_figures`).
    rules : RuleSet
        The rule set.

    Returns
    -------
    pandas.DataFrame
        A copy with the columns added or replaced.
    """
    out = frame.copy()
    verdict = judge_sites(out, rules)
    tiers = out["tier"].to_numpy(object)
    out["threshold_percent"] = [rules.first_pass_percent(t) for t in tiers]
    out["threshold_source"] = [rules.first_pass_source(t) for t in tiers]
    out["basis"] = rules.basis
    out["verdict"] = verdict.verdict
    out["passes"] = verdict.passes
    out["deciding_rule"] = [
        rule_words(rules.stages_by_tier[t][k], rules.id) if k >= 0 else ""
        for t, k in zip(tiers, verdict.stage)
    ]
    out["rules"] = rules.id
    return out
