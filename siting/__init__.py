"""siting: screening of livestock-housing ammonia against protected habitats.

A small public API for notebooks and scripts; the CLI (``siting``) is built on it, and each
command is one call here and one writer:

    >>> import siting
    >>> scenario = siting.load_scenario(siting.demo_dir() / "scenario.toml")
    >>> result = siting.screen(scenario)                  # siting screen
    >>> result.sites[["name", "pc_pct_load", "verdict"]]
    >>> siting.write_outputs(result, "maps/demo")
    >>> placed = siting.place(scenario, "H2")             # siting place
    >>> placed.positions.head()
    >>> check = siting.verify("maps/demo")                # siting verify
    >>> check.consistent, [f.code for f in check.findings]
    >>> weather, summary = siting.read_hourly_record(
    ...     [siting.demo_dir() / "hourly_weather.csv"], 52.4, 9.0)   # siting weather
    >>> siting.frequency_table_from_hourly(weather)

Legal but doubtful input gives a SitingWarning, kept on the result (``result.warnings``)
and issued as a Python warning; bad input raises a SitingError (InputError, ...).

Every name of the subpackages is in theirs (``siting.runs``, ``siting.readers``, ...); the
names here are imported on first use. docs/API.md is the API page.

Results are screening estimates from a simplified model; see the cautions in every output.
"""

from siting._lazy import lazy_exports
from siting._version import __version__

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # errors and warnings (siting/errors.py)
        "SitingError": "siting.errors",
        "InputError": "siting.errors",
        "InputFileError": "siting.errors",
        "OutputExistsError": "siting.errors",
        "AssetError": "siting.errors",
        "SitingWarning": "siting.errors",
        "InputWarning": "siting.errors",
        "WeatherWarning": "siting.errors",
        "AccuracyWarning": "siting.errors",
        "collect_warnings": "siting.errors",
        # inputs
        "Scenario": "siting.readers.scenario",
        "load_scenario": "siting.readers.scenario",
        "demo_dir": "siting.readers.resources",
        "config_dir": "siting.readers.resources",
        # siting screen
        "screen": "siting.runs.screening",
        "ScreenResult": "siting.runs.screening",
        "write_outputs": "siting.output.screen",
        # siting place
        "place": "siting.runs.placing",
        "PlaceResult": "siting.runs.placing",
        "write_place_outputs": "siting.output.place",
        # siting verify
        "verify": "siting.runs.verification",
        "VerifyResult": "siting.runs.verification",
        "Finding": "siting.runs.findings",
        "write_verify_outputs": "siting.output.verify",
        # siting region
        "region": "siting.runs.regional",
        "RegionOptions": "siting.runs.region_inputs",
        "FarmFields": "siting.readers.farms",
        "RegionResult": "siting.runs.regional",
        "write_region_outputs": "siting.output.region",
        # siting weather and the weather readers
        "read_hourly_record": "siting.readers.hourly_record",
        "frequency_table_from_hourly": "siting.readers.hourly_table",
        "HourlyWeather": "siting.dispersion.hourly",
        "read_frequency_table": "siting.readers.frequency_table",
        "WeatherClasses": "siting.dispersion.inputs",
        "write_weather_outputs": "siting.output.weather",
    },
)
__all__ = ["__version__", *__all__]
