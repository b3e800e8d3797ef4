"""Readers of inputs: scenario, config tables, frequency tables, hourly records, habitats, bundled data.

Each turns a file into validated objects and arrays; none writes a file, draws, or starts a run.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # csv_cells.py: the text-cell convention of siting's CSV tables, both ways
        "spreadsheet_safe": "siting.readers.csv_cells",
        "spreadsheet_text": "siting.readers.csv_cells",
        # frequency_table.py: a joint frequency table CSV -> WeatherClasses, summary, warnings
        "read_frequency_table": "siting.readers.frequency_table",
        # habitats.py: the habitat layer, critical values, sample receptors
        "read_vector_layer": "siting.readers.habitats",
        "critical_level_for": "siting.readers.habitats",
        "critical_load_range": "siting.readers.habitats",
        "read_habitats": "siting.readers.habitats",
        "site_sample_points": "siting.readers.habitats",
        "lattice_step_m": "siting.readers.habitats",
        "site_boundary_points": "siting.readers.habitats",
        "grid_nodes_in_sites": "siting.readers.habitats",
        "coarsened_sites": "siting.readers.habitats",
        "site_outline_points": "siting.readers.habitats",
        # hourly_record.py: hourly station CSV files -> HourlyWeather, summaries, products
        "compass_words": "siting.readers.hourly_record",
        "direction_step_deg": "siting.readers.hourly_record",
        "hours_by_sector": "siting.readers.hourly_record",
        "speed_class_index": "siting.readers.hourly_record",
        "speed_class_labels": "siting.readers.hourly_record",
        "read_hourly_record": "siting.readers.hourly_record",
        "frequency_table_from_hourly": "siting.readers.hourly_record",
        # resources.py: where the bundled config tables and demo data live
        "config_dir": "siting.readers.resources",
        "demo_dir": "siting.readers.resources",
        # scenario.py: the scenario file: TOML -> validated :class:`Scenario`
        "WeatherSection": "siting.readers.scenario",
        "SeasonalSection": "siting.readers.scenario",
        "GridSection": "siting.readers.scenario",
        "DepositionSection": "siting.readers.scenario",
        "AssessmentSection": "siting.readers.scenario",
        "HabitatsSection": "siting.readers.scenario",
        "ReceptorsSection": "siting.readers.scenario",
        "ExclusionSpec": "siting.readers.scenario",
        "HoldingSection": "siting.readers.scenario",
        "SourceSpec": "siting.readers.scenario",
        "Scenario": "siting.readers.scenario",
        "projected_crs": "siting.readers.scenario",
        "load_scenario": "siting.readers.scenario",
        # submission.py: reading a submitted screening run for ``siting verify``
        "Submission": "siting.readers.submission",
        "load_submission": "siting.readers.submission",
        # table_schema.py: the shape of every config/ lookup table (pydantic models)
        "FactorRow": "siting.readers.table_schema",
        "Uncertainty": "siting.readers.table_schema",
        "TechniqueRow": "siting.readers.table_schema",
        "HabitatRow": "siting.readers.table_schema",
        "LevelRow": "siting.readers.table_schema",
        "LandCoverRow": "siting.readers.table_schema",
        "TierRow": "siting.readers.table_schema",
        "Coefficients": "siting.readers.table_schema",
        "BriggsRow": "siting.readers.table_schema",
        "PasquillSigmaY": "siting.readers.table_schema",
        "PasquillGiffordRow": "siting.readers.table_schema",
        "WindExponentRow": "siting.readers.table_schema",
        "EmissionFactorsFile": "siting.readers.table_schema",
        "AbatementFile": "siting.readers.table_schema",
        "CriticalLoadsFile": "siting.readers.table_schema",
        "CriticalLevelsFile": "siting.readers.table_schema",
        "DepositionVelocitiesFile": "siting.readers.table_schema",
        "ThresholdsFile": "siting.readers.table_schema",
        "DispersionFile": "siting.readers.table_schema",
        "validate_table": "siting.readers.table_schema",
        # tables.py: loaders of the config/ lookup tables
        "suggest": "siting.readers.tables",
        "Tables": "siting.readers.tables",
        "sigma_scheme": "siting.readers.tables",
        "wind_exponents": "siting.readers.tables",
        "load_dispersion": "siting.readers.tables",
        "default_reduction_percent": "siting.readers.tables",
        "is_claimed_reduction": "siting.readers.tables",
        "load_tables": "siting.readers.tables",
    },
)
