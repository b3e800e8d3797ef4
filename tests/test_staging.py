"""The rule-set arithmetic the placement search relies on: the scale each passing stage allows
when a condition tests the larger of two shares (hand-made cases, arithmetic written out)."""

import numpy as np
import pytest

from siting.physics.staging import Condition, Stage, allowed_scale


def _stages(*stages):
    return {"international": stages}


def test_a_condition_on_the_larger_share_is_met_where_both_shares_meet_it():
    """pct = max(pct_level, pct_load) <= 4: pct_level = 1 + 6 s allows s <= 0.5, pct_load =
    0 + 10 s allows s <= 0.4; both hold for s <= 0.4 (hand-made case)."""
    offset = {"pct_level": np.array([1.0]), "pct_load": np.array([0.0])}
    slope = {"pct_level": np.array([6.0]), "pct_load": np.array([10.0])}
    stage = Stage("insignificant", (Condition("pct", "at_most", 4.0),), passes=True)
    fallback = Stage("above")
    s = allowed_scale(offset, slope, ["international"], _stages(stage, fallback))
    assert s == pytest.approx([0.4])


def test_the_in_combination_share_expands_the_same_way_and_stages_take_the_larger():
    """Two passing stages: incomb_pct <= 20 (level 5 + 5 s -> s <= 3; load 2 + 9 s -> s <= 2)
    allows 2, dep_kg_n_ha_yr <= 0.3 (0.1 + 0.05 s -> s <= 4) allows 4; a site may take either,
    so 4 (hand-made case)."""
    offset = {
        "incomb_pct_level": np.array([5.0]),
        "incomb_pct_load": np.array([2.0]),
        "dep_kg_n_ha_yr": np.array([0.1]),
    }
    slope = {
        "incomb_pct_level": np.array([5.0]),
        "incomb_pct_load": np.array([9.0]),
        "dep_kg_n_ha_yr": np.array([0.05]),
    }
    stages = _stages(
        Stage("fine together", (Condition("incomb_pct", "at_most", 20.0),), passes=True),
        Stage("below the cut-off", (Condition("dep_kg_n_ha_yr", "at_most", 0.3),), passes=True),
        Stage("assess"),
    )
    assert allowed_scale(offset, slope, ["international"], stages) == pytest.approx([4.0])


def test_a_site_already_over_with_the_house_gone_allows_nothing():
    """Offset 5 % over a 4 % limit: no s >= 0 passes, so 0 (hand-made case)."""
    offset, slope = {"pct_load": np.array([5.0])}, {"pct_load": np.array([1.0])}
    stages = _stages(
        Stage("insignificant", (Condition("pct_load", "below", 4.0),), passes=True), Stage("no")
    )
    assert allowed_scale(offset, slope, ["international"], stages) == pytest.approx([0.0])


def test_a_missing_share_never_lets_a_site_pass():
    """A site whose concentration figure is missing (NaN) but whose deposition share is tiny is
    not passed on the deposition alone: the larger share is then missing, meets no condition,
    and the tier's last rule decides (cautious; plain's international tier, 4 %)."""
    import pandas as pd

    from siting.readers.rules import load_rule_set
    from siting.runs.judging import judge_sites

    frame = pd.DataFrame(
        {
            "tier": ["international", "international"],
            "assessed": [True, True],
            "critical_level_ug_m3": [1.0, 1.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 5.0],
            "judged_conc_max_ug_m3": [np.nan, 0.01],  # 1 % of the level where given
            "judged_dep_max_kg_n_ha_yr": [0.05, 0.05],  # 1 % of the load
            "judged_incomb_conc_max_ug_m3": [np.nan, 0.01],
            "judged_incomb_dep_max_kg_n_ha_yr": [0.05, 0.05],
            "background_conc_ug_m3": [1.0, 1.0],
            "background_dep_kg_n_ha_yr": [10.0, 10.0],
            "distance_m": [500.0, 500.0],
        }
    )
    rules = load_rule_set("plain", ["international", "national", "local"])
    verdict = judge_sites(frame, rules)
    assert list(verdict.verdict) == ["above threshold", "below threshold"]
    assert list(verdict.passes) == [False, True]
