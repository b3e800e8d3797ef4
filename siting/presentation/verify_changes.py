"""The first section of verify.html, "What changed since the run", and its terminal lines.

:mod:`siting.runs.changes` finds what differs between a submission's run record and its
packed files and outputs (``Changes.as_dict()``); this module turns it into the values the
template ``verify.html`` lays out: each changed file with how it was compared, each differing
key (file, key, value as the run read it, value now, and what it does to the emissions of the
sources it sets, kg NH3/yr before -> after), each source's changed emission, and each output
that is missing, truncated, edited, unexpected or unreadable with its recorded and found size
and SHA-256. :func:`change_lines` gives the same in one line each for the terminal. No
checking here, and no escaping: the template escapes (autoescape), the terminal prints plain.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

from siting.presentation.formats import format_number, format_percent, is_missing
from siting.presentation.html_parts import text

#: How a value absent on one side reads.
ABSENT_TEXT = "(not in the file)"

#: Longest value shown whole; a longer one (a whole source added or removed) is cut.
_MAX_VALUE_CHARS = 160

#: What an output finding's code means, in a word or two, for the table.
_OUTPUT_STATUS = {
    "OUTPUT_MISSING": "missing",
    "OUTPUT_NOT_A_FILE": "not a plain file",
    "OUTPUT_UNEXPECTED": "not written by the run",
    "GEOTIFF_UNREADABLE": "unreadable GeoTIFF",
}

#: A key's change in words.
_CHANGE_WORDS = {"changed": "changed", "added": "added after the run",
                 "removed": "removed after the run"}  # fmt: skip


def value_text(value: Any) -> str:
    """A parsed TOML value as TOML writes it: text quoted, true/false, numbers as read,
    tables and arrays inline (cut past 160 characters); None reads "(not in the file)".

    Parameters
    ----------
    value : any
        A value of :func:`siting.runs.changes.toml_differences` (``old`` or ``new``).

    Returns
    -------
    str
        The value as text.
    """
    if value is None:
        return ABSENT_TEXT
    if isinstance(value, bool):
        shown = "true" if value else "false"
    elif isinstance(value, (int, float)):
        shown = repr(value)
    else:
        shown = json.dumps(value, ensure_ascii=False, default=str)
    return shown if len(shown) <= _MAX_VALUE_CHARS else shown[: _MAX_VALUE_CHARS - 1] + "…"


def _kg_pair(before: Any, after: Any) -> tuple[str, str]:
    """Two emissions [kg NH3 yr-1] with enough digits to tell them apart (4 at least)."""
    digits = 4
    while True:
        texts = (format_number(before, significant_digits=digits),
                 format_number(after, significant_digits=digits))  # fmt: skip
        if texts[0] != texts[1] or before == after or digits >= 10:
            return texts
        digits += 1


def emission_text(row: Mapping[str, Any]) -> str:
    """One source's emission before -> after: ``"H1: 2025 → 135.0 kg NH3/yr"``.

    Parameters
    ----------
    row : mapping
        ``source``, ``submitted_kg_yr`` and ``rerun_kg_yr`` (None where the source is absent)
        and ``differs``.

    Returns
    -------
    str
        The line; "unchanged" when the two agree within the tolerance.
    """
    source = str(row.get("source"))
    before, after = row.get("submitted_kg_yr"), row.get("rerun_kg_yr")
    if is_missing(before) and is_missing(after):
        return f"{source}: no emission on either side"
    if is_missing(before):
        derived = _kg_pair(after, after)[0]
        return f"{source}: not in the submitted sources.csv; the re-run derives {derived} kg NH3/yr"
    if is_missing(after):
        return f"{source}: {_kg_pair(before, before)[0]} kg NH3/yr submitted; not in the re-run"
    if not row.get("differs"):
        return f"{source}: unchanged, {_kg_pair(before, before)[0]} kg NH3/yr"
    a, b = _kg_pair(before, after)
    return f"{source}: {a} → {b} kg NH3/yr"


def _effect_text(row: Mapping[str, Any]) -> str | None:
    """What a key does to the emissions it sets, in words; None when it sets none."""
    effect = row.get("effect")
    if effect:
        return "; ".join(emission_text(e) for e in effect)
    return None if is_missing(row.get("effect_note")) else str(row.get("effect_note"))


def _key_row(row: Mapping[str, Any]) -> dict[str, Any]:
    change = str(row.get("change") or "changed")
    return {
        "file": text(row.get("file")),
        "key": text(row.get("key")),
        "change": _CHANGE_WORDS.get(change, change),
        "old": value_text(row.get("old")),
        "new": value_text(row.get("new")),
        "old_absent": row.get("old") is None,
        "new_absent": row.get("new") is None,
        "effect": _effect_text(row),
        "moves": any(e.get("differs") for e in row.get("effect") or ()),
    }


def _size_text(value: Any) -> str:
    return "–" if is_missing(value) else f"{int(value):,} bytes".replace(",", " ")


def _output_row(finding: Mapping[str, Any]) -> dict[str, Any]:
    """One output finding as a table row: file, what is wrong, sizes and hashes."""
    evidence = finding.get("evidence") or {}
    code = str(finding.get("code") or "")
    status = _OUTPUT_STATUS.get(code) or str(evidence.get("change") or "changed")
    expected, found = evidence.get("expected_sha256"), evidence.get("found_sha256")
    return {
        "file": text(evidence.get("file") or finding.get("subject")),
        "status": status,
        "severity": str(finding.get("severity") or ""),
        "message": text(finding.get("message")),
        "expected_bytes": _size_text(evidence.get("expected_bytes")),
        "found_bytes": _size_text(evidence.get("found_bytes")),
        "expected_sha256": None if is_missing(expected) else text(expected),
        "found_sha256": (
            None
            if is_missing(found)
            else ("same as recorded" if found == expected else text(found))
        ),
    }


def _emission_row(row: Mapping[str, Any]) -> dict[str, Any]:
    """One differing emission: source, before and after [kg NH3 yr-1], change [%] ("–" when
    the source is on one side only)."""
    before, after = row.get("submitted_kg_yr"), row.get("rerun_kg_yr")
    a, b = _kg_pair(before, after)
    if is_missing(before) or is_missing(after) or not before:
        change = "–"
    else:
        change = format_percent(100.0 * (float(after) - float(before)) / float(before), 1)
        change = change if change.startswith(("-", "−")) else "+" + change
    return {"source": text(row.get("source")), "before": a, "after": b, "change": change}


def changes_view(changes: Mapping[str, Any] | None) -> dict[str, Any] | None:
    """The values of verify.html's "What changed since the run" section.

    Parameters
    ----------
    changes : mapping or None
        ``Changes.as_dict()`` of :mod:`siting.runs.changes`: files, keys, keys_left_out,
        emissions, outputs, notes. None when the verification gave none (the section says
        nothing was compared).

    Returns
    -------
    dict or None
        ``lead`` (one sentence), ``nothing`` (True when nothing changed), ``files``,
        ``key_changes`` (not ``keys``, which a template reads as the dict's method),
        ``more_keys``, ``emissions`` (the differing ones), ``unchanged_sources`` (how many
        agree), ``outputs`` and ``notes``; None without ``changes``.
    """
    if changes is None:
        return None
    keys = [_key_row(k) for k in changes.get("keys") or ()]
    left_out = int(changes.get("keys_left_out") or 0)
    emissions = [e for e in changes.get("emissions") or () if e.get("differs")]
    outputs = [_output_row(f) for f in changes.get("outputs") or ()]
    files = [
        {"file": text(f.get("file")), "status": text(f.get("status")), "note": text(f.get("note")),
         "compared": None if is_missing(f.get("compared")) else text(f.get("compared"))}
        for f in changes.get("files") or ()
    ]  # fmt: skip
    parts = []
    if files:
        parts.append(f"{len(files)} input file(s) changed or missing")
    if keys or left_out:
        parts.append(f"{len(keys) + left_out} key(s) differ")
    if emissions:
        parts.append(f"{len(emissions)} source emission(s) differ from the submitted sources.csv")
    if outputs:
        parts.append(f"{len(outputs)} output finding(s)")
    lead = (
        "What changed: " + "; ".join(parts) + "."
        if parts
        else "Nothing changed since the run: every packed input and every output the run "
        "wrote is as run.json records it, and the re-run derives the submitted emissions."
    )
    return {
        "lead": lead,
        "nothing": not parts,
        "files": files,
        "key_changes": keys,
        "more_keys": f"{left_out} more differing key(s) are counted but not listed."
        if left_out
        else None,
        "emissions": [_emission_row(e) for e in emissions],
        "unchanged_sources": sum(1 for e in changes.get("emissions") or () if not e.get("differs")),
        "outputs": outputs,
        "notes": [text(n) for n in changes.get("notes") or ()],
    }


def change_lines(changes: Mapping[str, Any] | None) -> list[str]:
    """What changed, one plain line each, for the terminal: changed files whose keys are not
    listed, each differing key (with its effect on emissions), each differing emission no key
    explains, each output finding.

    Parameters
    ----------
    changes : mapping or None
        ``Changes.as_dict()``.

    Returns
    -------
    list of str
        The lines, in that order (the caller shows the first few and counts the rest).
    """
    if not changes:
        return []
    lines = []
    keys = list(changes.get("keys") or ())
    with_keys = {k.get("input") for k in keys}
    for f in changes.get("files") or ():
        if f.get("input") not in with_keys:
            lines.append(f"{f.get('file')}: {f.get('note')}")
    explained = set()
    for k in keys:
        effect = _effect_text(k)
        explained |= {e.get("source") for e in k.get("effect") or ()}
        lines.append(
            f"{k.get('file')} {k.get('key')}: {value_text(k.get('old'))} → "
            f"{value_text(k.get('new'))}" + (f" [{effect}]" if effect else "")
        )
    if changes.get("keys_left_out"):
        lines.append(f"{changes['keys_left_out']} more differing key(s), not listed")
    for e in changes.get("emissions") or ():
        if e.get("differs") and e.get("source") not in explained:
            lines.append(f"emission {emission_text(e)}")
    for f in changes.get("outputs") or ():
        lines.append(str(f.get("message")))
    return lines
