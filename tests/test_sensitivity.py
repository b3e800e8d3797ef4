"""The two-sided sensitivity (siting/sensitivity.py): shortcuts agree with full re-runs."""

import dataclasses

from numpy.testing import assert_allclose

from siting.runs.screening import screen


def test_velocity_variants_without_depletion_equal_a_rerun(demo_screen):
    """Without depletion the v_d variants are scaled (flux = v_d x C, linear); a full re-run
    with the table's high and low velocities gives the same % of critical load (analytic;
    rtol: the re-run uses the sites' own points only, the demo maxima lie on them)."""
    result = demo_screen  # screen(demo_dir() / "scenario.toml"), conftest.py
    assert not result.scenario.deposition.plume_depletion
    long = result.sensitivity
    tables = result.tables
    for end, label in (
        ("deposition_velocity_max_m_s", "deposition velocity high"),
        ("deposition_velocity_min_m_s", "deposition velocity low"),
    ):
        velocities = {
            k: {**v, "deposition_velocity_m_s": v[end]}
            for k, v in tables.deposition_velocities.items()
        }
        rerun = screen(
            result.scenario,
            with_grid=False,
            sensitivity=False,
            tables=dataclasses.replace(tables, deposition_velocities=velocities),
        )
        sites = rerun.sites.set_index("name")
        expected = 100 * sites["pc_dep_max_kg_n_ha_yr"] / sites["critical_load_used_kg_n_ha_yr"]
        got = long[long["variant"] == label].set_index("site")["pct_load"]
        assert_allclose(got.loc[expected.index], expected, rtol=1e-6)


def test_emission_factor_variants_scale_factor_derived_sources_only(demo_screen):
    """+-30 % on the factors (IPCC2006 analogy, emission_factors.toml) moves the PC by less than
    30 % where a source given directly (M1, 420 kg/yr) contributes: bounds by linearity."""
    result = demo_screen  # screen(demo_dir() / "scenario.toml"), conftest.py
    long = result.sensitivity.set_index(["variant", "site"])["pct_load"]
    for site in result.sites["name"]:
        central = long[("central", site)]
        high = long[("emission factors high (+30 %)", site)]
        low = long[("emission factors low (-30 %)", site)]
        assert central < high <= 1.3 * central * (1 + 1e-9)
        assert 0.7 * central * (1 - 1e-9) <= low < central
