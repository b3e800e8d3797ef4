"""Tiles of a regional grid planned against the run's memory budget (pure arithmetic).

What a regional run holds (every release class's kernel, the offset lattice, the near-field
corrections, the concentration grid twice) and what each task running at once needs (a tile's
FFT working set, or a kernel or site-point task) decide the tile size: the whole grid when it
fits, else the largest of TILE_SIZES that does, else an error saying what to change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from siting.dispersion.convolution import tile_working_bytes
from siting.errors import InputError

TILE_SIZES = (2048, 1024, 512, 256, 128, 64)  # candidates when the grid is not one tile


@dataclass(frozen=True)
class TilePlan:
    """How the grid is cut and what that needs in memory [bytes].

    Attributes
    ----------
    tile_rows, tile_cols : int
        Size of a tile [cells].
    n_tiles : int
        Tiles of the grid.
    concurrent : int
        Tasks running at once.
    held_bytes : int
        Held through the run: kernels, offset lattice, near-field corrections [bytes].
    grid_bytes : int
        One concentration grid, float64 [bytes].
    tile_bytes : int
        Working memory of one tile task [bytes].
    task_bytes : int
        Working memory of one kernel or site-point task [bytes].
    """

    tile_rows: int
    tile_cols: int
    n_tiles: int
    concurrent: int
    held_bytes: int
    grid_bytes: int
    tile_bytes: int
    task_bytes: int

    @property
    def peak_bytes(self) -> int:
        """Upper estimate of the run's peak: what is held, the grid twice, and per task at once
        the larger of a tile's FFT working set and a kernel or site-point task."""
        return (
            self.held_bytes
            + 2 * self.grid_bytes
            + self.concurrent * max(self.tile_bytes, self.task_bytes)
        )


def engine_budget_mb(memory_mb: float, concurrent: int) -> float:
    """Working memory of one engine call [MB] (DispersionSettings.memory_budget_mb).

    A tenth of the budget shared by the tasks running at once, between 1 and 256 MB.

    Parameters
    ----------
    memory_mb : float
        The run's memory budget [MB].
    concurrent : int
        Tasks running at once.

    Returns
    -------
    float
        [MB].
    """
    return float(min(256.0, max(1.0, memory_mb / (10 * max(1, concurrent)))))


def plan_tiles(
    n_rows: int,
    n_cols: int,
    n_kernels: int,
    half_rows: int,
    half_cols: int,
    budget_bytes: float,
    concurrent: int,
    engine_bytes: float,
    tile_size: int | None = None,
    n_farms: int = 0,
    window_cells: int = 0,
) -> TilePlan:
    """Pick the tile size that fits the memory budget (pure arithmetic).

    Held through the run: every class's kernel ((2 half_rows + 1) x (2 half_cols + 1) float64),
    the offset lattice (16 bytes per offset) and the near-field corrections
    (n_farms x (2 window)^2 entries of 32 bytes). Per task
    running at once, the larger of a tile's FFT working set (``convolution.tile_working_bytes``,
    blocks of farms the size of a tile) and a kernel or site-point task (the kernel's quadrant
    tables and profiles, about one float64 per offset, plus twice ``engine_bytes``, the engine
    call and our own arrays). In the tile phase the concentration grid is held twice (tiles as
    returned, assembled grid). The whole grid is one tile when it fits; else the largest of
    TILE_SIZES that fits.

    Parameters
    ----------
    n_rows, n_cols : int
        Size of the grid [cells].
    n_kernels : int
        Release classes (one kernel each).
    half_rows, half_cols : int
        Half sizes of a kernel [cells].
    budget_bytes : float
        The run's memory budget [bytes].
    concurrent : int
        Tasks running at once.
    engine_bytes : float
        Working memory of one engine call [bytes].
    tile_size : int, optional
        A tile side asked for [cells]; None picks one.
    n_farms : int
        Farms (their near-field corrections are held).
    window_cells : int
        Half width of each farm's near-field window [cells].

    Returns
    -------
    TilePlan
        The tile size and the memory figures.

    Raises
    ------
    InputError
        When no tile size fits; the message gives the figures and what to change.
    """
    n_offsets = (2 * half_rows + 1) * (2 * half_cols + 1)
    held = (
        n_kernels * 8 * n_offsets
        + 16 * n_offsets  # kernels, offset lattice
        + n_farms * (2 * window_cells) ** 2 * 32
    )  # near-field corrections
    grid = 8 * n_rows * n_cols
    task = int(8 * n_offsets + 2 * engine_bytes)
    if tile_size is not None:
        sizes = [(min(tile_size, n_rows), min(tile_size, n_cols))]
    else:
        sizes = [(n_rows, n_cols)] + [
            (min(t, n_rows), min(t, n_cols)) for t in TILE_SIZES if t < max(n_rows, n_cols)
        ]
    plan = None
    for rows, cols in sizes:
        n_tiles = math.ceil(n_rows / rows) * math.ceil(n_cols / cols)
        plan = TilePlan(
            rows,
            cols,
            n_tiles,
            max(1, concurrent),
            held,
            grid,
            tile_working_bytes(rows, cols, rows, cols),
            task,
        )
        if plan.peak_bytes <= budget_bytes:
            return plan
    mb = 1e6
    raise InputError(
        f"memory_mb {budget_bytes / mb:g} is too small for this grid ({n_cols} x {n_rows} "
        f"cells, {n_kernels} release class(es)): kernels and corrections {held / mb:.0f} MB, "
        f"grid {2 * grid / mb:.0f} MB, and {plan.concurrent} task(s) at once of "
        f"{max(plan.tile_bytes, plan.task_bytes) / mb:.0f} MB each (tiles of "
        f"{plan.tile_rows} x {plan.tile_cols} cells); need about {plan.peak_bytes / mb:.0f} "
        "MB. Raise memory_mb, use a coarser spacing_m, fewer workers, or reach_m to "
        "shorten the kernels",
        parameters=("memory_mb", "spacing_m", "workers", "reach_m"),
    )
