"""Words the screening report carries: the method notes and the cautious choices of a run.

:data:`METHOD_NOTES` summarise the method with its sources; :func:`cautious_choices` lists,
for one run, each default that errs towards the higher PC and the alternative it was chosen
over. Text only: nothing is computed or written here.
"""

from __future__ import annotations

import pandas as pd

#: Said once in the report (method notes) and the README.
CSV_TEXT_NOTE = (
    "In the CSV tables a text cell that would begin with = + - @ (a site name, say) "
    "is written with a leading apostrophe, so a spreadsheet shows it as text and "
    "never evaluates it as a formula."
)


METHOD_NOTES = [
    "Emission = factor [kg NH3/place/yr] x places, or a figure given directly; less abatement: "
    "effective reduction = technique reduction x share of the house's ammonia treated. With no "
    "stated reduction the lower end of the technique's published range is used; a higher "
    "figure is the user's claim, shown with its stated basis.",
    "Dispersion: ground-reflected Gaussian plume, sector-averaged over the weather frequency "
    "table (long-term annual mean), Briggs (1973) dispersion coefficients for the chosen land "
    "type, power-law wind profile by stability class (Irwin 1979 exponents) taken from the "
    "anemometer down to each release height (lowest 1 m by default, then the minimum wind "
    "speed), optional reflection at a mixing lid. Values are interpolated linearly in angle "
    "between sector centre lines; an hourly record's directions are spread over the interval "
    "they were reported in.",
    "Plume rise (Briggs momentum rise) only for an outlet at or above the good-engineering-"
    "practice height of its building, Hb + 1.5 min(Hb, W) (US EPA 1985); an outlet below it, "
    "or without building dimensions, is in the building wake and gets none. Stack-tip downwash "
    "(Briggs 1974) lowers an outlet whose exit velocity is below 1.5 times the wind speed. "
    "Houses as volume sources use initial spreads side/4.3 and building height/2.15 with the "
    "virtual-distance method (US EPA 1992, 1995); area sources are integrated over a lattice of "
    "small elements.",
    "Dry deposition = deposition velocity x ground-level concentration, velocity by land cover "
    "(short vegetation or woodland); plume depletion by the source-depletion method "
    "(Chamberlain) only when switched on (off by default), using the short-vegetation velocity "
    "along the path; the undepleted figures are then shown beside.",
    "Critical level 1 ug/m3 at every site unless lichens and bryophytes are stated absent "
    "(UNECE 2007); critical loads of the 2022 review (Bobbink et al. 2022; ranges from memory, "
    "see config/critical_loads.toml) at the lower end by default.",
    "Site figures: maximum over receptor points on the site (boundary points nearest each "
    "source, an interior lattice, grid nodes inside) and mean over its interior points. "
    "PC = proposed + existing sources; net change = proposed - removed; in-combination = PC + "
    "other; predicted environmental total = background + PC.",
    CSV_TEXT_NOTE,
    "Verdict: 'below threshold' when the PC is at or under the screening threshold of the site's "
    "designation tier as a % of both the critical level and the critical load; otherwise "
    "'above threshold' (further assessment needed).",
]


#: Marks a modelling choice left at the default that errs towards the higher PC.
_CAUTIOUS_DEFAULT = " (cautious default)"


def _wind_choice(scenario) -> tuple[str, str, str]:
    """The rule for the wind at a release height below the anemometer."""
    wind = scenario.weather.wind_below_anemometer
    return (
        "Wind at a release height below the anemometer",
        (
            "power law taken down to the release height (lowest "
            f"{scenario.weather.wind_profile_min_height_m:g} m){_CAUTIOUS_DEFAULT}"
        )
        if wind == "power_law"
        else "measured speed used unchanged",
        'wind_below_anemometer = "unchanged": the measured speed (lower figures)'
        if wind == "power_law"
        else 'wind_below_anemometer = "power_law" (higher figures)',
    )


def _depletion_choice(scenario) -> tuple[str, str, str]:
    """Whether the plume is depleted by deposition on the way."""
    depleted = scenario.deposition.plume_depletion
    return (
        "Plume depletion by deposition on the way",
        "on: figures without depletion are shown beside" if depleted else f"off{_CAUTIOUS_DEFAULT}",
        "off (higher figures)" if depleted else "plume_depletion = true (lower figures)",
    )


def _plume_rise_choices(sources: pd.DataFrame) -> list[tuple[str, str, str]]:
    """One entry per source whose plume rise was decided ("yes" or "no")."""
    return [
        (
            f'Plume rise, source "{row.source_id}"',
            str(row.plume_rise_basis),
            "rise only for an outlet at or above the good-engineering-practice "
            "height of its building (building_height_m, building_width_m)",
        )
        for row in sources.itertuples()
        if getattr(row, "plume_rise", "") in ("yes", "no")
    ]


def _critical_level_choice(sites: pd.DataFrame) -> tuple[str, str, str]:
    """How many sites were given the 1 µg/m³ critical level of ammonia."""
    levels = sites["critical_level_ug_m3"]
    n1 = int((levels == 1.0).sum())
    return (
        "Critical level of ammonia",
        f"1 µg/m³ at {n1} of {len(levels)} site(s) (lichens and bryophytes not shown absent)"
        + (_CAUTIOUS_DEFAULT if n1 == len(levels) else "; 3 µg/m³ where stated absent"),
        "3 µg/m³ where the habitat layer (lichens_bryophytes_field) or the scenario "
        "(lichens_bryophytes_absent) states lichens and bryophytes absent",
    )


def _critical_load_choice(scenario) -> tuple[str, str, str]:
    """Which review of the critical loads, and which end of each range."""
    review = scenario.assessment.critical_load_review
    end = scenario.assessment.critical_load_end
    return (
        "Critical loads",
        f"{review} review, {end} end of each range"
        + (_CAUTIOUS_DEFAULT if (review, end) == ("2022", "lower") else ""),
        'critical_load_review = "2011"; critical_load_end = "middle" or "upper"',
    )


def _abatement_choices(sources: pd.DataFrame) -> list[tuple[str, str, str]]:
    """One entry per source with a claimed abatement: the reduction and its basis."""
    return [
        (
            f'Abatement, source "{row.source_id}"',
            f"{row.reduction_percent:g} %: {row.reduction_basis}",
            "the lower end of the published range unless a higher figure is "
            "stated with its basis (reduction_percent, reduction_basis)",
        )
        for row in sources.itertuples()
        if row.abatement
    ]


def _scrubbing_choices(weather_summary: dict) -> list[tuple[str, str, str]]:
    """One entry per partly scrubbed source: the treated share of its ammonia and hours."""
    shares = weather_summary.get("scrubber_treated_share") or {}
    return [
        (
            f'Partial scrubbing, source "{sid}"',
            f"treated share {100 * share['treated_share']:.1f} % of the year's "
            f"ammonia (hours weighted by {share['hours_weighted_by']}); "
            f"{100 * share['treated_share_of_hours']:.1f} % of its hours",
            "[seasonal] temperature_dependent_emission = false: hours count alike "
            "(a larger treated share, lower figures)",
        )
        for sid, share in shares.items()
    ]


def _direction_choices(weather_summary: dict) -> list[tuple[str, str, str]]:
    """The rule applied to hourly wind directions, when the run recorded one."""
    rule = weather_summary.get("direction_rule")
    if not rule:
        return []
    return [
        (
            "Hourly wind directions",
            str(rule),
            "weather.direction_step_deg = 0: each hour on its exact direction",
        )
    ]


def cautious_choices(result) -> list[tuple[str, str, str]]:
    """(choice, what this run used, the alternative) for each modelling choice that moves the
    PC, in words; "(cautious default)" marks the defaults that err towards the higher PC."""
    scenario = result.scenario
    return [
        _wind_choice(scenario),
        _depletion_choice(scenario),
        *_plume_rise_choices(result.sources),
        _critical_level_choice(result.sites),
        _critical_load_choice(scenario),
        *_abatement_choices(result.sources),
        *_scrubbing_choices(result.weather_summary),
        *_direction_choices(result.weather_summary),
    ]
