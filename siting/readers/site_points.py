"""Receptor points on habitat sites: boundary samples, interior lattices, grid nodes inside.

Each site polygon gets receptor points so a small site between grid nodes is not missed: the
boundary point nearest each source, points along every ring, a representative interior point
and an interior lattice (coarsened for very large or long sites, with a warning naming them).
Vectorised over sites with shapely 2's array functions. Reading the sites is ``habitats.py``.
"""

from __future__ import annotations

import warnings

import numpy as np
import shapely

from siting.errors import AccuracyWarning

MAX_POINTS_PER_SITE = 1500


def site_sample_points(geometries, source_x_m, source_y_m, spacing_m: float):
    """Receptor points on each site polygon.

    For each polygon: the boundary point nearest each source, a representative interior point,
    and a lattice of points inside at ``spacing_m`` (coarsened so no site gets more than
    MAX_POINTS_PER_SITE lattice points, nor tests more than MAX_LATTICE_CANDIDATES candidate
    points of its bounding box: a very long thin site gets a sparser lattice, see
    :func:`coarsened_sites`). The interior lattice (and representative point) gives the site
    mean, all points its maximum. Vectorised over sites (shapely 2 array functions), so 10,000
    sites take well under a second.

    Parameters
    ----------
    geometries : sequence of shapely geometry
        The sites' polygons, in the run's CRS [m].
    source_x_m, source_y_m : sequence of float
        The sources' positions [m].
    spacing_m : float
        Lattice spacing inside the sites [m], > 0.

    Returns
    -------
    site_index : ndarray of int
        Site of each point.
    x_m, y_m : ndarray
        Point coordinates [m].
    is_interior : ndarray of bool
        Whether a point belongs to the interior sample (used for the mean).
    """
    geoms = np.asarray(list(geometries), dtype=object)
    n = geoms.size
    parts = []
    if n and len(source_x_m):
        boundaries = shapely.boundary(geoms)
        for sx, sy in zip(source_x_m, source_y_m):
            line = shapely.shortest_line(boundaries, shapely.points(sx, sy))
            start = shapely.get_coordinates(shapely.get_point(line, 0))
            parts.append((np.arange(n), start[:, 0], start[:, 1], np.zeros(n, bool)))
    if n:
        rep = shapely.get_coordinates(shapely.point_on_surface(geoms))
        parts.append((np.arange(n), rep[:, 0], rep[:, 1], np.ones(n, bool)))
        lattice = _lattice_points(geoms, spacing_m)
        parts.append((*lattice, np.ones(lattice[0].size, bool)))
    if not parts:
        return (np.zeros(0, int), np.zeros(0), np.zeros(0), np.zeros(0, bool))
    index, xs, ys, interior = (np.concatenate(column) for column in zip(*parts))
    return index.astype(int), xs.astype(float), ys.astype(float), interior.astype(bool)


MAX_LATTICE_CANDIDATES = 6000  # candidate points tested per site's bounding box
_CANDIDATES_PER_BATCH = 2_000_000  # bounds the memory of one vectorised containment test


def lattice_step_m(geoms, spacing_m: float) -> np.ndarray:
    """Lattice step of each site [m]: ``spacing_m``, widened so that a site gets at most
    MAX_POINTS_PER_SITE points and its bounding box at most MAX_LATTICE_CANDIDATES.

    Parameters
    ----------
    geoms : ndarray of shapely geometry
        The sites' polygons [m].
    spacing_m : float
        The spacing asked for [m], > 0.

    Returns
    -------
    ndarray
        One step per site [m], >= ``spacing_m``.
    """
    bounds = shapely.bounds(geoms).reshape(-1, 4)
    box_area = (bounds[:, 2] - bounds[:, 0]) * (bounds[:, 3] - bounds[:, 1])
    return np.maximum.reduce(
        [
            np.full(len(bounds), float(spacing_m)),
            np.sqrt(shapely.area(geoms) / MAX_POINTS_PER_SITE),
            np.sqrt(box_area / MAX_LATTICE_CANDIDATES),
        ]
    )


def _batched_cells(counts: np.ndarray):
    """Yield (site, k) arrays: site index and cell number 0..counts[site]-1 of every candidate
    cell, in batches of whole sites of at most _CANDIDATES_PER_BATCH cells (one site may
    exceed it alone)."""
    first = 0
    while first < counts.size:
        last, total = first + 1, counts[first]
        while last < counts.size and total + counts[last] <= _CANDIDATES_PER_BATCH:
            total += counts[last]
            last += 1
        sel = np.arange(first, last)
        site = np.repeat(sel, counts[sel])
        yield (
            site,
            np.arange(site.size) - np.repeat(np.cumsum(counts[sel]) - counts[sel], counts[sel]),
        )
        first = last


def _lattice_points(geoms, spacing_m: float):
    """(site_index, x, y) of the lattice points inside each site, in batches of sites."""
    bounds = shapely.bounds(geoms).reshape(-1, 4)
    step = lattice_step_m(geoms, spacing_m)
    n_x = np.maximum(np.ceil((bounds[:, 2] - bounds[:, 0] - step / 2) / step), 0).astype(int)
    n_y = np.maximum(np.ceil((bounds[:, 3] - bounds[:, 1] - step / 2) / step), 0).astype(int)
    counts = n_x * n_y
    out_index, out_x, out_y = [np.zeros(0, int)], [np.zeros(0)], [np.zeros(0)]
    for site, k in _batched_cells(counts):
        col, row = k % np.maximum(n_x[site], 1), k // np.maximum(n_x[site], 1)
        x = bounds[site, 0] + step[site] * (col + 0.5)
        y = bounds[site, 1] + step[site] * (row + 0.5)
        inside = shapely.contains_xy(geoms[site], x, y)
        out_index.append(site[inside])
        out_x.append(x[inside])
        out_y.append(y[inside])
    return np.concatenate(out_index), np.concatenate(out_x), np.concatenate(out_y)


MAX_BOUNDARY_POINTS_PER_SITE = 5000  # 50 km of boundary at 10 m


def _boundary_counts(rings, spacing_m: float, ring_site, n_sites: int) -> np.ndarray:
    """Points on each ring: one every ``spacing_m`` (at least 8), scaled down so no site
    gets more than MAX_BOUNDARY_POINTS_PER_SITE."""
    counts = np.maximum(8, np.ceil(shapely.length(rings) / spacing_m)).astype(int)
    per_site = np.bincount(ring_site, weights=counts, minlength=n_sites)
    scale = np.minimum(1.0, MAX_BOUNDARY_POINTS_PER_SITE / np.maximum(per_site, 1))
    return np.maximum(8, np.floor(counts * scale[ring_site])).astype(int)


def _rings(geoms):
    """Every ring (exteriors and holes) of every polygon part, with its site index."""
    parts, part_site = shapely.get_parts(geoms, return_index=True)
    rings, ring_part = shapely.get_rings(parts, return_index=True)
    return rings, part_site[ring_part]


def site_boundary_points(geometries, spacing_m: float):
    """Points along every ring of each site, every ``spacing_m`` (at least 8 per ring, at most
    MAX_BOUNDARY_POINTS_PER_SITE per site: see :func:`coarsened_sites`).

    Any point outside a site then has its nearest boundary point within spacing_m / 2 of a
    sample, wherever the source is.

    Parameters
    ----------
    geometries : sequence of shapely geometry
        The sites' polygons [m].
    spacing_m : float
        Spacing along the boundary [m], > 0.

    Returns
    -------
    site_index : ndarray of int
        Site of each point.
    x_m, y_m : ndarray
        Point coordinates [m].
    """
    geoms = np.asarray(list(geometries), dtype=object)
    if not geoms.size:
        return np.zeros(0, int), np.zeros(0), np.zeros(0)
    rings, ring_site = _rings(geoms)
    counts = _boundary_counts(rings, spacing_m, ring_site, geoms.size)
    ring_of = np.repeat(np.arange(rings.size), counts)
    k = np.arange(ring_of.size) - np.repeat(np.cumsum(counts) - counts, counts)
    along = shapely.length(rings)[ring_of] * k / counts[ring_of]
    coords = shapely.get_coordinates(shapely.line_interpolate_point(rings[ring_of], along))
    return ring_site[ring_of].astype(int), coords[:, 0].astype(float), coords[:, 1].astype(float)


def grid_nodes_in_sites(geometries, grid) -> tuple[np.ndarray, np.ndarray]:
    """(node, site) pairs of the grid nodes strictly inside each site.

    A node is the flat row-major index of ``grid.centres()``. Each site tests only the nodes of
    its bounding box, in batches, so 10,000 sites on a 2-million-node grid take about a second.

    Parameters
    ----------
    geometries : sequence of shapely geometry
        The sites' polygons [m].
    grid : GridSpec
        The receptor grid.

    Returns
    -------
    node : ndarray of int
        Flat index of each node inside a site.
    site : ndarray of int
        The site it is inside.
    """
    geoms = np.asarray(list(geometries), dtype=object)
    if not geoms.size:
        return np.zeros(0, int), np.zeros(0, int)
    b = shapely.bounds(geoms).reshape(-1, 4)
    cell = grid.cell_m
    col0 = np.clip(np.ceil((b[:, 0] - grid.west_m) / cell - 0.5), 0, grid.n_cols).astype(int)
    col1 = np.clip(np.floor((b[:, 2] - grid.west_m) / cell - 0.5) + 1, 0, grid.n_cols).astype(int)
    row0 = np.clip(np.ceil((grid.north_m - b[:, 3]) / cell - 0.5), 0, grid.n_rows).astype(int)
    row1 = np.clip(np.floor((grid.north_m - b[:, 1]) / cell - 0.5) + 1, 0, grid.n_rows).astype(int)
    n_x, n_y = np.maximum(col1 - col0, 0), np.maximum(row1 - row0, 0)
    counts = n_x * n_y
    nodes, sites = [np.zeros(0, int)], [np.zeros(0, int)]
    for site, k in _batched_cells(counts):
        col = col0[site] + k % np.maximum(n_x[site], 1)
        row = row0[site] + k // np.maximum(n_x[site], 1)
        x = grid.west_m + (col + 0.5) * cell
        y = grid.north_m - (row + 0.5) * cell
        inside = shapely.contains_xy(geoms[site], x, y)
        nodes.append((row * grid.n_cols + col)[inside])
        sites.append(site[inside])
    return np.concatenate(nodes).astype(int), np.concatenate(sites).astype(int)


def coarsened_sites(geometries, names, spacing_m: float, boundary_spacing_m: float) -> list[str]:
    """The sites whose sample points were spaced wider than asked (very large or very long
    polygons), with an AccuracyWarning naming them, so the bounded number of points is never
    silent.

    Parameters
    ----------
    geometries : sequence of shapely geometry
        The sites' polygons [m].
    names : sequence of str
        The sites' names, for the warning.
    spacing_m : float
        Lattice spacing asked for inside the sites [m].
    boundary_spacing_m : float
        Spacing asked for along the boundaries [m].

    Returns
    -------
    list of str
        The names of those sites (empty when there are none).

    Warns
    -----
    AccuracyWarning
        One, naming up to five of those sites.
    """
    geoms = np.asarray(list(geometries), dtype=object)
    if not geoms.size:
        return []
    names = np.asarray(list(names), dtype=object)
    wide = lattice_step_m(geoms, spacing_m) > spacing_m * (1 + 1e-9)
    rings, ring_site = _rings(geoms)
    asked = np.maximum(8, np.ceil(shapely.length(rings) / boundary_spacing_m))
    given = _boundary_counts(rings, boundary_spacing_m, ring_site, geoms.size)
    wide |= np.bincount(ring_site, weights=given < asked, minlength=geoms.size) > 0
    if not wide.any():
        return []
    listed = ", ".join(f'"{name}"' for name in names[wide][:5])
    more = f" and {int(wide.sum()) - 5} more" if wide.sum() > 5 else ""
    warnings.warn(
        f"{int(wide.sum())} very large or long site(s) ({listed}{more}): their sample "
        f"points are spaced wider than asked (at most {MAX_POINTS_PER_SITE} inside and "
        f"{MAX_BOUNDARY_POINTS_PER_SITE} on the boundary per site); the point nearest each "
        "source and the grid nodes inside them still count",
        AccuracyWarning,
        stacklevel=2,
    )
    return [str(name) for name in names[wide]]


def site_outline_points(geometries, spacing_m: float):
    """Receptor points on each site for positions not known in advance (placement search).

    The boundary every ``spacing_m`` plus the interior lattice of :func:`site_sample_points`.

    Parameters
    ----------
    geometries : sequence of shapely geometry
        The sites' polygons [m].
    spacing_m : float
        Spacing along the boundary and of the interior lattice [m], > 0.

    Returns
    -------
    site_index : ndarray of int
        Site of each point.
    x_m, y_m : ndarray
        Point coordinates [m].
    """
    b_index, bx, by = site_boundary_points(geometries, spacing_m)
    lattice_index, lx, ly, interior = site_sample_points(geometries, [], [], spacing_m)
    return (
        np.concatenate([b_index, lattice_index[interior]]),
        np.concatenate([bx, lx[interior]]),
        np.concatenate([by, ly[interior]]),
    )
