"""The files of ``siting verify``: findings.json and verify.html, written atomically."""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from siting.output.folder import check_output_dir, staged_folder
from siting.presentation.formats import shown_path
from siting.presentation.verify_report import render_verify_report

if TYPE_CHECKING:  # the type only: a run's result is written here, never computed
    from siting.runs.verification import VerifyResult


def write_verify_report(path: Path, **report) -> None:
    """Write verify.html: the page rendered from ``report``; nothing is written if it fails.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    **report
        The keyword arguments of :func:`siting.presentation.verify_report.render_verify_report`.
    """
    Path(path).write_text(render_verify_report(**report), encoding="utf-8")


def write_verify_outputs(result: VerifyResult, out_dir: Path, overwrite: bool = False) -> Path:
    """findings.json and verify.html, written atomically into ``out_dir``.

    Parameters
    ----------
    result : VerifyResult
        From :func:`siting.runs.verification.verify`.
    out_dir : str or Path
        The output folder.
    overwrite : bool
        Replace an existing output folder of siting.

    Returns
    -------
    Path
        ``out_dir``, absolute.

    Raises
    ------
    OutputExistsError
        ``out_dir`` exists without ``overwrite``, is not a folder siting wrote, is being written
        by another run, or its parent cannot be written or lacks the room.
    InterruptedAfterWriting
        Interrupted after the new folder was in place (the result is whole).
    """
    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite)
    run_time = datetime.now(UTC).replace(microsecond=0).isoformat()
    verdict = (
        "Consistent: inputs intact, the same figures with this version, no high-severity finding."
        if result.consistent
        else "Not consistent: see the findings (differences, changed inputs or high-severity "
        "findings)."
    )
    payload = {
        "submission": shown_path(result.submission.folder, out_dir),
        "submitted_version": result.submitted_version,
        "this_version": result.this_version,
        "run_time_utc": run_time,
        "consistent": result.consistent,
        "exit_code": result.exit_code,
        "tolerance": result.tolerance_text,
        "rule_sets": _rule_sets(result, out_dir),
        "changes": result.changes.as_dict(),
        "findings": [f.as_dict() for f in result.findings],
        "integrity": result.integrity,
        "differences": result.differences,
        "sensitivity_summary": result.sensitivity_summary.to_dict(orient="records"),
        "verdicts": result.verdicts,
    }
    with staged_folder(out_dir, overwrite) as staging:
        (staging / "findings.json").write_text(
            json.dumps(payload, indent=2, default=_json_default), encoding="utf-8"
        )
        write_verify_report(
            staging / "verify.html",
            submission=shown_path(result.submission.folder, out_dir),
            submitted_version=result.submitted_version,
            this_version=result.this_version,
            run_time=run_time,
            verdict=verdict,
            exit_code=result.exit_code,
            integrity=result.integrity,
            differences=result.differences,
            tolerance_text=result.tolerance_text,
            findings=[f.as_dict() for f in result.findings],
            sensitivity=result.sensitivity,
            sensitivity_summary=result.sensitivity_summary,
            cautions=result.cautions,
            verdicts=result.verdicts,
            rule_sets=result.rule_sets_text,
            changes=result.changes.as_dict(),
        )
    return out_dir


def _rule_sets(result: VerifyResult, out_dir: Path) -> dict:
    """The rule sets of a verification (findings.json): the submission's and the regulator's
    (None when none was given), each by id, title and basis, and the line that names them."""

    def described(rules) -> dict | None:
        if rules is None:
            return None
        return {
            "id": rules.id,
            "title": rules.title,
            "basis": rules.basis,
            "path": shown_path(rules.path, out_dir),
        }

    return {
        "submission": described(result.rules),
        "regulator": described(result.regulator_rules),
        "text": result.rule_sets_text,
    }


def _json_default(value):
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.floating,)):
        return None if np.isnan(value) else float(value)
    if isinstance(value, np.bool_):
        return bool(value)
    return str(value)
