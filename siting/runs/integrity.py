"""Step 1 of ``siting verify``: the packed inputs and the written outputs against their hashes.

:func:`check_integrity` compares every input and table recorded in run.json with its packed
copy in the folder's inputs/ (SHA-256: ok, changed or missing); :func:`check_outputs` every
output the run recorded with the file in the folder (an edited, truncated or deleted output is
a high-severity finding).
"""

from __future__ import annotations

from siting.output.records import sha256_of
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
    """Each output the run recorded (run.json "outputs") against the file in the folder.

    An edited, truncated or deleted output is a finding (records of older versions have none).

    Parameters
    ----------
    sub : Submission
        The submission.

    Returns
    -------
    list of Finding
        OUTPUT_MISSING and OUTPUT_CHANGED findings (high severity).
    """
    if sub.record is None or "outputs" not in sub.record:
        return []
    findings = []
    for relative, entry in sub.record["outputs"].items():
        path = sub.folder / relative
        if not path.is_file():
            findings.append(
                Finding(
                    "OUTPUT_MISSING",
                    "high",
                    f"output {relative}",
                    f"{relative} is missing; the run wrote it",
                    {},
                )
            )
            continue
        actual = sha256_of(path)
        if actual != entry["sha256"]:
            findings.append(
                Finding(
                    "OUTPUT_CHANGED",
                    "high",
                    f"output {relative}",
                    f"{relative} differs from the file the run wrote (SHA-256"
                    + (
                        f"; {path.stat().st_size} bytes, written {entry['bytes']}"
                        if isinstance(entry.get("bytes"), int)
                        else ""
                    )
                    + "): edited or truncated",
                    {"expected_sha256": entry["sha256"], "actual_sha256": actual},
                )
            )
    return findings
