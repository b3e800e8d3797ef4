"""Paths as the outputs name them: nothing of the machine's folders.

A run reads its files by their absolute paths, and its run record is built with them
(:func:`siting.output.records.run_record_base`). What is written (run.json) or shown
(report.html, which embeds the record) names each file instead relative to a folder the reader
also has:

- a file in (or under) the scenario's folder: relative to that folder, ``habitats.gpkg``,
  ``data/weather.csv`` (the packed copy in ``inputs/`` keeps the same relative path);
- a table or rule set bundled with siting: ``siting/config/abatement.toml``, its entry marked
  ``"bundled": true`` (the report adds "bundled with siting <version>");
- anything else (a file the scenario names outside its folder, the user's own tables there):
  where the output folder's package holds the copy, ``inputs/_external/weather/table.csv``,
  ``inputs/_config/abatement.toml``, ``inputs/_rules/own.toml``.

When a file lies both in the scenario's folder and in siting's package folder (the bundled
demo), the deeper of the two names it, so the demo's inputs read ``habitats.gpkg`` and its
tables ``siting/config/...``, and a scenario folder that holds a virtual environment never
names ``site-packages``. ``siting verify`` finds the packed copies from the package map and the
packed scenario, never from these names (:mod:`siting.readers.submission`).
"""

from __future__ import annotations

import copy
import os
from pathlib import Path

from siting.output.records import (
    PACKAGE_CONFIG,
    PACKAGE_EXTERNAL,
    PACKAGE_FOLDER,
    PACKAGE_RULES,
    _input_files,
)

__all__ = ["portable_record", "relative_name"]

#: The folder of the siting package (siting/), whose files a record names ``siting/...``.
_PACKAGE_DIR = Path(__file__).resolve().parents[1]

#: Sections of the run record that hold paths: each string in them that is an absolute path
#: is renamed (the title, warnings and the TOML values as written are text, left alone).
_PATH_SECTIONS = ("inputs", "config_tables", "rules", "parameters")


def relative_name(
    path: str | os.PathLike, scenario_folder: str | os.PathLike
) -> tuple[str, bool] | None:
    """A file's name relative to the scenario's folder or to siting's package folder.

    Parameters
    ----------
    path : str or PathLike
        The file (or folder); resolved first.
    scenario_folder : str or PathLike
        The scenario file's folder.

    Returns
    -------
    (str, bool) or None
        The POSIX path relative to the deeper of the two folders that holds ``path``
        (``"habitats.gpkg"``, or ``"siting/config/abatement.toml"`` for siting's own), and
        whether it is siting's own (bundled); None when neither folder holds it.
    """
    resolved = Path(path).resolve()
    best: tuple[int, str, bool] | None = None
    for root, bundled in ((Path(scenario_folder).resolve(), False), (_PACKAGE_DIR, True)):
        try:
            inside = resolved.relative_to(root).as_posix()
        except ValueError:
            continue
        if best is None or len(root.parts) > best[0]:
            name = f"siting/{inside}".removesuffix("/.") if bundled else inside
            best = (len(root.parts), name, bundled)
    return None if best is None else best[1:]


def _names(run) -> dict[str, tuple[str, bool]]:
    """{absolute path: (the name the outputs give it, bundled with siting)} of every file and
    folder a run's record may name: the inputs (holding layers too), the config tables and
    their folder, the scenario's own tables folder, the rule set."""
    scenario = run.scenario

    def entry(path: Path, packed: str) -> tuple[str, bool]:
        named = relative_name(path, scenario.folder)
        return (packed, False) if named is None else named  # outside both: the packed copy

    names: dict[str, tuple[str, bool]] = {}
    for key, path in _input_files(scenario, holding=True).items():
        if path is not None:
            packed = f"{PACKAGE_FOLDER}/{PACKAGE_EXTERNAL}/{key}/{Path(path).name}"
            names[str(Path(path))] = entry(Path(path), packed)
    tables = getattr(run, "tables", None)
    if tables is not None:
        for table in tables.files_sha256:
            path = Path(tables.folder) / table
            names[str(path)] = entry(path, f"{PACKAGE_FOLDER}/{PACKAGE_CONFIG}/{table}")
        names[str(Path(tables.folder))] = entry(
            Path(tables.folder), f"{PACKAGE_FOLDER}/{PACKAGE_CONFIG}"
        )
    own_tables = scenario.assessment.config_dir
    if own_tables is not None:
        names[str(Path(own_tables))] = entry(Path(own_tables), f"{PACKAGE_FOLDER}/{PACKAGE_CONFIG}")
    rules = getattr(run, "rules", None)
    if rules is not None and getattr(rules, "path", None) is not None:
        path = Path(rules.path)
        names[str(path)] = entry(path, f"{PACKAGE_FOLDER}/{PACKAGE_RULES}/{path.name}")
    return names


def _renamed(value, names: dict[str, tuple[str, bool]], depth: int = 0):
    """``value`` with every string that is an absolute path renamed: by ``names`` when it
    is a known file, else by its last part alone (an unknown absolute path never leaves)."""
    if depth > 20:
        return value
    if isinstance(value, str):
        if value in names:
            return names[value][0]
        if os.path.isabs(value) and "\n" not in value:
            return Path(value).name
        return value
    if isinstance(value, dict):
        return {k: _renamed(v, names, depth + 1) for k, v in value.items()}
    if isinstance(value, list):
        return [_renamed(v, names, depth + 1) for v in value]
    return value


def portable_record(record: dict, run) -> dict:
    """A copy of a run record whose paths name nothing of the machine (see the module notes).

    Parameters
    ----------
    record : dict
        The run record as built (absolute paths), e.g. by
        :func:`siting.output.records.run_record_base`.
    run : ScreenResult or Prepared
        The run it records (its scenario, tables and rule set).

    Returns
    -------
    dict
        The record with each path in ``inputs``, ``config_tables``, ``rules`` and
        ``parameters`` relative; each entry of a file bundled with siting gets
        ``"bundled": true``. ``record`` itself is not changed.
    """
    names = _names(run)
    portable = copy.deepcopy(record)
    for section in _PATH_SECTIONS:
        if section not in portable:
            continue
        value = portable[section]
        if section == "parameters" and isinstance(value, dict):
            portable[section] = {
                k: (v if k == "title" else _renamed(v, names)) for k, v in value.items()
            }
        else:
            portable[section] = _renamed(value, names)
    for section in ("inputs", "config_tables"):
        for entry in (portable.get(section) or {}).values():
            _mark_bundled(entry, names)
    _mark_bundled(portable.get("rules"), names)
    return portable


def _mark_bundled(entry, names: dict[str, tuple[str, bool]]) -> None:
    """Add ``"bundled": true`` to a record entry whose path names a file bundled with siting."""
    if not isinstance(entry, dict) or not isinstance(entry.get("path"), str):
        return
    bundled = {name for name, is_bundled in names.values() if is_bundled}
    if entry["path"] in bundled:
        entry["bundled"] = True
