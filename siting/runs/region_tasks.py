"""The tasks of a regional run and what runs them: dask (threads, one thread, a cluster) or a loop.

Tasks are plain functions of arrays (a release class's kernel, a class's near-field correction,
one tile of the grid, one chunk of farms summed at the site points, each farm's own values at
given points), so dask or a plain loop can run them anywhere. The graph is built in one fixed
order, whatever runs it, so the sums and the results are identical in every case.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.dispersion.cells import near_field_correction, place_on_cells
from siting.dispersion.convolution import tile_concentration
from siting.dispersion.grid import GridSpec
from siting.dispersion.kernels import ReleaseClass, offset_concentration_g_m3_per_g_s, unit_kernel
from siting.errors import InputError, SitingError
from siting.physics.constants import UG_PER_G
from siting.runs.region_inputs import RegionInputs, RegionOptions
from siting.runs.region_tiles import TilePlan

SCHEDULER_CONNECT_TIMEOUT_S = 10.0  # how long to wait for a dask.distributed scheduler
PAIRS_PER_TASK = 262_144  # farm x site-point pairs per task


# tasks: plain functions of arrays, so dask (or a loop) can run them anywhere


def _task_kernel(cls: ReleaseClass, weather, settings, lattice, reach_m):
    """The unit-source kernel of one release class on the offset lattice."""
    return unit_kernel(
        cls.elements(),
        weather,
        settings,
        lattice.cell_m,
        lattice.half_rows,
        lattice.half_cols,
        reach_m=reach_m,
        lattice=lattice,
    )


def _task_correction(
    kernel, cls: ReleaseClass, x, y, q, placed, weather, settings, west_m, north_m, window
):
    """The near-field correction of one class's farms (x, y [m], q [g s-1]) as placed."""
    per_batch = max(1, settings.chunk_receptors // (2 * window) ** 2)
    return near_field_correction(
        x,
        y,
        q,
        placed,
        kernel,
        cls.elements(),
        weather,
        settings,
        west_m,
        north_m,
        window,
        per_batch,
    )


def _task_tile(kernels, placed, corrections, row_range, col_range, block):
    """One tile's concentration [ug m-3]: every class's convolution, summed in class order."""
    out = np.zeros((row_range[1] - row_range[0], col_range[1] - col_range[0]))
    for kernel, cells, correction in zip(kernels, placed, corrections):
        out += tile_concentration(
            cells, kernel, row_range, col_range, block[0], block[1], correction
        )
    return out * UG_PER_G


def _pair_values(cls: ReleaseClass, fx, fy, q, px, py, weather, settings, reach_m):
    """Concentration [ug m-3] of each farm (rows) at each point (columns)."""
    dx = px[None, :] - fx[:, None]
    dy = py[None, :] - fy[:, None]
    unit = offset_concentration_g_m3_per_g_s(dx, dy, cls.elements(), weather, settings)
    if reach_m is not None:
        unit = np.where(np.hypot(dx, dy) <= reach_m, unit, 0.0)
    return q[:, None] * unit * UG_PER_G


def _task_site_sum(cls, fx, fy, q, px, py, weather, settings, reach_m):
    """The farms' total concentration [ug m-3] at each point (one class, one chunk of farms)."""
    return _pair_values(cls, fx, fy, q, px, py, weather, settings, reach_m).sum(axis=0)


class _Runner:
    """Runs lists of task calls with dask (threads, synchronous, a cluster) or a plain loop."""

    def __init__(self, scheduler: str | None, workers: int):
        self.scheduler = scheduler
        self.workers = workers
        self.client = None
        if scheduler not in (None, "none", "threads", "synchronous", "sync"):
            try:
                from distributed import Client
            except ImportError as exc:
                raise SitingError(
                    "scheduler with an address needs dask.distributed: "
                    "pip install 'siting[region]'",
                    parameters=("scheduler",),
                ) from exc
            try:
                self.client = Client(
                    scheduler, set_as_default=False, timeout=f"{SCHEDULER_CONNECT_TIMEOUT_S}s"
                )
            except Exception as exc:  # OSError, TimeoutError...
                raise InputError(
                    f"scheduler {scheduler}: cannot reach a dask scheduler there ({exc})",
                    parameters=("scheduler",),
                ) from exc

    @property
    def lazy(self) -> bool:
        return self.scheduler not in (None, "none")

    def call(self, fn, *args):
        if not self.lazy:
            return fn(*args)
        import dask

        return dask.delayed(fn, pure=False)(*args)

    def compute(self, nodes: list) -> list:
        if not self.lazy:
            return list(nodes)
        import dask

        if self.client is not None:
            return list(self.client.compute(list(nodes), sync=True))
        scheduler = "synchronous" if self.scheduler in ("sync", "synchronous") else "threads"
        return list(dask.compute(*nodes, scheduler=scheduler, num_workers=self.workers))

    def close(self):
        if self.client is not None:
            self.client.close()


def _concurrent(options: RegionOptions, workers: int) -> int:
    """Tasks that may run at once: 1 without dask or with its synchronous scheduler."""
    return 1 if options.scheduler in (None, "none", "sync", "synchronous") else workers


@dataclass(frozen=True)
class _FarmArrays:
    """The farms as task arguments: positions [m], emissions [g s-1] and the farms of each
    release class (indices into the farms frame, one array per class of inputs.classes)."""

    x_m: np.ndarray
    y_m: np.ndarray
    emission_g_s: np.ndarray
    members: list[np.ndarray]

    def at(self, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """x [m], y [m] and emission [g s-1] of the farms ``idx``."""
        return self.x_m[idx], self.y_m[idx], self.emission_g_s[idx]


def _farm_arrays(inputs: RegionInputs) -> _FarmArrays:
    """The farms' positions, emissions and release classes as arrays."""
    farms = inputs.farms
    x_m, y_m = farms["x_m"].to_numpy(float), farms["y_m"].to_numpy(float)
    emission_g_s = farms["emission_g_s"].to_numpy(float)
    class_of = {c: i for i, c in enumerate(inputs.classes)}
    farm_class = np.array([class_of[c] for c in farms["release_class"]])
    members = [np.flatnonzero(farm_class == i) for i in range(len(inputs.classes))]
    return _FarmArrays(x_m, y_m, emission_g_s, members)


def _class_tasks(runner: _Runner, inputs: RegionInputs, settings, lattice, farm, px, py):
    """Class by class: the kernel task, the farms placed on the cells, the near-field
    correction task (None without one) and the site-point sum tasks (one list of all classes').

    The tasks are made in this order whatever runs them (without dask ``runner.call`` runs each
    at once), so the sums are the same in every case.
    """
    opt, grid = inputs.options, inputs.grid
    kernels, placed, corrections, site_parts = [], [], [], []
    for cls, idx in zip(inputs.classes, farm.members):
        kernel = runner.call(_task_kernel, cls, inputs.weather, settings, lattice, opt.reach_m)
        cells = place_on_cells(
            *farm.at(idx),
            grid.west_m,
            grid.north_m,
            grid.cell_m,
            grid.n_rows,
            grid.n_cols,
            opt.placement,
        )
        kernels.append(kernel)
        placed.append(cells)
        corrections.append(
            _correction_task(runner, inputs, settings, kernel, cls, farm.at(idx), cells)
        )
        site_parts += _site_sum_tasks(runner, inputs, settings, cls, idx, farm, px, py)
    return kernels, placed, corrections, site_parts


def _correction_task(runner: _Runner, inputs: RegionInputs, settings, kernel, cls, xyq, cells):
    """The near-field correction task of one class's farms (x, y, q), or None when the
    near-field window is 0 cells."""
    grid, window = inputs.grid, inputs.options.near_field_cells
    if window <= 0:
        return None
    return runner.call(
        _task_correction,
        kernel,
        cls,
        *xyq,
        cells,
        inputs.weather,
        settings,
        grid.west_m,
        grid.north_m,
        window,
    )


def _site_sum_tasks(runner: _Runner, inputs: RegionInputs, settings, cls, idx, farm, px, py):
    """One class's farms (``idx``) summed at every site point, in tasks of up to
    PAIRS_PER_TASK farm x point pairs (none without site points)."""
    per_task = max(1, min(PAIRS_PER_TASK, settings.chunk_receptors) // max(1, px.size))
    tasks = []
    for start in range(0, idx.size, per_task) if px.size else ():
        part = idx[start : start + per_task]
        tasks.append(
            runner.call(
                _task_site_sum,
                cls,
                *farm.at(part),
                px,
                py,
                inputs.weather,
                settings,
                inputs.options.reach_m,
            )
        )
    return tasks


def _tile_tasks(runner: _Runner, grid: GridSpec, plan: TilePlan, kernels, placed, corrections):
    """One task per tile of the plan, row by row: (tasks, their (row, col) ranges)."""
    tiles, ranges = [], []
    tr, tc = plan.tile_rows, plan.tile_cols
    for r0 in range(0, grid.n_rows, tr):
        for c0 in range(0, grid.n_cols, tc):
            rr, cc = (r0, min(r0 + tr, grid.n_rows)), (c0, min(c0 + tc, grid.n_cols))
            ranges.append((rr, cc))
            tiles.append(runner.call(_task_tile, kernels, placed, corrections, rr, cc, (tr, tc)))
    return tiles, ranges


def _gather(grid: GridSpec, ranges, done: list, n_points: int):
    """The concentration grid [ug m-3] from the tiles (the first ``len(ranges)`` of ``done``,
    which are dropped from it) and the site points' total [ug m-3], parts summed in order."""
    concentration = np.empty((grid.n_rows, grid.n_cols))
    for (rr, cc), tile in zip(ranges, done[: len(ranges)]):
        concentration[rr[0] : rr[1], cc[0] : cc[1]] = tile
    del done[: len(ranges)]
    point_conc = np.zeros(n_points)
    for part in done:
        point_conc += part
    return concentration, point_conc


def _farms_at_points(runner: _Runner, inputs: RegionInputs, settings, farm, points_xy):
    """Each farm's own concentration [ug m-3] (rows) at each point (columns; ``points_xy`` is
    (n, 2) x, y [m]), one task per release class."""
    nodes = []
    for cls, idx in zip(inputs.classes, farm.members):
        nodes.append(
            runner.call(
                _pair_values,
                cls,
                *farm.at(idx),
                points_xy[:, 0],
                points_xy[:, 1],
                inputs.weather,
                settings,
                inputs.options.reach_m,
            )
        )
    by_class = runner.compute(nodes)
    values_ug_m3 = np.zeros((len(inputs.farms), len(points_xy)))
    for idx, values in zip(farm.members, by_class):
        values_ug_m3[idx] = values
    return values_ug_m3
