"""The run record's shared parts: input files and their hashes, the packed inputs, versions.

``run.json`` of every command starts from :func:`run_record_base`; the inputs are copied into
the output folder's ``inputs/`` (:func:`package_inputs`) so ``siting verify`` can re-run them,
and every output is hashed (:func:`output_hashes`). The record is built with the files' own
(absolute) paths, which the run may still read; what is written or shown names them without
the machine's folders (:func:`siting.output.portable.portable_record`).
"""

from __future__ import annotations

import hashlib
import json
import platform
import shutil
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from siting._version import __version__
from siting.output.folder import OUTPUT_MARKER
from siting.readers.resources import config_dir


def sha256_of(path: Path) -> str:
    """SHA-256 of a file's bytes, read in blocks of 1 MiB.

    Parameters
    ----------
    path : Path
        The file.

    Returns
    -------
    str
        The digest, 64 hex digits.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def input_paths(scenario, holding: bool = False) -> list[Path]:
    """Every file a scenario run reads (for :func:`check_output_dir`), config tables included.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    holding : bool
        Include the holding and exclusion layers (a placement run).

    Returns
    -------
    list of Path
        The files, and the scenario's own config folder when it names one.
    """
    paths = list(_input_files(scenario, holding).values())
    if scenario.assessment.config_dir is not None:
        paths.append(scenario.assessment.config_dir)
    return paths


def _layer_files(key: str, path: Path) -> dict[str, Path]:
    """A vector layer's files: a shapefile is several (same stem), anything else one."""
    if path.suffix.lower() == ".shp":
        return {
            f"{key}{sidecar.suffix}": sidecar
            for sidecar in sorted(path.parent.glob(path.stem + ".*"))
        }
    return {key: path}


def _input_files(scenario, holding: bool = False) -> dict[str, Path]:
    """Every file a run reads, by a short key (scenario, weather, habitats, ...); the holding
    layers only for a placement search (``holding``)."""
    files = {"scenario": scenario.path}
    if scenario.weather.hourly is not None:
        hourly = scenario.weather.hourly
        for i, path in enumerate(hourly if isinstance(hourly, list) else [hourly], start=1):
            files["weather" if i == 1 else f"weather_{i}"] = path
    else:
        files["weather"] = scenario.weather.frequency_table
    files.update(_layer_files("habitats", scenario.habitats.file))
    rules = Path(scenario.assessment.rules)
    if rules.is_absolute():  # a rule set file (load_scenario resolved it), not a bundled id
        files["rules"] = rules
    if scenario.receptors is not None:
        files["receptors"] = scenario.receptors.file
    if holding and scenario.holding is not None:
        files.update(_layer_files("holding", scenario.holding.file))
        for i, ex in enumerate(scenario.holding.exclusion, start=1):
            files.update(_layer_files(f"exclusion_{i}", ex.file))
    return files


def run_record_base(run, run_time: str, holding: bool = False) -> dict:
    """The part of run.json every command shares: inputs and tables with SHA-256, parameters,
    weather summary, cautions and versions.

    Parameters
    ----------
    run : ScreenResult or Prepared
        Anything with .scenario, .tables, .weather_summary and .cautions.
    run_time : str
        Time of the run, ISO 8601 UTC.
    holding : bool
        Hash the holding layers too (a placement run).

    Returns
    -------
    dict
        The shared part of the run record.
    """
    inputs = {
        key: {"path": str(path), "sha256": sha256_of(path)}
        for key, path in _input_files(run.scenario, holding).items()
        if path is not None
    }
    tables = {
        name: {"path": str(run.tables.folder / name), "sha256": digest}
        for name, digest in run.tables.files_sha256.items()
    }
    return {
        "tool": "siting",
        "version": __version__,
        "run_time_utc": run_time,
        "title": run.scenario.title,
        **_project_record(run.scenario),
        "inputs": inputs,
        "config_tables": tables,
        "parameters": json.loads(run.scenario.model_dump_json(by_alias=True)),
        "weather_summary": run.weather_summary,
        "cautions": list(run.cautions),
        "versions": {"python": platform.python_version(), **_library_versions()},
        **_rules_record(getattr(run, "rules", None)),
    }


def _project_record(scenario) -> dict:
    """The scenario's [project] table as given (the date as ISO text); nothing without one."""
    project = getattr(scenario, "project", None)
    if project is None:
        return {}
    return {"project": json.loads(project.model_dump_json(exclude_none=True))}


def _rules_record(rules) -> dict:
    """The rule set the run judged by (it may be the caller's, not the scenario's)."""
    if rules is None:
        return {}
    return {
        "rules": {
            "id": rules.id,
            "title": rules.title,
            "basis": rules.basis,
            "path": str(rules.path),
            "sha256": sha256_of(rules.path),
        }
    }


#: The libraries whose versions run.json records, in this order.
_RECORDED_LIBRARIES = ("numpy", "pandas", "geopandas", "shapely", "rasterio", "folium")


def _library_versions() -> dict[str, str]:
    """The installed version of each of :data:`_RECORDED_LIBRARIES`, by name.

    Read from the installed packages' metadata, not from ``module.__version__``: importing
    folium, rasterio or geopandas only to read a string costs up to a second of start-up,
    and a command that writes no map never needs folium. A library that is not installed
    reads "not installed".
    """
    versions = {}
    for name in _RECORDED_LIBRARIES:
        try:
            versions[name] = version(name)
        except PackageNotFoundError:
            versions[name] = "not installed"
    return versions


PACKAGE_FOLDER = "inputs"


PACKAGE_CONFIG = "_config"


PACKAGE_EXTERNAL = "_external"


PACKAGE_RULES = "_rules"


def package_inputs(run, folder: Path) -> dict:
    """Copy every input of a run under ``folder/inputs`` so the output folder stands alone.

    Files inside the scenario's folder keep their path relative to it (so the copied scenario
    finds them unchanged); files elsewhere go to ``inputs/_external/<key>/``; the config tables
    used go to ``inputs/_config/``. The holding layers are packed whenever the scenario names
    them (the packed scenario must load), though only a placement run hashes them in run.json's
    inputs.

    Parameters
    ----------
    run : ScreenResult
        The run (its scenario and tables).
    folder : Path
        The (staging) output folder.

    Returns
    -------
    dict
        The package map written into run.json: {"files": {key: path under inputs/},
        "config": "_config"}, and "rules": "_rules/<file>" when the run was judged by a rule
        set file rather than a bundled set.
    """

    scenario = run.scenario
    base = scenario.folder.resolve()
    package = folder / PACKAGE_FOLDER
    files = {}
    for key, path in _input_files(scenario, holding=True).items():
        if path is None:
            continue
        path = Path(path).resolve()
        try:
            relative = path.relative_to(base)
        except ValueError:
            relative = Path(PACKAGE_EXTERNAL) / key / path.name
        target = package / relative
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(path, target)
        files[key] = relative.as_posix()
    config = package / PACKAGE_CONFIG
    config.mkdir(parents=True, exist_ok=True)
    for name in run.tables.files_sha256:
        shutil.copy2(run.tables.folder / name, config / name)
    packed = {"files": files, "config": PACKAGE_CONFIG}
    rules = getattr(run, "rules", None)
    if rules is not None and rules.path.resolve().parent != (config_dir() / "rules").resolve():
        # a rule set file given to the run (it may not be the scenario's): packed so the
        # submission can be re-run and judged by the same set
        target = package / PACKAGE_RULES / rules.path.name
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(rules.path, target)
        packed["rules"] = f"{PACKAGE_RULES}/{rules.path.name}"
    return packed


def output_hashes(folder: Path) -> dict[str, dict]:
    """{relative path: {"sha256", "bytes"}} of every output file in ``folder``.

    run.json, the marker and the packed inputs/ are left out.

    Parameters
    ----------
    folder : Path
        The (staging) output folder.

    Returns
    -------
    dict of str to dict
        Each file's SHA-256 and size [bytes], by its path relative to ``folder``.
    """
    hashes = {}
    for path in sorted(Path(folder).rglob("*")):
        relative = path.relative_to(folder).as_posix()
        if (
            not path.is_file()
            or relative in ("run.json", OUTPUT_MARKER)
            or relative.startswith("inputs/")
        ):
            continue
        hashes[relative] = {"sha256": sha256_of(path), "bytes": path.stat().st_size}
    return hashes
