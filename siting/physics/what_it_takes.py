"""What it takes for a house to pass: the cheapest technique, share of the air or places.

A rule set allows the house at a position an emission of at most ``a`` places' worth of its
unabated emission (``a = s x places``, s the largest scale of the unabated emission every
site allows: ``physics.staging.allowed_scale``). A house of ``p`` places whose technique
removes the share ``r`` of the ammonia in the share ``f`` of the air it treats emits
``p (1 - r f)`` places' worth, so it passes when ``p (1 - r f) <= a``.

The annual cost of a technique is proportional to the air it treats (a scrubber: capacity,
electricity, water, acid, effluent, capital and upkeep all scale with places x share) or to
the places (a housing measure); fewer places cost the margin lost per place not kept. With
those costs the cheapest way to pass at places ``p`` treats just the share needed,
``f(p) = (1 - a/p) / r``, and its cost ``k (p - a) / r + m (P - p)`` is linear in ``p``: the
cheapest lies at an end, all places with the share needed, or the technique on all the air
with the places it then allows. :func:`cheapest_ways` compares those ends for every technique,
the house as planned, no technique, and fewer places without one. Numbers only (numpy).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: What the cheapest way is, per position.
AS_PLANNED = "as planned"
NONE_NEEDED = "no technique needed"
TECHNIQUE = "technique"
TECHNIQUE_FEWER_PLACES = "technique and fewer places"
FEWER_PLACES = "fewer places"
CANNOT = "cannot pass"


@dataclass(frozen=True)
class Technique:
    """One technique as the search costs it.

    Attributes
    ----------
    id : str
        Its id (abatement.toml).
    name : str
        Its name in words.
    kind : {"scrubber", "housing_measure"}
        A scrubber treats a share of the air; a housing measure all of the house.
    reduction : float
        Share of the ammonia it removes from the air it treats [-], (0, 1]: the lower end of
        its published range (the cautious reading).
    cost_eur_per_place_yr : float
        Its annual cost per place [EUR place-1 yr-1], treating all the air; NaN when it
        cannot be costed (then it is never chosen).
    """

    id: str
    name: str
    kind: str
    reduction: float
    cost_eur_per_place_yr: float


def _candidates(allowed, places: float, techniques, margin: float):
    """Every way and its cost per position: (what, technique, share, places, cost) arrays."""
    a = np.asarray(allowed, dtype=float)
    n = a.size
    inf = np.full(n, np.inf)
    full = np.full(n, float(places))
    yield NONE_NEEDED, "", np.zeros(n), full, np.where(a >= places, 0.0, inf)
    fewer = np.floor(np.clip(a, 0.0, places) + 1e-9)
    ok = (fewer >= 1) & (fewer < places)
    yield FEWER_PLACES, "", np.zeros(n), fewer, np.where(ok, margin * (places - fewer), inf)
    for t in techniques:
        k, r = t.cost_eur_per_place_yr, t.reduction
        if not np.isfinite(k) or r <= 0:
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.clip((1.0 - a / places) / r, 0.0, None)
        scrubber = t.kind == "scrubber"
        if scrubber:
            cost = np.where(share <= 1.0 + 1e-12, k * places * np.minimum(share, 1.0), inf)
            share = np.minimum(share, 1.0)
        else:  # a housing measure treats the whole house: no share applies
            share = np.full(n, np.nan)
            cost = np.where(places * (1.0 - r) <= a * (1 + 1e-12), k * places, inf)
        yield TECHNIQUE, t.id, share, full, cost
        with np.errstate(divide="ignore", invalid="ignore"):
            kept = np.floor(np.clip(a / (1.0 - r), 0.0, places) + 1e-9) if r < 1 else full
        ok = (kept >= 1) & (kept < places)
        if scrubber:  # whole places: the share the places kept need, at most all the air
            with np.errstate(divide="ignore", invalid="ignore"):
                need = np.clip((1.0 - a / kept) / r, 0.0, 1.0)
        else:
            need = np.full(n, np.nan)
        treated = kept * np.where(np.isnan(need), 1.0, need)
        cost = np.where(ok, k * treated + margin * (places - kept), inf)
        yield TECHNIQUE_FEWER_PLACES, t.id, need, kept, cost


def cheapest_ways(
    allowed_places,
    places: float,
    techniques: list[Technique],
    margin_eur_per_place_yr: float,
    planned_passes=None,
    planned_cost_eur_yr: float = np.nan,
) -> dict[str, np.ndarray]:
    """The cheapest way for the house to pass at each position, or that none does.

    Parameters
    ----------
    allowed_places : ndarray
        Per position, the emission the rule set allows, in places' worth of the unabated
        emission [places] (inf: any emission passes; 0 or less: none does).
    places : float
        The house's planned places, > 0.
    techniques : list of Technique
        The techniques to consider.
    margin_eur_per_place_yr : float
        What a place not kept costs a year [EUR place-1 yr-1] (the margin lost).
    planned_passes : ndarray of bool, optional
        Per position, whether the house passes as planned (with its own technique and
        claimed reduction); None considers no planned way.
    planned_cost_eur_yr : float
        The planned technique's annual cost [EUR yr-1] (0 without one; NaN counts as 0).

    Returns
    -------
    dict of str to ndarray
        Per position: ``what`` (AS_PLANNED, NONE_NEEDED, TECHNIQUE, TECHNIQUE_FEWER_PLACES,
        FEWER_PLACES or CANNOT), ``technique`` (id, "" without one), ``share`` of the air a
        scrubber treats [-] (NaN for a housing measure, 0 without a technique), ``places``
        kept and ``cost_eur_yr`` [EUR yr-1] (NaN where none passes).
        Ties go to the way listed first: as planned, no technique, fewer places, then the
        techniques in the order given.
    """
    a = np.asarray(allowed_places, dtype=float).ravel()
    n = a.size
    ways = list(_candidates(a, places, techniques, margin_eur_per_place_yr))
    if planned_passes is not None:
        cost = 0.0 if not np.isfinite(planned_cost_eur_yr) else float(planned_cost_eur_yr)
        passes = np.asarray(planned_passes, dtype=bool).ravel()
        planned = (AS_PLANNED, "", np.full(n, np.nan), np.full(n, float(places)))
        ways.insert(0, (*planned, np.where(passes, cost, np.inf)))
    costs = np.vstack([w[4] for w in ways])
    best = np.argmin(costs, axis=0)
    rows = np.arange(n)
    cheapest = costs[best, rows]
    found = np.isfinite(cheapest)
    what = np.array([w[0] for w in ways], dtype=object)[best]
    technique = np.array([w[1] for w in ways], dtype=object)[best]
    share = np.vstack([w[2] for w in ways])[best, rows]
    kept = np.vstack([w[3] for w in ways])[best, rows]
    return {
        "what": np.where(found, what, CANNOT),
        "technique": np.where(found, technique, ""),
        "share": np.where(found, share, np.nan),
        "places": np.where(found, kept, np.nan),
        "cost_eur_yr": np.where(found, cheapest, np.nan),
    }
