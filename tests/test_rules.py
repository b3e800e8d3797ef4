"""Rule sets: the file format's checks, the bundled sets' stage boundaries, the largest allowed
scale, ``siting rules``, and the demo judged by two sets.

Expected values are hand-made: bad files are copies of the bundled plain.toml broken in one
place each (the messages are this project's own contract: they name the rule and the fault);
the verdict at each stage boundary is written out from the set's own TOML text, and beside each
group the rule id and its source are quoted as the file gives them. No published worked example
of these screening stages was found, so every boundary case is a "hand-made case at the stage
boundary". The demo's verdicts are recomputed here from its sites table with the limits copied
from the TOML files.
"""

from __future__ import annotations

import shutil
import tomllib
from functools import cache
from pathlib import Path

import numpy as np
import pytest

import siting
from siting.cli import main
from siting.errors import InputError, InputFileError
from siting.physics.staging import FIGURES, Condition, Stage, allowed_scale, judge
from siting.readers.resources import config_dir, demo_dir
from siting.readers.rules import (
    STATUSES,
    bundled_rules_dir,
    list_rule_sets,
    load_rule_set,
)
from siting.readers.scenario import load_scenario

TIERS = ["international", "national", "local"]
BUNDLED = ["denmark-2020", "england-2023", "germany-2021", "ireland-2024", "netherlands-2023"]
BUNDLED = sorted([*BUNDLED, "plain"])
#: The condition of plain.toml's rule international-insignificant, as written in the file.
W4 = 'when = [{ figure = "pct", at_most = 4.0 }]'


@cache
def _raw(set_id: str) -> dict:
    with open(bundled_rules_dir() / f"{set_id}.toml", "rb") as fh:
        return tomllib.load(fh)


@cache
def _rules(set_id: str):
    return load_rule_set(set_id, TIERS)


def _plain() -> str:
    return (bundled_rules_dir() / "plain.toml").read_text(encoding="utf-8")


def _edit(text: str, old: str, new: str) -> str:
    """Replace text that occurs exactly once (no silent no-op edit)."""
    assert text.count(old) == 1, f"test setup: {old!r} occurs {text.count(old)} times"
    return text.replace(old, new)


def _block(rule_id: str, tier: str, when: str | None, passes: bool = False) -> str:
    """A [[rule]] table in the file format (plain.toml's header)."""
    lines = ["[[rule]]", f'id = "{rule_id}"', f'tier = "{tier}"', 'verdict = "hand-made"']
    lines += ["passes = true"] if passes else []
    lines += [f"when = [{when}]"] if when else []
    return "\n".join([*lines, 'source = "hand-made test rule"', 'status = "derived"']) + "\n\n"


def _insert_after(text: str, rule_id: str, block: str) -> str:
    """Insert a [[rule]] table right after the rule ``rule_id`` (before the next one)."""
    start = text.index(f'id = "{rule_id}"')
    at = text.find("[[rule]]", start)
    return text + "\n" + block if at < 0 else text[:at] + block + text[at:]


def _cut_rule(text: str, rule_id: str) -> str:
    """Remove the rule ``rule_id`` (its [[rule]] table)."""
    start = text.rindex("[[rule]]", 0, text.index(f'id = "{rule_id}"'))
    end = text.find("[[rule]]", start + 1)
    return text[:start] + ("" if end < 0 else text[end:])


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "my_rules.toml"
    path.write_text(text, encoding="utf-8")
    return path


# --------------------------------------------------------------------------------------------
# 1. validation: each bad file refused, the message naming the rule and the fault
# --------------------------------------------------------------------------------------------

_INT_ABOVE_SOURCE = (
    'source = "as international-insignificant: above it the site needs assessment alone and in '
    'combination"\n'
)
_LOCAL_FROM = '[[rule]]\nid = "local-insignificant"'
# (id, change of plain.toml's text, fragments the message must hold, compared lower-case)
BAD = [
    (
        "unknown figure",
        lambda t: _edit(t, W4, W4.replace('"pct"', '"pct_foo"')),
        ['rule "international-insignificant"', 'unknown figure "pct_foo"'],
    ),
    (
        "missing source",
        lambda t: _edit(t, _INT_ABOVE_SOURCE, ""),
        ['rule "international-above"', "source", "required"],
    ),
    (
        "empty source",
        lambda t: _edit(t, 'source = "as national-insignificant"', 'source = "  "'),
        ['rule "national-above"', "source", "empty"],
    ),
    (
        "missing status",
        lambda t: _edit(t, _INT_ABOVE_SOURCE + 'status = "confirmed"\n', _INT_ABOVE_SOURCE),
        ['rule "international-above"', "status", "required"],
    ),
    (
        "status not allowed",
        lambda t: _edit(
            t,
            'source = "as national-insignificant"\nstatus = "from memory"',
            'source = "as national-insignificant"\nstatus = "guessed"',
        ),
        ['rule "national-above"', "status", "guessed", "confirmed", "from memory"],
    ),
    (
        "unknown tier",
        lambda t: _edit(t, 'id = "local-above"\ntier = "local"', 'id = "local-above"\ntier = "x"'),
        ['rule "local-above"', 'unknown tier "x"'],
    ),
    (
        "tier with no rules",
        lambda t: t[: t.index(_LOCAL_FROM)],
        ['tier "local" has no rule'],
    ),
    (
        "last rule has a condition",
        lambda t: _cut_rule(t, "local-above"),
        ['rule "local-insignificant"', 'last rule of tier "local"', "no condition"],
    ),
    (
        "rule after an unconditional rule",
        lambda t: t + "\n" + _block("international-late", "international", _cond("pct", 1.0)),
        ['rule "international-late"', "unreachable", '"international-above"', "no condition"],
    ),
    (
        "later pct at_most 3 after pct at_most 4",
        lambda t: _after_int("tighter", _cond("pct", 3.0))(t),
        ['rule "tighter"', "unreachable", '"international-insignificant"', "overlapping"],
    ),
    (
        "identical conditions",
        lambda t: _after_int("same", _cond("pct", 4.0))(t),
        ['rule "same"', "unreachable", '"international-insignificant"'],
    ),
    (
        "pct below 4 after pct at_most 4",
        lambda t: _after_int("strict", '{ figure = "pct", below = 4.0 }')(t),
        ['rule "strict"', "unreachable", '"international-insignificant"'],
    ),
    (
        "an extra condition does not make a rule reachable",
        lambda t: _after_int(
            "narrower", _cond("pct", 3.0) + ', { figure = "distance_m", above = 100.0 }'
        )(t),
        ['rule "narrower"', "unreachable", '"international-insignificant"'],
    ),
    (
        "distance above 20000 after distance above 10000",
        lambda t: _after_int("farther", '{ figure = "distance_m", above = 20000.0 }')(
            _edit(t, W4, 'when = [{ figure = "distance_m", above = 10000.0 }]')
        ),
        ['rule "farther"', "unreachable", '"international-insignificant"'],
    ),
    (
        "at_least on pct",
        lambda t: _edit(t, W4, 'when = [{ figure = "pct", at_least = 4.0 }]'),
        ['rule "international-insignificant"', '"at_least" on "pct"', "lower bound"],
    ),
    (
        "above on dep_kg_n_ha_yr",
        lambda t: _edit(t, W4, 'when = [{ figure = "dep_kg_n_ha_yr", above = 0.3 }]'),
        ['rule "international-insignificant"', '"above" on "dep_kg_n_ha_yr"', "lower bound"],
    ),
    (
        "two operators",
        lambda t: _edit(t, W4, 'when = [{ figure = "pct", at_most = 4.0, below = 5.0 }]'),
        ['rule "international-insignificant"', 'condition on "pct"', "exactly one"],
    ),
    (
        "no operator",
        lambda t: _edit(t, W4, 'when = [{ figure = "pct" }]'),
        ['rule "international-insignificant"', 'condition on "pct"', "exactly one"],
    ),
    (
        "repeated rule id",
        lambda t: _edit(t, 'id = "national-above"', 'id = "international-above"'),
        ['rule "international-above"', "twice"],
    ),
    *[
        (
            f"limit {word}",
            lambda t, word=word: _edit(t, W4, W4.replace("4.0", word)),
            ['rule "international-insignificant"', "at_most", "finite", word.lstrip("+-")],
        )
        for word in ("nan", "inf", "-inf")
    ],
    (
        "not TOML",
        lambda t: _edit(t, W4, W4.rstrip("]")),
        ["my_rules.toml", "not valid toml"],
    ),
]


def _cond(figure: str, at_most: float) -> str:
    return f'{{ figure = "{figure}", at_most = {at_most} }}'


def _after_int(rule_id: str, when: str):
    """A change inserting a rule of tier international right after international-insignificant."""
    return lambda t: _insert_after(
        t, "international-insignificant", _block(rule_id, "international", when)
    )


@pytest.mark.parametrize(("change", "fragments"), [c[1:] for c in BAD], ids=[c[0] for c in BAD])
def test_a_bad_rule_set_is_refused_naming_the_rule_and_the_fault(tmp_path, change, fragments):
    path = _write(tmp_path, change(_plain()))
    with pytest.raises(InputError) as exc:
        load_rule_set(path, TIERS)
    message = str(exc.value).lower()
    assert message.startswith("my_rules.toml")
    for fragment in fragments:
        assert fragment.lower() in message, f"{fragment!r} not in {message!r}"


# (id, change, the tier international's conditions as loaded): reachable rules are accepted
GOOD = [
    (
        "pct at_most 5 after pct at_most 4 (a site at 4.5 reaches it)",
        _after_int("looser", _cond("pct", 5.0)),
        [[Condition("pct", "at_most", 4.0)], [Condition("pct", "at_most", 5.0)], []],
    ),
    (
        "pct at_most 4 after pct below 4 (a site at exactly 4 reaches it)",
        lambda t: _after_int("at-four", _cond("pct", 4.0))(
            _edit(t, W4, 'when = [{ figure = "pct", below = 4.0 }]')
        ),
        [[Condition("pct", "below", 4.0)], [Condition("pct", "at_most", 4.0)], []],
    ),
    (
        "pct_load at_most 3 after pct at_most 4 (pct_level may be above 4)",
        _after_int("load-only", _cond("pct_load", 3.0)),
        [[Condition("pct", "at_most", 4.0)], [Condition("pct_load", "at_most", 3.0)], []],
    ),
    (
        "distance_m above: a lower bound on the distance is accepted",
        lambda t: _edit(t, W4, 'when = [{ figure = "distance_m", above = 10000.0 }]'),
        [[Condition("distance_m", "above", 10000.0)], []],
    ),
    (
        "distance_m at_least is accepted too",
        lambda t: _edit(t, W4, 'when = [{ figure = "distance_m", at_least = 10000.0 }]'),
        [[Condition("distance_m", "at_least", 10000.0)], []],
    ),
]


@pytest.mark.parametrize(("change", "expected"), [c[1:] for c in GOOD], ids=[c[0] for c in GOOD])
def test_a_reachable_rule_is_accepted(tmp_path, change, expected):
    rules = load_rule_set(_write(tmp_path, change(_plain())), TIERS)
    got = [list(stage.conditions) for stage in rules.stages_by_tier["international"]]
    assert got == expected


def test_a_rule_on_pct_after_one_on_its_part_is_unreachable(tmp_path):
    """Hand-made: after `pct_load at_most 4`, a rule `pct at_most 3` can never decide a site
    (pct <= 3 means pct_load <= 3 <= 4, so the earlier rule took it)."""
    text = _edit(_plain(), W4, W4.replace('"pct"', '"pct_load"'))
    path = _write(tmp_path, _after_int("composite", _cond("pct", 3.0))(text))
    with pytest.raises(InputError, match='rule "composite".*unreachable'):
        load_rule_set(path, TIERS)


def test_an_unknown_id_or_a_missing_file_is_an_input_file_error(tmp_path):
    with pytest.raises(InputFileError) as exc:
        load_rule_set("nosuchset", TIERS)
    assert '"nosuchset" is not bundled' in str(exc.value) and "plain" in str(exc.value)
    missing = tmp_path / "absent.toml"
    with pytest.raises(InputFileError, match="absent.toml: rule set file not found"):
        load_rule_set(missing, TIERS)


# --------------------------------------------------------------------------------------------
# 2. the bundled sets: they load, and every rule states its source and status
# --------------------------------------------------------------------------------------------


def test_the_test_tiers_are_those_of_thresholds_toml():
    with open(config_dir() / "thresholds.toml", "rb") as fh:
        assert [t["id"] for t in tomllib.load(fh)["tier"]] == TIERS


def test_every_bundled_set_loads_and_every_rule_has_a_source_and_status():
    assert [i for i, _ in list_rule_sets()] == BUNDLED
    assert sorted(p.stem for p in bundled_rules_dir().glob("*.toml")) == BUNDLED
    for set_id in BUNDLED:
        raw = _raw(set_id)
        assert raw["id"] == set_id  # the id the file gives is its file name
        assert raw["source"].strip() and raw["status"] in STATUSES
        for rule in raw["rule"]:
            assert isinstance(rule.get("source"), str) and rule["source"].strip(), rule["id"]
            assert rule.get("status") in STATUSES, (set_id, rule["id"])
        rules = _rules(set_id)
        assert set(rules.stages_by_tier) == set(TIERS)
        loaded = [s.rule_id for tier in TIERS for s in rules.stages_by_tier[tier]]
        assert sorted(loaded) == sorted(r["id"] for r in raw["rule"])


# --------------------------------------------------------------------------------------------
# 3. every bundled set at each stage boundary (hand-made cases at the stage boundary)
# --------------------------------------------------------------------------------------------


def _figures(values: dict[str, float]) -> dict[str, np.ndarray]:
    """Every figure of FIGURES for one hand-made case: 0 unless given, distance_m 500 m (inside
    every bundled screening distance); pct and incomb_pct the larger of their parts."""
    out = {k: np.array([values.get(k, 500.0 if k == "distance_m" else 0.0)]) for k in FIGURES}
    for whole, parts in (
        ("pct", ("pct_level", "pct_load")),
        ("incomb_pct", ("incomb_pct_level", "incomb_pct_load")),
    ):
        if whole not in values:
            out[whole] = np.fmax(out[parts[0]], out[parts[1]])
    return out


def _edges(tier, figure, limit, below, at, above, **others):
    """Three hand-made cases at the stage boundary: the float just below ``limit``, the limit,
    the float just above; ``below``, ``at``, ``above`` are the expected (verdict, rule id)."""
    values = (np.nextafter(limit, -np.inf), limit, np.nextafter(limit, np.inf))
    return [
        (tier, {figure: float(v), **others}, expected)
        for v, expected in zip(values, (below, at, above))
    ]


def _plain_cases():
    out = []
    # the verdicts of plain.toml: "below threshold" (passes = true) / "above threshold"
    for tier, limit in (("international", 4.0), ("national", 20.0), ("local", 100.0)):
        ok, over = (
            ("below threshold", f"{tier}-insignificant"),
            ("above threshold", f"{tier}-above"),
        )
        # plain international-insignificant: "UK Environment Agency permit decisions, e.g.
        #   EPR/WP3034VF (2014): PC < 4 % of the critical level or load at SAC, SPA and Ramsar
        #   sites", confirmed; national-insignificant: "UK Environment Agency intensive-farming
        #   practice: 20 % at SSSI", from memory; local-insignificant: "... 100 % at local
        #   wildlife sites and ancient woodland", from memory. Operator at_most: the limit passes.
        out += _edges(tier, "pct_load", limit, ok, ok, over)
        out += _edges(tier, "pct_level", limit, ok, ok, over, pct_load=1.0)  # the larger share
    return out


E_OUT, E_INS = "outside the screening distance", "insignificant"
E_COMB, E_DET = "needs in-combination assessment", "needs detailed assessment"


def _england_cases():
    out = []
    # england-2023 (international, national, local): distance rules "EAFarm: European sites
    #   screened within 10 km" / "SSSI screened within 5 km" / "local wildlife sites and ancient
    #   woodland screened within 2 km", confirmed (operator above: the limit itself is within)
    for tier, dist, pct in (
        ("international", 1e4, 50.0),
        ("national", 5e3, 80.0),
        ("local", 2e3, 150.0),
    ):
        det, far = (E_DET, f"{tier}-detailed"), (E_OUT, f"{tier}-beyond-{dist / 1e3:g}km")
        out += _edges(tier, "distance_m", dist, det, det, far, pct_load=pct)
    # international-insignificant: "EAFarm, e.g. EPR/WP3034VF (2014): PC < 4 % of the critical
    #   level or load", confirmed; international-in-combination: "EAFarm: between 4 % and 20 %
    #   the PC is assessed in combination ...", from memory (operator below: the limit fails)
    ins, comb = (E_INS, "international-insignificant"), (E_COMB, "international-in-combination")
    out += _edges("international", "pct_load", 4.0, ins, comb, comb)
    out += _edges("international", "pct_level", 4.0, ins, comb, comb)
    out += _edges("international", "pct_load", 20.0, comb, *[(E_DET, "international-detailed")] * 2)
    # national-insignificant: "EAFarm: PC < 20 % at SSSI", from memory; national-in-combination:
    #   "EAFarm: 20-50 % at SSSI assessed in combination (upper threshold 50 %)", from memory
    ins, comb = (E_INS, "national-insignificant"), (E_COMB, "national-in-combination")
    out += _edges("national", "pct_load", 20.0, ins, comb, comb)
    out += _edges("national", "pct_load", 50.0, comb, *[(E_DET, "national-detailed")] * 2)
    # local-insignificant: "EAFarm and 'Air emissions risk assessment for your environmental
    #   permit' (gov.uk): PC < 100 % at local nature sites", from memory
    ins, det = (E_INS, "local-insignificant"), (E_DET, "local-detailed")
    return out + _edges("local", "pct_level", 100.0, ins, det, det)


def _germany_cases():
    out_ = (
        "outside the area of effect: no assessment under § 34 BNatSchG",
        "natura-outside-area-of-effect",
    )
    three = (
        "assess under § 34 BNatSchG: in combination within 3 % of the critical load",
        "natura-within-3-percent",
    )
    det = ("needs detailed assessment under § 34 BNatSchG", "natura-detailed")
    # germany-2021 natura-outside-area-of-effect: "TALuft8: area of effect where the additional
    #   load exceeds 0.3 kg N/(ha a)", confirmed (at_most: 0.3 itself is outside)
    out = _edges("international", "dep_kg_n_ha_yr", 0.3, out_, out_, det, incomb_pct_load=10.0)
    # natura-within-3-percent: "LAI2019: the 3 % of the critical load de-minimis threshold, in
    #   combination with other projects", from memory
    out += _edges("international", "incomb_pct_load", 3.0, three, three, det, dep_kg_n_ha_yr=1.0)
    # biotope-at-most-5kg / local-at-most-5kg: "TALuft9: additional load at most 5 kg N/(ha a)",
    #   derived
    for tier, first, last in (
        ("national", "biotope-at-most-5kg", "biotope-case-by-case"),
        ("local", "local-at-most-5kg", "local-case-by-case"),
    ):
        ok = ("no further examination (Anhang 9)", first)
        case = ("needs case-by-case examination (Anhang 9)", last)
        out += _edges(tier, "dep_kg_n_ha_yr", 5.0, ok, ok, case)
    return out


def _netherlands_cases():
    zero = (
        "no added deposition above 0.00 mol N/ha/yr: no permit needed for nitrogen",
        "natura-rounds-to-zero",
    )
    permit = ("needs a Natura 2000 permit with an appropriate assessment", "natura-permit")
    # netherlands-2023 natura-rounds-to-zero: "NLRound: added deposition rounding to 0.00 mol
    #   N/ha/yr", from memory (below 0.005: 0.005 rounds to 0.01 and needs the permit)
    out = _edges("international", "dep_mol_n_ha_yr", 0.005, zero, permit, permit)
    # national-not-tested / local-not-tested: "NLRound applies to Natura 2000 only", from memory
    for tier in ("national", "local"):
        none = (
            "no deposition rule for this tier: check national and provincial rules",
            f"{tier}-not-tested",
        )
        out += _edges(tier, "dep_mol_n_ha_yr", 0.005, none, none, none)
        out += [(tier, {"dep_mol_n_ha_yr": 1e3, "pct_load": 500.0}, none)]
    return out


def _denmark_cases():
    # denmark-2020 category-1-within-limit: "DKOrder: category 1, at most 0.2 kg N/ha/yr with
    #   two or more other holdings nearby"; category-2-within-limit: "DKOrder: category 2, at
    #   most 1.0 kg N/ha/yr"; category-3-within-limit: "DKOrder: category 3, the municipality may
    #   set up to 1.0 kg N/ha/yr"; all from memory (at_most: the limit passes)
    over = "reduce the emission or move the house"
    rows = [
        ("international", 0.2, "1", f"over the category 1 deposition limit: {over}", "over-limit"),
        ("national", 1.0, "2", f"over the category 2 deposition limit: {over}", "over-limit"),
        ("local", 1.0, "3", "over 1.0 kg N/ha/yr: the municipality judges the site", "municipal"),
    ]
    out = []
    for tier, limit, cat, over_words, last in rows:
        ok = (f"within the category {cat} deposition limit", f"category-{cat}-within-limit")
        out += _edges(tier, "dep_kg_n_ha_yr", limit, ok, ok, (over_words, f"category-{cat}-{last}"))
    return out


def _ireland_cases():
    # ireland-2024 european-insignificant: "EPAIN2: PC < 1 % of the critical level or load",
    #   from memory; national-/local-insignificant: "cautious placeholder: EPAIN2's 1 % applied
    #   beyond European sites", common practice, no source (below: 1 % itself fails)
    out_ = "screened out: below 1 % of the critical level and load"
    rows = [
        (
            "international",
            "european-insignificant",
            "needs appropriate assessment, alone and in combination",
            "european-appropriate-assessment",
        ),
        ("national", "national-insignificant", "needs assessment", "national-assessment"),
        ("local", "local-insignificant", "needs assessment", "local-assessment"),
    ]
    out = []
    for tier, first, words, last in rows:
        for part in ("pct_load", "pct_level"):
            out += _edges(tier, part, 1.0, (out_, first), (words, last), (words, last))
    return out


BOUNDARY = {
    "plain": _plain_cases(),
    "england-2023": _england_cases(),
    "germany-2021": _germany_cases(),
    "netherlands-2023": _netherlands_cases(),
    "denmark-2020": _denmark_cases(),
    "ireland-2024": _ireland_cases(),
}
_CASES = [(s, *case) for s, cases in BOUNDARY.items() for case in cases]
_IDS = [f"{s}-{t}-{next(iter(v))}={next(iter(v.values())):.17g}" for s, t, v, _ in _CASES]


@pytest.mark.parametrize(("set_id", "tier", "values", "expected"), _CASES, ids=_IDS)
def test_verdict_at_the_stage_boundary(set_id, tier, values, expected):
    """Hand-made case at the stage boundary: the verdict the set's own text gives."""
    verdict, rule_id = expected
    got = judge(_figures(values), [tier], _rules(set_id).stages_by_tier)
    assert (got.verdict[0], got.rule_id[0]) == (verdict, rule_id)
    rule = next(r for r in _raw(set_id)["rule"] if r["id"] == rule_id)
    assert (rule["verdict"], rule["tier"]) == (verdict, tier)  # the words are the file's own
    assert bool(got.passes[0]) is rule.get("passes", False)


def test_every_bundled_rule_decides_some_boundary_case():
    """The boundary cases reach every rule of every bundled set (none left untested)."""
    assert sorted(BOUNDARY) == BUNDLED
    for set_id, cases in BOUNDARY.items():
        reached = {rule_id for _, _, (_, rule_id) in cases}
        assert reached == {r["id"] for r in _raw(set_id)["rule"]}, set_id


def test_a_site_not_judged_or_with_no_figure_gets_no_passing_verdict():
    """Hand-made: judged=False gives the missing words; a NaN figure meets no condition, so the
    last rule of plain (international-above, "above threshold") takes it."""
    stages = _rules("plain").stages_by_tier
    got = judge(_figures({"pct_load": 1.0}), ["international"], stages, judged=False)
    assert (got.verdict[0], got.stage[0], bool(got.passes[0])) == ("not assessed", -1, False)
    got = judge(_figures({"pct": np.nan}), ["international"], stages)
    assert (got.verdict[0], got.rule_id[0]) == ("above threshold", "international-above")


# --------------------------------------------------------------------------------------------
# 4. allowed_scale: the largest s with offset + slope x s reaching a passing stage
# --------------------------------------------------------------------------------------------


def _scale(tier, stages, **figures):
    """allowed_scale for one site; figures given as name=(offset, slope)."""
    offset = {k: np.array([v[0]]) for k, v in figures.items()}
    slope = {k: np.array([v[1]]) for k, v in figures.items()}
    return float(allowed_scale(offset, slope, [tier], stages)[0])


OUTSIDE = Stage("outside", (Condition("distance_m", "above", 10000.0),), True, "outside")
REST = Stage("rest", (), False, "rest")


def test_allowed_scale_hand_made_cases():
    plain = _rules("plain").stages_by_tier  # international-insignificant: pct at_most 4.0
    # pct_level 1 + 6 s <= 4 -> s = (4 - 1) / 6 = 0.5; pct_load 0.5 + 2 s <= 4 -> s = 1.75;
    # pct is the larger of the two, so both must hold: min(0.5, 1.75) = 0.5
    s = _scale("international", plain, pct_level=(1.0, 6.0), pct_load=(0.5, 2.0))
    assert s == pytest.approx(0.5, rel=1e-12)
    # an offset above the limit (5 > 4) allows nothing, even with the contribution gone
    assert _scale("international", plain, pct_level=(5.0, 1.0), pct_load=(0.0, 1.0)) == 0.0
    # slope 0 below the limit: every s passes
    assert _scale("international", plain, pct_level=(1.0, 0.0), pct_load=(2.0, 0.0)) == np.inf
    # a distance rule (above 10000 m) met allows every s; not met it contributes 0
    stages = {"international": (OUTSIDE, REST)}
    assert _scale("international", stages, distance_m=(12000.0, 0.0)) == np.inf
    assert _scale("international", stages, distance_m=(8000.0, 0.0)) == 0.0
    # england-2023 international: distance not met (8000 m) gives 0, "pct below 4" gives
    # (4 - 1) / 6 = 0.5 (a strict bound taken as its limit): the larger, 0.5
    england = _rules("england-2023").stages_by_tier
    s = _scale("international", england, distance_m=(8e3, 0.0), pct=(1.0, 6.0))
    assert s == pytest.approx(0.5, rel=1e-12)
    assert _scale("international", england, distance_m=(12e3, 0.0), pct=(1.0, 6.0)) == np.inf
    # two passing stages: pct at_most 4 allows (4 - 1) / 6 = 0.5; dep at_most 5 allows
    # (5 - 1) / 2 = 2.0; either lets the site through, so the larger, 2.0
    two = {
        "international": (
            Stage("a", (Condition("pct", "at_most", 4.0),), True, "a"),
            Stage("b", (Condition("dep_kg_n_ha_yr", "at_most", 5.0),), True, "b"),
            REST,
        )
    }
    s = _scale("international", two, pct=(1.0, 6.0), dep_kg_n_ha_yr=(1.0, 2.0))
    assert s == pytest.approx(2.0, rel=1e-12)


def test_allowed_scale_follows_each_sites_tier():
    """Hand-made, plain: offsets 0 and pct_load slopes 8, 10, 50 at an international, a
    national and a local site allow 4/8 = 0.5, 20/10 = 2 and 100/50 = 2."""
    offset = {"pct_level": np.zeros(3), "pct_load": np.zeros(3)}
    slope = {"pct_level": np.zeros(3), "pct_load": np.array([8.0, 10.0, 50.0])}
    got = allowed_scale(offset, slope, TIERS, _rules("plain").stages_by_tier)
    np.testing.assert_allclose(got, [0.5, 2.0, 2.0], rtol=1e-12)


def test_judge_at_the_allowed_scale_passes_and_just_beyond_fails():
    """Hand-made, plain international: pct 1 + 6 s; allowed s = 0.5, pct 4.0 there (at_most 4
    passes), s = 0.5001 gives pct 4.0006 (above threshold)."""
    stages = _rules("plain").stages_by_tier
    for s, verdict in ((0.5, "below threshold"), (0.5001, "above threshold")):
        got = judge(_figures({"pct_load": 1.0 + 6.0 * s}), ["international"], stages)
        assert got.verdict[0] == verdict


def test_allowed_scale_respects_an_earlier_non_passing_distance_rule():
    """Hand-made: rule 1 'too close' (distance_m at_most 500, not passing), rule 2 passes at pct
    at_most 4. A site 400 m away meets rule 1 at every s, so no s passes: allowed 0 (judge gives
    'too close' at s = 0.25, where pct = 1 + 6 x 0.25 = 2.5)."""
    near = Stage("too close", (Condition("distance_m", "at_most", 500.0),), False, "near")
    ok = Stage("ok", (Condition("pct", "at_most", 4.0),), True, "ok")
    stages = {"international": (near, ok, REST)}
    got = judge(_figures({"distance_m": 400.0, "pct": 2.5}), ["international"], stages)
    assert got.verdict[0] == "too close"
    assert _scale("international", stages, distance_m=(400.0, 0.0), pct=(1.0, 6.0)) == 0.0


# --------------------------------------------------------------------------------------------
# 5. the command line: siting rules
# --------------------------------------------------------------------------------------------


def test_siting_rules_lists_the_bundled_sets(capsys):
    assert main(["rules"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines == [f"{i}  {_raw(i)['title']}" for i in BUNDLED]  # sorted, ids = file stems


def test_siting_rules_prints_one_set(capsys):
    assert main(["rules", "england-2023"]) == 0
    out = capsys.readouterr().out
    assert "source" in out
    for rule in _raw("england-2023")["rule"]:
        assert rule["id"] in out and rule["source"] in out


def test_siting_rules_unknown_or_bad_set_exits_2(tmp_path, capsys):
    assert main(["rules", "nosuchset"]) == 2
    assert "nosuchset" in capsys.readouterr().err
    bad = _write(tmp_path, _edit(_plain(), W4, W4.replace('"pct"', '"pct_foo"')))
    assert main(["rules", str(bad)]) == 2
    err = capsys.readouterr().err
    assert 'rule "international-insignificant"' in err and 'unknown figure "pct_foo"' in err


# --------------------------------------------------------------------------------------------
# 6. the demo judged by different sets
# --------------------------------------------------------------------------------------------

#: N: 14.0067 g/mol (CIAAW standard atomic weight, conventional value): kg N -> mol N.
MOL_PER_KG_N = 1000.0 / 14.0067


@pytest.fixture(scope="module")
def demo_runs() -> dict:
    """The demo without the grid, once per rule set."""
    scenario = demo_dir() / "scenario.toml"
    return {
        r: siting.screen(scenario, with_grid=False, sensitivity=False, rules=r).sites
        for r in ("plain", "germany-2021", "netherlands-2023")
    }


def _shares(sites):
    """pct_level and pct_load recomputed from the judged maxima and the critical values."""
    level = 100.0 * sites["judged_conc_max_ug_m3"] / sites["critical_level_ug_m3"]
    load = 100.0 * sites["judged_dep_max_kg_n_ha_yr"] / sites["critical_load_used_kg_n_ha_yr"]
    np.testing.assert_allclose(level, sites["judged_pct_level"], rtol=1e-9)
    np.testing.assert_allclose(load, sites["judged_pct_load"], rtol=1e-9)
    return level.to_numpy(), load.to_numpy()


def _plain_expected(sites):
    # plain.toml: pct at_most 4 / 20 / 100 -> "below threshold", else "above threshold"
    limit = sites["tier"].map({"international": 4.0, "national": 20.0, "local": 100.0})
    level, load = _shares(sites)
    ok = np.fmax(level, load) <= limit.to_numpy()
    return list(np.where(ok, "below threshold", "above threshold")), list(ok)


def _germany_expected(sites):
    dep = sites["judged_dep_max_kg_n_ha_yr"].to_numpy()
    incomb = (
        100.0 * sites["judged_incomb_dep_max_kg_n_ha_yr"] / sites["critical_load_used_kg_n_ha_yr"]
    )
    out = []
    for tier, d, i in zip(sites["tier"], dep, incomb):
        if tier != "international":  # biotope-/local-at-most-5kg: dep at_most 5.0
            out.append(
                ("no further examination (Anhang 9)", True)
                if d <= 5.0
                else ("needs case-by-case examination (Anhang 9)", False)
            )
        elif d <= 0.3:  # natura-outside-area-of-effect
            out.append(("outside the area of effect: no assessment under § 34 BNatSchG", True))
        elif i <= 3.0:  # natura-within-3-percent
            out.append(
                (
                    "assess under § 34 BNatSchG: in combination within 3 % of the critical load",
                    False,
                )
            )
        else:
            out.append(("needs detailed assessment under § 34 BNatSchG", False))
    return [v for v, _ in out], [p for _, p in out]


def _netherlands_expected(sites):
    mol = sites["judged_dep_max_kg_n_ha_yr"].to_numpy() * MOL_PER_KG_N
    out = []
    for tier, m in zip(sites["tier"], mol):
        if tier != "international":  # national-/local-not-tested: no condition
            out.append(("no deposition rule for this tier: check national and provincial rules", 0))
        elif m < 0.005:  # natura-rounds-to-zero: dep_mol_n_ha_yr below 0.005
            out.append(
                ("no added deposition above 0.00 mol N/ha/yr: no permit needed for nitrogen", 1)
            )
        else:
            out.append(("needs a Natura 2000 permit with an appropriate assessment", 0))
    return [v for v, _ in out], [bool(p) for _, p in out]


EXPECTED = {
    "plain": _plain_expected,
    "germany-2021": _germany_expected,
    "netherlands-2023": _netherlands_expected,
}


@pytest.mark.parametrize("set_id", list(EXPECTED))
def test_demo_verdicts_are_what_the_set_gives_for_each_sites_figures(demo_runs, set_id):
    sites = demo_runs[set_id]
    assert sites["assessed"].all() and (sites["rules"] == set_id).all()
    verdict, passes = EXPECTED[set_id](sites)
    assert list(sites["verdict"]) == verdict
    assert list(sites["passes"].astype(bool)) == passes


def test_the_demo_under_two_sets_differs_for_the_sets_reasons(demo_runs):
    plain, germany = demo_runs["plain"], demo_runs["germany-2021"]
    # the same figures (both basis installation), judged differently
    np.testing.assert_array_equal(
        plain["judged_dep_max_kg_n_ha_yr"], germany["judged_dep_max_kg_n_ha_yr"]
    )
    differs = plain["passes"].to_numpy(bool) != germany["passes"].to_numpy(bool)
    assert differs.sum() >= 2, plain[["site_id", "verdict"]].join(germany["verdict"], rsuffix="_de")
    nl = demo_runs["netherlands-2023"]
    assert (plain["verdict"] != nl["verdict"]).sum() >= 2


def test_the_basis_picks_the_judged_contribution(demo_runs):
    """netherlands-2023 (basis "net") judges the net_* figures; plain and germany-2021 (basis
    "installation") the pc_* figures; in the demo the two differ (R1 removed, E1 and M1 kept)."""
    pairs = [
        ("conc_max_ug_m3",) * 2,
        ("dep_max_kg_n_ha_yr",) * 2,
        ("pct_level",) * 2,
        ("pct_load",) * 2,
    ]
    for set_id, prefix, basis in (
        ("netherlands-2023", "net_", "net"),
        ("plain", "pc_", "installation"),
        ("germany-2021", "pc_", "installation"),
    ):
        sites = demo_runs[set_id]
        assert (sites["basis"] == basis).all()
        for judged, own in pairs:
            np.testing.assert_allclose(
                sites[f"judged_{judged}"], sites[f"{prefix}{own}"], rtol=1e-12
            )
    plain = demo_runs["plain"]
    assert (plain["net_dep_max_kg_n_ha_yr"] < plain["pc_dep_max_kg_n_ha_yr"]).all()


# --------------------------------------------------------------------------------------------
# 7. a scenario naming its own rule set file
# --------------------------------------------------------------------------------------------


@pytest.fixture
def own_rules(tmp_path) -> Path:
    """A copy of the demo whose [assessment] rules names my_rules.toml beside it: plain with id
    "my-rules" and the international limit raised from 4 % to 30 %."""
    folder = tmp_path / "scenario"
    shutil.copytree(demo_dir(), folder)
    text = _edit(_plain(), 'id = "plain"', 'id = "my-rules"')
    (folder / "my_rules.toml").write_text(_edit(text, W4, W4.replace("4.0", "30.0")), "utf-8")
    scenario = folder / "scenario.toml"
    with open(scenario, "a", encoding="utf-8") as fh:
        fh.write('\n[assessment]\nrules = "my_rules.toml"\n')
    return scenario


def test_a_scenarios_rule_file_is_found_beside_it_and_used(own_rules, tmp_path, monkeypatch):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)  # the path is the scenario folder's, not the working folder's
    assert load_scenario(own_rules).assessment.rules == str(own_rules.parent / "my_rules.toml")
    result = siting.screen(own_rules, with_grid=False, sensitivity=False)
    assert result.rules.id == "my-rules"
    assert result.rules.path.resolve() == (own_rules.parent / "my_rules.toml").resolve()
    s01 = result.sites.set_index("site_id").loc["S01"]  # international, pct about 16 %
    level, load = s01["judged_pct_level"], s01["judged_pct_load"]
    assert 4.0 < max(level, load) <= 30.0  # above plain's 4 %, at most this file's 30 %
    assert (s01["verdict"], bool(s01["passes"])) == ("below threshold", True)


def test_a_bad_rule_file_in_a_scenario_stops_screen(own_rules, capsys):
    path = own_rules.parent / "my_rules.toml"
    text = path.read_text(encoding="utf-8")
    path.write_text(_edit(text, '"pct", at_most = 30.0', '"pct_foo", at_most = 30.0'), "utf-8")
    out = own_rules.parent.parent / "out"
    capsys.readouterr()
    assert main(["screen", str(own_rules), "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("siting: error:") and len(err.strip().splitlines()) == 1
    assert 'rule "international-insignificant"' in err and 'unknown figure "pct_foo"' in err
    assert not out.exists()
    assert sorted(p.name for p in out.parent.iterdir()) == ["scenario"]  # no partial folder
