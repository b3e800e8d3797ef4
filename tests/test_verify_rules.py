"""`siting verify --rules`: a submission held to the regulator's rule set, site by site.

One demo submission (judged by plain, the default) is screened once for the session (conftest.py,
``coarse_demo_submission``); each verification re-runs it under plain and judges its sites by
the regulator's set as well.
"""

import json
import shutil

import pandas as pd
import pytest

from siting.cli import main
from siting.readers.resources import demo_dir
from siting.readers.rules import bundled_rules_dir
from siting.runs import verification
from siting.runs.screening import screen
from siting.runs.verification import verify

CODE = "VERDICT_UNDER_REGULATOR_RULES"

#: A hand-made rule set judging the net change (proposed less removed sources) with one
#: deposition limit for every tier: hand-made case, the 0.5 kg N/ha/yr chosen to split the
#: demo's sites between the net change and the installation's contribution.
NET_RULES = """
id = "hand-net"
title = "Hand-made: net change at most 0.5 kg N/ha/yr"
jurisdiction = "none (a test)"
basis = "net"
source = "hand-made case"
status = "common practice, no source"
"""
for _tier in ("international", "national", "local"):
    NET_RULES += f"""
[[rule]]
id = "{_tier}-within"
tier = "{_tier}"
verdict = "net change within 0.5 kg"
passes = true
when = [{{ figure = "dep_kg_n_ha_yr", at_most = 0.5 }}]
source = "hand-made case"
status = "common practice, no source"

[[rule]]
id = "{_tier}-over"
tier = "{_tier}"
verdict = "net change over 0.5 kg"
source = "hand-made case"
status = "common practice, no source"
"""


@pytest.fixture(scope="module")
def submission(coarse_demo_submission):
    """`siting screen` of the demo (grid spacing 100 m to keep it quick), judged by plain (the
    session's run of conftest.py, also verified by tests/test_verify.py)."""
    return coarse_demo_submission


@pytest.fixture(scope="module")
def germany(submission, tmp_path_factory):
    """`siting verify --rules germany-2021` of the submission: (exit code, output folder)."""
    out = tmp_path_factory.mktemp("germany") / "v"
    rc = main(["verify", str(submission), "--out", str(out), "--rules", "germany-2021", "--quiet"])
    return rc, out


def _german_verdict(site) -> tuple[str, bool]:
    """A site's verdict under TA Luft 2021 as germany-2021.toml cites it, from the submitted
    figures (the installation's contribution, as plain judges too): Anhang 8, no assessment
    at a Natura 2000 site up to 0.3 kg N/ha/yr; LAI 2019, in combination up to 3 % of the
    critical load; Anhang 9, no further examination elsewhere up to 5 kg N/ha/yr."""
    dep = site["judged_dep_max_kg_n_ha_yr"]
    if site["tier"] == "international":
        if dep <= 0.3:
            return "outside the area of effect: no assessment under § 34 BNatSchG", True
        if site["judged_incomb_pct_load"] <= 3.0:
            return (
                "assess under § 34 BNatSchG: in combination within 3 % of the critical load",
                False,
            )
        return "needs detailed assessment under § 34 BNatSchG", False
    if dep <= 5.0:
        return "no further examination (Anhang 9)", True
    return "needs case-by-case examination (Anhang 9)", False


def test_regulator_rules_name_each_site_whose_verdict_differs(submission, germany):
    """Each site whose German verdict is not its submitted one is a finding naming both
    verdicts, both deciding rules and both sets; high exactly where the submitted verdict
    passes and the German one does not; exit code 1."""
    rc, out = germany
    payload = json.loads((out / "findings.json").read_text())
    sites = pd.read_csv(submission / "sites.csv")
    expected = {}
    for _, site in sites.iterrows():
        verdict, passes = _german_verdict(site)
        if verdict != site["verdict"]:
            expected[f'site "{site["name"]}"'] = (site, verdict, passes)
    # hand-made case: Thimbleden Wood (local) passes plain's 100 % but takes
    # 6.15 kg N/ha/yr > 5 kg (Anhang 9), so at least one verdict goes from passing to not
    assert any(site["passes"] and not passes for site, _, passes in expected.values())
    found = {f["subject"]: f for f in payload["findings"] if f["code"] == CODE}
    assert set(found) == set(expected)
    for subject, (site, verdict, passes) in expected.items():
        finding = found[subject]
        assert f'"{site["verdict"]}"' in finding["message"] and f'"{verdict}"' in finding["message"]
        assert "plain" in finding["message"] and "germany-2021" in finding["message"]
        assert site["deciding_rule"] in finding["message"]  # the submitted deciding rule
        assert finding["evidence"]["regulator_rule"].startswith("germany-2021/")
        assert finding["evidence"]["regulator_verdict"] == verdict
        assert finding["severity"] == ("high" if site["passes"] and not passes else "info")
    assert rc == 1 and payload["exit_code"] == 1 and not payload["consistent"]
    assert payload["differences"] == []  # the re-run under plain agrees with the submission
    assert payload["rule_sets"]["submission"]["id"] == "plain"
    assert payload["rule_sets"]["regulator"]["id"] == "germany-2021"
    assert (
        "plain" in payload["rule_sets"]["text"] and "germany-2021" in payload["rule_sets"]["text"]
    )


def test_verify_html_shows_the_verdicts_by_rule_set(submission, germany):
    """verify.html has the per-site table: each site, the German verdict and its rule, the
    differing rows marked."""
    _, out = germany
    page = (out / "verify.html").read_text(encoding="utf-8")
    table = page[page.index('id="verdicts"') : page.index('id="integrity"')]
    sites = pd.read_csv(submission / "sites.csv")
    for _, site in sites.iterrows():
        assert site["name"] in table and _german_verdict(site)[0] in table
    assert table.count('<tr class="differs">') == sum(
        _german_verdict(site)[0] != site["verdict"] for _, site in sites.iterrows()
    )
    assert "germany-2021/local-case-by-case" in table
    assert "Rule sets: the submission&#x27;s plain" in table  # escaped (autoescape)


def test_the_submissions_own_rule_set_gives_no_verdict_finding(submission, tmp_path):
    """--rules plain, the set the submission was judged by: no verdict finding, exit 0."""
    out = tmp_path / "v"
    rc = main(["verify", str(submission), "--out", str(out), "--rules", "plain", "--quiet"])
    payload = json.loads((out / "findings.json").read_text())
    assert rc == 0 and payload["consistent"]
    assert not [f for f in payload["findings"] if f["code"] == CODE]
    assert all(not row["differs"] for row in payload["verdicts"])
    assert "judge alike" in payload["rule_sets"]["text"]


def test_a_bad_rule_set_exits_2_before_anything_is_computed(
    submission, tmp_path, capsys, monkeypatch
):
    """A rule set with an unknown figure: exit 2, one line naming --rules and the rule, no
    output folder, and the submission never re-run (the set is checked first)."""
    bad = tmp_path / "bad.toml"
    bad.write_text(NET_RULES.replace('figure = "dep_kg_n_ha_yr"', 'figure = "no_such_figure"', 1))

    def no_run(*args, **kwargs):
        raise AssertionError("screened before the rule set was checked")

    monkeypatch.setattr(verification.screening, "screen", no_run)
    out = tmp_path / "v"
    rc = main(["verify", str(submission), "--out", str(out), "--rules", str(bad)])
    err = capsys.readouterr().err
    assert rc == 2 and not out.exists()
    assert "--rules" in err and 'rule "international-within"' in err and "no_such_figure" in err


def test_another_basis_is_judged_on_its_own_contribution(submission, tmp_path):
    """A set judging the net change is judged on a run of its own, not on the installation's
    figures: hand-made case, limit 0.5 kg N/ha/yr against each site's submitted net-change
    maximum (net_dep_max_kg_n_ha_yr), while every installation maximum exceeds it."""
    rules = tmp_path / "hand-net.toml"
    rules.write_text(NET_RULES)
    out = tmp_path / "v"
    rc = main(["verify", str(submission), "--out", str(out), "--rules", str(rules), "--quiet"])
    payload = json.loads((out / "findings.json").read_text())
    sites = pd.read_csv(submission / "sites.csv").set_index("name")
    assert (sites["judged_dep_max_kg_n_ha_yr"] > 0.5).all()  # installation: all would fail
    net = sites["net_dep_max_kg_n_ha_yr"]
    assert (net <= 0.5).any() and (net > 0.5).any()  # the net change splits them
    by_site = {row["site"]: row for row in payload["verdicts"]}
    for name, value in net.items():
        within = value <= 0.5
        assert by_site[name]["regulator_passes"] == within
        assert by_site[name]["regulator_verdict"] == (
            "net change within 0.5 kg" if within else "net change over 0.5 kg"
        )
    high = {
        f["subject"] for f in payload["findings"] if f["code"] == CODE and f["severity"] == "high"
    }
    assert high == {f'site "{n}"' for n in sites.index if sites.at[n, "passes"] and net[n] > 0.5}
    assert rc == (1 if high else 0)
    assert "the net change" in payload["rule_sets"]["text"]


def test_a_table_without_rule_columns_is_judged_by_plain(submission, tmp_path):
    """A sites table written before rule sets (no rules, passes, deciding_rule or basis
    columns), with its scenario: re-run under plain, whose "below threshold" passes
    (plain.toml), so a site passing there and not under germany-2021 is still high."""
    table = pd.read_csv(submission / "sites.csv")
    old = table.drop(columns=["rules", "passes", "deciding_rule", "basis"])
    old.to_csv(tmp_path / "sites.csv", index=False)
    result = verify(
        submission / "inputs" / "scenario.toml",
        results=tmp_path / "sites.csv",
        rules="germany-2021",
    )
    assert result.rules.id == "plain" and result.differences == []
    high = [f for f in result.findings if f.code == CODE and f.severity == "high"]
    expected = [
        f'site "{s["name"]}"'
        for _, s in table.iterrows()
        if s["verdict"] == "below threshold" and not _german_verdict(s)[1]
    ]
    assert expected and [f.subject for f in high] == expected
    assert high[0].evidence["submitted_passes"] is True
    assert high[0].evidence["submitted_rule"].startswith("plain/")
    assert result.exit_code == 1


def test_the_re_run_uses_the_set_the_sites_table_names(submission, tmp_path):
    """A table judged by germany-2021 (as `screen --rules germany-2021` writes it) while the
    scenario names plain: the re-run judges by germany-2021 and agrees; a re-run under plain
    would differ in every site's verdict words."""
    scenario = submission / "inputs" / "scenario.toml"
    german = screen(scenario, sensitivity=False, rules="germany-2021").sites.set_index("name")
    table = pd.read_csv(submission / "sites.csv")
    for column in ("verdict", "passes", "deciding_rule", "rules", "threshold_percent"):
        table[column] = table["name"].map(german[column])
    assert (table["verdict"] != pd.read_csv(submission / "sites.csv")["verdict"]).all()
    table.to_csv(tmp_path / "sites.csv", index=False)
    result = verify(scenario, results=tmp_path / "sites.csv")
    assert result.rules.id == "germany-2021"
    assert result.differences == []
    assert result.regulator_rules is None and "no regulator" in result.rule_sets_text
    assert not [f for f in result.findings if f.code == CODE]


def test_a_rule_set_file_given_to_the_run_is_packed_and_reused_by_verify(tmp_path):
    """`siting screen --rules FILE` (a file the scenario does not name) packs the file under
    inputs/_rules/, so `siting verify` re-runs the submission under the same set: exit 0 and
    no verdict difference (the file is plain's copy under another id; hand-made case)."""
    folder = tmp_path / "scenario"
    shutil.copytree(demo_dir(), folder)
    scenario = folder / "scenario.toml"
    scenario.write_text(scenario.read_text().replace("spacing_m = 25.0", "spacing_m = 100.0", 1))
    own = tmp_path / "elsewhere" / "our_rules.toml"
    own.parent.mkdir()
    text = (bundled_rules_dir() / "plain.toml").read_text(encoding="utf-8")
    own.write_text(text.replace('id = "plain"', 'id = "our-office-2026"', 1), encoding="utf-8")
    out = tmp_path / "out"
    argv = ["screen", str(scenario), "--out", str(out), "--rules", str(own), "--quiet"]
    assert main([*argv, "--no-pdf"]) == 0
    assert (out / "inputs" / "_rules" / "our_rules.toml").read_bytes() == own.read_bytes()
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    assert record["package"]["rules"] == "_rules/our_rules.toml"
    assert record["rules"]["id"] == "our-office-2026"
    own.unlink()  # the applicant's copy is gone: verify must use the packed one
    check = tmp_path / "check"
    assert main(["verify", str(out), "--out", str(check), "--quiet"]) == 0
    findings = json.loads((check / "findings.json").read_text(encoding="utf-8"))
    assert not [f for f in findings["findings"] if f["code"] == "VERDICT_UNDER_REGULATOR_RULES"]
