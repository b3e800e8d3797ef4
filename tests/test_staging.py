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
