"""Options in one scenario ([[option]]): variants of the proposal screened in the same run.

Scenarios are the invented demo's inputs with their own sources, on a 100 m grid. The checks
are against the model's own linearity in the emission (the concentration of a Gaussian plume
is proportional to the emission rate: Turner 1970, the plume equation), against separate runs
of the changed scenario written out by hand, and against the files read back independently
(pandas, rasterio).
"""

import shutil

import numpy as np
import pandas as pd
import pytest
import rasterio
from scenario_text import ONE_HOUSE

from siting.cli import main
from siting.errors import InputError
from siting.readers.resources import demo_dir
from siting.readers.scenario import load_scenario
from siting.runs import screening_inputs
from siting.runs.screening import screen

_H1 = ONE_HOUSE

_E1 = """
[[source]]
id = "E1"
kind = "volume"
x = 500070.0
y = 5800065.0
height_m = 4.0
role = "existing"
width_m = 20.0
length_m = 60.0
angle_deg = 35.0
livestock = "sow"
housing = "fully_slatted"
places = 450
"""


def _scenario(folder, sources: str, options: str = "", name: str = "scenario.toml"):
    """A copy of the demo's inputs in ``folder`` with these sources and options (100 m grid)."""
    if not (folder / "habitats.gpkg").exists():
        shutil.copytree(demo_dir(), folder, dirs_exist_ok=True)
    text = (demo_dir() / "scenario.toml").read_text()
    head = text[: text.index("[[source]]")].replace("spacing_m = 25.0", "spacing_m = 100.0", 1)
    path = folder / name
    path.write_text(head + sources + options)
    return path


class _Counter:
    """Counts the sector engine's calls (one per source and set of points computed)."""

    def __init__(self, monkeypatch):
        self.calls = 0
        engine = screening_inputs.source_concentration_g_m3_per_g_s

        def counted(*args, **kwargs):
            self.calls += 1
            return engine(*args, **kwargs)

        monkeypatch.setattr(screening_inputs, "source_concentration_g_m3_per_g_s", counted)


def test_emission_only_option_is_the_linear_scaling_of_the_base(tmp_path, monkeypatch):
    # check: the plume is linear in the emission, so an option that only changes H1's places
    # (2400 -> 1600, no other source) gives the base's fields times 1600/2400 and computes
    # no dispersion of its own (the base's is reused)
    options = '\n[[option]]\nname = "fewer"\n[option.change.H1]\nplaces = 1600\n'
    path = _scenario(tmp_path, _H1, options)
    counter = _Counter(monkeypatch)
    # (what it takes re-runs at the sites' own points: left out, the count is the options')
    result = screen(path, sensitivity=False, what_it_takes=False)
    assert counter.calls == 1  # the base's one source; the option reused it
    option = result.options.runs["fewer"]
    for key in ("pc_conc_ug_m3", "pc_dep_kg_n_ha_yr"):
        np.testing.assert_allclose(
            option.fields[key], result.fields[key] * (1600 / 2400), rtol=1e-12, atol=0
        )
    ratio = option.sites["judged_dep_max_kg_n_ha_yr"] / result.sites["judged_dep_max_kg_n_ha_yr"]
    np.testing.assert_allclose(ratio, 1600 / 2400, rtol=1e-12)


def test_geometry_option_is_computed_afresh(tmp_path, monkeypatch):
    options = '\n[[option]]\nname = "taller"\n[option.change.H1]\nheight_m = 12.0\n'
    counter = _Counter(monkeypatch)
    result = screen(_scenario(tmp_path, _H1, options), sensitivity=False, what_it_takes=False)
    assert counter.calls == 2  # the base's release and the taller one
    taller = result.options.runs["taller"].fields["pc_conc_ug_m3"]
    assert not np.allclose(taller, result.fields["pc_conc_ug_m3"])


_CHANGED = {
    # option tables -> the sources a separate scenario writes out by hand
    "taller": (
        "[option.change.H1]\nheight_m = 12.0\n",
        _H1.replace("height_m = 7.5", "height_m = 12.0") + _E1,
    ),
    "no_scrubber": (
        '[option.change.H1]\nabatement = "none"\n',
        _H1.replace('abatement = "acid_scrubber"\n', "") + _E1,
    ),
    "e1_out": ("[option.change.E1]\ninclude = false\n", _H1),
    "e1_removed": (
        '[option.change.E1]\nrole = "removed"\n',
        _H1 + _E1.replace('role = "existing"', 'role = "removed"'),
    ),
}


@pytest.mark.parametrize("name", sorted(_CHANGED))
def test_option_equals_a_separate_run_of_the_changed_scenario(tmp_path, name):
    # check: the option's sites equal those of the changed scenario run on its own. Where the
    # option leaves a source out, the run still samples each site at its point nearest every
    # source of the base and of the options (one grid and one set of points for all), so its
    # maximum can only be as high or a little higher than the separate run's: to rounding.
    change, written_out = _CHANGED[name]
    path = _scenario(tmp_path, _H1 + _E1, f'\n[[option]]\nname = "{name}"\n{change}')
    option = screen(path, sensitivity=False).options.runs[name]
    alone = screen(_scenario(tmp_path, written_out, name="alone.toml"), sensitivity=False)
    same_points = name != "e1_out"
    for column in ("pc_conc_max_ug_m3", "pc_dep_max_kg_n_ha_yr", "judged_pct_load", "verdict"):
        left, right = option.sites[column], alone.sites[column]
        if left.dtype.kind == "f":
            rtol = 1e-9 if same_points else 1e-3
            np.testing.assert_allclose(left, right, rtol=rtol, atol=1e-12, err_msg=column)
            assert (left >= right * (1 - 1e-12)).all(), column
        else:
            assert list(left) == list(right), column


def test_a_source_of_one_option_only(tmp_path):
    # a new house in option "extra" only: the base has none of it; the option equals the
    # scenario with that source written in (the grid covers it in both runs)
    extra = _E1.replace('id = "E1"', 'id = "X1"').replace('role = "existing"', 'role = "proposed"')
    own = extra.replace("places = 450\n", 'places = 450\noptions = ["extra"]\n')
    path = _scenario(tmp_path, _H1 + own, '\n[[option]]\nname = "extra"\n')
    scenario = load_scenario(path)
    assert [s.id for s in scenario.sources] == ["H1"]
    assert [s.id for s in scenario.with_option("extra").sources] == ["H1", "X1"]
    result = screen(scenario, sensitivity=False)
    alone = screen(_scenario(tmp_path, _H1 + extra, name="alone.toml"), sensitivity=False)
    np.testing.assert_allclose(
        result.options.runs["extra"].sites["pc_dep_max_kg_n_ha_yr"],
        alone.sites["pc_dep_max_kg_n_ha_yr"],
        rtol=1e-9,
    )
    assert result.grid == alone.grid  # the base's grid already covered X1


def test_changes_drop_what_goes_with_a_technique(tmp_path):
    claimed = _H1 + 'reduction_percent = 90.0\nreduction_basis = "invented certificate"\n'
    options = (
        '\n[[option]]\nname = "none"\n[option.change.H1]\nabatement = "none"\n'
        '\n[[option]]\nname = "bio"\n[option.change.H1]\nabatement = "biological_scrubber"\n'
        '\n[[option]]\nname = "direct"\n[option.change.H1]\nnh3_kg_per_year = 500.0\n'
    )
    scenario = load_scenario(_scenario(tmp_path, claimed, options))
    none = scenario.with_option("none").sources[0]
    assert none.abatement is None and none.reduction_percent is None
    bio = scenario.with_option("bio").sources[0]
    assert bio.abatement == "biological_scrubber" and bio.reduction_percent is None
    direct = scenario.with_option("direct").sources[0]
    assert direct.nh3_kg_per_year == 500.0 and direct.places is None
    assert scenario.sources[0].reduction_percent == 90.0  # the base is left as it was


@pytest.mark.parametrize(
    "options, words",
    [
        ('[[option]]\nname = "x"\n[option.change.H9]\nheight_m = 3.0\n', 'no source "H9"'),
        ('[[option]]\nname = "../x"\n', "letters, digits"),
        ('[[option]]\nname = "base"\n', "names the base scenario"),
        ('[[option]]\nname = "a"\n[[option]]\nname = "a"\n', 'duplicate option name "a"'),
        ('[[option]]\nname = "x"\n[option.change.H1]\nheight_m = -1.0\n', 'option "x"'),
        ('[[option]]\nname = "x"\n[option.change.H1]\nplaces = nan\n', "finite"),
        ('[[option]]\nname = "x"\n[option.change.H1]\nheigth_m = 3.0\n', '"height_m"'),
        ('[[option]]\nname = "x"\n[option.change.H1]\ninclude = false\n', "leaves no source"),
        (
            '[[option]]\nname = "x"\n[option.change.H1]\nwidth_m = 10.0\n',
            'option "x", source "H1"',
        ),
    ],
)
def test_faulty_options_are_refused_naming_the_option(tmp_path, options, words):
    with pytest.raises(InputError, match=None) as caught:
        load_scenario(_scenario(tmp_path, _H1, "\n" + options))
    assert words in str(caught.value)


def test_cli_writes_options_csv_differences_report_and_map(tmp_path, capsys):
    options = (
        '\n[[option]]\nname = "fewer"\ndescription = "H1 with 1600 places"\n'
        "[option.change.H1]\nplaces = 1600\n"
        '\n[[option]]\nname = "taller"\n[option.change.H1]\nheight_m = 12.0\n'
    )
    path = _scenario(tmp_path / "in", _H1 + _E1, options)
    out = tmp_path / "out"
    assert main(["screen", str(path), "--out", str(out), "--no-pdf"]) == 0
    printed = capsys.readouterr().out
    assert "Options: PC % of load (judged)" in printed and "taller" in printed
    sites = pd.read_csv(out / "sites.csv")
    table = pd.read_csv(out / "options.csv")
    assert list(table.columns[: 1 + len(sites.columns)]) == ["option", *sites.columns]
    assert list(table["option"].unique()) == ["base", "fewer", "taller"]
    assert len(table) == 3 * len(sites)
    base = table[table["option"] == "base"].reset_index(drop=True)
    pd.testing.assert_frame_equal(base[sites.columns], sites, check_dtype=False)
    assert (base["change_pct_load"] == 0).all()
    fewer = table[table["option"] == "fewer"].reset_index(drop=True)
    np.testing.assert_allclose(
        fewer["change_dep_max_kg_n_ha_yr"],
        fewer["judged_dep_max_kg_n_ha_yr"] - base["judged_dep_max_kg_n_ha_yr"],
        rtol=1e-5,
        atol=5e-6,  # the CSV keeps 6 significant digits of each figure
    )
    with rasterio.open(out / "deposition.tif") as src:
        base_dep = src.read(1, masked=True).filled(np.nan)
    with rasterio.open(out / "difference_fewer.tif") as src:
        difference = src.read(1, masked=True).filled(np.nan)
    assert np.nanmax(difference) <= 0  # fewer places lower the deposition everywhere
    # H1 alone scales by 1600/2400, E1 stays: the drop is at most a third of the base's
    assert np.all(-difference <= base_dep / 3 * (1 + 1e-5) + 1e-9)
    assert (out / "difference_taller.tif").is_file()
    report = (out / "report.html").read_text()
    assert "Options side by side" in report and "H1 with 1600 places" in report
    page = (out / "map.html").read_text()
    assert "Option fewer: deposition, PC" in page and "Option taller: deposition, PC" in page


def test_the_demo_compares_its_options(demo_output):
    table = pd.read_csv(demo_output / "options.csv")
    names = list(table["option"].unique())
    assert names[0] == "base" and "no_scrubber" in names
    base = table[table["option"] == "base"].reset_index(drop=True)
    unscrubbed = table[table["option"] == "no_scrubber"].reset_index(drop=True)
    # without the scrubber H1 emits 1 / (1 - 0.70) times as much: every site gets more
    assert (unscrubbed["judged_dep_max_kg_n_ha_yr"] > base["judged_dep_max_kg_n_ha_yr"]).all()
