"""`siting region` judges each site's all-farms total by the rule set's in-combination stages.

Checks: the sites table names the all-farms figures ``incomb_*`` (no ``pc_*``); a hand-made rule
set's in-combination limit set just above and just below a site's own figure (a boundary check
of the judging: 1.01 and 0.99 times the run's figure) gives pass and fail; the bundled plain set
has no in-combination stage, so every site reads "no in-combination rule in plain"; germany-2021
has one for the international tier (its 3 % of the critical load, siting/config/rules); a bad
rule set stops the run before any input is read. The farms are invented (three fictional
farms beside the invented demo habitat sites, data_demo/README.md).
"""

import json
from dataclasses import replace

import geopandas as gpd
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from shapely.geometry import Point

from siting.cli import main
from siting.errors import InputError
from siting.output.region import write_region_outputs
from siting.readers.resources import demo_dir
from siting.readers.rules import load_rule_set
from siting.readers.tables import load_tables
from siting.runs import region_inputs, regional
from siting.runs.region_inputs import RegionOptions, prepare_region
from siting.runs.regional import region

CRS = "EPSG:32632"
OPTIONS = RegionOptions(spacing_m=200.0, margin_m=600.0, scheduler=None)


@pytest.fixture(scope="module")
def farms_file(tmp_path_factory):
    """Three invented farms around the demo habitat sites (outside them)."""
    rows = [
        {
            "id": "F1",
            "nh3_kg_per_year": 4000.0,
            "height_m": 6.0,
            "geometry": Point(499000, 5800600),
        },
        {
            "id": "F2",
            "nh3_kg_per_year": 2500.0,
            "height_m": 4.0,
            "geometry": Point(502400, 5801000),
        },
        {
            "id": "F3",
            "nh3_kg_per_year": 1500.0,
            "height_m": 6.0,
            "geometry": Point(500600, 5799000),
        },
    ]
    path = tmp_path_factory.mktemp("farms") / "farms.gpkg"
    gpd.GeoDataFrame(rows, geometry="geometry", crs=CRS).to_file(path, driver="GPKG")
    return path


def _run(farms_file, **kwargs):
    return region(
        farms_file,
        demo_dir() / "weather_table.csv",
        demo_dir() / "habitats.gpkg",
        OPTIONS,
        **kwargs,
    )


@pytest.fixture(scope="module")
def under_plain(farms_file):
    """The run under the default rule set (plain)."""
    return _run(farms_file)


def _rule_file(path, limit: float):
    """A hand-made set: on international sites a stage on a single installation's share that
    every site meets (pct at most 1e9), then the in-combination stage at ``limit``; the other
    tiers have only their last stage (so no in-combination rule)."""
    rest = "\n".join(
        f'[[rule]]\nid = "{tier}-rest"\ntier = "{tier}"\nverdict = "needs a closer look"\n'
        'source = "hand-made test set"\nstatus = "common practice, no source"\n'
        for tier in ("national", "local")
    )
    path.write_text(
        f"""id = "handmade"
title = "Hand-made test set"
jurisdiction = "none (a test)"
basis = "installation"
source = "hand-made test set"
status = "common practice, no source"

[[rule]]
id = "alone"
tier = "international"
verdict = "passes alone"
passes = true
when = [{{ figure = "pct", at_most = 1e9 }}]
source = "hand-made test set"
status = "common practice, no source"

[[rule]]
id = "in-combination"
tier = "international"
verdict = "within the in-combination limit"
passes = true
when = [{{ figure = "incomb_pct_load", at_most = {limit!r} }}]
source = "hand-made test set"
status = "common practice, no source"

[[rule]]
id = "above"
tier = "international"
verdict = "above the in-combination limit"
source = "hand-made test set"
status = "common practice, no source"

{rest}""",
        encoding="utf-8",
    )
    return path


def test_sites_csv_has_in_combination_columns_and_no_pc(under_plain, tmp_path):
    """sites.csv names the all-farms total incomb_*, none pc_*, with the basis and set id."""
    out = write_region_outputs(under_plain, tmp_path / "out")
    sites = pd.read_csv(out / "sites.csv")
    assert {
        "incomb_conc_max_ug_m3",
        "incomb_conc_mean_ug_m3",
        "incomb_dep_max_kg_n_ha_yr",
        "incomb_dep_mean_kg_n_ha_yr",
        "incomb_pct_level",
        "incomb_pct_load",
        "verdict",
        "passes",
        "deciding_rule",
        "basis",
        "rules",
    } <= set(sites.columns)
    assert not [c for c in sites.columns if c.startswith("pc_")]
    assert "threshold_percent" not in sites.columns  # a single installation's threshold
    assert (sites["basis"] == "in combination (all farms of the layer)").all()
    assert (sites["rules"] == "plain").all()
    # derived: one deposition velocity per site, so dep max = conc max x vd x 259.36
    # (ug NH3 m-2 s-1 -> kg N ha-1 yr-1: 31 536 000 x 1e4 / 1e9 x 14.0067/17.0305)
    assert_allclose(
        sites["incomb_dep_max_kg_n_ha_yr"],
        sites["incomb_conc_max_ug_m3"] * sites["deposition_velocity_m_s"] * 259.36,
        rtol=1e-4,
    )
    record = json.loads((out / "run.json").read_text())
    assert record["rules"]["id"] == "plain" and len(record["rules"]["sha256"]) == 64
    assert record["options"]["rules"] == "plain"


def test_in_combination_limit_just_above_and_below_a_site(under_plain, farms_file, tmp_path):
    """Boundary check of the judging: the limit at 1.01 x a site's own incomb_pct_load passes
    it, at 0.99 x fails it; the earlier stage on pct (met by every site) is skipped."""
    sites = under_plain.sites
    international = sites[sites["tier"] == "international"]
    assert len(international) >= 1
    site = international.loc[international["incomb_pct_load"].idxmax()]
    figure = float(site["incomb_pct_load"])
    assert figure > 0
    for factor, passes, verdict, rule in (
        (1.01, True, "within the in-combination limit", "handmade/in-combination: incomb_pct_load"),
        (0.99, False, "above the in-combination limit", "handmade/above: otherwise"),
    ):
        path = _rule_file(tmp_path / f"rules_{factor}.toml", figure * factor)
        run = _run(farms_file, rules=path).sites
        judged = run.set_index("site_id").loc[site["site_id"]]
        assert judged["passes"] == passes, factor
        assert judged["verdict"] == verdict
        assert judged["deciding_rule"].startswith(rule)
        assert judged["verdict"] != "passes alone"  # the single-installation stage skipped
    others = run[run["tier"] != "international"]
    assert (others["verdict"] == "no in-combination rule in handmade").all()
    assert not others["passes"].any()


def test_plain_has_no_in_combination_rule(under_plain):
    """Under plain (no in-combination stage) every site reads so and none passes, however low
    or high its share (here a site above 50 % of its critical load, in combination)."""
    sites = under_plain.sites
    assert len(sites) == 4  # the four invented demo sites
    assert (sites["verdict"] == "no in-combination rule in plain").all()
    assert sites["passes"].dtype == bool and not sites["passes"].any()
    assert sites["deciding_rule"].str.startswith("plain: no rule of tier").all()
    assert sites["incomb_pct_load"].max() > 50  # a high share is not called "below threshold"


def test_germany_2021_judges_international_sites_in_combination(farms_file):
    """germany-2021: international sites by 3 % of the critical load in combination (its rule
    natura-within-3-percent, which does not pass; the 0.3 kg cut-off on the installation is
    skipped); its other tiers have no in-combination rule."""
    sites = _run(farms_file, rules="germany-2021").sites
    for site in sites.itertuples():
        if site.tier == "international":
            # hand-made expectation from the bundled set's text: at most 3 % -> within, else detailed
            within = site.incomb_pct_load <= 3.0
            assert site.verdict == (
                "assess under § 34 BNatSchG: in combination within 3 % of the critical load"
                if within
                else "needs detailed assessment under § 34 BNatSchG"
            )
            rule = "natura-within-3-percent" if within else "natura-detailed"
            assert site.deciding_rule.startswith(f"germany-2021/{rule}:")
        else:
            assert site.verdict == "no in-combination rule in germany-2021"
        assert not site.passes


def test_bad_rule_set_stops_before_anything_is_read(farms_file, tmp_path, monkeypatch, capsys):
    """A faulty set (an unknown figure) is an InputError naming the rule, before the farms are
    read or anything computed; `siting region --rules` exits 2 and writes nothing."""
    bad = tmp_path / "bad.toml"
    bad.write_text(
        _rule_file(tmp_path / "ok.toml", 3.0)
        .read_text()
        .replace('figure = "incomb_pct_load"', 'figure = "incomb_pct_lode"')
    )

    def never(*args, **kwargs):
        raise AssertionError("reached after a faulty rule set")

    monkeypatch.setattr(region_inputs, "read_farms", never)
    monkeypatch.setattr(regional, "compute_region", never)
    with pytest.raises(InputError, match='rule "in-combination".*unknown figure "incomb_pct_lode"'):
        _run(farms_file, rules=bad)
    # a loaded set without rules for a tier of the tables
    rules = load_rule_set("plain", [t["id"] for t in load_tables().thresholds])
    partial = replace(
        rules, stages_by_tier={k: v for k, v in rules.stages_by_tier.items() if k != "local"}
    )
    with pytest.raises(InputError, match='tier "local" has no rule'):
        prepare_region(
            farms_file, demo_dir() / "weather_table.csv", None, replace(OPTIONS, rules=partial)
        )
    out = tmp_path / "out"
    code = main(
        [
            "region",
            str(farms_file),
            "--weather",
            str(demo_dir() / "weather_table.csv"),
            "--out",
            str(out),
            "--rules",
            str(bad),
            "--quiet",
        ]
    )
    assert code == 2
    assert "incomb_pct_lode" in capsys.readouterr().err
    assert not out.exists()
