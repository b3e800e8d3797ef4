"""A regulator's spot-check of a submitted screening run (``siting verify``).

Given an output folder of ``siting screen`` (or a scenario plus the applicant's sites table):
1. integrity: every input and table recorded in run.json is found in the folder's inputs/ with
   the same SHA-256, and every output the run wrote is in the folder as it was written; what
   changed is said key by key (which key of which file, old and new value, and what it does
   to each source's emission);
2. re-run: the packed scenario is assessed again with this version and every site and receptor
   figure is compared with the submitted one at a stated tolerance; each difference says which
   changed input (or version) explains it, when one does;
3. plausibility review: each finding gives its reason and the published range or table value it
   is judged against (this version's config/ tables, which cite their sources);
4. sensitivity, both ways: the deposition-velocity and critical-load ranges, critical level 1
   and 3 ug/m3, depletion on and off, the wind rule, claimed abatement at its lower end, the
   emission factors' uncertainty and other weather years give each site's range of % of
   critical load and level and whether its verdict flips.

The re-run judges the sites by the submission's own rule set (the one its sites.csv names, else
its scenario's [assessment] rules); given the regulator's rule set (``rules``) as well, each
site is judged by it too, and a verdict that differs from the submitted one is a finding.

Each step has its module: ``integrity.py`` and ``changes.py`` (1), ``comparison.py`` (2),
``findings.py`` (3) and
``sensitivity.py`` (4); this one runs them in order and sums them up in a :class:`VerifyResult`.
Reading and writing is done by the loaders it calls (submission, scenario, tables) and by
``siting.output.verify``.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from siting._version import __version__
from siting.errors import InputError, SitingError, collecting_warnings
from siting.presentation.formats import is_missing
from siting.readers.rules import RuleSet, list_rule_sets, load_rule_set
from siting.readers.scenario import load_scenario
from siting.readers.submission import Submission, load_submission
from siting.readers.tables import load_tables
from siting.runs import screening  # screening.screen at call time: tests stand one in
from siting.runs.changes import Changes, emission_differences, what_changed
from siting.runs.comparison import TOLERANCE_TEXT, compare_figures
from siting.runs.findings import SEVERITY_ORDER, Finding, review
from siting.runs.integrity import check_integrity, check_outputs
from siting.runs.judging import with_verdicts
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
    rules : RuleSet or None
        The submission's rule set, the one the re-run judged by.
    regulator_rules : RuleSet or None
        The regulator's rule set, when one was given.
    verdicts : list of dict
        One row per site of the re-run: ``site``, ``tier``, the submitted verdict
        (``submitted_verdict``, ``submitted_passes``, ``submitted_rule``), the re-run's under
        the submission's set (``rerun_*``) and the regulator's (``regulator_*``; the re-run's
        when no other set was given), and ``differs`` (the regulator's verdict is not the
        submitted one).
    rule_sets_text : str
        Which rule sets were used, in one line.
    changes : Changes
        What changed since the run: each changed input's keys (old and new value, and the
        emissions they set), each source's emission as submitted and re-derived, and the
        outputs' findings.
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
    rules: RuleSet | None = None
    regulator_rules: RuleSet | None = None
    verdicts: list[dict] = field(default_factory=list)
    rule_sets_text: str = ""
    changes: Changes = field(default_factory=Changes)

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
    rules: RuleSet | str | Path | None = None,
) -> VerifyResult:
    """Check a submitted screening run: its inputs' hashes, a re-run, a review, a sensitivity.

    The four steps of the module docstring: integrity of every packed input and output, the
    re-run compared figure by figure, the plausibility review, and the two-sided sensitivity.
    The re-run judges by the submission's own rule set; ``rules``, the regulator's, judges
    every site as well, and each verdict that differs from the submitted one is a finding
    (high when the submitted verdict passes and the regulator's does not).

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
    rules : RuleSet, str or Path, optional
        The regulator's rule set (a bundled id, a file or a loaded RuleSet), read and checked
        before anything is computed; None judges by the submission's own set only.

    Returns
    -------
    VerifyResult
        Integrity, differences, findings and the sensitivity; ``consistent`` and ``exit_code``
        sum them up.

    Raises
    ------
    SitingError
        The submission cannot be read (InputFileError, InputError), or ``rules`` is no rule
        set (InputFileError, InputError naming ``rules``).
    """

    sub = load_submission(Path(submission), results)
    scenario, tables, parameters_now = _packed_scenario(sub)
    tier_ids = [tier["id"] for tier in tables.thresholds]
    regulator = None if rules is None else _regulator_rules(rules, tier_ids)  # before computing
    own = _submission_rules(sub, scenario, tier_ids, regulator)
    integrity = check_integrity(sub)
    submitted_version = str(sub.record.get("version", "")) if sub.record else ""
    result = _rerun(scenario, tables, own)
    regulator_sites = _judged_by_regulator(scenario, tables, result, regulator)
    verdicts = _verdict_rows(sub, result, regulator_sites)
    explanation = _explanation(integrity, submitted_version, __version__)
    outputs = check_outputs(sub)
    changes = what_changed(
        sub, integrity, result.sources, parameters_now, [f.as_dict() for f in outputs]
    )
    differences = compare_figures(sub, result, explanation)
    differences += emission_differences(changes.emissions, explanation)
    reviewed = review(sub, result, load_tables(), reference_habitats, name_field)
    if regulator_sites is not None:  # the verdicts first within each severity
        reviewed = sorted(
            _verdict_findings(verdicts, own, regulator) + reviewed,
            key=lambda f: SEVERITY_ORDER.get(f.severity, 9),
        )
    findings = _all_findings(sub, integrity, differences, explanation, outputs + reviewed, changes)

    long, summary = sensitivity(scenario, result, weather_files, run=screening.screen)
    return VerifyResult(
        sub,
        integrity,
        differences,
        findings,
        long,
        summary,
        submitted_version,
        __version__,
        rules=own,
        regulator_rules=regulator,
        verdicts=verdicts,
        rule_sets_text=_rule_sets_text(own, regulator, regulator_sites is not None),
        changes=changes,
    )


def _packed_scenario(sub: Submission):
    """The packed scenario, read with its files where the package now holds them and its
    packed tables (when there are), those tables, and its parameters as run.json records them
    (before the packed tables are put in). Returns (scenario, tables, parameters); a
    SitingError becomes one InputError, "the submission cannot be re-run: ..."."""
    try:
        scenario = load_scenario(sub.scenario_path, moved=sub.moved)
        parameters = json.loads(scenario.model_dump_json(by_alias=True))
        if sub.config_dir is not None and sub.config_dir.is_dir():
            scenario = scenario.model_copy(
                update={
                    "assessment": scenario.assessment.model_copy(
                        update={"config_dir": sub.config_dir}
                    )
                }
            )
        return scenario, load_tables(scenario.assessment.config_dir), parameters
    except SitingError as exc:
        raise _cannot_rerun(exc) from exc


def _cannot_rerun(exc: SitingError) -> InputError:
    return InputError(
        f"the submission cannot be re-run: {exc}", parameters=getattr(exc, "parameters", ())
    )


def _rerun(scenario, tables, own: RuleSet):
    """The packed scenario screened again, judged by the submission's rule set ``own``,
    without the sensitivity (verify runs its own, with the other weather files); a SitingError
    becomes one InputError, "the submission cannot be re-run: ..."."""
    try:
        return screening.screen(
            scenario,
            tables=tables,
            sensitivity=False,
            rules=own,
            options=False,
            what_it_takes=False,
        )
    except SitingError as exc:
        raise _cannot_rerun(exc) from exc


def _regulator_rules(rules: RuleSet | str | Path, tier_ids: list[str]) -> RuleSet:
    """The regulator's rule set, read and checked against the submission's tiers; a fault
    is re-raised naming ``rules``."""
    try:
        if not isinstance(rules, RuleSet):
            return load_rule_set(rules, tier_ids)
        if missing := [t for t in tier_ids if t not in rules.stages_by_tier]:
            raise InputError(f'rule set "{rules.id}" has no rule for tier(s) {", ".join(missing)}')
        return rules
    except SitingError as exc:
        raise type(exc)(f"rules: {exc}", parameters=("rules",)) from None


def _submission_rules(sub: Submission, scenario, tier_ids, regulator: RuleSet | None) -> RuleSet:
    """The rule set the submission was judged by: the one its sites table names (column
    ``rules``) when that is its scenario's [assessment] rules, a bundled set or the
    regulator's; the scenario's when the table names none (written before rule sets, whose
    scenarios judge by plain). Raises InputError when the named set is none of those."""
    try:
        scenario_set = load_rule_set(scenario.assessment.rules, tier_ids)
    except SitingError as exc:
        raise _cannot_rerun(exc) from exc
    named = _named_rules(sub.sites)
    if named is None or named == scenario_set.id:
        return scenario_set
    if regulator is not None and named == regulator.id:
        return regulator
    if named in {set_id for set_id, _ in list_rule_sets()}:
        return load_rule_set(named, tier_ids)
    packed = (sub.record or {}).get("package", {}).get("rules")
    if packed:  # a rule set file the run was given, packed with its inputs
        candidate = load_rule_set(sub.folder / "inputs" / packed, tier_ids)
        if candidate.id == named:
            return candidate
    raise InputError(
        f'the submission cannot be re-run: its sites were judged by rule set "{named}", which '
        f'is neither its scenario\'s ([assessment] rules, "{scenario_set.id}") nor bundled; give '
        "that rule set's file as rules to re-run it",
        parameters=("rules",),
    )


def _named_rules(sites) -> str | None:
    """The rule set id a submitted sites table names (its first in column ``rules``)."""
    if "rules" not in sites.columns:
        return None
    named = [str(v).strip() for v in sites["rules"] if not is_missing(v)]
    return named[0] if named else None


def _same_rules(a: RuleSet, b: RuleSet) -> bool:
    """Whether two rule sets judge alike: the same basis and the same stages."""
    return a.basis == b.basis and a.stages_by_tier == b.stages_by_tier


def _judged_by_regulator(scenario, tables, result, regulator: RuleSet | None):
    """The re-run's sites judged by the regulator's rule set; None without one or when it
    judges as the submission's does. The same basis judges the same figures, so the re-run's
    table is judged again; another basis judges another contribution: a run of its own."""
    if regulator is None or _same_rules(regulator, result.rules):
        return None
    if regulator.basis == result.rules.basis:
        return with_verdicts(result.sites, regulator)
    try:
        return screening.screen(
            scenario,
            tables=tables,
            sensitivity=False,
            rules=regulator,
            options=False,
            what_it_takes=False,
        ).sites
    except SitingError as exc:
        raise _cannot_rerun(exc) from exc


def _passes(value) -> bool | None:
    """A ``passes`` cell of a sites table as a bool (None when missing)."""
    if is_missing(value):
        return None
    if isinstance(value, str):
        return value.strip().lower() in ("true", "1", "yes")
    return bool(value)


def _first_by_name(frame) -> dict:
    """Each site's row of a sites table by name (the first where a name repeats)."""
    rows: dict = {}
    if frame is None or "name" not in frame.columns:
        return rows
    for row in frame.to_dict(orient="records"):
        rows.setdefault(str(row["name"]), row)
    return rows


def _stage_passes(rules: RuleSet, tier, verdict) -> bool | None:
    """Whether ``verdict`` passes under ``rules`` in ``tier`` (a table written before the
    ``passes`` column): the stage giving those words; None when none does."""
    for stage in rules.stages_by_tier.get(str(tier), ()):
        if stage.verdict == verdict:
            return stage.passes
    return None


def _verdict_rows(sub: Submission, result, regulator_sites=None) -> list[dict]:
    """Each site's verdicts: as submitted, the re-run's and the regulator's.

    Parameters
    ----------
    sub : Submission
        The submission (its sites table; ``passes`` and ``deciding_rule`` are taken from the
        re-run's rule set where the table lacks them).
    result : ScreenResult
        The re-run, judged by the submission's rule set.
    regulator_sites : pandas.DataFrame, optional
        The re-run's sites judged by the regulator's rule set; None: the re-run's verdicts.

    Returns
    -------
    list of dict
        One per site of the re-run, in its order; see ``VerifyResult.verdicts``.
    """
    submitted = _first_by_name(sub.sites)
    regulated = _first_by_name(result.sites if regulator_sites is None else regulator_sites)
    rows = []
    for name, rerun in _first_by_name(result.sites).items():
        mine, theirs = regulated.get(name, rerun), submitted.get(name)
        verdict = None if theirs is None or is_missing(theirs.get("verdict")) else theirs["verdict"]
        passes = None if theirs is None else _passes(theirs.get("passes"))
        if verdict is not None and passes is None:
            passes = _stage_passes(result.rules, rerun["tier"], verdict)
        rule = None if theirs is None else theirs.get("deciding_rule")
        rows.append(
            {
                "site": name,
                "tier": rerun["tier"],
                "submitted_verdict": verdict,
                "submitted_passes": passes,
                "submitted_rule": rerun["deciding_rule"] if is_missing(rule) else str(rule),
                "rerun_verdict": rerun["verdict"],
                "rerun_passes": bool(rerun["passes"]),
                "rerun_rule": rerun["deciding_rule"],
                "regulator_verdict": mine["verdict"],
                "regulator_passes": bool(mine["passes"]),
                "regulator_rule": mine["deciding_rule"],
                "differs": verdict is not None and str(verdict) != str(mine["verdict"]),
            }
        )
    return rows


def _verdict_findings(rows: list[dict], own: RuleSet, regulator: RuleSet) -> list[Finding]:
    """VERDICT_UNDER_REGULATOR_RULES for each site whose verdict under the regulator's set
    is not the submitted one: high when the submitted verdict passes and the regulator's does
    not, else info; in the sites' order."""
    findings = []
    for row in (r for r in rows if r["differs"]):
        high = bool(row["submitted_passes"]) and not row["regulator_passes"]
        outcome = {
            (True, True): "both pass",
            (True, False): "the submitted verdict passes, the regulator's does not",
            (False, True): "the regulator's verdict passes, the submitted one does not",
            (False, False): "neither passes",
        }[(bool(row["submitted_passes"]), bool(row["regulator_passes"]))]
        findings.append(
            Finding(
                "VERDICT_UNDER_REGULATOR_RULES",
                "high" if high else "info",
                f'site "{row["site"]}"',
                f'submitted verdict "{row["submitted_verdict"]}" under the applicant\'s rule set '
                f"{own.id} (deciding rule {row['submitted_rule']}); under the regulator's rule "
                f'set {regulator.id} the verdict is "{row["regulator_verdict"]}" (deciding rule '
                f"{row['regulator_rule']}): {outcome}",
                {
                    "submitted_rules": own.id,
                    "submitted_verdict": row["submitted_verdict"],
                    "submitted_rule": row["submitted_rule"],
                    "submitted_passes": row["submitted_passes"],
                    "regulator_rules": regulator.id,
                    "regulator_verdict": row["regulator_verdict"],
                    "regulator_rule": row["regulator_rule"],
                    "regulator_passes": row["regulator_passes"],
                },
            )
        )
    return findings


def _rule_sets_text(own: RuleSet, regulator: RuleSet | None, judged: bool) -> str:
    """Which rule sets the verification used, in one line."""
    mine = f"Rule sets: the submission's {own.id} (the re-run judges by it)"
    if regulator is None:
        return f"{mine}, judging {own.basis_words}; no regulator's rule set was given."
    if not judged:
        return (
            f"{mine} and the regulator's {regulator.id} judge alike (the same basis and "
            f"rules), judging {own.basis_words}."
        )
    if regulator.basis == own.basis:
        return f"{mine} and the regulator's {regulator.id}, both judging {own.basis_words}."
    return (
        f"{mine}, judging {own.basis_words}; the regulator's {regulator.id}, judging "
        f"{regulator.basis_words}."
    )


def _all_findings(
    sub: Submission,
    integrity: list[dict],
    differences: list[dict],
    explanation: str,
    reviewed: list[Finding],
    changes: Changes,
) -> list[Finding]:
    """Every finding of a verification, in the order they are reported: RESULTS_DIFFER, the
    changed or missing inputs (the last recorded first, each with the keys that changed), then
    ``reviewed`` (the outputs' checks and the plausibility review, by severity), then
    NO_RUN_RECORD."""
    findings = list(reviewed)
    for row in integrity:
        if row["status"] != "ok":
            findings.insert(0, _input_finding(row, changes))
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


def _input_finding(row: dict, changes: Changes) -> Finding:
    """An integrity row that is not ok (see check_integrity): INPUT_CHANGED or INPUT_MISSING,
    a changed one with the keys that differ (the first three named) or why none are listed."""
    keys = [k for k in changes.keys if k["input"] == row["key"]]
    listed = next((f for f in changes.files if f["input"] == row["key"]), None)
    detail = ""
    if row["status"] == "changed" and keys:
        named = "; ".join(f"{k['key']}: {_value(k['old'])} -> {_value(k['new'])}" for k in keys[:3])
        detail = f"; changed after the run: {len(keys)} key(s) differ ({named}"
        detail += ", ...)" if len(keys) > 3 else ")"
    elif row["status"] == "changed" and listed is not None:
        detail = f"; {listed['note']}"
    return Finding(
        "INPUT_CHANGED" if row["status"] == "changed" else "INPUT_MISSING",
        "high",
        f"input {row['key']}",
        f"{row['file']} {'differs from' if row['status'] == 'changed' else 'is missing; it was'}"
        " the file the run recorded (SHA-256)" + detail,
        {
            "expected_sha256": row["expected_sha256"],
            "actual_sha256": row["actual_sha256"],
            **({"keys_changed": len(keys)} if row["status"] == "changed" else {}),
        },
    )


def _value(value) -> str:
    """A key's value in a finding's message: as TOML would write it, "(absent)" for none."""
    if value is None:
        return "(absent)"
    text = json.dumps(value, ensure_ascii=False, default=str)
    return text if len(text) <= 60 else text[:57] + "..."


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
