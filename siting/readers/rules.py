"""Rule sets: which contribution is judged (the basis) and the ordered stages per designation tier.

A rule set is a TOML file: the bundled ones in ``siting/config/rules/`` (picked by id), a
user's own by path. Its keys::

    id, title, jurisdiction, basis ("proposal", "installation" or "net"), source, status
    [[rule]]   id, tier, verdict, passes (default false), when = [conditions], source, status

A condition is ``{figure = "<name>", <operator> = <limit>}`` with one operator of below,
at_most, above, at_least; the figures are those of ``siting.physics.staging.FIGURES``. The
rules of one tier are tried in the file's order; the last has no ``when`` and takes every site
the others left. A set is refused (InputError naming the rule) for an unknown figure or tier, a
missing source or status, a tier without rules or without a last rule, a lower bound on a
figure that grows with the contribution, or a rule no site can reach (its conditions imply an
earlier rule's).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field, StringConstraints, ValidationError

from siting.errors import InputError, InputFileError, validation_wording
from siting.physics.staging import (
    COMPOSITES,
    FIGURES,
    FIXED_FIGURES,
    OPERATORS,
    Condition,
    Stage,
)
from siting.readers.resources import config_dir

#: The default rule set: today's single threshold per tier on the installation's contribution.
DEFAULT_RULES = "plain"
BASES = {
    "proposal": "the proposed sources alone",
    "installation": "the installation after the change (proposed and existing sources)",
    "net": "the net change: proposed sources less those removed",
}
STATUSES = ("confirmed", "derived", "from memory", "common practice, no source")
Text = Annotated[str, StringConstraints(strip_whitespace=True, min_length=1)]


class _Strict(BaseModel):
    model_config = ConfigDict(strict=True, allow_inf_nan=False, extra="forbid")


class _Condition(_Strict):
    figure: Text
    below: float | None = None
    at_most: float | None = None
    above: float | None = None
    at_least: float | None = None


class _Rule(_Strict):
    id: Text
    tier: Text
    verdict: Text
    passes: bool = False
    when: list[_Condition] = Field(default_factory=list)
    source: Text
    status: Literal[STATUSES]  # type: ignore[valid-type]
    note: str = ""


class _RuleFile(_Strict):
    id: Text
    title: Text
    jurisdiction: Text
    basis: Literal["proposal", "installation", "net"]
    source: Text
    status: Literal[STATUSES]  # type: ignore[valid-type]
    note: str = ""
    rule: Annotated[list[_Rule], Field(min_length=1)]


@dataclass(frozen=True)
class RuleSet:
    """A rule set as the runs use it.

    Attributes
    ----------
    id, title, jurisdiction : str
        Its id, title and the jurisdiction whose practice it follows.
    basis : {"proposal", "installation", "net"}
        The contribution judged.
    stages_by_tier : dict of str to tuple of Stage
        Each tier's stages in order, the last without conditions.
    source : str
        The publication(s) behind the set, with their status.
    note : str
        What the set leaves out or simplifies.
    path : Path
        The file it was read from.
    """

    id: str
    title: str
    jurisdiction: str
    basis: str
    stages_by_tier: dict[str, tuple[Stage, ...]]
    source: str
    note: str
    path: Path

    @property
    def basis_words(self) -> str:
        """The basis in words."""
        return BASES[self.basis]

    def _first_pass_share(self, tier: str):
        for stage in self.stages_by_tier[tier]:
            for c in stage.conditions if stage.passes else ():
                if c.figure in ("pct", "pct_load", "pct_level") and c.operator in (
                    "below",
                    "at_most",
                ):
                    return stage, c
        return None, None

    def first_pass_percent(self, tier: str) -> float:
        """The limit of the tier's first passing stage on a % figure [%]; NaN if it has none
        (the screening threshold a single number can stand for).

        Parameters
        ----------
        tier : str
            A tier id.

        Returns
        -------
        float
        """
        _, condition = self._first_pass_share(tier)
        return float("nan") if condition is None else float(condition.limit)

    def first_pass_source(self, tier: str) -> str:
        """The source of the rule :meth:`first_pass_percent` comes from (else the set's).

        Parameters
        ----------
        tier : str
            A tier id.

        Returns
        -------
        str
        """
        stage, _ = self._first_pass_share(tier)
        return f"{self.id}: {stage.source}" if stage is not None else f"{self.id}: {self.source}"


def bundled_rules_dir() -> Path:
    """Folder of the bundled rule sets.

    Returns
    -------
    Path
        ``siting/config/rules`` of the installed package.
    """
    return config_dir() / "rules"


def list_rule_sets() -> list[tuple[str, str]]:
    """The bundled rule sets as (id, title), sorted by id.

    Returns
    -------
    list of (str, str)
    """
    out = []
    for path in sorted(bundled_rules_dir().glob("*.toml")):
        with open(path, "rb") as fh:
            raw = tomllib.load(fh)
        out.append((path.stem, str(raw.get("title", ""))))
    return out


def rules_path(name: str | Path) -> Path:
    """The file of a rule set given by bundled id or by path.

    Parameters
    ----------
    name : str or Path
        A bundled id (``siting rules`` lists them) or a path to a TOML file.

    Returns
    -------
    Path

    Raises
    ------
    InputFileError
        Neither a bundled id nor an existing file.
    """
    text = str(name)
    bundled = bundled_rules_dir() / f"{text}.toml"
    if "/" not in text and "\\" not in text and not text.endswith(".toml"):
        if bundled.is_file():
            return bundled
        ids = ", ".join(i for i, _ in list_rule_sets())
        raise InputFileError(f'rule set "{text}" is not bundled (bundled: {ids}); or give a path')
    path = Path(text)
    if not path.is_file():
        raise InputFileError(f"{path}: rule set file not found")
    return path


def load_rule_set(name: str | Path, tier_ids) -> RuleSet:
    """Read and check a rule set.

    Parameters
    ----------
    name : str or Path
        A bundled id or a path.
    tier_ids : iterable of str
        The designation tiers the habitats can have (thresholds.toml); each needs rules.

    Returns
    -------
    RuleSet

    Raises
    ------
    InputFileError
        No such set.
    InputError
        The set breaks a rule of the format (the message names the rule).
    """
    path = rules_path(name)
    try:
        with open(path, "rb") as fh:
            raw = tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path.name}: not valid TOML ({exc})") from None
    try:
        model = _RuleFile.model_validate(raw)
    except ValidationError as exc:
        err = exc.errors()[0]
        where = ".".join(str(p) for p in err["loc"])
        label = _rule_label(raw, err["loc"])
        raise InputError(f"{path.name}{label}: {where}: {validation_wording(err)}") from None
    stages: dict[str, list[Stage]] = {}
    seen: set[str] = set()
    tiers = list(tier_ids)
    for rule in model.rule:
        where = f'{path.name}, rule "{rule.id}"'
        if rule.id in seen:
            raise InputError(f"{where}: the id appears twice; each rule needs its own")
        seen.add(rule.id)
        if rule.tier not in tiers:
            raise InputError(f'{where}: unknown tier "{rule.tier}" (tiers: {", ".join(tiers)})')
        conditions = tuple(_condition(c, where) for c in rule.when)
        earlier = stages.setdefault(rule.tier, [])
        if earlier and not earlier[-1].conditions:
            raise InputError(
                f'{where}: unreachable: rule "{earlier[-1].rule_id}" before it has no '
                "condition and takes every site left"
            )
        for stage in earlier:
            if _implies(conditions, stage.conditions):
                raise InputError(
                    f"{where}: unreachable: every site meeting it meets the earlier rule "
                    f'"{stage.rule_id}" (overlapping conditions)'
                )
        earlier.append(
            Stage(rule.verdict, conditions, rule.passes, rule.id, f"{rule.source} ({rule.status})")
        )
    for tier in tiers:
        if tier not in stages:
            raise InputError(f'{path.name}: tier "{tier}" has no rule')
        if stages[tier][-1].conditions:
            raise InputError(
                f'{path.name}, rule "{stages[tier][-1].rule_id}": the last rule of tier '
                f'"{tier}" must have no condition (it takes every site the others left)'
            )
    return RuleSet(
        model.id,
        model.title,
        model.jurisdiction,
        model.basis,
        {tier: tuple(s) for tier, s in stages.items()},
        f"{model.source} ({model.status})",
        model.note,
        path,
    )


def _rule_label(raw: dict, loc) -> str:
    if len(loc) >= 2 and loc[0] == "rule" and isinstance(loc[1], int):
        rules = raw.get("rule") or []
        if loc[1] < len(rules) and isinstance(rules[loc[1]], dict) and "id" in rules[loc[1]]:
            return f', rule "{rules[loc[1]]["id"]}"'
        return f", rule {loc[1] + 1}"
    return ""


def _condition(c: _Condition, where: str) -> Condition:
    if c.figure not in FIGURES:
        raise InputError(f'{where}: unknown figure "{c.figure}" (figures: {", ".join(FIGURES)})')
    given = [(op, getattr(c, op)) for op in OPERATORS if getattr(c, op) is not None]
    if len(given) != 1:
        raise InputError(
            f'{where}: the condition on "{c.figure}" needs exactly one of {", ".join(OPERATORS)}'
        )
    op, limit = given[0]
    if op in ("above", "at_least") and c.figure not in FIXED_FIGURES:
        raise InputError(
            f'{where}: "{op}" on "{c.figure}": a lower bound is only allowed on '
            f"{', '.join(sorted(FIXED_FIGURES))} (a figure that grows with the contribution "
            "would pass a larger one)"
        )
    return Condition(c.figure, op, float(limit))


def _implies(later: tuple[Condition, ...], earlier: tuple[Condition, ...]) -> bool:
    """Whether every value meeting ``later`` meets ``earlier`` (so ``later`` is unreachable)."""
    if not later:
        return False  # the last rule: reachable by whatever the others leave
    return all(any(_implies_one(lc, ec) for lc in later) for ec in earlier)


def _implies_one(lc: Condition, ec: Condition) -> bool:
    """Whether meeting ``lc`` implies meeting ``ec``: the same figure, or an upper bound on the
    larger of two shares (``pct``) and one on either of them."""
    upper_on_both = lc.operator in ("below", "at_most") and ec.figure in COMPOSITES.get(
        lc.figure, ()
    )
    if lc.figure != ec.figure and not upper_on_both:
        return False
    upper = {"below", "at_most"}
    if (lc.operator in upper) != (ec.operator in upper):
        return False
    if lc.operator in upper:  # value (<|<=) L implies value (<|<=) E ?
        if lc.limit < ec.limit:
            return True
        return lc.limit == ec.limit and not (lc.operator == "at_most" and ec.operator == "below")
    if lc.limit > ec.limit:
        return True
    return lc.limit == ec.limit and not (lc.operator == "at_least" and ec.operator == "above")
