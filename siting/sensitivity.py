"""Two-sided sensitivity of a screening run: each site's range under the published ranges.

Used by ``siting screen`` (the report's sensitivity section, sensitivity.csv) and by
``siting verify``. Each variant changes one assumption and is re-run at the sites' own points;
the variants look both ways, so a site's range shows how high the figure could be as well as
how low. The arithmetic of % and verdicts is ``assess``'s; no files are read or written here
beyond what ``screen`` reads.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pandas as pd

from siting import assess
from siting.tables import is_claimed_reduction


def sensitivity(scenario, result, weather_files=()) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Each site's % of critical load and level under variants that can raise it as well as
    lower it, and whether its verdict flips.

    One assumption changed at a time: the critical load at both ends of the habitat's range;
    the critical level 1 and 3 ug/m3; the deposition velocity at both ends of its table range
    (the high end above the screening value); plume depletion on and off; the other rule for
    the wind below the anemometer; every claimed abatement at its range's lower end; the
    emission factors at their stated uncertainty (emission_factors.toml [uncertainty]),
    down and up; other weather records where given. Variants are computed at the sites' own
    points only (no grid), so a variant's site maximum can sit a little below the central
    run's where a grid node inside a site held it.
    """
    from siting.screen import RunCache, screen

    sites = result.sites
    frames = []
    cache = RunCache()  # the re-runs share the habitat layer and unchanged dispersion

    def add(variant, frame, load_col="critical_load_used_kg_n_ha_yr", level=None):
        pct_load = assess.percent_of(
            frame["pc_dep_max_kg_n_ha_yr"].to_numpy(), frame[load_col].to_numpy()
        )
        pct_level = (
            frame["pc_pct_level"].to_numpy()
            if level is None
            else assess.percent_of(frame["pc_conc_max_ug_m3"].to_numpy(), level)
        )
        verdicts = assess.verdict(
            pct_level, pct_load, frame["threshold_percent"].to_numpy(), frame["assessed"].to_numpy()
        )
        frames.append(
            pd.DataFrame(
                {
                    "site": frame["name"].to_numpy(),
                    "variant": variant,
                    "pct_load": pct_load,
                    "pct_level": pct_level,
                    "verdict": verdicts,
                }
            )
        )

    def rerun(variant, scen=scenario, tables=None):
        add(
            variant,
            screen(scen, tables=tables, with_grid=False, sensitivity=False, cache=cache).sites,
        )

    def section(name, **changes):
        return scenario.model_copy(
            update={name: getattr(scenario, name).model_copy(update=changes)}
        )

    add("central", sites)
    add("critical load lower end", sites, "critical_load_min_kg_n_ha_yr")
    add("critical load upper end", sites, "critical_load_max_kg_n_ha_yr")
    add("critical level 1 µg/m³", sites, level=1.0)
    add("critical level 3 µg/m³", sites, level=3.0)
    tables = result.tables
    depleted = scenario.deposition.plume_depletion
    for end, label in (
        ("deposition_velocity_min_m_s", "deposition velocity low"),
        ("deposition_velocity_max_m_s", "deposition velocity high"),
    ):
        velocities = {
            k: {**v, "deposition_velocity_m_s": v[end]}
            for k, v in tables.deposition_velocities.items()
        }
        if depleted:  # the velocity also depletes the plume: a run of its own
            rerun(label, tables=dataclasses.replace(tables, deposition_velocities=velocities))
            continue
        # without depletion the flux is v_d x C at every point of a site, whose points all
        # take the site's own velocity: its deposition scales by the ratio of the velocities
        ratio = sites["land_cover"].map(
            lambda c, velocities=velocities: velocities[c]["deposition_velocity_m_s"]
        ).to_numpy(float) / sites["deposition_velocity_m_s"].to_numpy(float)
        scaled = sites.copy()
        scaled["pc_dep_max_kg_n_ha_yr"] = sites["pc_dep_max_kg_n_ha_yr"].to_numpy() * ratio
        add(label, scaled)
    rerun(
        "plume depletion " + ("off" if depleted else "on"),
        section("deposition", plume_depletion=not depleted),
    )
    other_wind = (
        "unchanged" if scenario.weather.wind_below_anemometer == "power_law" else "power_law"
    )
    rerun(
        f"wind below the anemometer: {other_wind.replace('_', ' ')}",
        section("weather", wind_below_anemometer=other_wind),
    )
    claimed = [
        src.id
        for src in scenario.sources
        if src.abatement in tables.abatement
        and is_claimed_reduction(src.reduction_percent, tables.abatement[src.abatement])
    ]
    if claimed:
        lowered = [
            src.model_copy(update={"reduction_percent": None, "reduction_basis": None})
            if src.id in claimed
            else src
            for src in scenario.sources
        ]
        rerun(
            "abatement at the lower end of its range (" + ", ".join(claimed) + ")",
            scenario.model_copy(update={"sources": lowered}),
        )
    uncertainty = tables.emission_factor_uncertainty
    if uncertainty and any(src.nh3_kg_per_year is None for src in scenario.sources):
        u = uncertainty["emission_factor_percent"] / 100.0
        for sign, word in ((-1, "low"), (1, "high")):
            factors = [
                {**r, "nh3_kg_per_place_yr": r["nh3_kg_per_place_yr"] * (1 + sign * u)}
                for r in tables.emission_factors
            ]
            rerun(
                f"emission factors {word} ({'-' if sign < 0 else '+'}"
                f"{uncertainty['emission_factor_percent']:g} %)",
                tables=dataclasses.replace(tables, emission_factors=factors),
            )
    for path in weather_files:
        path = Path(path)
        first = path.read_text(encoding="utf-8", errors="replace").splitlines()[:1]
        hourly = bool(first) and first[0].lower().startswith("time")
        weather = scenario.weather.model_copy(
            update={
                "frequency_table": None if hourly else path.resolve(),
                "hourly": [path.resolve()] if hourly else None,
            }
        )
        rerun(f"weather: {path.name}", scenario.model_copy(update={"weather": weather}))
    long = pd.concat(frames, ignore_index=True)
    return long, _summary(long)


def _summary(long: pd.DataFrame) -> pd.DataFrame:
    """One row per site: its central, lowest and highest % of load and level over the
    variants, and the variants (in run order) under which its verdict differs from central."""
    central = long[long["variant"] == "central"].set_index("site")
    by_site = long.groupby("site", sort=False)
    flipped = long["verdict"].to_numpy() != long["site"].map(central["verdict"]).to_numpy()
    flipping = (
        long[flipped]
        .groupby("site", sort=False)["variant"]
        .agg(", ".join)
        .reindex(central.index, fill_value="")
    )
    return pd.DataFrame(
        {
            "site": central.index.to_numpy(),
            "central_pct_load": central["pct_load"].to_numpy(),
            "min_pct_load": by_site["pct_load"].min().reindex(central.index).to_numpy(),
            "max_pct_load": by_site["pct_load"].max().reindex(central.index).to_numpy(),
            "central_pct_level": central["pct_level"].to_numpy(),
            "min_pct_level": by_site["pct_level"].min().reindex(central.index).to_numpy(),
            "max_pct_level": by_site["pct_level"].max().reindex(central.index).to_numpy(),
            "central_verdict": central["verdict"].to_numpy(),
            "verdict_flips": (flipping != "").to_numpy(),
            "flipping_variants": flipping.to_numpy(),
        }
    )
