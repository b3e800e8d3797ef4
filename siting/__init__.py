"""siting: screening of livestock-housing ammonia against protected habitats.

A small public API for notebooks and scripts; the CLI (``siting``) is built on it.

    >>> import siting
    >>> scenario = siting.load_scenario("data_demo/scenario.toml")
    >>> result = siting.runs.screening(scenario)
    >>> siting.write_outputs(result, "maps/demo")
    >>> best = siting.runs.placing(scenario, "H2").positions.head()   # placement search

Results are screening estimates from a simplified model; see the cautions in every output.
"""

from siting._lazy import lazy_exports
from siting._version import __version__

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        "InputError": "siting.errors",
        "InputFileError": "siting.errors",
        "OutputExistsError": "siting.errors",
        "SitingError": "siting.errors",
        "Scenario": "siting.readers.scenario",
        "load_scenario": "siting.readers.scenario",
        "ScreenResult": "siting.runs.screening",
        "screen": "siting.runs.screening",
        "PlaceResult": "siting.runs.placing",
        "place": "siting.runs.placing",
        "write_outputs": "siting.output.screen",
    },
)
__all__ = ["__version__", *__all__]
