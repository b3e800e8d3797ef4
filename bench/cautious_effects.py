"""The measured effect of each cautious default on the invented demo (README's table).

Runs the demo scenario (and its hourly twin for the hourly-only choices) with the default
settings and with one choice switched to its alternative at a time, then with every old,
less cautious choice at once, and prints each site's maximum PC (% of critical level and of
critical load) as a ratio to the default run. Prints figures only; nothing is asserted.

    python bench/cautious_effects.py
"""

from __future__ import annotations

import dataclasses

import numpy as np

from siting.readers.resources import demo_dir
from siting.readers.scenario import load_scenario
from siting.runs.screening import screen


def _run(scenario, tables=None):
    result = screen(scenario, tables=tables, sensitivity=False)
    sites = result.sites.set_index("name")
    return sites, result


def _section(scenario, name, **changes):
    return scenario.model_copy(update={name: getattr(scenario, name).model_copy(update=changes)})


def _sources(scenario, **changes_by_id):
    return scenario.model_copy(
        update={
            "sources": [s.model_copy(update=changes_by_id.get(s.id, {})) for s in scenario.sources]
        }
    )


def _typical_abatement(tables):
    """Abatement at the table's typical figure (the old default) instead of the lower end."""
    rows = {
        k: {**v, "reduction_percent_min": v["reduction_percent_typical"]}
        for k, v in tables.abatement.items()
    }
    return dataclasses.replace(tables, abatement=rows)


def _level_by_type(sites, tables):
    """The old rule: 3 ug/m3 wherever the habitat type is not flagged for lichens/bryophytes."""
    flagged = sites["habitat"].map(lambda h: tables.critical_loads[h]["lichens_bryophytes"])
    return np.where(flagged, 1.0, 3.0)


def main() -> None:
    base = load_scenario(demo_dir() / "scenario.toml")
    ref, ref_result = _run(base)
    tables = ref_result.tables
    clear = {"H1": {"building_height_m": 2.0, "building_width_m": 2.0}}  # outlet clear of wake
    cases = {
        "wind below the anemometer unchanged": _run(
            _section(base, "weather", wind_below_anemometer="unchanged")
        ),
        "plume depletion on": _run(_section(base, "deposition", plume_depletion=True)),
        "plume rise for H1 (outlet taken clear of the wake)": _run(_sources(base, **clear)),
        "critical loads of the 2011 review": _run(
            _section(base, "assessment", critical_load_review="2011")
        ),
        "abatement at its typical figure": _run(base, _typical_abatement(tables)),
    }
    old = _sources(
        _section(
            _section(
                _section(base, "weather", wind_below_anemometer="unchanged"),
                "deposition",
                plume_depletion=True,
            ),
            "assessment",
            critical_load_review="2011",
        ),
        **clear,
    )
    cases["all the old choices together"] = _run(old, _typical_abatement(tables))

    names = list(ref.index)
    print("Demo: ratio of each site's max PC to the default (cautious) run")
    print(f"{'variant':52s} " + " ".join(f"{n[:17]:>17s}" for n in names))
    print(
        f"{'  default: % of critical level / load':52s} "
        + " ".join(
            f"{ref.loc[n, 'pc_pct_level']:7.1f}/{ref.loc[n, 'pc_pct_load']:7.1f}  " for n in names
        )
    )
    level_old = _level_by_type(ref, tables)
    for label, (sites, _) in cases.items():
        cells = []
        for i, n in enumerate(names):
            level_ratio = sites.loc[n, "pc_conc_max_ug_m3"] / ref.loc[n, "pc_conc_max_ug_m3"]
            if label.startswith("all"):
                level_ratio /= level_old[i]  # and the old critical level by habitat type
            load_ratio = sites.loc[n, "pc_pct_load"] / ref.loc[n, "pc_pct_load"]
            cells.append(f"{level_ratio:7.3f}/{load_ratio:7.3f}  ")
        print(f"{label:52s} " + " ".join(cells))
    cells = [f"{1 / level_old[i]:7.3f}/{1.0:7.3f}  " for i in range(len(names))]
    print(f"{'critical level 3 ug/m3 by habitat type (old rule)':52s} " + " ".join(cells))
    print("(ratio of % of critical level / ratio of % of critical load)")

    hourly = load_scenario(demo_dir() / "scenario_hourly.toml")
    h_ref, h_result = _run(hourly)
    flat, flat_result = _run(_section(hourly, "seasonal", temperature_dependent_emission=False))
    share = h_result.weather_summary["scrubber_treated_share"]["H1"]
    print("\nHourly demo, partial scrubbing (H1 sized for 60 % of the maximum air flow):")
    print(
        f"  treated share of the year's ammonia {100 * share['treated_share']:.1f} %, "
        f"of its hours {100 * share['treated_share_of_hours']:.1f} %; H1 emits "
        f"{h_result.sources.set_index('source_id').loc['H1', 'nh3_kg_yr']:.0f} kg/yr vs "
        f"{flat_result.sources.set_index('source_id').loc['H1', 'nh3_kg_yr']:.0f} kg/yr "
        "with hours counted alike"
    )
    for n in h_ref.index:
        print(
            f"  {n:20s} PC % of load {h_ref.loc[n, 'pc_pct_load']:7.2f} vs "
            f"{flat.loc[n, 'pc_pct_load']:7.2f} (ratio "
            f"{h_ref.loc[n, 'pc_pct_load'] / flat.loc[n, 'pc_pct_load']:.3f})"
        )
    step = h_result.weather_summary.get("direction_step_deg")
    exact, _ = _run(_section(hourly, "weather", direction_step_deg=0.0))
    print(f"\nHourly demo, directions reported in {step:g}-degree steps, spread vs exact spokes:")
    for n in h_ref.index:
        print(
            f"  {n:20s} PC % of load {h_ref.loc[n, 'pc_pct_load']:7.2f} vs "
            f"{exact.loc[n, 'pc_pct_load']:7.2f} on exact spokes (ratio "
            f"{h_ref.loc[n, 'pc_pct_load'] / exact.loc[n, 'pc_pct_load']:.3f})"
        )


if __name__ == "__main__":
    main()
