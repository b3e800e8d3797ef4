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
        # placing.py: the placement search (``siting place``)
        "PlaceResult": "siting.runs.placing",
        "place": "siting.runs.placing",
        # regional.py: many farms over a region, tiled, on dask (``siting region``)
        "RegionOptions": "siting.runs.regional",
        "FarmFields": "siting.runs.regional",
        "read_farms": "siting.runs.regional",
        "TilePlan": "siting.runs.regional",
        "engine_budget_mb": "siting.runs.regional",
        "plan_tiles": "siting.runs.regional",
        "RegionInputs": "siting.runs.regional",
        "RegionResult": "siting.runs.regional",
        "prepare_region": "siting.runs.regional",
        "compute_region": "siting.runs.regional",
        "region": "siting.runs.regional",
        # run_cache.py: the cache a screening run's sensitivity re-runs share
        "RunCache": "siting.runs.run_cache",
        # screening.py: the screening run: scenario -> process contribution at every habitat site
        "ScreenResult": "siting.runs.screening",
        "outlet_rise": "siting.runs.screening",
        "reduction_basis": "siting.runs.screening",
        "derive_sources": "siting.runs.screening",
        "site_lat_lon": "siting.runs.screening",
        "Prepared": "siting.runs.screening",
        "prepare": "siting.runs.screening",
        "screen": "siting.runs.screening",
        # verification.py: a regulator's spot-check of a submitted screening run (``siting verify``)
        "Finding": "siting.runs.verification",
        "VerifyResult": "siting.runs.verification",
        "check_integrity": "siting.runs.verification",
        "check_outputs": "siting.runs.verification",
        "compare_figures": "siting.runs.verification",
        "review": "siting.runs.verification",
        "verify": "siting.runs.verification",
    },
)
