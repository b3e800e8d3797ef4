"""Physics on arrays: emission, plume, deposition, stability, sun, season, assessment arithmetic.

Also the arithmetic of the abatement appraisal (appraisal.py) and of what it takes to pass
(what_it_takes.py).

Nothing here reads or writes a file, prints, or knows a CRS; every formula names its source.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # appraisal.py: scrubber size, acid, annuity, running cost and cost per kg NH3 abated
        "scrubber_capacity_m3_h": "siting.physics.appraisal",
        "sulphuric_acid_kg_yr": "siting.physics.appraisal",
        "annuity_factor_per_yr": "siting.physics.appraisal",
        "annuity_eur_yr": "siting.physics.appraisal",
        "running_cost_eur_yr": "siting.physics.appraisal",
        "cost_eur_per_kg_nh3": "siting.physics.appraisal",
        # what_it_takes.py: the cheapest technique, share of the air or places that passes
        "Technique": "siting.physics.what_it_takes",
        "cheapest_ways": "siting.physics.what_it_takes",
        # assess.py: per-site statistics, % of critical level and load, verdicts
        "site_max_and_mean": "siting.physics.assess",
        "percent_of": "siting.physics.assess",
        "verdict": "siting.physics.assess",
        # constants.py: physical constants and the unit conversions built from them
        "kg_per_year_to_g_s": "siting.physics.constants",
        "deposition_kg_n_ha_yr": "siting.physics.constants",
        "kg_n_to_mol_n": "siting.physics.constants",
        # met_units.py: wind from u/v, speeds, directions, cloud fractions as oktas, feet
        "wind_from_components": "siting.physics.met_units",
        "speed_in_m_s": "siting.physics.met_units",
        "direction_in_deg": "siting.physics.met_units",
        "oktas_from_fraction": "siting.physics.met_units",
        "feet_from_metres": "siting.physics.met_units",
        # deposition.py: dry deposition: flux at the ground and source depletion of the plume
        "ground_vertical_density_per_m": "siting.physics.deposition",
        "cumulative_depletion_integral_m0": "siting.physics.deposition",
        "source_depletion_fraction": "siting.physics.deposition",
        "dry_deposition_flux_g_m2_s": "siting.physics.deposition",
        # emissions.py: source strengths: emission factor x animal places, less abatement, down to g/s
        "EmissionDerivation": "siting.physics.emissions",
        "derive_emission": "siting.physics.emissions",
        # plume.py: dispersion coefficients, wind profile, plume rise, plume terms
        "SigmaScheme": "siting.physics.plume",
        "virtual_distance_m": "siting.physics.plume",
        "wind_speed_at_height_m_s": "siting.physics.plume",
        "gep_stack_height_m": "siting.physics.plume",
        "stack_tip_downwash_height_m": "siting.physics.plume",
        "momentum_plume_rise_m": "siting.physics.plume",
        "vertical_term": "siting.physics.plume",
        "plume_concentration_g_m3": "siting.physics.plume",
        "sector_average_concentration_g_m3": "siting.physics.plume",
        # staging.py: a rule set's ordered tests on a site's figures, and the reduction they allow
        "Condition": "siting.physics.staging",
        "Stage": "siting.physics.staging",
        "Judgement": "siting.physics.staging",
        "judge": "siting.physics.staging",
        "allowed_scale": "siting.physics.staging",
        # seasonal.py: hour-by-hour emission weights from air temperature, and partial scrubbing
        "temperature_emission_weights": "siting.physics.seasonal",
        "ventilation_fraction": "siting.physics.seasonal",
        "treated_ammonia_share": "siting.physics.seasonal",
        # solar.py: solar elevation from UTC time and position; day or night
        "solar_elevation_deg": "siting.physics.solar",
        "is_night": "siting.physics.solar",
        # stability.py: Pasquill class by Turner's net-radiation-index method
        "insolation_class": "siting.physics.stability",
        "net_radiation_index": "siting.physics.stability",
        "turner_stability_index": "siting.physics.stability",
    },
)
