"""Runs: screen, place, verify, region and the sensitivity re-runs (orchestration only).

A run reads through the readers, computes through the engines and returns a result; the
command's writer in siting.output puts it on disk.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.

``sensitivity()`` is reached as ``siting.runs.sensitivity.sensitivity``: a public name never
equals a module's name (``siting.runs.sensitivity`` is the module).
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # appraisal.py: each abated source's abatement appraisal (the columns of sources.csv)
        "appraise_sources": "siting.runs.appraisal",
        # what_it_takes.py: the cheapest way to pass (place's positions, screen's houses)
        "costed_techniques": "siting.runs.what_it_takes",
        "cheapest_columns": "siting.runs.what_it_takes",
        "way_words": "siting.runs.what_it_takes",
        "proposal_ways": "siting.runs.what_it_takes",
        "side_by_side": "siting.runs.what_it_takes",
        # comparing.py: separate screening runs compared against the first (``siting compare``)
        "CompareResult": "siting.runs.comparing",
        "safe_file_stem": "siting.runs.comparing",
        "site_changes": "siting.runs.comparing",
        "compare": "siting.runs.comparing",
        # changes.py: verify's what changed since the run, key by key, and each emission
        "Changes": "siting.runs.changes",
        "toml_differences": "siting.runs.changes",
        "emission_rows": "siting.runs.changes",
        "emission_differences": "siting.runs.changes",
        "what_changed": "siting.runs.changes",
        # comparison.py: verify's submitted figures against the re-run's, at a tolerance
        "compare_figures": "siting.runs.comparison",
        # findings.py: verify's plausibility review, each finding against a table or range
        "Finding": "siting.runs.findings",
        "review": "siting.runs.findings",
        # integrity.py: verify's packed inputs and written outputs against their hashes
        "check_integrity": "siting.runs.integrity",
        "check_outputs": "siting.runs.integrity",
        # weather_years.py: the worst single weather year at each point
        "judged_concentration": "siting.runs.weather_years",
        "screened_years": "siting.runs.weather_years",
        "worst_year_by_role": "siting.runs.weather_years",
        "site_years": "siting.runs.weather_years",
        # judging.py: sites judged by a rule set (figures, verdict, deciding rule)
        "site_figures": "siting.runs.judging",
        "judge_sites": "siting.runs.judging",
        "with_verdicts": "siting.runs.judging",
        # placing_rules.py: the placement search's positions judged by a rule set
        "fixed_site_maxima": "siting.runs.placing_rules",
        "installation_distance_m": "siting.runs.placing_rules",
        "position_figures": "siting.runs.placing_rules",
        "figures_at": "siting.runs.placing_rules",
        "judge_positions": "siting.runs.placing_rules",
        # placing.py: the placement search (``siting place``)
        "PlaceResult": "siting.runs.placing",
        "place": "siting.runs.placing",
        # region_inputs.py: a regional run's options and its inputs read and checked
        "RegionOptions": "siting.runs.region_inputs",
        "RegionInputs": "siting.runs.region_inputs",
        "prepare_region": "siting.runs.region_inputs",
        # region_tiles.py: a regional grid's tiles planned against the memory budget
        "TilePlan": "siting.runs.region_tiles",
        "engine_budget_mb": "siting.runs.region_tiles",
        "plan_tiles": "siting.runs.region_tiles",
        # regional.py: many farms over a region, tiled, on dask (``siting region``)
        "RegionResult": "siting.runs.regional",
        "compute_region": "siting.runs.regional",
        "region": "siting.runs.regional",
        # run_cache.py: the cache a screening run's sensitivity re-runs share
        "RunCache": "siting.runs.run_cache",
        # screening.py: the screening run: scenario -> process contribution at every habitat site
        "ScreenResult": "siting.runs.screening",
        "screen": "siting.runs.screening",
        # screening_inputs.py: prepare(), a scenario's inputs read and checked; the engines' calls
        "site_lat_lon": "siting.runs.screening_inputs",
        "Prepared": "siting.runs.screening_inputs",
        "RoleConcentrations": "siting.runs.screening_inputs",
        "prepare": "siting.runs.screening_inputs",
        # screening_sites.py: the receptor grid of a screening run
        "screen_grid": "siting.runs.screening_sites",
        # screening_options.py: the scenario's [[option]] tables screened beside the base
        "OptionRuns": "siting.runs.screening_options",
        "screen_options": "siting.runs.screening_options",
        "change_words": "siting.runs.screening_options",
        "options_table": "siting.runs.screening_options",
        "difference_fields": "siting.runs.screening_options",
        # screening_sources.py: release elements, emission derivation, hourly emission weights
        "outlet_rise": "siting.runs.screening_sources",
        "reduction_basis": "siting.runs.screening_sources",
        "derive_sources": "siting.runs.screening_sources",
        "hourly_temperature_needed": "siting.runs.screening_sources",
        # verification.py: a regulator's spot-check of a submitted screening run (``siting verify``)
        "VerifyResult": "siting.runs.verification",
        "verify": "siting.runs.verification",
    },
)
