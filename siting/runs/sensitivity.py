"""Two-sided sensitivity of a screening run: each site's range under the published ranges.

Used by ``siting screen`` (the report's sensitivity section, sensitivity.csv) and by
``siting verify``. Each variant changes one assumption and is re-run at the sites' own points;
the variants look both ways, so a site's range shows how high the figure could be as well as
how low. The arithmetic of % and verdicts is ``assess``'s; no files are read or written here
beyond what ``screen`` reads.
"""

from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path

import pandas as pd

from siting.errors import SitingWarning
from siting.physics import assess
from siting.readers.tables import is_claimed_reduction
from siting.readers.weather_formats import detect_format, file_bytes
from siting.runs.judging import judge_sites
from siting.runs.run_cache import RunCache


def sensitivity(scenario, result, weather_files=(), *, run) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Each site's % of critical load and level under variants that can raise it as well as
    lower it, and whether its verdict flips.

    One assumption changed at a time: the critical load at both ends of the habitat's range;
    the critical level 1 and 3 ug/m3; the deposition velocity at both ends of its table range
    (the high end above the screening value); plume depletion on and off; the other rule for
    the wind below the anemometer; every claimed abatement at its range's lower end; the
    emission factors at their stated uncertainty (emission_factors.toml [uncertainty]),
    down and up; other weather records where given. Variants are computed at the sites' own
    points only (no grid), so a variant's site maximum can sit a little below the central
    run's where a grid node inside a site held it. ``run`` is the screening function the
    variants are re-run with (``siting.runs.screening.screen``; passed in, so this module does not
    import the pipeline that calls it).
    """
    variants = _Variants(scenario, result, run)
    variants.add("central", result.sites)
    variants.critical_values()
    variants.deposition_velocities()
    variants.model_rules()
    variants.claimed_abatement()
    variants.emission_factors()
    for path in weather_files:
        variants.weather(Path(path))
    long = pd.concat(variants.frames, ignore_index=True)
    return long, _summary(long)


class _Variants:
    """The variants of one run, collected in order (one frame per variant)."""

    def __init__(self, scenario, result, run) -> None:
        self.run = run
        self.scenario, self.result, self.sites = scenario, result, result.sites
        self.tables = result.tables
        self.frames: list[pd.DataFrame] = []
        self.cache = RunCache()  # the re-runs share the habitat layer and unchanged dispersion

    def add(self, variant: str, frame, load_col="critical_load_used_kg_n_ha_yr", level=None):
        """One variant's % of load and level (of the contribution the rule set judges) and
        verdict at every site of ``frame``."""
        pct_load = assess.percent_of(
            frame["judged_dep_max_kg_n_ha_yr"].to_numpy(), frame[load_col].to_numpy()
        )
        pct_level = (
            frame["judged_pct_level"].to_numpy()
            if level is None
            else assess.percent_of(frame["judged_conc_max_ug_m3"].to_numpy(), level)
        )
        level_used = frame["critical_level_ug_m3"].to_numpy() if level is None else level
        verdicts = judge_sites(
            frame, self.result.rules, level=level_used, load=frame[load_col].to_numpy()
        ).verdict
        self.frames.append(
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

    def rerun(self, variant: str, scenario=None, tables=None) -> None:
        """A variant that needs dispersion again: re-run at the sites' own points. Its
        warnings are not the run's: a variant is a what-if, not the inputs given."""
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SitingWarning)
            run = self.run(
                scenario or self.scenario,
                tables=tables,
                with_grid=False,
                sensitivity=False,
                cache=self.cache,
                rules=self.result.rules,
            )
        self.add(variant, run.sites)

    def section(self, name: str, **changes):
        """The scenario with keys of one section changed."""
        return self.scenario.model_copy(
            update={name: getattr(self.scenario, name).model_copy(update=changes)}
        )

    def critical_values(self) -> None:
        """Both ends of each habitat's critical-load range; critical levels 1 and 3 ug/m3."""
        self.add("critical load lower end", self.sites, "critical_load_min_kg_n_ha_yr")
        self.add("critical load upper end", self.sites, "critical_load_max_kg_n_ha_yr")
        self.add("critical level 1 µg/m³", self.sites, level=1.0)
        self.add("critical level 3 µg/m³", self.sites, level=3.0)

    def deposition_velocities(self) -> None:
        """Both ends of each land cover's deposition-velocity range."""
        sites, tables = self.sites, self.tables
        for end, label in (
            ("deposition_velocity_min_m_s", "deposition velocity low"),
            ("deposition_velocity_max_m_s", "deposition velocity high"),
        ):
            velocities = {
                k: {**v, "deposition_velocity_m_s": v[end]}
                for k, v in tables.deposition_velocities.items()
            }
            if self.scenario.deposition.plume_depletion:  # it also depletes: a run of its own
                self.rerun(
                    label, tables=dataclasses.replace(tables, deposition_velocities=velocities)
                )
                continue
            # without depletion the flux is v_d x C at every point of a site, whose points all
            # take the site's own velocity: its deposition scales by the ratio of the velocities
            ratio = sites["land_cover"].map(
                lambda c, velocities=velocities: velocities[c]["deposition_velocity_m_s"]
            ).to_numpy(float) / sites["deposition_velocity_m_s"].to_numpy(float)
            scaled = sites.copy()
            for column in (
                "pc_dep_max_kg_n_ha_yr",
                "judged_dep_max_kg_n_ha_yr",
                "judged_incomb_dep_max_kg_n_ha_yr",
            ):
                scaled[column] = sites[column].to_numpy() * ratio
            self.add(label, scaled)

    def model_rules(self) -> None:
        """Plume depletion the other way; the other rule for the wind below the anemometer."""
        depleted = self.scenario.deposition.plume_depletion
        self.rerun(
            "plume depletion " + ("off" if depleted else "on"),
            self.section("deposition", plume_depletion=not depleted),
        )
        rule = self.scenario.weather.wind_below_anemometer
        other_wind = "unchanged" if rule == "power_law" else "power_law"
        self.rerun(
            f"wind below the anemometer: {other_wind.replace('_', ' ')}",
            self.section("weather", wind_below_anemometer=other_wind),
        )

    def claimed_abatement(self) -> None:
        """Every claimed reduction (above its range's lower end) back at the lower end."""
        abatement = self.tables.abatement
        claimed = [
            src.id
            for src in self.scenario.sources
            if src.abatement in abatement
            and is_claimed_reduction(src.reduction_percent, abatement[src.abatement])
        ]
        if not claimed:
            return
        lowered = [
            src.model_copy(update={"reduction_percent": None, "reduction_basis": None})
            if src.id in claimed
            else src
            for src in self.scenario.sources
        ]
        self.rerun(
            "abatement at the lower end of its range (" + ", ".join(claimed) + ")",
            self.scenario.model_copy(update={"sources": lowered}),
        )

    def emission_factors(self) -> None:
        """Every emission factor down and up by its stated uncertainty."""
        uncertainty = self.tables.emission_factor_uncertainty
        if not uncertainty or all(src.nh3_kg_per_year is not None for src in self.scenario.sources):
            return
        u = uncertainty["emission_factor_percent"] / 100.0
        for sign, word in ((-1, "low"), (1, "high")):
            factors = [
                {**r, "nh3_kg_per_place_yr": r["nh3_kg_per_place_yr"] * (1 + sign * u)}
                for r in self.tables.emission_factors
            ]
            self.rerun(
                f"emission factors {word} ({'-' if sign < 0 else '+'}"
                f"{uncertainty['emission_factor_percent']:g} %)",
                tables=dataclasses.replace(self.tables, emission_factors=factors),
            )

    def weather(self, path: Path) -> None:
        """Another weather record, read by the same readers as the scenario's own: a NetCDF
        or ISD-Lite file (by content), siting's hourly CSV (by its header) or a CSV by the
        scenario's column map is an hourly record; any other CSV a frequency table."""
        hourly = _is_hourly(path, bool(self.scenario.weather.columns))
        weather = self.scenario.weather.model_copy(
            update={
                "frequency_table": None if hourly else path.resolve(),
                "hourly": [path.resolve()] if hourly else None,
            }
        )
        self.rerun(f"weather: {path.name}", self.scenario.model_copy(update={"weather": weather}))


def _is_hourly(path: Path, mapped: bool) -> bool:
    """True for an hourly record: NetCDF or ISD-Lite content, a CSV whose header starts with
    ``time``, or (with a column map) any CSV that is not a frequency table."""
    data = file_bytes(path, head=True)  # a NetCDF file by its signature, never read whole
    if detect_format(path, data) == "netcdf":
        return True
    data = file_bytes(path)
    if detect_format(path, data) != "csv":
        return True
    lines = data[:4096].decode("utf-8", errors="replace").splitlines()
    first = next((ln for ln in lines if ln.strip() and not ln.startswith("#")), "")
    header = [c.strip().lower() for c in first.split(",")]
    if header[:1] == ["time"]:
        return True
    return mapped and "frequency" not in header


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
