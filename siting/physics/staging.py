"""Staged verdicts: a rule set's ordered tests on a site's figures, and the reduction they allow.

Pure arithmetic on arrays; what the tests are comes from a rule set file
(``siting/readers/rules.py``). A tier's stages are tried in order and the first whose
conditions all hold gives the site its verdict; the last stage has no condition (it takes every
site the others did not). Every figure a condition can test is affine in the contribution being
judged: f(s) = offset + slope x s, where s scales that contribution (s = 1 as described), so
the largest s that still reaches a passing stage is found exactly (:func:`allowed_scale`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

#: The figures a condition may test: name -> (what it is, unit). ``judged`` is the contribution
#: the rule set's basis names (the proposal, the installation after the change, or the net
#: change); every figure is a site's maximum unless it says otherwise.
FIGURES: dict[str, tuple[str, str]] = {
    "pct_level": ("judged contribution as a share of the critical level", "%"),
    "pct_load": ("judged contribution as a share of the critical load", "%"),
    "pct": ("the larger of the judged contribution's shares of critical level and load", "%"),
    "conc_ug_m3": ("judged contribution to the ammonia concentration", "ug/m3"),
    "dep_kg_n_ha_yr": ("judged contribution to the nitrogen deposition", "kg N/ha/yr"),
    "dep_mol_n_ha_yr": ("judged contribution to the nitrogen deposition", "mol N/ha/yr"),
    "pec_pct_level": ("background plus judged contribution, share of the critical level", "%"),
    "pec_pct_load": ("background plus judged contribution, share of the critical load", "%"),
    "incomb_pct_level": ("judged plus other sources in combination, share of critical level", "%"),
    "incomb_pct_load": ("judged plus other sources in combination, share of critical load", "%"),
    "incomb_pct": ("the larger of the two in-combination shares", "%"),
    "incomb_dep_kg_n_ha_yr": ("judged plus other sources, nitrogen deposition", "kg N/ha/yr"),
    "distance_m": ("distance from the installation's sources to the site", "m"),
}
#: Figures that do not depend on the judged contribution's size: the only ones a lower bound
#: (above, at_least) may test.
FIXED_FIGURES = frozenset({"distance_m"})
#: Figures that describe the sources together with others, so a regional run (all farms at
#: once, no single installation) can test them.
IN_COMBINATION_FIGURES = frozenset(name for name in FIGURES if name.startswith("incomb_"))
#: Figures that are the larger of two others: a condition on one is met where both parts meet it.
COMPOSITES = {
    "pct": ("pct_level", "pct_load"),
    "incomb_pct": ("incomb_pct_level", "incomb_pct_load"),
}
OPERATORS = {"below": "<", "at_most": "<=", "above": ">", "at_least": ">="}


@dataclass(frozen=True)
class Condition:
    """One test: ``figure`` compared with ``limit`` by ``operator`` (a key of OPERATORS).

    Attributes
    ----------
    figure : str
        A key of :data:`FIGURES`.
    operator : {"below", "at_most", "above", "at_least"}
        The comparison.
    limit : float
        The value compared with, in the figure's unit.
    """

    figure: str
    operator: str
    limit: float

    def holds(self, value) -> np.ndarray:
        """Where the figure's values meet the test (NaN never does).

        Parameters
        ----------
        value : float or ndarray
            The figure's values, in its unit.

        Returns
        -------
        ndarray of bool
        """
        value = np.asarray(value, dtype=float)
        with np.errstate(invalid="ignore"):
            if self.operator == "below":
                return value < self.limit
            if self.operator == "at_most":
                return value <= self.limit
            if self.operator == "above":
                return value > self.limit
            return value >= self.limit


@dataclass(frozen=True)
class Stage:
    """A verdict and the conditions that give it (none: every site left over).

    Attributes
    ----------
    verdict : str
        The stage's verdict in the rule set's words.
    conditions : tuple of Condition
        All must hold.
    passes : bool
        Whether the verdict lets the proposal through without further assessment.
    rule_id : str
        The rule's id in its set.
    source : str
        Its publication and status.
    """

    verdict: str
    conditions: tuple[Condition, ...] = ()
    passes: bool = False
    rule_id: str = ""
    source: str = ""


@dataclass(frozen=True)
class Judgement:
    """Per site: the verdict, the index of the deciding stage in its tier, and whether it passes.

    Attributes
    ----------
    verdict : ndarray of object
        The deciding stage's verdict, ``missing`` where a site was not judged.
    stage : ndarray of int
        Index of the deciding stage in the site's tier, -1 where not judged.
    passes : ndarray of bool
        Whether the deciding stage passes.
    rule_id : ndarray of object
        The deciding rule's id ("" where not judged).
    """

    verdict: np.ndarray
    stage: np.ndarray
    passes: np.ndarray
    rule_id: np.ndarray = field(default_factory=lambda: np.array([], dtype=object))


def judge(
    figures: Mapping[str, np.ndarray],
    tier_of_site: Sequence[str],
    stages_by_tier: Mapping[str, Sequence[Stage]],
    judged=True,
    missing: str = "not assessed",
    usable: frozenset[str] | None = None,
) -> Judgement:
    """The first stage of each site's tier whose conditions all hold.

    Parameters
    ----------
    figures : mapping of str to ndarray, (n_sites,)
        The figures conditions test (keys of :data:`FIGURES`).
    tier_of_site : sequence of str, (n_sites,)
        Each site's tier id.
    stages_by_tier : mapping of str to sequence of Stage
        The rule set's stages per tier, in order, the last without conditions.
    judged : bool or ndarray of bool
        False where a site could not be assessed (verdict ``missing``).
    missing : str
        Verdict of a site not judged.
    usable : frozenset of str, optional
        Only stages whose every condition tests one of these figures are tried (a regional run:
        the in-combination figures); a stage with conditions on other figures is skipped. The
        last stage (no condition) always applies.

    Returns
    -------
    Judgement
    """
    tiers = np.asarray(tier_of_site, dtype=object)
    n = tiers.size
    verdict = np.full(n, missing, dtype=object)
    stage_at = np.full(n, -1)
    passes = np.zeros(n, dtype=bool)
    rule_id = np.full(n, "", dtype=object)
    open_ = np.broadcast_to(np.asarray(judged, dtype=bool), (n,)).copy()
    for tier in np.unique(tiers):
        todo = open_ & (tiers == tier)
        for k, stage in enumerate(stages_by_tier[tier]):
            if usable is not None and any(c.figure not in usable for c in stage.conditions):
                continue
            met = todo.copy()
            for condition in stage.conditions:
                met &= condition.holds(figures[condition.figure])
            verdict[met], stage_at[met], passes[met], rule_id[met] = (
                stage.verdict,
                k,
                stage.passes,
                stage.rule_id,
            )
            todo &= ~met
    return Judgement(verdict, stage_at, passes, rule_id)


def allowed_scale(
    offset: Mapping[str, np.ndarray],
    slope: Mapping[str, np.ndarray],
    tier_of_site: Sequence[str],
    stages_by_tier: Mapping[str, Sequence[Stage]],
) -> np.ndarray:
    """Largest scale s >= 0 of the judged contribution at which each site reaches a passing stage.

    Each figure is offset + slope x s (s = 1 as described), with slope >= 0. A stage's
    conditions then hold for s up to some t (t = -inf: never, inf: always), so the stage
    deciding at s is the first with t >= s; a passing stage decides on (the largest t of the
    stages before it, its own t]. The result is the largest s of those ranges, 0 where none is
    left (even with the contribution gone), inf where every s passes. Strict comparisons are
    treated as their limits (the supremum).

    Parameters
    ----------
    offset, slope : mapping of str to ndarray, (..., n_sites)
        Each figure's value without the judged contribution and its change per unit of s; a
        composite of COMPOSITES (the larger of two shares) may be left out, its parts given.
    tier_of_site : sequence of str, (n_sites,)
        Each site's tier id.
    stages_by_tier : mapping of str to sequence of Stage
        The rule set's stages.

    Returns
    -------
    ndarray, (..., n_sites)
        The largest s [-].
    """
    tiers = np.asarray(tier_of_site, dtype=object)
    shape = np.broadcast_shapes(*(np.shape(v) for v in slope.values()))
    best = np.zeros(shape)
    for tier in np.unique(tiers):
        at = tiers == tier
        caught = np.full(shape, -np.inf)[..., at]  # the largest t of the stages tried so far
        reach = np.zeros(shape)[..., at]
        for stage in stages_by_tier[tier]:
            t = np.full(shape, np.inf)[..., at]
            for c in stage.conditions:
                # the larger of two shares is at most a limit when both are: one each
                parts = (c.figure,) if c.figure in slope else COMPOSITES.get(c.figure, (c.figure,))
                for figure in parts:
                    a = np.broadcast_to(offset[figure], shape)[..., at]
                    b = np.broadcast_to(slope[figure], shape)[..., at]
                    t = np.minimum(
                        t, _condition_scale(a, b, Condition(figure, c.operator, c.limit))
                    )
            if stage.passes:
                reach = np.where(t > caught, np.maximum(reach, t), reach)
            caught = np.maximum(caught, t)
        best[..., at] = np.maximum(reach, 0.0)
    return best


def _condition_scale(a: np.ndarray, b: np.ndarray, condition: Condition) -> np.ndarray:
    """Largest s with a + b s meeting the condition: -inf where no s >= 0 does, inf where all do.

    An upper bound (below, at_most) on a figure that grows with s holds up to (limit - a) / b;
    a lower bound (above, at_least) is only allowed on figures that do not depend on s (the
    distance; readers/rules.py refuses others), so it holds for every s or none. NaN never
    meets a condition (as in :func:`judge`).
    """
    if condition.operator in ("above", "at_least"):
        return np.where(condition.holds(a), np.inf, -np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = (condition.limit - a) / b
    scale = np.where(b > 0, ratio, np.inf)
    return np.where(a <= condition.limit, scale, -np.inf)  # a NaN compares False: -inf
