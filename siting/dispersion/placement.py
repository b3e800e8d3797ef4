"""Where could a new house go: the screening figures of one house at many candidate positions.

Pure numpy. On flat ground the annual mean field of a house depends only on the offset between
house and receptor, so the house's unit-emission field is computed once, on a polar grid of
offsets (log-spaced radius, fine angle), and every candidate position reads its site values off
that kernel by bilinear interpolation. The process contribution is linear in the emission,
so the reduction an abatement technique would need, and the most animal places that pass, follow
from one evaluation per position.

What is not here: reading the holding and exclusion layers, choosing candidate positions
(``holding.py``), writing outputs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class PolarKernel:
    """A field sampled on (log radius, bearing) around its source at the origin.

    ``values[i, j]`` is the field at radius ``radius_m[i]`` and bearing ``bearing_rad[j]``
    (clockwise from north, evenly spaced over [0, 2 pi), periodic). Inside the smallest radius
    the field is taken as its value there; beyond the largest, as zero.

    Attributes
    ----------
    radius_m : ndarray, (n_radius,)
        Radii [m], geometric steps, increasing.
    bearing_rad : ndarray, (n_bearing,)
        Bearings [rad], clockwise from north.
    values : ndarray, (n_radius, n_bearing)
        The field, in the unit it was computed in (e.g. ug m-3 per g s-1).
    """

    radius_m: np.ndarray
    bearing_rad: np.ndarray
    values: np.ndarray

    @staticmethod
    def offsets(
        min_radius_m: float, max_radius_m: float, n_radius: int = 240, n_bearing: int = 1440
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Radii, bearings and the x/y offsets [m] (n_radius, n_bearing) to evaluate a kernel on.

        Parameters
        ----------
        min_radius_m, max_radius_m : float
            Smallest and largest radius [m], 0 < min < max.
        n_radius : int
            Radii, in geometric steps.
        n_bearing : int
            Bearings, evenly spaced over the full circle.

        Returns
        -------
        radius_m : ndarray, (n_radius,)
            Radii [m].
        bearing_rad : ndarray, (n_bearing,)
            Bearings [rad], clockwise from north.
        dx_m, dy_m : ndarray, (n_radius, n_bearing)
            East and north offsets of every (radius, bearing) node [m].
        """
        radius_m = np.geomspace(min_radius_m, max_radius_m, n_radius)
        bearing_rad = np.arange(n_bearing) * (2 * np.pi / n_bearing)
        rr, bb = np.meshgrid(radius_m, bearing_rad, indexing="ij")
        return radius_m, bearing_rad, rr * np.sin(bb), rr * np.cos(bb)

    def __call__(self, dx_m, dy_m) -> np.ndarray:
        """Bilinear interpolation (log radius, bearing) at offsets receptor - source [m]."""
        dx_m = np.asarray(dx_m, dtype=float)
        dy_m = np.asarray(dy_m, dtype=float)
        r = np.hypot(dx_m, dy_m)
        log_r = np.log(np.clip(r, self.radius_m[0], self.radius_m[-1]))
        log_table = np.log(self.radius_m)
        step_r = log_table[1] - log_table[0]
        fi = (log_r - log_table[0]) / step_r
        i0 = np.clip(np.floor(fi).astype(np.intp), 0, len(self.radius_m) - 2)
        ti = fi - i0
        n_b = len(self.bearing_rad)
        fb = (np.arctan2(dx_m, dy_m) % (2 * np.pi)) / (2 * np.pi / n_b)
        j0 = np.floor(fb).astype(np.intp) % n_b
        tj = fb - np.floor(fb)
        j1 = (j0 + 1) % n_b
        v = self.values
        out = (1 - ti) * ((1 - tj) * v[i0, j0] + tj * v[i0, j1]) + ti * (
            (1 - tj) * v[i0 + 1, j0] + tj * v[i0 + 1, j1]
        )
        return np.where(r > self.radius_m[-1], 0.0, out)


def site_maxima(
    kernel: PolarKernel,
    candidate_x_m,
    candidate_y_m,
    point_x_m,
    point_y_m,
    point_site,
    n_sites: int,
    chunk: int = 256,
) -> np.ndarray:
    """Per candidate and site, the maximum of the kernel over that site's points.

    Parameters
    ----------
    kernel : PolarKernel
        The house's field around itself (called with x/y offsets [m]).
    candidate_x_m, candidate_y_m : ndarray
        Candidate positions of the house [m].
    point_x_m, point_y_m : ndarray
        The sites' receptor points [m].
    point_site : ndarray of int
        Site of each point, 0..n_sites-1.
    n_sites : int
        Number of sites.
    chunk : int
        Candidates evaluated at once (bounds the memory).

    Returns
    -------
    ndarray, (n_candidates, n_sites)
        In the kernel's units; 0 for a site with no point.
    """
    cx = np.asarray(candidate_x_m, dtype=float)
    cy = np.asarray(candidate_y_m, dtype=float)
    px = np.asarray(point_x_m, dtype=float)
    py = np.asarray(point_y_m, dtype=float)
    site = np.asarray(point_site, dtype=np.intp)
    out = np.zeros((cx.size, n_sites))
    order = np.argsort(site, kind="stable")
    px, py, site = px[order], py[order], site[order]
    starts = np.searchsorted(site, np.arange(n_sites))
    ends = np.searchsorted(site, np.arange(n_sites), side="right")
    for a in range(0, cx.size, chunk):
        b = min(a + chunk, cx.size)
        values = kernel(px[None, :] - cx[a:b, None], py[None, :] - cy[a:b, None])
        for s in range(n_sites):
            if ends[s] > starts[s]:
                out[a:b, s] = values[:, starts[s] : ends[s]].max(axis=1)
    return out


def share_of_threshold(pct_of_level, pct_of_load, threshold_percent) -> np.ndarray:
    """max(% of level, % of load) / threshold, per site [-]: 1 means exactly at the threshold.

    Parameters
    ----------
    pct_of_level, pct_of_load : float or ndarray
        Process contribution as a share of the critical level and load [%].
    threshold_percent : float or ndarray
        Screening threshold [%], > 0.

    Returns
    -------
    ndarray
        The worse share over the threshold [-].
    """
    worst = np.maximum(np.asarray(pct_of_level, float), np.asarray(pct_of_load, float))
    return worst / np.asarray(threshold_percent, dtype=float)


def required_reduction_percent(house_share, other_share=0.0) -> np.ndarray:
    """Reduction of the house's emission [%] that brings every site to its threshold.

    Parameters
    ----------
    house_share : ndarray (n_candidates, n_sites)
        The house's PC as a share of each site's threshold (share_of_threshold).
    other_share : ndarray (n_sites,) or float
        What other sources already add at each site, as the same share (0 when the house is
        judged alone).

    Returns
    -------
    reduction_percent : ndarray (n_candidates,)
        0 where the house already passes; 100 where nothing but removing it would do (the
        others alone already reach the threshold at a site the house affects); in between,
        100 (1 - min_s (1 - other_s) / house_s). Linear in the emission, so feeding the
        reduced emission back gives exactly the threshold at the worst site.
    """
    house = np.asarray(house_share, dtype=float)
    room = 1.0 - np.broadcast_to(np.asarray(other_share, dtype=float), house.shape[-1:])
    with np.errstate(divide="ignore", invalid="ignore"):
        allowed = np.where(house > 0, room / house, np.inf)
    allowed = np.where((room <= 0) & (house > 0), 0.0, allowed)
    factor = np.clip(allowed.min(axis=-1), 0.0, 1.0)
    return 100.0 * (1.0 - factor)


def max_places(places: float, house_share, other_share=0.0, effective_reduction_percent=0.0):
    """Most whole animal places that keep every site at or under its threshold.

    ``house_share`` is for the house as described (``places`` places, with its own abatement
    if any already applied); ``effective_reduction_percent`` an extra reduction to apply on top
    (an abatement option). Whole places, rounded down.

    Parameters
    ----------
    places : float
        Places of the house as described.
    house_share : ndarray, (..., n_sites)
        The house's share of each site's threshold (:func:`share_of_threshold`) [-].
    other_share : float or ndarray, (n_sites,)
        The other sources' share of each threshold [-] (in-combination), 0 without.
    effective_reduction_percent : float
        Extra reduction of the house's emission [%].

    Returns
    -------
    ndarray
        Whole places, >= 0 (inf where the house adds nothing to any site).
    """
    house = np.asarray(house_share, dtype=float)
    room = 1.0 - np.broadcast_to(np.asarray(other_share, dtype=float), house.shape[-1:])
    remaining = 1.0 - effective_reduction_percent / 100.0
    with np.errstate(divide="ignore", invalid="ignore"):
        allowed = np.where(house > 0, room / (house * remaining), np.inf)
    allowed = np.where((room <= 0) & (house > 0), 0.0, allowed)
    factor = np.clip(allowed.min(axis=-1), 0.0, None)
    return np.floor(places * factor + 1e-9)
