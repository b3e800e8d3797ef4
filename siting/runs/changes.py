"""What changed since a submitted run: which key of which input, and what it did to emissions.

Step 1 of ``siting verify`` says *that* a packed input no longer has the SHA-256 run.json
recorded; this module says *what* differs. For each changed TOML input (the scenario, a rule
set file) and config table it compares, key by key, the values the run read (run.json's
``toml_values``) with the packed file as it is now, naming list entries by their id (sources
by ``id``, options and exclusions by ``name``, table rows by their id or by the columns that
tell them apart, such as a factor's livestock and housing), never by position where an id
exists. A run record written before ``toml_values`` existed still gives what can be given:
the run's validated ``parameters`` against the packed scenario's (defaults filled in), and a
table against this version's bundled copy when that copy has the SHA-256 the run recorded.

Each source's emission as the submission's sources.csv states it is set beside the re-run's
derivation (kg NH3/yr before and after), and each key of a source, an emission factor row or
an abatement technique names the sources whose emission it moves. Pure comparison of data:
the files are read by :mod:`siting.readers` and the findings are made by
:mod:`siting.runs.verification`.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import PurePosixPath, PureWindowsPath

import pandas as pd

from siting.errors import InputError
from siting.output.records import sha256_of
from siting.readers.resources import config_dir
from siting.readers.submission import Submission
from siting.readers.toml_values import read_toml_values
from siting.runs.comparison import ABSOLUTE_TOLERANCE, RELATIVE_TOLERANCE

#: Keys that name an entry of a list of tables, tried in this order: the first of ``id`` and
#: ``name`` that is unique, else the fewest of the others (in order) that together are.
_IDENTITY_KEYS = ("id", "name", "livestock", "housing", "land_type", "stability", "technique",
                  "habitat", "tier", "land_cover", "figure")  # fmt: skip

#: Deepest nesting compared key by key; below it a value is compared whole.
_MAX_DEPTH = 32

#: Most key differences kept (a hostile record cannot make the report unbounded).
MAX_KEY_ROWS = 500

_PLAIN_NAME = re.compile(r"[A-Za-z0-9_\-]+")


@dataclass
class Changes:
    """What changed since the run: files, keys, emissions and outputs.

    Attributes
    ----------
    files : list of dict
        Each packed input or table that is not the one the run recorded: ``input`` (its key
        in run.json, e.g. "scenario", "table emission_factors.toml"), ``file`` (its name),
        ``status`` ("changed" or "missing"), ``compared`` (what was compared with what, in
        words; None when its keys cannot be listed), ``n_keys`` (how many keys differ; None
        when they cannot be listed) and ``note``.
    keys : list of dict
        Each differing key: ``input``, ``file``, ``key`` (in the file's terms, e.g.
        "source H1 reduction_percent", "grid.spacing_m", "factor finishing_pig fully_slatted
        nh3_kg_per_place_yr"), ``change`` ("changed", "added" or "removed"), ``old`` and
        ``new`` (None on the side where the key is absent), ``effect`` (the sources whose
        emission the key sets, each with ``source``, ``submitted_kg_yr``, ``rerun_kg_yr``
        and ``differs``; None when the key sets no source's emission) and ``effect_note``.
    emissions : list of dict
        Each source of the submitted sources.csv or of the re-run: ``source``,
        ``submitted_kg_yr`` and ``rerun_kg_yr`` [kg NH3 yr-1] (None where the source is
        absent), ``relative_difference`` and ``differs`` (beyond the comparison's tolerance).
    outputs : list of dict
        The output checks' findings (``Finding.as_dict``): missing, truncated, edited,
        unexpected or unreadable outputs.
    notes : list of str
        What could not be compared, and why.
    keys_left_out : int
        Differing keys beyond :data:`MAX_KEY_ROWS`, counted but not listed.
    """

    files: list[dict] = field(default_factory=list)
    keys: list[dict] = field(default_factory=list)
    emissions: list[dict] = field(default_factory=list)
    outputs: list[dict] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    keys_left_out: int = 0

    @property
    def changed_emissions(self) -> list[dict]:
        """The emission rows that differ beyond the tolerance."""
        return [row for row in self.emissions if row["differs"]]

    @property
    def count(self) -> int:
        """How many things changed: files, keys, differing emissions and output findings."""
        return (
            len(self.files)
            + len(self.keys)
            + self.keys_left_out
            + len(self.changed_emissions)
            + len(self.outputs)
        )

    def as_dict(self) -> dict:
        """The changes as plain data (findings.json's ``changes``).

        Returns
        -------
        dict
            files, keys, keys_left_out, emissions, outputs and notes.
        """
        return {
            "files": self.files,
            "keys": self.keys,
            "keys_left_out": self.keys_left_out,
            "emissions": self.emissions,
            "outputs": self.outputs,
            "notes": self.notes,
        }


# --- Comparing two parsed TOML structures ----------------------------------------------------


def _same(a, b, depth: int = 0) -> bool:
    """Whether two parsed values are equal: 90 and 90.0 are, true and 1 are not, NaN is NaN."""
    if isinstance(a, bool) or isinstance(b, bool):
        return type(a) is type(b) and a == b
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return a == b or (isinstance(a, float) and isinstance(b, float) and math.isnan(a)
                          and math.isnan(b))  # fmt: skip
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        return a.keys() == b.keys() and (
            depth > _MAX_DEPTH or all(_same(a[k], b[k], depth + 1) for k in a)
        )
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y, depth + 1) for x, y in zip(a, b))
    return type(a) is type(b) and a == b


def _scalar(value) -> bool:
    return isinstance(value, (str, int, float)) and not isinstance(value, bool)


def _unique(rows: list, keys: tuple) -> bool:
    """Every row has a scalar value for each of ``keys``, and no two rows the same ones."""
    seen = set()
    for row in rows:
        if not all(_scalar(row.get(k)) for k in keys):
            return False
        seen.add(tuple(str(row[k]) for k in keys))
    return len(seen) == len(rows)


def _identity(old: list, new: list) -> tuple | None:
    """The keys that name each entry of two lists of tables, or None (named by position)."""
    for key in _IDENTITY_KEYS[:2]:
        if _unique(old, (key,)) and _unique(new, (key,)):
            return (key,)
    chosen: list[str] = []
    rows = [*old, *new]
    for key in _IDENTITY_KEYS[2:]:
        if all(_scalar(row.get(key)) for row in rows):
            chosen.append(key)
            if _unique(old, tuple(chosen)) and _unique(new, tuple(chosen)):
                return tuple(chosen)
    return None


def _name(text) -> str:
    """A key or id as shown: plain names as they are, anything else quoted."""
    text = str(text)
    return text if _PLAIN_NAME.fullmatch(text) else json.dumps(text, ensure_ascii=False)


def _key_text(parts: list[tuple[str, str]]) -> str:
    """The parts of a key path as one name: keys joined by ".", an entry's id by spaces
    (``source H1 reduction_percent``, ``holding.exclusion dwellings buffer_m``)."""
    out, previous = "", None
    for kind, name in parts:
        if not out:
            out = name
        elif kind == "key" and previous == "key":
            out += "." + name
        else:
            out += " " + name
        previous = kind
    return out


def _table_list(a, b) -> bool:
    """Two lists of tables (at least one entry between them, every entry a table)."""
    return (
        isinstance(a, list)
        and isinstance(b, list)
        and bool(a or b)
        and all(isinstance(x, Mapping) for x in [*a, *b])
    )


class _Walk:
    """One comparison: the rows found so far and how it names keys."""

    def __init__(self, recorded_keys_only: bool):
        self.rows: list[dict] = []
        self.recorded_keys_only = recorded_keys_only

    def emit(self, parts, item, change: str, old, new) -> None:
        self.rows.append(
            {"key": _key_text(parts), "change": change, "old": old, "new": new, "item": item}
        )

    def compare(self, old, new, parts: list, item, depth: int) -> None:
        if depth > _MAX_DEPTH:
            if not _same(old, new):
                self.emit(parts, item, "changed", old, new)
        elif isinstance(old, Mapping) and isinstance(new, Mapping):
            for key in dict.fromkeys([*old, *new]):
                here = [*parts, ("key", _name(key))]
                if key not in old or key not in new:
                    if not self.recorded_keys_only:
                        change = "added" if key not in old else "removed"
                        self.emit(here, item, change, old.get(key), new.get(key))
                    continue
                self.compare(old[key], new[key], here, item, depth + 1)
        elif _table_list(old, new):
            self._entries(old, new, parts, item, depth)
        elif not _same(old, new):
            self.emit(parts, item, "changed", old, new)

    def _entries(self, old: list, new: list, parts: list, item, depth: int) -> None:
        """Two lists of tables, entry by entry, matched by their identity (else position)."""
        keys = _identity(old, new)

        def labelled(rows: list) -> dict:
            if keys is None:
                return {f"#{i}": row for i, row in enumerate(rows, start=1)}
            return {" ".join(_name(row[k]) for k in keys): row for row in rows}

        before, after = labelled(old), labelled(new)
        for label in dict.fromkeys([*before, *after]):
            row = before.get(label, after.get(label))
            here = [*parts, ("item", label)]
            entry = item
            if entry is None:
                identity = {k: row[k] for k in keys} if keys else {"position": label}
                entry = {"list": _key_text(parts), "identity": identity}
            if label not in before:
                self.emit(here, entry, "added", None, after[label])
            elif label not in after:
                self.emit(here, entry, "removed", before[label], None)
            else:
                self.compare(before[label], after[label], here, entry, depth + 1)


def toml_differences(old, new, *, recorded_keys_only: bool = False) -> list[dict]:
    """Key-by-key differences between two parsed TOML structures (or run records' values).

    Tables are compared key by key; lists of tables entry by entry, each entry named by its
    ``id`` or ``name`` or by the fewest identifying columns that tell the entries apart
    (``factor finishing_pig fully_slatted``), by position (``#2``) only when none do; any
    other value is compared whole (90 equals 90.0; true does not equal 1).

    Parameters
    ----------
    old, new : dict
        The values before (as the run read them) and now.
    recorded_keys_only : bool
        Leave out keys present on one side only within a table (comparing validated
        parameters of two versions, where a newer one may add settings); a whole list entry
        added or removed is still listed.

    Returns
    -------
    list of dict
        One per difference, in the order of the keys: ``key`` (the path in the file's terms:
        ``source H1 reduction_percent``, ``grid.spacing_m``), ``change`` ("changed", "added"
        or "removed"), ``old`` and ``new`` (None where absent) and ``item`` (the outermost
        list entry the key lies in: {"list", "identity"}, or None).
    """
    walk = _Walk(recorded_keys_only)
    walk.compare(old, new, [], None, 0)
    return walk.rows


# --- Emissions: the submission's sources.csv against the re-run ------------------------------


def _kg_by_source(frame: pd.DataFrame | None) -> dict[str, float]:
    """{source id: nh3_kg_yr} of a sources table (empty without the columns)."""
    if frame is None or not {"source_id", "nh3_kg_yr"} <= set(frame.columns):
        return {}
    kg = pd.to_numeric(frame["nh3_kg_yr"], errors="coerce")
    return {str(sid): float(value) for sid, value in zip(frame["source_id"], kg)}


def _beyond_tolerance(a: float | None, b: float | None) -> tuple[bool, float | None]:
    """Whether two emissions differ beyond the comparison's tolerance, and by how much."""
    if a is None or b is None:
        return True, None
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) != math.isnan(b), None
    scale = max(abs(a), abs(b))
    relative = abs(a - b) / scale if scale > 0 else 0.0
    return abs(a - b) > max(RELATIVE_TOLERANCE * scale, ABSOLUTE_TOLERANCE), relative


def emission_rows(submitted: pd.DataFrame | None, rerun: pd.DataFrame) -> list[dict]:
    """Each source's emission as submitted (sources.csv) and as the re-run derives it.

    Parameters
    ----------
    submitted : pandas.DataFrame or None
        The submission's sources table (``source_id``, ``nh3_kg_yr``); None when it has none.
    rerun : pandas.DataFrame
        The re-run's sources table.

    Returns
    -------
    list of dict
        One per source (the submitted ones in order, then those only the re-run has):
        ``source``, ``submitted_kg_yr``, ``rerun_kg_yr`` [kg NH3 yr-1] (None where absent),
        ``relative_difference`` (None when unknown) and ``differs`` (beyond 0.1 % relative,
        the figures' tolerance); empty without a submitted table.
    """
    if submitted is None:
        return []
    before, after = _kg_by_source(submitted), _kg_by_source(rerun)
    rows = []
    for source in dict.fromkeys([*before, *after]):
        a, b = before.get(source), after.get(source)
        differs, relative = _beyond_tolerance(a, b)
        rows.append(
            {
                "source": source,
                "submitted_kg_yr": a,
                "rerun_kg_yr": b,
                "relative_difference": relative,
                "differs": differs,
            }
        )
    return rows


def emission_differences(emissions: list[dict], explanation: str) -> list[dict]:
    """The differing emissions as rows of verify's figure differences (table "sources").

    Parameters
    ----------
    emissions : list of dict
        From :func:`emission_rows`.
    explanation : str
        What explains a difference (a changed input, a version change), or "".

    Returns
    -------
    list of dict
        table, id, column (``nh3_kg_yr``, or "(source)" for one present on one side only),
        submitted, recomputed, relative_difference, explained_by.
    """
    rows = []
    for row in (r for r in emissions if r["differs"]):
        one_side = row["submitted_kg_yr"] is None or row["rerun_kg_yr"] is None
        rows.append(
            {
                "table": "sources",
                "id": row["source"],
                "column": "(source)" if one_side else "nh3_kg_yr",
                "submitted": "absent" if row["submitted_kg_yr"] is None
                else ("present" if one_side else row["submitted_kg_yr"]),
                "recomputed": "absent" if row["rerun_kg_yr"] is None
                else ("present" if one_side else row["rerun_kg_yr"]),
                "relative_difference": row["relative_difference"],
                "explained_by": explanation,
            }
        )  # fmt: skip
    return rows


# --- Which keys changed in which file --------------------------------------------------------


def _recorded_values(record: dict | None, notes: list[str]) -> dict | None:
    """run.json's ``toml_values`` when it is well formed, else None (with a note why)."""
    if record is None:
        return None
    values = record.get("toml_values")
    if values is None:
        notes.append(
            "run.json was written by a version that did not record the values of its TOML "
            "inputs (toml_values): the keys of a changed scenario are listed from the run's "
            "validated parameters (defaults filled in), those of a changed config table only "
            "where this version's bundled table is the one the run used; otherwise they "
            "cannot be listed."
        )
        return None
    sections = ("inputs", "config_tables")
    if not (
        isinstance(values, dict)
        and all(isinstance(values.get(s, {}), dict) for s in sections)
        and all(isinstance(v, dict) for s in sections for v in values.get(s, {}).values())
    ):
        notes.append("run.json's toml_values is not a map of files to their values: ignored.")
        return None
    return values


def _by_file_name(value, depth: int = 0):
    """Validated parameters with every absolute path reduced to its file name: the run's
    folders are not the package's, and a file's contents are checked by its hash."""
    if depth > _MAX_DEPTH:
        return value
    if isinstance(value, str) and (
        PurePosixPath(value).is_absolute() or PureWindowsPath(value).is_absolute()
    ):
        return PurePosixPath(value.replace("\\", "/")).name
    if isinstance(value, Mapping):
        return {k: _by_file_name(v, depth + 1) for k, v in value.items()}
    if isinstance(value, list):
        return [_by_file_name(v, depth + 1) for v in value]
    return value


def _packed_path(sub: Submission, row: dict):
    """Where the package holds the file of an integrity row."""
    key = row["key"]
    if key.startswith("table "):
        return sub.config_dir / key.removeprefix("table ")
    return sub.folder / "inputs" / sub.record["package"]["files"].get(key, "")


def _bundled_table(name: str, recorded_sha256: str):
    """This version's bundled table of that name, when its SHA-256 is the recorded one."""
    path = config_dir() / name
    if "/" in name or "\\" in name or not path.is_file():
        return None
    return path if sha256_of(path) == recorded_sha256 else None


def _file_comparison(sub: Submission, row: dict, values: dict | None, parameters_now):
    """(old values, new values, what is compared in words, recorded keys only) for one
    changed file, or (None, None, why its keys cannot be listed, False)."""
    key, record = row["key"], sub.record
    is_table = key.startswith("table ")
    name = key.removeprefix("table ") if is_table else str(row["file"]).rsplit("/", 1)[-1]
    if not name.lower().endswith(".toml"):
        why = "a data file, not TOML: its keys are not listed (a figure that differs shows its effect)"
        return None, None, why, False
    section = "config_tables" if is_table else "inputs"
    recorded = (values or {}).get(section, {}).get(name if is_table else key)
    try:
        if recorded is not None:
            compared = "the values the run read (recorded in run.json) against the packed file"
            return recorded, read_toml_values(_packed_path(sub, row)), compared, False
        bundled = _bundled_table(name, row["expected_sha256"]) if is_table else None
        if bundled is not None:
            compared = (
                "this version's bundled table, which has the SHA-256 the run recorded, against "
                "the packed copy"
            )
            return (
                read_toml_values(bundled),
                read_toml_values(_packed_path(sub, row)),
                compared,
                False,
            )
    except InputError as exc:
        return None, None, f"it cannot be compared key by key: {exc}", False
    if key == "scenario" and isinstance(record.get("parameters"), dict) and parameters_now:
        compared = (
            "run.json records no values of the scenario as written (an older version): the "
            "run's validated parameters against the packed scenario's, defaults filled in "
            "and files by name"
        )
        return _by_file_name(record["parameters"]), _by_file_name(parameters_now), compared, True
    return None, None, "its keys cannot be listed: run.json records no values of it", False


def _effect(row: dict, file: str, emissions: dict[str, dict], sources: pd.DataFrame):
    """(the emissions a key sets, a note) for one differing key: a scenario source's keys set
    that source's; a factor row those of the sources with its livestock and housing; an
    abatement technique those of the sources using it; an option's keys none of the base's."""
    item = row.get("item") or {}
    identity = item.get("identity") or {}
    matched: list[str] = []
    if file == "scenario" and item.get("list") == "source" and "id" in identity:
        matched = [str(identity["id"])]
    elif file == "scenario" and item.get("list") == "option":
        return None, "an option's change: the base run's emissions do not depend on it"
    elif file == "emission_factors.toml" and item.get("list") == "factor":
        matched = _sources_where(sources, livestock=identity.get("livestock"),
                                 housing=identity.get("housing"))  # fmt: skip
    elif file == "abatement.toml" and item.get("list") == "technique":
        matched = _sources_where(sources, abatement=identity.get("id"))
    else:
        return None, None
    effect = [
        emissions.get(
            sid, {"source": sid, "submitted_kg_yr": None, "rerun_kg_yr": None, "differs": False}
        )  # fmt: skip
        for sid in matched
    ]
    effect = [{k: e[k] for k in ("source", "submitted_kg_yr", "rerun_kg_yr", "differs")}
              for e in effect]  # fmt: skip
    return effect, None if effect else "no source of the re-run uses it"


def _sources_where(sources: pd.DataFrame, **wanted) -> list[str]:
    """The ids of the re-run's sources whose columns have the wanted values."""
    if sources is None or not len(sources) or not set(wanted) <= set(sources.columns):
        return []
    mask = pd.Series(True, index=sources.index)
    for column, value in wanted.items():
        if value is None:
            return []
        mask &= sources[column].astype(str) == str(value)
    return [str(s) for s in sources.loc[mask, "source_id"]]


def what_changed(
    sub: Submission,
    integrity: list[dict],
    rerun_sources: pd.DataFrame,
    parameters_now: dict | None,
    outputs: list[dict],
) -> Changes:
    """What changed since the run: each changed input's keys, each source's emission, outputs.

    Parameters
    ----------
    sub : Submission
        The submission (its run record, packed inputs and sources table).
    integrity : list of dict
        The packed inputs and tables against their hashes (:func:`check_integrity`).
    rerun_sources : pandas.DataFrame
        The re-run's sources table (each source's derivation).
    parameters_now : dict or None
        The packed scenario's validated parameters as run.json would record them (paths
        where the package holds the files), for an older run record; None to leave them out.
    outputs : list of dict
        The output checks' findings (:func:`check_outputs`, as dicts).

    Returns
    -------
    Changes
        Files, keys (with their effect on emissions), emissions, outputs and notes.
    """
    changes = Changes(outputs=list(outputs))
    if sub.record is None:
        changes.notes.append(
            "No run record (run.json): nothing recorded to compare the inputs and outputs "
            "with; only the submitted sources table is set against the re-run."
        )
    elif "outputs" not in sub.record:
        changes.notes.append(
            "run.json records no output hashes (written by an older version): the report, "
            "map, tables and GeoTIFFs could not be checked."
        )
    if sub.sources is None:
        changes.notes.append("The submission has no sources.csv: emissions not compared.")
    changes.emissions = emission_rows(sub.sources, rerun_sources)
    by_source = {row["source"]: row for row in changes.emissions}
    values = _recorded_values(sub.record, changes.notes)
    keys: list[dict] = []
    for row in (r for r in integrity if r["status"] != "ok"):
        file = row["key"].removeprefix("table ")
        entry = {"input": row["key"], "file": row["file"], "status": row["status"],
                 "compared": None, "n_keys": None, "note": ""}  # fmt: skip
        changes.files.append(entry)
        if row["status"] == "missing":
            entry["note"] = "missing from the package: the run recorded it, the folder lacks it"
            continue
        old, new, compared, recorded_only = _file_comparison(sub, row, values, parameters_now)
        if old is None:
            entry["note"] = (
                f"changed after the run (its SHA-256 is not the recorded one); {compared}"
            )
            continue
        found = toml_differences(old, new, recorded_keys_only=recorded_only)
        entry |= {"compared": compared, "n_keys": len(found)}
        entry["note"] = "changed after the run (its SHA-256 is not the recorded one): " + (
            f"{len(found)} key(s) differ" if found else "no key differs (comments or layout only)"
        )
        for difference in found:
            effect, note = _effect(difference, "scenario" if row["key"] == "scenario" else file,
                                   by_source, rerun_sources)  # fmt: skip
            keys.append({"input": row["key"], "file": file if row["key"] != "scenario"
                         else str(row["file"]).rsplit("/", 1)[-1], **difference,
                         "effect": effect, "effect_note": note})  # fmt: skip
    changes.keys = keys[:MAX_KEY_ROWS]
    changes.keys_left_out = max(0, len(keys) - MAX_KEY_ROWS)
    return changes
