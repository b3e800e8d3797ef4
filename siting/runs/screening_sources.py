"""The sources of a screening run: release elements, emission derivation, hourly weights.

* :func:`outlet_rise` -- whether a point source's outlet gets momentum plume rise, and why.
* :func:`_source_elements` -- a source's release elements and its footprint (shapely).
* :func:`reduction_basis`, :func:`derive_sources` -- each source's emission derivation down to
  g/s, with its abatement and range flags (the rows of sources.csv).
* :func:`_hourly_emission_weights` -- with an hourly record: each source's hourly emission
  weights (air temperature, partial scrubbing) and the treated shares of partial scrubbers.

Shared by the screening run (``screening.py``, ``screening_inputs.py``), the placement search
(``placing.py``) and the check of a submitted run (``findings.py``).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.inputs import ReleaseElement, rectangle_elements
from siting.errors import InputError, InputWarning
from siting.physics.emissions import derive_emission
from siting.physics.plume import gep_stack_height_m
from siting.physics.seasonal import (
    temperature_emission_weights,
    treated_ammonia_share,
    ventilation_fraction,
)
from siting.readers.scenario import Scenario
from siting.readers.scenario_sources import SourceSpec
from siting.readers.tables import Tables, default_reduction_percent, is_claimed_reduction

AREA_MAX_ELEMENTS = 100


def outlet_rise(src: SourceSpec) -> tuple[bool, str]:
    """Whether a point source's outlet gets momentum plume rise, and why, in words.

    Rise only for an outlet that stands clear of the building wake: at or above the good-
    engineering-practice height of the building it is on or beside (plume.gep_stack_height_m,
    from ``building_height_m`` and ``building_width_m``; with the height alone the width is
    taken no smaller than the height). Without building dimensions an outlet is taken to be a
    fan or scrubber outlet on or beside a house roof, in its wake: no rise (cautious).

    Parameters
    ----------
    src : SourceSpec
        The source.

    Returns
    -------
    rise : bool
        Whether momentum rise is added.
    why : str
        The reason in words ("" for a volume or area source).
    """
    if src.kind != "point":
        return False, ""
    if not src.exit_velocity_m_s or not src.diameter_m:
        return False, "no exit velocity given: no rise"
    if src.building_height_m is None:
        return False, (
            "no building dimensions given (building_height_m): taken to be in the "
            "wake of the house it serves, no rise"
        )
    wake_m = gep_stack_height_m(src.building_height_m, src.building_width_m)
    width = (
        f"{src.building_width_m:g} m wide"
        if src.building_width_m is not None
        else "width taken as its height"
    )
    building = f"building {src.building_height_m:g} m high, {width}"
    if src.height_m >= wake_m:
        return True, (
            f"outlet {src.height_m:g} m is at or above the wake height {wake_m:g} m "
            f"({building}): momentum rise"
        )
    return False, (
        f"outlet {src.height_m:g} m is below the wake height {wake_m:g} m "
        f"({building}): in the building wake, no rise"
    )


def _source_elements(src: SourceSpec) -> tuple[list[ReleaseElement], object]:
    """Release elements of a source and its footprint geometry (shapely)."""
    import shapely
    from shapely import affinity

    if src.kind == "point":
        rise, _ = outlet_rise(src)
        return (
            [
                ReleaseElement(
                    src.x,
                    src.y,
                    src.height_m,
                    diameter_m=src.diameter_m or 0.0,
                    exit_velocity_m_s=src.exit_velocity_m_s or 0.0,
                    plume_rise=rise,
                    stack_tip_downwash=bool(src.diameter_m),
                )
            ],
            shapely.Point(src.x, src.y),
        )
    rect = shapely.box(
        src.x - src.width_m / 2,
        src.y - src.length_m / 2,
        src.x + src.width_m / 2,
        src.y + src.length_m / 2,
    )
    footprint = affinity.rotate(rect, -src.angle_deg, origin=(src.x, src.y))
    if src.kind == "area":
        size = max(5.0, math.sqrt(src.width_m * src.length_m / AREA_MAX_ELEMENTS))
        return (
            rectangle_elements(
                src.x,
                src.y,
                src.width_m,
                src.length_m,
                src.angle_deg,
                src.height_m,
                element_size_m=size,
            ),
            footprint,
        )
    # volume: a line of adjacent volumes along the length axis, each roughly square;
    # sigma_y0 = side / 4.3, sigma_z0 = building height / 2.15 (EPA1992 initial dimensions)
    n = max(1, int(round(src.length_m / src.width_m)))
    side = math.sqrt(src.width_m * src.length_m / n)
    building_m = src.building_height_m or src.height_m
    a = math.radians(src.angle_deg)
    offsets = (np.arange(n) + 0.5) * src.length_m / n - src.length_m / 2
    return (
        [
            ReleaseElement(
                src.x + t * math.sin(a),
                src.y + t * math.cos(a),
                src.height_m,
                sigma_y0_m=side / 4.3,
                sigma_z0_m=building_m / 2.15,
                share_fraction=1.0 / n,
                min_distance_m=side / 2,
            )
            for t in offsets
        ],
        footprint,
    )


# --- the emission derivation (sources.csv) ------------------------------------------------------


def reduction_basis(src: SourceSpec, technique: dict) -> tuple[str, str]:
    """Where a source's reduction comes from, in words, and a warning for an unsupported claim.

    No reduction_percent: the lower end of the technique's published range. A figure above it
    is the user's claim: accepted, with its stated ``reduction_basis`` (certificate,
    measurement) shown; without one it is accepted with a warning. ``siting verify`` raises
    either as a finding to check.

    Parameters
    ----------
    src : SourceSpec
        The source.
    technique : dict
        Its technique's row of abatement.toml.

    Returns
    -------
    basis : str
        The reduction's basis in words.
    warning : str
        A warning for a claim without a basis, else "".
    """
    lo = default_reduction_percent(technique)
    if src.reduction_percent is None:
        return f"lower end of the published range ({lo:g} %)", ""
    if not is_claimed_reduction(src.reduction_percent, technique):
        return src.reduction_basis or f"stated in the scenario ({src.reduction_percent:g} %)", ""
    if src.reduction_basis:
        return f"claimed: {src.reduction_basis}", ""
    return (
        "claimed, no basis stated",
        f"reduction {src.reduction_percent:g} % is above the "
        f"lower end {lo:g} % of the published range with no reduction_basis "
        "(certificate, measurement); it is used as claimed",
    )


@dataclass
class _Abatement:
    """A source's abatement as used: the technique row (or None), the reduction [%] and its
    basis, the treated share of its ammonia [-] and a flag when outside the published range."""

    technique: dict | None = None
    reduction_percent: float = 0.0
    treated: float = 1.0
    basis: str = ""
    flag: str = ""


def _abatement_of(src: SourceSpec, tables: Tables, treated_shares: dict, where: str) -> _Abatement:
    """The reduction a source's abatement gives: the stated figure or the range's lower end,
    over the treated share (the hourly record's for a partial scrubber); an InputWarning for
    a claimed figure without basis and for one outside the published range."""
    if not src.abatement:
        return _Abatement()
    technique = tables.technique(src.abatement, where)
    reduction = (
        src.reduction_percent
        if src.reduction_percent is not None
        else default_reduction_percent(technique)
    )
    basis, claim_warning = reduction_basis(src, technique)
    if claim_warning:
        warnings.warn(f"{where}: {claim_warning}", InputWarning, stacklevel=2)
    treated = src.treated_air_fraction if src.treated_air_fraction is not None else 1.0
    if src.scrubber_design_share is not None:
        if technique["kind"] != "scrubber":
            raise InputError(
                f"{where}: scrubber_design_share applies to scrubbers; "
                f'"{src.abatement}" is a {technique["kind"]}'
            )
        treated = treated_shares[src.id]
    flag = ""
    lo, hi = technique["reduction_percent_min"], technique["reduction_percent_max"]
    if not lo <= reduction <= hi:
        flag = (
            f"reduction {reduction:g} % is outside the published range "
            f"{lo:g}-{hi:g} % for {technique['name']}"
        )
        warnings.warn(f"{where}: {flag}", InputWarning, stacklevel=2)
    return _Abatement(technique, reduction, treated, basis, flag)


def _nan_if_none(value):
    return value if value is not None else np.nan


def _source_row(src: SourceSpec, factor_row: dict | None, ab: _Abatement, d) -> dict:
    """One row of sources.csv: the source, its factor, its abatement and the derivation."""
    technique = ab.technique
    rise, rise_basis = outlet_rise(src)
    return {
        "source_id": src.id,
        "kind": src.kind,
        "role": src.role,
        "x_m": src.x,
        "y_m": src.y,
        "height_m": src.height_m,
        "plume_rise": ("yes" if rise else "no") if src.kind == "point" else "",
        "plume_rise_basis": rise_basis,
        "livestock": src.livestock or "",
        "housing": src.housing or "",
        "places": src.places,
        "factor_nh3_kg_per_place_yr": d.factor_nh3_kg_per_place_yr,
        "factor_source": factor_row["source"] if factor_row else "given in scenario",
        "nh3_unabated_kg_yr": d.nh3_unabated_kg_yr,
        "abatement": src.abatement or "",
        "reduction_percent": d.reduction_percent if src.abatement else np.nan,
        "reduction_range_percent": (
            f"{technique['reduction_percent_min']:g}-{technique['reduction_percent_max']:g}"
            if technique
            else ""
        ),
        "reduction_source": technique["source"] if technique else "",
        "reduction_basis": ab.basis,
        "reduction_flag": ab.flag,
        "scrubber_design_share": _nan_if_none(src.scrubber_design_share),
        "treated_air_fraction": d.treated_air_fraction if src.abatement else np.nan,
        "effective_reduction_percent": d.effective_reduction_percent,
        "nh3_kg_yr": d.nh3_kg_yr,
        "emission_g_s": d.emission_g_s,
        "nh3_removed_kg_yr": d.nh3_removed_kg_yr,
        "n_captured_kg_yr": _nan_if_none(d.n_captured_kg_yr),
        "effluent_m3_yr": _nan_if_none(d.effluent_m3_yr),
    }


def derive_sources(
    scenario: Scenario, tables: Tables, treated_shares: dict[str, float] | None = None
) -> pd.DataFrame:
    """One row per source: the emission derivation down to g/s, with range flags.

    A reduction claimed without a basis, or outside the technique's published range, is used
    with an InputWarning.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    tables : Tables
        The lookup tables (emission factors, abatement).
    treated_shares : dict of str to float, optional
        For sources with a scrubber_design_share, the share of the year's ammonia the scrubber
        treats [-], computed over the hourly record (seasonal.treated_ammonia_share).

    Returns
    -------
    pandas.DataFrame
        The columns of sources.csv (factor, places, reduction [%] and its basis, kg NH3 yr-1,
        g s-1, N captured [kg N yr-1], ...).

    Raises
    ------
    InputError
        An unknown livestock, housing or technique.
    """
    rows = []
    treated_shares = treated_shares or {}
    for src in scenario.sources:
        where = f'source "{src.id}"'
        factor_row = None
        if src.nh3_kg_per_year is None:
            factor_row = tables.factor(src.livestock, src.housing, where)
        ab = _abatement_of(src, tables, treated_shares, where)
        technique = ab.technique
        d = derive_emission(
            nh3_unabated_kg_yr=src.nh3_kg_per_year,
            factor_nh3_kg_per_place_yr=factor_row["nh3_kg_per_place_yr"] if factor_row else None,
            places=src.places if factor_row else None,
            reduction_percent=ab.reduction_percent,
            treated_air_fraction=ab.treated,
            effluent_kg_n_per_m3=technique.get("effluent_kg_n_per_m3") if technique else None,
            captures_in_effluent=bool(technique) and technique["kind"] == "scrubber",
        )
        rows.append(_source_row(src, factor_row, ab, d))
    return pd.DataFrame(rows)


# --- hourly emission weights -------------------------------------------------------------------


def _hourly_emission_weights(scenario: Scenario, tables: Tables, weather, summary: dict):
    """Per-source hourly emission weights (mean 1) and annual treated shares of scrubbers.

    Weights follow air temperature when [seasonal] temperature_dependent_emission is on; a
    source with scrubber_design_share has its hourly emission lowered by reduction x the share
    of that hour's air the scrubber takes, and the annual treated share becomes its
    treated_air_fraction (so the annual total in sources.csv matches the hourly weights).
    """

    cfg = scenario.seasonal
    temperature_c = weather.temperature_c
    partial = [s for s in scenario.sources if s.scrubber_design_share is not None]
    needs_temperature = hourly_temperature_needed(scenario)
    if needs_temperature:
        _check_temperatures(scenario, weather)
    flat = np.ones(weather.n_hours)
    varying = (
        temperature_emission_weights(temperature_c, cfg.emission_coefficient_per_k)
        if needs_temperature
        else flat
    )
    base = varying if cfg.temperature_dependent_emission else flat
    weights, treated = {}, {}
    for src in scenario.sources:
        if src.scrubber_design_share is None:
            weights[src.id] = base
            continue
        # the treated share is a share of the year's AMMONIA: hours weighted by their emission
        # (temperature dependent unless switched off), so warm, high-emission hours at full
        # ventilation, when a part-sized scrubber treats the smallest share, count most
        own = flat if cfg.temperature_dependent_emission is False else varying
        weights[src.id], treated[src.id], share = _partly_scrubbed(
            src, tables, cfg, temperature_c, own, weighted=own is varying
        )
        summary.setdefault("scrubber_treated_share", {})[src.id] = share
    profile = _emission_profile(cfg, needs_temperature, partial)
    if profile:
        summary["emission_profile"] = profile
    return weights, treated


def hourly_temperature_needed(scenario: Scenario) -> bool:
    """True when every hour used needs its air temperature: [seasonal] temperature-dependent
    emission, or a partly sized scrubber (scrubber_design_share) unless the seasonal weighting
    is switched off. The reader then counts an hour without one as missing.

    Parameters
    ----------
    scenario : Scenario
        The scenario.

    Returns
    -------
    bool
        Whether an hour needs its temperature.
    """
    cfg = scenario.seasonal
    partial = any(s.scrubber_design_share is not None for s in scenario.sources)
    return bool(cfg.temperature_dependent_emission) or (
        partial and cfg.temperature_dependent_emission is not False
    )


def _check_temperatures(scenario: Scenario, weather) -> None:
    """Raise when an hour of the record has no temperature (the seasonal emission or a partial
    scrubber needs every hour's), naming how many and the first."""
    temperature_c = weather.temperature_c
    if np.isfinite(temperature_c).all():
        return
    missing = ~np.isfinite(temperature_c)
    first = str(np.asarray(weather.time_utc)[np.flatnonzero(missing)[0]]).replace("T", " ")
    files = ", ".join(Path(p).name for p in scenario.weather.hourly or [])
    raise InputError(
        f"weather.hourly {files}: {int(missing.sum())} hour(s) have no "
        f"temperature_c (the first at {first} UTC), which [seasonal] emission "
        "or scrubber_design_share need"
    )


def _partly_scrubbed(
    src: SourceSpec, tables: Tables, cfg, temperature_c, own, *, weighted: bool
) -> tuple[np.ndarray, float, dict]:
    """A partly scrubbed source's hourly weights (mean 1), the treated share of its year's
    ammonia [-] and its entry of the summary's scrubber_treated_share.

    ``own`` is its emission weight per hour before scrubbing (temperature dependent when
    ``weighted``, else flat); each hour's emission is lowered by reduction x the share of that
    hour's air the scrubber takes (seasonal.ventilation_fraction against the design share).
    """
    technique = tables.technique(src.abatement, f'source "{src.id}"')
    reduction = (
        src.reduction_percent
        if src.reduction_percent is not None
        else default_reduction_percent(technique)
    ) / 100.0
    r = ventilation_fraction(
        temperature_c,
        cfg.min_ventilation_fraction,
        cfg.ventilation_ramp_start_c,
        cfg.ventilation_ramp_end_c,
    )
    treated = treated_ammonia_share(r, src.scrubber_design_share, own)
    hourly_treated = np.minimum(r, src.scrubber_design_share) / r
    after = own * (1.0 - reduction * hourly_treated)
    weights = after / after.mean() if after.mean() > 0 else own
    share = {
        "design_share": src.scrubber_design_share,  # of the maximum ventilation rate
        "treated_share": treated,  # of the year's ammonia
        "treated_share_of_hours": treated_ammonia_share(r, src.scrubber_design_share),
        "hours_weighted_by": (
            "emission, temperature dependent"
            if weighted
            else "nothing (flat emission: switched off)"
        ),
    }
    return weights, treated, share


def _emission_profile(cfg, needs_temperature: bool, partial: list) -> str | None:
    """The emission profile over the hours, in words, for the weather summary; None when every
    source's emission is flat."""
    profile = (
        f"temperature dependent, exp({cfg.emission_coefficient_per_k:g} x (T - mean T)),"
        " normalised to the annual total"
    )
    if cfg.temperature_dependent_emission:
        return profile
    if needs_temperature:
        return (
            f"{profile}, for the partly scrubbed source(s) {', '.join(s.id for s in partial)} "
            "(their treated share is a share of the year's ammonia); flat for the others"
        )
    return None
