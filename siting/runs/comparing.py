"""Separate screening runs side by side (``siting compare``): per-site changes and deposition
differences against the first run.

Each run is an output folder of ``siting screen``. The runs must share one grid (CRS, cell
size, origin and shape of deposition.tif) and one list of sites (the same names in the same
order); the comparison table holds every run's sites with the change of the deposition maximum
and of the share of the critical load against the first run, and each later run's deposition
field minus the first's. Orchestration only: siting.output.compare writes the files.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from siting._version import __version__
from siting.dispersion.grid import GridSpec
from siting.errors import InputError, InputWarning, collecting_warnings
from siting.output.records import sha256_of
from siting.readers.run_folders import check_run_folder, read_run_sites, run_folder_version
from siting.runs.screening_inputs import CAUTIONS

#: Each basis's site columns of the figures compared: (deposition, % of load) always, and
#: (concentration, % of level) where both tables have them.
BASIS_COLUMNS = {
    "judged": ("judged_dep_max_kg_n_ha_yr", "judged_pct_load"),
    "pc": ("pc_dep_max_kg_n_ha_yr", "pc_pct_load"),
}
BASIS_LEVEL_COLUMNS = {
    "judged": ("judged_conc_max_ug_m3", "judged_pct_level"),
    "pc": ("pc_conc_max_ug_m3", "pc_pct_level"),
}

#: What a comparison adds to the screening cautions.
COMPARE_CAUTION = (
    "Differences are between screening estimates of the same simplified model: they show the "
    "effect of the inputs changed between the runs, not a change anyone measured."
)

#: Longest run name kept in a file name [characters].
MAX_FILE_STEM = 64


@dataclass
class CompareResult:
    """Separate screening runs compared against the first.

    Attributes
    ----------
    folders : list of Path
        The run folders, in the order given (the first is the reference).
    run_names : list of str
        Each run's name in the table (its folder's name, or run_1, run_2, ... when two
        folders share a name).
    file_stems : list of str
        Each run's name made safe for a file name (letters, digits, ``_`` and ``-`` only).
    table : pandas.DataFrame
        One row per site and run: ``run``, the run's site columns (``name`` first), then
        ``change_conc_max_ug_m3``, ``change_dep_max_kg_n_ha_yr``, ``change_pct_level``,
        ``change_pct_load`` and ``change_basis`` (see :func:`site_changes`).
    differences : dict of str to ndarray
        Each later run's file stem -> its deposition field minus the first's [kg N/ha/yr];
        NaN where either is nodata.
    grid : GridSpec
        The shared grid.
    hashes : list of dict
        Per run: ``sites_csv_sha256`` and ``deposition_tif_sha256`` of the files read.
    versions : list of str or None
        The siting version each run's run.json names.
    cautions : list of str
        The cautions every output carries.
    warnings : list of str
        The warnings raised by the comparison.
    version : str
        The siting version that compared them.
    """

    folders: list[Path]
    run_names: list[str]
    file_stems: list[str]
    table: pd.DataFrame
    differences: dict[str, np.ndarray]
    grid: GridSpec
    hashes: list[dict]
    versions: list[str | None]
    cautions: list[str] = field(default_factory=lambda: [*CAUTIONS, COMPARE_CAUTION])
    warnings: list[str] = field(default_factory=list)
    version: str = __version__


def safe_file_stem(name: str, position: int) -> str:
    """A run's name as a file-name part: each character outside [A-Za-z0-9_-] becomes ``_``.

    Parameters
    ----------
    name : str
        The run's name.
    position : int
        The run's position (1 = first), used when nothing of the name is left.

    Returns
    -------
    str
        At most MAX_FILE_STEM characters; ``run_<position>`` when the name has no letter or
        digit.
    """
    stem = re.sub(r"[^A-Za-z0-9_-]", "_", str(name))[:MAX_FILE_STEM]
    return stem if re.search(r"[A-Za-z0-9]", stem) else f"run_{position}"


def _names(folders: list[Path]) -> tuple[list[str], list[str]]:
    """(run names, file stems): folder names, or positions where two share one."""
    names = [folder.name for folder in folders]
    if len(set(names)) < len(names):
        warnings.warn(
            "two or more run folders share a name; the runs are named by their position "
            f"(run_1 ... run_{len(names)}) in the table and file names",
            InputWarning,
            stacklevel=3,
        )
        names = [f"run_{i}" for i in range(1, len(folders) + 1)]
    stems = [safe_file_stem(name, i) for i, name in enumerate(names, start=1)]
    if len(set(stems)) < len(stems):  # distinct names that sanitise alike
        stems = [f"run_{i}" for i in range(1, len(folders) + 1)]
    return names, stems


def _read_deposition(folder: Path):
    """(values with NaN at nodata, CRS, transform, shape) of a run's deposition.tif."""
    import rasterio

    path = folder / "deposition.tif"
    try:
        with rasterio.open(path) as src:
            values = src.read(1, masked=True).astype("float32")
            return values.filled(np.nan), src.crs, src.transform, (src.height, src.width)
    except rasterio.errors.RasterioError as exc:
        raise InputError(f"{path}: cannot be read as a GeoTIFF: {exc}") from exc


def _grid_differences(a, b) -> list[str]:
    """What differs between two runs' grids, in words (empty when the same)."""
    (_, crs_a, t_a, shape_a), (_, crs_b, t_b, shape_b) = a, b
    found = []
    if crs_a != crs_b:
        found.append(f"CRS {crs_a} vs {crs_b}")
    if (t_a.a, t_a.b, t_a.d, t_a.e) != (t_b.a, t_b.b, t_b.d, t_b.e):
        found.append(f"cell size {t_a.a:g} m vs {t_b.a:g} m")
    if (t_a.c, t_a.f) != (t_b.c, t_b.f):
        found.append(f"origin ({t_a.c:g}, {t_a.f:g}) vs ({t_b.c:g}, {t_b.f:g})")
    if shape_a != shape_b:
        found.append(f"shape {shape_a[0]} x {shape_a[1]} vs {shape_b[0]} x {shape_b[1]} cells")
    return found


def _check_sites(first: pd.DataFrame, other: pd.DataFrame, name_a: str, name_b: str) -> None:
    """The same site names in the same order, else an InputError naming the first mismatch."""
    a, b = list(first["name"]), list(other["name"])
    if a == b:
        return
    for site in a:
        if site not in b:
            raise InputError(f"site {site!r} of run {name_a} is missing from run {name_b}")
    for site in b:
        if site not in a:
            raise InputError(f"site {site!r} of run {name_b} is missing from run {name_a}")
    row = next(i for i, (x, y) in enumerate(zip(a, b)) if x != y) if len(a) == len(b) else 0
    raise InputError(
        f"runs {name_a} and {name_b} list their sites in a different order or number "
        f"(from row {row + 1} of sites.csv); compare needs the same sites in the same order"
    )


def _number(table: pd.DataFrame, column: str) -> np.ndarray:
    return pd.to_numeric(table[column], errors="coerce").to_numpy(dtype=float)


def site_changes(first: pd.DataFrame, other: pd.DataFrame) -> pd.DataFrame:
    """The change of each site's figures in ``other`` against ``first`` (same sites, same order).

    Parameters
    ----------
    first, other : pandas.DataFrame
        Two sites tables (the columns of sites.csv).

    Returns
    -------
    pandas.DataFrame
        ``change_dep_max_kg_n_ha_yr`` [kg N ha-1 yr-1] and ``change_pct_load`` [percentage
        points], with ``change_conc_max_ug_m3`` [ug m-3] and ``change_pct_level`` where both
        tables have the concentration, and ``change_basis``: "judged" (the rule set's judged
        contribution) when both were judged on the same basis, else "pc".

    Raises
    ------
    InputError
        A table lacks the deposition or % of load columns.
    """
    # the judged figures only when both runs judged the same contribution (the same basis):
    # a net change less an installation's PC would be no change at all
    same_basis = all("basis" in t for t in (first, other)) and set(
        first["basis"].astype(str)
    ) == set(other["basis"].astype(str))
    judged = all(c in t for t in (first, other) for c in BASIS_COLUMNS["judged"])
    basis = "judged" if judged and same_basis else "pc"
    dep, pct = BASIS_COLUMNS[basis]
    for table in (first, other):
        if dep not in table or pct not in table:
            raise InputError(f"a sites.csv has no {dep} or {pct} column to compare")
    changes = {}
    conc, pct_level = BASIS_LEVEL_COLUMNS[basis]
    if all(c in t for t in (first, other) for c in (conc, pct_level)):
        changes["change_conc_max_ug_m3"] = _number(other, conc) - _number(first, conc)
    changes["change_dep_max_kg_n_ha_yr"] = _number(other, dep) - _number(first, dep)
    if "change_conc_max_ug_m3" in changes:
        changes["change_pct_level"] = _number(other, pct_level) - _number(first, pct_level)
    changes["change_pct_load"] = _number(other, pct) - _number(first, pct)
    changes["change_basis"] = basis
    return pd.DataFrame(changes)


def _check_folders(folders, out_dir) -> list[Path]:
    """The run folders checked (at least two, each with its files, none the output folder)."""
    folders = [Path(f) for f in folders]
    if len(folders) < 2:
        raise InputError(
            f"compare needs at least two run folders, got {len(folders)}",
            parameters=["run_folders"],
        )
    checked = [check_run_folder(folder) for folder in folders]
    if out_dir is not None:
        out = Path(out_dir).resolve()
        for folder in checked:
            if folder == out or out in folder.parents or folder in out.parents:
                raise InputError(
                    f"{folder}: this run folder is the output folder {out}, or one of the two "
                    "holds the other; choose another out_dir",
                    parameters=["out_dir"],
                )
    return checked


@collecting_warnings
def compare(run_folders, out_dir: Path | None = None) -> CompareResult:
    """Compare separate screening runs against the first: sites table and deposition grids.

    Parameters
    ----------
    run_folders : sequence of str or Path
        Output folders of ``siting screen`` (sites.csv and deposition.tif in each), at least
        two; the first is the reference.
    out_dir : str or Path, optional
        The comparison's output folder, checked to be none of the run folders (nor inside or
        around one).

    Returns
    -------
    CompareResult
        The comparison table, the deposition differences and what was read.

    Raises
    ------
    InputError
        Fewer than two folders; a folder without sites.csv or deposition.tif; a run folder
        that is (or holds, or lies inside) ``out_dir``; grids that differ (CRS, cell size,
        origin or shape, naming both folders); sites that differ (naming the site missing).
    """
    folders = _check_folders(run_folders, out_dir)
    names, stems = _names(folders)
    rasters = [_read_deposition(folder) for folder in folders]
    for folder, raster in zip(folders[1:], rasters[1:]):
        found = _grid_differences(rasters[0], raster)
        if found:
            raise InputError(
                f"runs {folders[0]} and {folder} are not on the same grid: {'; '.join(found)}; "
                "compare needs runs on one grid (the same [grid] spacing_m and sources)"
            )
    tables = [read_run_sites(folder) for folder in folders]
    for name, table in zip(names[1:], tables[1:]):
        _check_sites(tables[0], table, names[0], name)
    versions = [run_folder_version(folder) for folder in folders]
    if len({v for v in versions if v is not None}) > 1:
        warnings.warn(
            f"the runs were made by different versions of siting ({', '.join(map(str, versions))})",
            InputWarning,
            stacklevel=2,
        )
    rows = []
    for name, table in zip(names, tables):
        columns = ["name", *[c for c in table.columns if c != "name"]]
        part = pd.concat([table[columns], site_changes(tables[0], table)], axis=1)
        part.insert(0, "run", name)
        rows.append(part)
    first = rasters[0][0]
    _, crs, transform, (n_rows, n_cols) = rasters[0]
    grid = GridSpec(
        west_m=transform.c,
        north_m=transform.f,
        cell_m=transform.a,
        n_cols=n_cols,
        n_rows=n_rows,
        crs=crs.to_string(),
    )
    return CompareResult(
        folders=folders,
        run_names=names,
        file_stems=stems,
        table=pd.concat(rows, ignore_index=True),
        differences={stem: raster[0] - first for stem, raster in zip(stems[1:], rasters[1:])},
        grid=grid,
        hashes=[
            {
                "sites_csv_sha256": sha256_of(folder / "sites.csv"),
                "deposition_tif_sha256": sha256_of(folder / "deposition.tif"),
            }
            for folder in folders
        ],
        versions=versions,
    )
