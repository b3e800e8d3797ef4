"""siting: screening of livestock-housing ammonia against protected habitats.

A small public API for notebooks and scripts; the CLI (``siting``) is built on it.

    >>> import siting
    >>> scenario = siting.load_scenario("data_demo/scenario.toml")
    >>> result = siting.runs.screen(scenario)
    >>> siting.write_outputs(result, "maps/demo")
    >>> best = siting.runs.place(scenario, "H2").positions.head()   # placement search

Results are screening estimates from a simplified model; see the cautions in every output.
"""

from siting._version import __version__
from siting.errors import InputError, InputFileError, OutputExistsError, SitingError
from siting.output.screen import write_outputs
from siting.readers.scenario import Scenario, load_scenario
from siting.runs.place import PlaceResult, place
from siting.runs.screen import ScreenResult, screen

__all__ = [
    "InputError",
    "InputFileError",
    "OutputExistsError",
    "PlaceResult",
    "Scenario",
    "ScreenResult",
    "SitingError",
    "__version__",
    "load_scenario",
    "place",
    "screen",
    "write_outputs",
]
