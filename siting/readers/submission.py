"""Reading a submitted screening run for ``siting verify``.

A submission is an output folder of ``siting screen`` (run.json, sites.csv, receptors.csv and
the packed inputs) or a scenario plus the applicant's sites table. The folder is treated as
untrusted: every path its record names must stay inside it.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from pathlib import Path, PurePosixPath

import pandas as pd

from siting.errors import InputError, InputFileError
from siting.readers.csv_cells import spreadsheet_text
from siting.readers.scenario import named_files


@dataclass
class Submission:
    """What was submitted: its folder, run record, tables and the packed scenario.

    Attributes
    ----------
    folder : Path
        The submitted output folder (or the scenario file's folder).
    record : dict or None
        The run record (run.json); None for a scenario with a sites table.
    sites : pandas.DataFrame
        The submitted sites table (sites.csv, or the ``results`` table given).
    receptors : pandas.DataFrame or None
        The submitted receptors table, where there is one.
    scenario_path : Path
        The scenario to re-run (the packed copy in ``inputs/``).
    moved : dict of str to Path
        Each packed input's original absolute path -> where it is now.
    config_dir : Path or None
        The packed config tables; None to use the scenario's own.
    sources : pandas.DataFrame or None
        The submitted sources table (sources.csv: each source's emission derivation), where
        there is one.
    """

    folder: Path
    record: dict | None
    sites: pd.DataFrame
    receptors: pd.DataFrame | None
    scenario_path: Path
    moved: dict[str, Path]
    config_dir: Path | None
    sources: pd.DataFrame | None = None


def _read_csv(path: Path, what: str, parameters: tuple[str, ...] = ()) -> pd.DataFrame:
    try:
        table = pd.read_csv(path, dtype={"id": str, "site_id": str, "source_id": str, "name": str})
    except FileNotFoundError as exc:
        raise InputFileError(f"{what}: {path} not found", parameters=parameters) from exc
    except Exception as exc:  # pandas raises many types
        raise InputError(
            f"{what}: {path.name} cannot be read as CSV: {exc}", parameters=parameters
        ) from exc
    for col in table.columns:  # text made spreadsheet-safe by outputs.write_csv, read back
        if pd.api.types.is_object_dtype(table[col]) or pd.api.types.is_string_dtype(table[col]):
            table[col] = table[col].map(spreadsheet_text)
    return table


def load_submission(path: Path, results: Path | None = None) -> Submission:
    """Read a submission: an output folder of `screen`, or a scenario file plus a sites table.

    Parameters
    ----------
    path : str or Path
        An output folder of ``siting screen`` (with run.json and inputs/), or a scenario file.
    results : Path, optional
        The applicant's sites table, needed with a scenario file (ignored for a folder).

    Returns
    -------
    Submission
        The folder, run record, tables and where the packed inputs are.

    Raises
    ------
    InputFileError
        No such folder or file, or a folder without run.json.
    InputError
        A scenario without a sites table, an unreadable run record or table, or a record
        without the package map of the packed inputs.
    """
    path = Path(path)
    if path.is_file():
        if results is None:
            raise InputError(
                f"{path.name}: a scenario file needs the applicant's sites table, given as "
                "results (their sites.csv)",
                parameters=("results",),
            )
        sites = _read_csv(results, "results", parameters=("results",))
        return Submission(path.parent, None, sites, None, path.resolve(), {}, None)
    if not path.is_dir():
        raise InputFileError(f"{path}: no such submission folder or scenario file")
    record_path = path / "run.json"
    try:
        record = json.loads(record_path.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise InputFileError(
            f"{path}: no run.json; is this an output folder of `siting screen`?"
        ) from exc
    except (json.JSONDecodeError, UnicodeDecodeError, RecursionError) as exc:
        raise InputError(f"{record_path}: not readable JSON: {exc}") from exc
    if not isinstance(record, dict):
        raise InputError(f"{record_path}: not a run record (a JSON object expected)")
    package = record.get("package")
    if not isinstance(package, dict) or "files" not in package:
        raise InputError(
            f"{record_path}: no package map; the folder was written by a version "
            "that did not pack its inputs (re-run `siting screen`)"
        )
    inputs = path / "inputs"
    _check_record(record, record_path, inputs)
    files = package["files"]
    if "scenario" not in files:
        raise InputError(f"{record_path}: the package map names no scenario")
    original_folder = Path(record.get("inputs", {}).get("scenario", {}).get("path", ".")).parent
    moved: dict[str, Path] = {}

    def move(original: str, now: Path) -> None:
        """Where the packed scenario will look for a file it named, and where it is now: an
        absolute name stays as written; a relative one now resolves against inputs/. A record
        written since its paths are relative says nothing of where the files were: the
        packed scenario's own names map them (below)."""
        if not Path(original).is_absolute():
            return
        original_path = Path(original).resolve()
        moved[str(original_path)] = now.resolve()
        relative = os.path.relpath(original_path, original_folder.resolve())
        moved[str(Path(os.path.normpath(scenario_folder / relative)))] = now.resolve()

    scenario_folder = (inputs / files["scenario"]).resolve().parent
    for key, relative in files.items():
        original = record.get("inputs", {}).get(key, {}).get("path")
        if original:
            move(original, inputs / relative)
    config_dir = inputs / package.get("config", "_config")
    for entry in record.get("config_tables", {}).values():  # the tables' own folder, packed
        move(str(Path(entry["path"]).parent), config_dir)
        break
    try:  # each file as the packed scenario names it (absolute or relative) -> its packed copy
        named = named_files(inputs / files["scenario"])
    except (InputError, InputFileError):
        named = {}  # the re-run says what is wrong with the scenario
    for key, written in named.items():
        suffixed = files.get(key, files.get(key + Path(written).suffix))
        packed = package.get("config", "_config") if key == "config_dir" else suffixed
        if not packed:
            continue
        try:
            where = Path(written)  # as scenario.load_scenario resolves it
            where = where if where.is_absolute() else (scenario_folder / where).resolve()
        except (ValueError, OSError):  # a name no file can have (a NUL in it): the re-run says so
            continue
        moved[str(where)] = (inputs / packed).resolve()
    sites = _read_csv(results if results else path / "sites.csv", "sites table")
    receptors = (
        _read_csv(path / "receptors.csv", "receptors table")
        if (path / "receptors.csv").exists()
        else None
    )
    try:  # only set beside the re-run's emissions: an unreadable one is left out, not fatal
        sources = _read_csv(path / "sources.csv", "sources table")
    except InputError:
        sources = None
    return Submission(
        path,
        record,
        sites,
        receptors,
        (inputs / files["scenario"]).resolve(),
        moved,
        config_dir,
        sources,
    )


def _inside(folder: Path, relative, what: str, record_path: Path) -> None:
    """A path named by a submitted record must stay inside the package's inputs/ folder."""
    if not isinstance(relative, str) or not relative.strip() or "\x00" in relative:
        raise InputError(f"{record_path}: {what} must be a file name, got {relative!r}")
    target = (folder / relative).resolve()
    if Path(relative).is_absolute() or not (
        target == folder.resolve() or folder.resolve() in target.parents
    ):
        raise InputError(
            f"{record_path}: {what} {relative!r} points outside the package "
            f"({folder.name}/); a submission is read only inside itself"
        )


def _inside_lexically(relative, what: str, record_path: Path) -> None:
    """An output named by a submitted record is a relative path without "..": it stays inside
    the folder as written. Whether a symbolic link takes it elsewhere is a finding of the
    outputs' check (which then does not read it), not a refusal."""
    if not isinstance(relative, str) or not relative.strip() or "\x00" in relative:
        raise InputError(f"{record_path}: {what} must be a file name, got {relative!r}")
    pure = PurePosixPath(relative.replace("\\", "/"))
    if pure.is_absolute() or Path(relative).is_absolute() or ".." in pure.parts:
        raise InputError(
            f"{record_path}: {what} {relative!r} points outside the package; a submission "
            "is read only inside itself"
        )


def _check_record(record: dict, record_path: Path, inputs: Path) -> None:
    """A submitted run.json is untrusted: every entry the verification uses is of the expected
    kind, and every path it names stays inside the package (one InputError line if not)."""
    package = record["package"]
    files = package["files"]
    if not isinstance(files, dict):
        raise InputError(f"{record_path}: package.files must be a map of input key to file")
    for key, relative in files.items():
        _inside(inputs, relative, f"package.files.{key}", record_path)
    _inside(inputs, package.get("config", "_config"), "package.config", record_path)
    if "rules" in package:
        _inside(inputs, package["rules"], "package.rules", record_path)
    # hashed files: inputs (anywhere, by key), config tables (in inputs/_config), outputs (in
    # the submission folder, by their relative path)
    within = {"inputs": None, "config_tables": inputs / "_config", "outputs": record_path.parent}
    for section, folder in within.items():
        entries = record.get(section, {})
        if not isinstance(entries, dict):
            raise InputError(
                f"{record_path}: {section} must be a map, got {type(entries).__name__}"
            )
        for key, entry in entries.items():
            if not isinstance(entry, dict) or not isinstance(entry.get("sha256"), str):
                raise InputError(f"{record_path}: {section}.{key} needs a sha256 text")
            if "path" in entry and not isinstance(entry["path"], str):
                raise InputError(f"{record_path}: {section}.{key}.path must be text")
            if section == "outputs":
                _inside_lexically(key, f"{section}.{key}", record_path)
            elif folder is not None:
                _inside(folder, key, f"{section}.{key}", record_path)
