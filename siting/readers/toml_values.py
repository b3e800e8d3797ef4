"""The values of a run's TOML inputs, as plain JSON data: what ``siting verify`` compares.

A screening run records in run.json (``toml_values``) the parsed values of its scenario, of a
rule set file it was given and of every config table it used, so that a verifier can later
say which key of a packed file changed and from what to what (:mod:`siting.runs.changes`).
The values are TOML parsed by :mod:`tomllib`, made JSON-safe (dates and times as ISO 8601
text); comments and layout are not kept. Nothing here validates a scenario or a table: that is
:mod:`siting.readers.scenario` and :mod:`siting.readers.tables`.
"""

from __future__ import annotations

import datetime as _dt
import tomllib
from collections.abc import Mapping
from pathlib import Path

from siting.errors import InputError


def _json_safe(value, depth: int = 0):
    """A parsed TOML value as JSON data: tables and arrays kept, dates and times as text."""
    if depth > 64:  # TOML nests no deeper in practice; a hostile file is cut here
        return str(value)
    if isinstance(value, Mapping):
        return {str(k): _json_safe(v, depth + 1) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe(v, depth + 1) for v in value]
    if isinstance(value, (_dt.datetime, _dt.date, _dt.time)):
        return value.isoformat()
    return value


def read_toml_values(path: str | Path) -> dict:
    """A TOML file's values as JSON data (tables as dicts, arrays as lists, times as text).

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    dict
        The parsed values.

    Raises
    ------
    InputError
        The file cannot be read or is not valid TOML (the message names the file).
    """
    path = Path(path)
    try:
        with open(path, "rb") as handle:
            parsed = tomllib.load(handle)
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path.name}: cannot be read: {exc}") from exc
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path.name}: not valid TOML: {exc}") from exc
    except RecursionError as exc:
        raise InputError(f"{path.name}: nested too deeply to read") from exc
    return _json_safe(parsed)


def recorded_toml_values(inputs: Mapping, config_tables: Mapping) -> dict:
    """What run.json records as ``toml_values``: each TOML input's and table's values.

    Parameters
    ----------
    inputs : mapping
        run.json's ``inputs``: {key: {"path", "sha256"}}; the entries whose path ends in
        ``.toml`` (the scenario, a rule set file) are read.
    config_tables : mapping
        run.json's ``config_tables``: {file name: {"path", "sha256"}}; every one is read.

    Returns
    -------
    dict
        {"inputs": {key: values}, "config_tables": {file name: values}}; a file that cannot be
        read is left out (its hash still tells whether it changed).
    """
    recorded: dict = {"inputs": {}, "config_tables": {}}
    for section, entries, every in (
        ("inputs", inputs, False),
        ("config_tables", config_tables, True),
    ):
        for key, entry in entries.items():
            path = entry.get("path") if isinstance(entry, Mapping) else None
            if not path or not (every or str(path).lower().endswith(".toml")):
                continue
            try:
                recorded[section][key] = read_toml_values(path)
            except InputError:
                continue
    return recorded
