"""A rule set in words: its basis and every stage of every tier, with sources (plain text)."""

from __future__ import annotations

from siting.physics.staging import FIGURES, Condition, Stage
from siting.readers.rules import RuleSet

_OPERATOR_WORDS = {"below": "below", "at_most": "at most", "above": "above", "at_least": "at least"}


def condition_words(condition: Condition) -> str:
    """One condition in words, e.g. 'pct (the larger of ... shares ...) below 4 %'.

    Parameters
    ----------
    condition : Condition

    Returns
    -------
    str
    """
    what, unit = FIGURES[condition.figure]
    op = _OPERATOR_WORDS[condition.operator]
    return f"{condition.figure} ({what}) {op} {condition.limit:g} {unit}"


def rule_words(stage: Stage, set_id: str = "") -> str:
    """A stage as its deciding rule reads: '<set>/<rule id>: <conditions>'.

    Parameters
    ----------
    stage : Stage
    set_id : str
        The rule set's id, put in front when given.

    Returns
    -------
    str
    """
    name = f"{set_id}/{stage.rule_id}" if set_id else stage.rule_id
    if not stage.conditions:
        return f"{name}: otherwise (no earlier rule of its tier met)"
    return f"{name}: " + " and ".join(condition_words(c) for c in stage.conditions)


def rule_set_in_words(rules: RuleSet) -> str:
    """The whole set as `siting rules <id>` prints it.

    Parameters
    ----------
    rules : RuleSet

    Returns
    -------
    str
        Several lines of plain text.
    """
    lines = [
        f"{rules.id}: {rules.title}",
        f"jurisdiction: {rules.jurisdiction}",
        f"contribution judged (basis {rules.basis}): {rules.basis_words}",
        f"source: {rules.source}",
    ]
    if rules.note:
        lines.append(f"note: {rules.note}")
    lines.append(f"file: {rules.path}")
    for tier, stages in rules.stages_by_tier.items():
        lines.append("")
        lines.append(f"tier {tier} (rules tried in this order, the first met decides):")
        for k, stage in enumerate(stages, start=1):
            when = (
                "otherwise"
                if not stage.conditions
                else "if " + " and ".join(condition_words(c) for c in stage.conditions)
            )
            passes = " [passes]" if stage.passes else ""
            lines.append(f"  {k}. {stage.rule_id}: {when}: {stage.verdict}{passes}")
            lines.append(f"     source: {stage.source}")
    lines.append("")
    lines.append(
        "A screening rule set, not legal advice: the competent authority's current rules decide."
    )
    return "\n".join(lines)
