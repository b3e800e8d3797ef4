"""A regulator's spot-check of a submitted screening run (``siting verify``).

Given an output folder of ``siting screen`` (or a scenario plus the applicant's sites table):
1. integrity: every input and table recorded in run.json is found in the folder's inputs/ with
   the same SHA-256;
2. re-run: the packed scenario is assessed again with this version and every site and receptor
   figure is compared with the submitted one at a stated tolerance; each difference says which
   changed input (or version) explains it, when one does;
3. plausibility review: each finding gives its reason and the published range or table value it
   is judged against (this version's config/ tables, which cite their sources);
4. sensitivity, both ways: the deposition-velocity and critical-load ranges, critical level 1
   and 3 ug/m3, depletion on and off, the wind rule, claimed abatement at its lower end, the
   emission factors' uncertainty and other weather years give each site's range of % of
   critical load and level and whether its verdict flips.

Each step has its module: ``integrity.py`` (1), ``comparison.py`` (2), ``findings.py`` (3) and
``sensitivity.py`` (4); this one runs them in order and sums them up in a :class:`VerifyResult`.
Reading and writing is done by the loaders it calls (submission, scenario, tables) and by
``siting.output.verify``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from siting._version import __version__
from siting.errors import InputError, SitingError, collecting_warnings
from siting.readers.scenario import load_scenario
from siting.readers.submission import Submission, load_submission
from siting.readers.tables import load_tables
from siting.runs import screening  # screening.screen at call time: tests stand one in
from siting.runs.comparison import TOLERANCE_TEXT, compare_figures
from siting.runs.findings import Finding, review
from siting.runs.integrity import check_integrity, check_outputs
from siting.runs.screening_inputs import CAUTIONS
from siting.runs.sensitivity import sensitivity  # noqa: F401  (part of the verify API)


@dataclass
class VerifyResult:
    """Everything a verification found: integrity, differences, findings, sensitivity.

    Attributes
    ----------
    submission : Submission
        What was submitted.
    integrity : list of dict
        Each recorded input and table against its packed copy (key, file, expected and actual
        SHA-256, status "ok", "changed" or "missing").
    differences : list of dict
        Each figure differing beyond the tolerance (table, id, column, submitted, recomputed,
        relative difference, what explains it).
    findings : list of Finding
        The review's findings, the most severe first.
    sensitivity : pandas.DataFrame
        One row per (site, variant): % of critical load and level and verdict.
    sensitivity_summary : pandas.DataFrame
        One row per site: its range and whether a variant flips its verdict.
    submitted_version, this_version : str
        The siting version that wrote the submission and the one that checked it.
    warnings : list of str
        The messages of the SitingWarnings the verification raised (the re-run's among them;
        not the sensitivity variants'), in order, each once.
    """

    submission: Submission
    integrity: list[dict]
    differences: list[dict]
    findings: list[Finding]
    sensitivity: pd.DataFrame
    sensitivity_summary: pd.DataFrame
    submitted_version: str
    this_version: str
    warnings: list[str] = field(default_factory=list)

    @property
    def cautions(self) -> list[str]:
        """The cautions the verification's outputs carry."""
        return list(CAUTIONS)

    @property
    def tolerance_text(self) -> str:
        """The comparison's tolerance in words (0.1 % relative)."""
        return TOLERANCE_TEXT

    @property
    def consistent(self) -> bool:
        """True when no figure differs, no finding is high-severity and every input is intact."""
        return (
            not self.differences
            and not any(f.severity == "high" for f in self.findings)
            and all(row["status"] == "ok" for row in self.integrity)
        )

    @property
    def exit_code(self) -> int:
        """The CLI's exit code: 0 when consistent, else 1."""
        return 0 if self.consistent else 1


def _explanation(integrity: list[dict], submitted_version: str, this_version: str) -> str:
    changed = [row["key"] for row in integrity if row["status"] != "ok"]
    if changed:
        return "input(s) changed since the run (SHA-256 differs from run.json): " + ", ".join(
            changed
        )
    if submitted_version and submitted_version != this_version:
        return f"the run used siting {submitted_version}; this is siting {this_version}"
    return ""


@collecting_warnings
def verify(
    submission: Path,
    *,
    results: Path | None = None,
    reference_habitats: Path | None = None,
    name_field: str | None = None,
    weather_files=(),
) -> VerifyResult:
    """Check a submitted screening run: its inputs' hashes, a re-run, a review, a sensitivity.

    The four steps of the module docstring: integrity of every packed input and output, the
    re-run compared figure by figure, the plausibility review, and the two-sided sensitivity.

    The Python call behind ``siting verify``; write its files with
    :func:`siting.output.verify.write_verify_outputs`.

    Parameters
    ----------
    submission : str or Path
        An output folder of ``siting screen`` (inputs packed, run.json), or a scenario file
        with ``results``.
    results : Path, optional
        The applicant's sites table, with a scenario file.
    reference_habitats : Path, optional
        A reference habitat layer, to find sites left out.
    name_field : str, optional
        The reference layer's name field.
    weather_files : sequence of Path
        Other weather years, each a sensitivity variant.

    Returns
    -------
    VerifyResult
        Integrity, differences, findings and the sensitivity; ``consistent`` and ``exit_code``
        sum them up.

    Raises
    ------
    SitingError
        The submission cannot be read (InputFileError, InputError).
    """

    sub = load_submission(Path(submission), results)
    integrity = check_integrity(sub)
    submitted_version = str(sub.record.get("version", "")) if sub.record else ""
    scenario, result = _rerun(sub)
    explanation = _explanation(integrity, submitted_version, __version__)
    differences = compare_figures(sub, result, explanation)
    reviewed = review(sub, result, load_tables(), reference_habitats, name_field)
    findings = _all_findings(sub, integrity, differences, explanation, reviewed)

    long, summary = sensitivity(scenario, result, weather_files, run=screening.screen)
    return VerifyResult(
        sub, integrity, differences, findings, long, summary, submitted_version, __version__
    )


def _rerun(sub: Submission):
    """The packed scenario, read with its files where the package now holds them and its
    packed tables (when there are), and screened again without the sensitivity (verify
    runs its own, with the other weather files). Returns (scenario, result); a SitingError of
    either step becomes one InputError, "the submission cannot be re-run: ..."."""

    try:
        scenario = load_scenario(sub.scenario_path, moved=sub.moved)
        if sub.config_dir is not None and sub.config_dir.is_dir():
            scenario = scenario.model_copy(
                update={
                    "assessment": scenario.assessment.model_copy(
                        update={"config_dir": sub.config_dir}
                    )
                }
            )
        result = screening.screen(scenario, sensitivity=False)  # verify runs its own
    except SitingError as exc:
        raise InputError(
            f"the submission cannot be re-run: {exc}", parameters=getattr(exc, "parameters", ())
        ) from exc
    return scenario, result


def _all_findings(
    sub: Submission,
    integrity: list[dict],
    differences: list[dict],
    explanation: str,
    reviewed: list[Finding],
) -> list[Finding]:
    """Every finding of a verification, in the order they are reported: RESULTS_DIFFER, the
    changed or missing inputs (the last recorded first), the outputs' checks, the plausibility
    review (``reviewed``, by severity), then NO_RUN_RECORD."""
    findings = check_outputs(sub) + reviewed
    for row in integrity:
        if row["status"] != "ok":
            findings.insert(0, _input_finding(row))
    if sub.record is None:
        findings.append(
            Finding(
                "NO_RUN_RECORD",
                "info",
                "submission",
                "no run.json: inputs could not be checked against hashes",
                {},
            )
        )
    if differences:
        findings.insert(0, _results_differ_finding(differences, explanation))
    return findings


def _input_finding(row: dict) -> Finding:
    """An integrity row that is not ok (see check_integrity): INPUT_CHANGED or INPUT_MISSING."""
    return Finding(
        "INPUT_CHANGED" if row["status"] == "changed" else "INPUT_MISSING",
        "high",
        f"input {row['key']}",
        f"{row['file']} {'differs from' if row['status'] == 'changed' else 'is missing; it was'}"
        " the file the run recorded (SHA-256)",
        {
            "expected_sha256": row["expected_sha256"],
            "actual_sha256": row["actual_sha256"],
        },
    )


def _results_differ_finding(differences: list[dict], explanation: str) -> Finding:
    """RESULTS_DIFFER: how many figures differ from the re-run, and the changed input (or
    version) that explains them, if one does (see _explanation)."""
    return Finding(
        "RESULTS_DIFFER",
        "high",
        "results",
        f"{len(differences)} figure(s) differ from this version's re-run beyond the "
        "tolerance"
        + (
            f"; {explanation}"
            if explanation
            else "; no changed input explains it (edited results?)"
        ),
        {"figures": len(differences)},
    )
