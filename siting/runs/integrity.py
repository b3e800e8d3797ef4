"""Step 1 of ``siting verify``: the packed inputs and the written outputs against their hashes.

:func:`check_integrity` compares every input and table recorded in run.json with its packed
copy in the folder's inputs/ (SHA-256: ok, changed or missing); :func:`check_outputs` every
output the run recorded with the file in the folder (an edited, truncated or deleted output is
a high-severity finding; a GeoTIFF is also opened and read), and the files the run did not
write.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from siting.output.folder import OUTPUT_MARKER
from siting.output.records import PACKAGE_FOLDER, sha256_of
from siting.readers.submission import Submission
from siting.runs.findings import Finding


def check_integrity(sub: Submission) -> list[dict]:
    """Each recorded input and table against its packed copy: ok, changed or missing.

    Parameters
    ----------
    sub : Submission
        The submission.

    Returns
    -------
    list of dict
        key, file, expected_sha256, actual_sha256, status; empty without a run record.
    """
    if sub.record is None:
        return []
    rows = []
    files = sub.record["package"]["files"]
    for key, entry in sub.record.get("inputs", {}).items():
        packed = sub.folder / "inputs" / files.get(key, "")
        status, actual = "missing", None
        if key in files and packed.is_file():
            actual = sha256_of(packed)
            status = "ok" if actual == entry["sha256"] else "changed"
        rows.append(
            {
                "key": key,
                "file": f"inputs/{files.get(key, '?')}",
                "expected_sha256": entry["sha256"],
                "actual_sha256": actual,
                "status": status,
            }
        )
    for name, entry in sub.record.get("config_tables", {}).items():
        packed = sub.config_dir / name
        actual = sha256_of(packed) if packed.is_file() else None
        rows.append(
            {
                "key": f"table {name}",
                "file": f"inputs/_config/{name}",
                "expected_sha256": entry["sha256"],
                "actual_sha256": actual,
                "status": "missing"
                if actual is None
                else ("ok" if actual == entry["sha256"] else "changed"),
            }
        )
    return rows


def check_outputs(sub: Submission) -> list[Finding]:
    """Each output the run recorded (run.json "outputs") against the file in the folder, and
    the files in the folder the run did not write.

    Every recorded output is checked, whatever it is (report, map, tables, GeoTIFFs, and any
    other file a version writes): missing (OUTPUT_MISSING), truncated, grown or edited
    (OUTPUT_CHANGED, with the recorded and found size and SHA-256), or a symbolic link or
    something other than a file (OUTPUT_NOT_A_FILE, not read), each high; a GeoTIFF that
    cannot be opened and read, or whose grid is not the run's, is GEOTIFF_UNREADABLE (high).
    A file outside inputs/ that the run did not write is OUTPUT_UNEXPECTED (medium; not
    checked). Records of older versions list no outputs: nothing is checked then.

    Parameters
    ----------
    sub : Submission
        The submission.

    Returns
    -------
    list of Finding
        In the order of run.json's outputs, then the unexpected files.
    """
    if sub.record is None or not isinstance(sub.record.get("outputs"), dict):
        return []
    folder = sub.folder.resolve()
    grid = _recorded_grid(sub.record)
    findings = []
    for relative, entry in sub.record["outputs"].items():
        findings += _output_findings(folder, relative, entry, grid)
    return findings + _unexpected_files(folder, set(sub.record["outputs"]))


#: Largest output hashed whatever its recorded size [bytes]; a larger one whose size is not
#: the recorded one is reported without its hash (the size already tells it changed).
_MAX_HASHED_BYTES = 256 * 2**20

#: Most unexpected files listed; beyond them the search stops.
_MAX_UNEXPECTED = 50

#: Suffixes of the outputs opened as GeoTIFFs.
_GEOTIFF_SUFFIXES = (".tif", ".tiff")


def _recorded_grid(record: dict) -> tuple[int, int] | None:
    """(columns, rows) of the run's grid from run.json, or None when not recorded as such."""
    grid = record.get("grid")
    if not isinstance(grid, dict):
        return None
    cols, rows = grid.get("n_cols"), grid.get("n_rows")
    ok = all(isinstance(n, int) and not isinstance(n, bool) and n > 0 for n in (cols, rows))
    return (cols, rows) if ok else None


def _through_link(folder: Path, relative: str) -> bool:
    """Whether ``folder/relative`` is, or lies under, a symbolic link (its real path is not the
    path as written); ``folder`` is already resolved."""
    written = os.path.normpath(folder / relative)
    return os.path.realpath(written) != written


def _output_finding(code: str, relative: str, message: str, evidence: dict) -> Finding:
    return Finding(code, "high", f"output {relative}", message, {"file": relative, **evidence})


def _output_findings(folder: Path, relative: str, entry: dict, grid) -> list[Finding]:
    """The findings of one recorded output: none when it is the file the run wrote."""
    path = folder / relative
    expected_bytes = entry.get("bytes") if isinstance(entry.get("bytes"), int) else None
    recorded = {"expected_bytes": expected_bytes, "expected_sha256": entry["sha256"]}
    if _through_link(folder, relative):
        return [_output_finding("OUTPUT_NOT_A_FILE", relative,
                                f"{relative} is a symbolic link, or lies under one: not read "
                                "(the run writes plain files only)", recorded)]  # fmt: skip
    try:
        mode = os.lstat(path).st_mode
    except FileNotFoundError:
        return [_output_finding("OUTPUT_MISSING", relative,
                                f"{relative} is missing; the run wrote it", recorded)]  # fmt: skip
    except OSError as exc:
        return [_output_finding("OUTPUT_NOT_A_FILE", relative,
                                f"{relative} cannot be examined: {exc}", recorded)]  # fmt: skip
    if not stat.S_ISREG(mode):
        return [_output_finding("OUTPUT_NOT_A_FILE", relative,
                                f"{relative} is not a plain file: not read", recorded)]  # fmt: skip
    found_bytes = path.stat().st_size
    hashed = found_bytes == expected_bytes or found_bytes <= _MAX_HASHED_BYTES
    found = {"found_bytes": found_bytes, "found_sha256": sha256_of(path) if hashed else None}
    findings = []
    if found["found_sha256"] != entry["sha256"]:
        if expected_bytes is None or found_bytes == expected_bytes:
            how, sizes = "edited", f"{found_bytes} bytes as written, but another SHA-256"
        else:
            how = "truncated" if found_bytes < expected_bytes else "grown"
            sizes = f"{found_bytes} bytes, the run wrote {expected_bytes}"
        findings.append(
            _output_finding(
                "OUTPUT_CHANGED",
                relative,
                f"{relative} is not the file the run wrote: {how} ({sizes})",
                {**recorded, **found, "change": how},
            )
        )
    if path.suffix.lower() in _GEOTIFF_SUFFIXES and (problem := _geotiff_problem(path, grid)):
        findings.append(
            _output_finding(
                "GEOTIFF_UNREADABLE", relative, f"{relative} {problem}", {**recorded, **found}
            )  # fmt: skip
        )
    return findings


def _geotiff_problem(path: Path, grid: tuple[int, int] | None) -> str | None:
    """Why a GeoTIFF output cannot be used (it does not open, its grid is not the run's, its
    cells cannot be read), or None. GDAL is told not to list the folder for side files."""
    import rasterio

    try:
        with rasterio.Env(GDAL_DISABLE_READDIR_ON_OPEN="EMPTY_DIR"), rasterio.open(path) as src:
            if grid is not None and (src.width, src.height) != grid:
                return (
                    f"has a grid of {src.width} x {src.height} cells; the run's is "
                    f"{grid[0]} x {grid[1]}: not read"
                )
            if grid is None and src.width * src.height * src.count > 10**9:
                return f"is {src.width} x {src.height} cells: too large to read"
            for band in range(1, src.count + 1):
                for _, window in src.block_windows(band):
                    src.read(band, window=window)
    except (rasterio.errors.RasterioError, OSError, ValueError) as exc:
        return f"cannot be opened and read as a GeoTIFF: {exc}"
    return None


def _unexpected_files(folder: Path, recorded: set[str]) -> list[Finding]:
    """Files (and links) outside inputs/ that the run did not write, each a finding; links
    are not followed, and the search stops after _MAX_UNEXPECTED of them."""
    expected = recorded | {"run.json", OUTPUT_MARKER}
    findings = []
    for root, dirs, files in os.walk(folder, followlinks=False):
        here = Path(root).relative_to(folder)
        if here == Path("."):
            dirs[:] = [d for d in dirs if d != PACKAGE_FOLDER]  # checked by check_integrity
        linked = [d for d in dirs if (Path(root) / d).is_symlink()]
        for name in sorted(files) + sorted(linked):
            relative = (here / name).as_posix()
            if relative in expected:
                continue
            link = (Path(root) / name).is_symlink()
            findings.append(
                Finding(
                    "OUTPUT_UNEXPECTED",
                    "medium",
                    f"file {relative}",
                    f"{relative} is in the submission but the run did not write it"
                    + (" (a symbolic link: not followed)" if link else "")
                    + "; it is not checked: do not rely on it",
                    {"file": relative, "found_bytes": None if link else _size(Path(root) / name)},
                )
            )
            if len(findings) >= _MAX_UNEXPECTED:
                return findings
    return findings


def _size(path: Path) -> int | None:
    try:
        return path.lstat().st_size
    except OSError:
        return None
