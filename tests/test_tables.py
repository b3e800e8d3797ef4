"""The config/ lookup tables: every row sourced, values read back, bad tables rejected by name.

Source keys: UNECE2007 / Cape2009 (critical levels 1 and 3 ug/m3, confirmed), BobbinkHettelingh2011
(critical load ranges, confirmed for bogs and dry heath), AQTAG06 (deposition velocities 0.02 /
0.03 m/s, from memory), EA farm-permit practice (4 % threshold for international sites,
confirmed; tiers are defaults to be replaced).
"""

import shutil
import tomllib

import pytest

from siting.errors import InputError
from siting.resources import config_dir
from siting.tables import TABLE_FILES, load_tables


@pytest.fixture(scope="module")
def tables():
    return load_tables()


def test_every_row_of_every_table_names_a_source():
    """Each row in config/*.toml carries a non-empty source (project rule)."""
    for filename, key in TABLE_FILES.values():
        data = tomllib.loads((config_dir() / filename).read_text(encoding="utf-8"))
        groups = [key] if key else [k for k, v in data.items() if isinstance(v, list)]
        for group in groups:
            for row in data[group]:
                assert str(row.get("source", "")).strip(), (filename, group, row)


def test_critical_levels_read_back(tables):
    """1 ug/m3 where lichens/bryophytes matter, else 3 ug/m3 (UNECE2007, confirmed)."""
    assert tables.critical_levels["lichens_bryophytes"]["critical_level_ug_m3"] == 1.0
    assert tables.critical_levels["higher_plants"]["critical_level_ug_m3"] == 3.0


def test_critical_loads_read_back(tables):
    """Bogs 5-10 and dry heath 10-20 kg N/ha/yr (BobbinkHettelingh2011, confirmed)."""
    bog, heath = tables.critical_loads["raised_bog"], tables.critical_loads["dry_heath"]
    assert (bog["critical_load_min_kg_n_ha_yr"], bog["critical_load_max_kg_n_ha_yr"]) == (5.0, 10.0)
    assert (heath["critical_load_min_kg_n_ha_yr"], heath["critical_load_max_kg_n_ha_yr"]) == (10.0, 20.0)
    assert bog["lichens_bryophytes"] is True


def test_deposition_velocities_read_back(tables):
    """Short vegetation 0.02 m/s, woodland 0.03 m/s (AQTAG06, from memory)."""
    assert tables.deposition_velocities["short_vegetation"]["deposition_velocity_m_s"] == 0.02
    assert tables.deposition_velocities["woodland"]["deposition_velocity_m_s"] == 0.03


def test_thresholds_read_back(tables):
    """International tier 4 % (EA farm permits, confirmed); tiers ordered strictest first."""
    by_id = {t["id"]: t for t in tables.thresholds}
    assert by_id["international"]["threshold_percent"] == 4.0
    assert "special area of conservation" in [d.lower() for d in by_id["international"]["designations"]]
    assert by_id["international"]["threshold_percent"] < by_id["national"]["threshold_percent"] \
        < by_id["local"]["threshold_percent"]


def _copy_config(tmp_path):
    folder = tmp_path / "config"
    shutil.copytree(config_dir(), folder)
    return folder


def test_row_without_source_is_rejected(tmp_path):
    """A table row with an empty source is refused, naming file and row."""
    folder = _copy_config(tmp_path)
    path = folder / "deposition_velocities.toml"
    text = path.read_text()
    start = text.index("source", text.index('id = "woodland"'))
    end = text.index("\n", start)
    path.write_text(text[:start] + 'source = ""' + text[end:])
    with pytest.raises(InputError, match=r"deposition_velocities.toml.*woodland.*source"):
        load_tables(folder)


def test_missing_key_and_bad_range_are_rejected(tmp_path):
    """A missing key or a typical figure outside its range is named with file, row and key; an
    older table's reduction_percent_default is read as the typical figure."""
    folder = _copy_config(tmp_path)
    path = folder / "emission_factors.toml"
    path.write_text(path.read_text().replace("nh3_kg_per_place_yr = 2.813", "nh3_kg_place = 2.813", 1))
    with pytest.raises(InputError, match=r"emission_factors.toml.*nh3_kg_per_place_yr"):
        load_tables(folder)
    folder2 = _copy_config(tmp_path / "b")
    path = folder2 / "abatement.toml"
    text = path.read_text()
    i = text.index("reduction_percent_typical", text.index('id = "acid_scrubber"'))
    j = text.index("\n", i)
    path.write_text(text[:i] + "reduction_percent_default = 120.0" + text[j:])
    with pytest.raises(InputError, match=r"acid_scrubber.*min <= typical <= max"):
        load_tables(folder2)


def test_nan_or_inf_in_a_user_table_is_refused(tmp_path):
    """A NaN emission factor or an infinite deposition velocity in a user's own tables stops
    the run naming file, row and key (it would otherwise drop a source or zero a site)."""
    folder = _copy_config(tmp_path)
    path = folder / "emission_factors.toml"
    path.write_text(path.read_text().replace("nh3_kg_per_place_yr = 2.813",
                                             "nh3_kg_per_place_yr = nan", 1))
    with pytest.raises(InputError, match=r"emission_factors.toml.*nh3_kg_per_place_yr.*finite"):
        load_tables(folder)
    folder2 = _copy_config(tmp_path / "b")
    path = folder2 / "deposition_velocities.toml"
    path.write_text(path.read_text().replace("deposition_velocity_m_s = 0.02",
                                             "deposition_velocity_m_s = inf", 1))
    with pytest.raises(InputError, match=r"deposition_velocities.toml.*finite"):
        load_tables(folder2)
