"""Tests of siting.presentation.settings_view: every setting has a label in words with its unit,
only the settings that apply are listed, and a value left at its default says so."""

from __future__ import annotations

import json

import pytest
from pydantic import BaseModel

from siting.presentation.html_parts import plain_label
from siting.presentation.settings_view import (
    SETTINGS,
    SHOWN_ELSEWHERE,
    _model_of,
    settings_groups,
)
from siting.readers.resources import demo_dir
from siting.readers.scenario import Scenario, load_scenario


def _model_keys(model: type[BaseModel], prefix: str = "") -> list[str]:
    """Every dotted key a dump of ``model`` can hold: its fields, and the fields of the models
    its fields hold (a section, a list of tables), read from the model itself."""
    keys = []
    for name, field in model.model_fields.items():
        if field.exclude:
            continue
        key = f"{prefix}{field.alias or name}" if not prefix else f"{prefix}{name}"
        keys.append(key)
        inner = _model_of(field.annotation)
        if inner is not None:
            keys += _model_keys(inner, f"{key}.")
    return keys


def _run_record_keys() -> list[str]:
    """The keys of the parameters a run record can hold, less those shown elsewhere."""
    return [key for key in _model_keys(Scenario) if key.split(".", 1)[0] not in SHOWN_ELSEWHERE]


def test_every_key_of_the_run_record_has_a_label():
    """Each key the scenario model can put in run.json's parameters has a label in the one
    table (the keys come from the pydantic models, not from a list restating the table)."""
    keys = _run_record_keys()
    assert len(keys) > 60  # the sections' fields, not an empty enumeration
    missing = [key for key in keys if key not in SETTINGS]
    assert missing == []
    # and the table names no key the model lacks (a renamed key would leave a stale label)
    assert sorted(set(SETTINGS) - set(keys)) == []


@pytest.mark.parametrize("key", _run_record_keys())
def test_no_label_is_the_key_title_cased(key):
    """A label is words, not the key dressed up: never the key title-cased or with its
    underscores made spaces, nor the label made from the name alone (plain_label)."""
    name = key.rsplit(".", 1)[-1]
    label = SETTINGS[key].label
    words = name.replace("_", " ")
    assert label not in (name, words, words.title(), words.capitalize(), plain_label(name))


def test_a_unit_suffix_is_said_in_the_label():
    """A key whose name carries a unit (_m, _m_s, _deg, _h, _mb, _c, _percent) names the
    unit in its label: [m], [m/s], [°], [h], [MB], [°C], [%]."""
    units = {"_m_s": "[m/s]", "_m": "[m]", "_deg": "[°]", "_h": "[h]", "_mb": "[MB]",
             "_c": "[°C]", "_percent": "%"}  # fmt: skip
    for key, setting in SETTINGS.items():
        for suffix, unit in units.items():
            if key.endswith(suffix) and not key.endswith("_field"):
                assert unit in setting.label, (key, setting.label)
                break


def _parameters(path) -> dict:
    """A scenario's parameters as run.json records them."""
    return json.loads(load_scenario(path).model_dump_json(by_alias=True))


def _rows(groups) -> dict[str, tuple]:
    """{label: (shown, default words)} of every row."""
    return {label: (shown, words) for _, rows in groups for label, shown, words in rows}


def test_a_frequency_table_run_lists_no_hourly_setting():
    """The demo (a frequency table): no hourly-only weather setting, no [seasonal] group and no
    [holding] (a placement setting) is listed; none of its rows says "not set"."""
    groups = settings_groups(_parameters(demo_dir() / "scenario.toml"))
    headings = [heading for heading, _ in groups]
    rows = _rows(groups)
    hourly_only = [k for k, s in SETTINGS.items() if s.applies == "hourly"]
    assert hourly_only  # the table has such settings
    for key in hourly_only:
        assert SETTINGS[key].label not in rows, key
    assert SETTINGS["seasonal"].label not in headings
    assert SETTINGS["holding"].label not in headings
    assert SETTINGS["weather.frequency_table"].label in rows
    assert all("not set" not in str(shown) for shown, _ in rows.values())


def test_an_hourly_run_lists_the_hourly_settings():
    """The hourly demo lists the record, its UTC offset and the [seasonal] settings, and not
    the frequency table."""
    groups = settings_groups(_parameters(demo_dir() / "scenario_hourly.toml"))
    rows = _rows(groups)
    assert SETTINGS["weather.hourly"].label in rows
    assert SETTINGS["weather.utc_offset_h"].label in rows
    assert SETTINGS["seasonal.ventilation_ramp_start_c"].label in rows
    assert SETTINGS["weather.frequency_table"].label not in rows


def test_a_placement_lists_the_holding():
    """In a placement search (command "place") the [holding] settings apply."""
    headings = [h for h, _ in settings_groups(_parameters(demo_dir() / "scenario.toml"), "place")]
    assert SETTINGS["holding"].label in headings


def test_defaults_are_marked_and_set_values_are_not():
    """A value left at the model's default says "(default)", one the scenario set does not;
    a none that applies says what it means (the model's defaults, read from pydantic)."""
    parameters = _parameters(demo_dir() / "scenario.toml")
    rows = _rows(settings_groups(parameters))
    # the demo sets margin_m = 2500 (the model's default is 3000) and leaves spacing at 25
    assert Scenario.model_fields["grid"].default.margin_m != parameters["grid"]["margin_m"]
    assert rows[SETTINGS["grid.margin_m"].label] == ("2500", None)
    assert rows[SETTINGS["grid.spacing_m"].label][1] == "default"
    shown, words = rows[SETTINGS["weather.mixing_height_m"].label]
    assert shown == SETTINGS["weather.mixing_height_m"].none and words == "default"
    # the [appraisal] prices left out are invented placeholders, and say so
    assert "placeholder" in rows[SETTINGS["appraisal.water_eur_per_m3"].label][1]


def test_depletion_land_cover_only_with_depletion():
    """The land cover that depletes the plume is listed only when depletion is on."""
    parameters = _parameters(demo_dir() / "scenario.toml")
    label = SETTINGS["deposition.depletion_land_cover"].label
    assert label not in _rows(settings_groups(parameters))
    parameters["deposition"]["plume_depletion"] = True
    assert label in _rows(settings_groups(parameters))
