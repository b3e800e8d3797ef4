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
        # farms.py: the farms layer of a regional run: sources, emissions, release classes
        "FarmFields": "siting.readers.farms",
        "read_farms": "siting.readers.farms",
        # frequency_table.py: a joint frequency table CSV -> WeatherClasses, summary, warnings
        "read_frequency_table": "siting.readers.frequency_table",
        # habitats.py: the habitat layer and each site's critical values
        "read_vector_layer": "siting.readers.habitats",
        "critical_level_for": "siting.readers.habitats",
        "critical_load_range": "siting.readers.habitats",
        "read_habitats": "siting.readers.habitats",
        # hourly_record.py: hourly weather files -> HourlyWeather and a summary
        "read_hourly_record": "siting.readers.hourly_record",
        "record_position": "siting.readers.hourly_record",
        # weather_formats.py: the hourly files' formats, their options and their detection
        "WeatherSource": "siting.readers.weather_formats",
        "parse_column_map": "siting.readers.weather_formats",
        "weather_source": "siting.readers.weather_formats",
        "source_of": "siting.readers.weather_formats",
        "file_bytes": "siting.readers.weather_formats",
        "detect_format": "siting.readers.weather_formats",
        "read_record_files": "siting.readers.weather_formats",
        # weather_isd.py, weather_netcdf.py, weather_mapped.py: one file of each format
        "read_isd_lite_file": "siting.readers.weather_isd",
        "read_netcdf_file": "siting.readers.weather_netcdf",
        "read_mapped_csv": "siting.readers.weather_mapped",
        # hourly_table.py: directions and speeds named, binned, classed; the frequency table
        "compass_words": "siting.readers.hourly_table",
        "direction_step_deg": "siting.readers.hourly_table",
        "hours_by_sector": "siting.readers.hourly_table",
        "speed_class_index": "siting.readers.hourly_table",
        "speed_class_labels": "siting.readers.hourly_table",
        "frequency_table_from_hourly": "siting.readers.hourly_table",
        # map_context.py: holding, exclusion layers and source footprints: the maps' context
        "ContextLayer": "siting.readers.map_context",
        "MapContext": "siting.readers.map_context",
        "read_map_context": "siting.readers.map_context",
        "source_footprints": "siting.readers.map_context",
        # resources.py: where the bundled config tables and demo data live
        "config_dir": "siting.readers.resources",
        "demo_dir": "siting.readers.resources",
        # rules.py: rule sets: the basis and the ordered stages per designation tier
        "RuleSet": "siting.readers.rules",
        "bundled_rules_dir": "siting.readers.rules",
        "list_rule_sets": "siting.readers.rules",
        "rules_path": "siting.readers.rules",
        "load_rule_set": "siting.readers.rules",
        # run_folders.py: reading the output folders of separate screening runs for ``compare``
        "check_run_folder": "siting.readers.run_folders",
        "read_run_sites": "siting.readers.run_folders",
        "run_folder_version": "siting.readers.run_folders",
        # scenario.py: the scenario file: TOML -> validated :class:`Scenario`
        "Scenario": "siting.readers.scenario",
        "projected_crs": "siting.readers.scenario",
        "load_scenario": "siting.readers.scenario",
        "named_files": "siting.readers.scenario",
        # scenario_appraisal.py: the scenario's optional [appraisal] prices and interest rate
        "AppraisalSection": "siting.readers.scenario_appraisal",
        # scenario_sections.py: the scenario's sections other than its sources
        "ProjectSection": "siting.readers.scenario_sections",
        "WeatherSection": "siting.readers.scenario_sections",
        "SeasonalSection": "siting.readers.scenario_sections",
        "GridSection": "siting.readers.scenario_sections",
        "DepositionSection": "siting.readers.scenario_sections",
        "AssessmentSection": "siting.readers.scenario_sections",
        "HabitatsSection": "siting.readers.scenario_sections",
        "ReceptorsSection": "siting.readers.scenario_sections",
        "ExclusionSpec": "siting.readers.scenario_sections",
        "HoldingSection": "siting.readers.scenario_sections",
        # scenario_options.py: the scenario's [[option]] tables
        "OptionSpec": "siting.readers.scenario_options",
        "SourceChange": "siting.readers.scenario_options",
        "apply_option": "siting.readers.scenario_options",
        # scenario_sources.py: the scenario's [[source]] tables
        "SourceSpec": "siting.readers.scenario_sources",
        # site_points.py: receptor points on habitat sites (boundary, interior lattice, nodes)
        "site_sample_points": "siting.readers.site_points",
        "lattice_step_m": "siting.readers.site_points",
        "site_boundary_points": "siting.readers.site_points",
        "grid_nodes_in_sites": "siting.readers.site_points",
        "coarsened_sites": "siting.readers.site_points",
        "site_outline_points": "siting.readers.site_points",
        # submission.py: reading a submitted screening run for ``siting verify``
        "Submission": "siting.readers.submission",
        "load_submission": "siting.readers.submission",
        # toml_values.py: the values of a run's TOML inputs as JSON data, for run.json
        "read_toml_values": "siting.readers.toml_values",
        "recorded_toml_values": "siting.readers.toml_values",
        # table_appraisal.py: abatement_appraisal.toml's rows and file (pydantic models)
        "ScrubberCostRow": "siting.readers.table_appraisal",
        "HousingMeasureCostRow": "siting.readers.table_appraisal",
        "VentilationRow": "siting.readers.table_appraisal",
        "AbatementAppraisalFile": "siting.readers.table_appraisal",
        # table_rows.py: the rows of the config/ lookup tables (pydantic models)
        "FactorRow": "siting.readers.table_rows",
        "Uncertainty": "siting.readers.table_rows",
        "TechniqueRow": "siting.readers.table_rows",
        "HabitatRow": "siting.readers.table_rows",
        "LevelRow": "siting.readers.table_rows",
        "LandCoverRow": "siting.readers.table_rows",
        "TierRow": "siting.readers.table_rows",
        "Coefficients": "siting.readers.table_rows",
        "BriggsRow": "siting.readers.table_rows",
        "PasquillSigmaY": "siting.readers.table_rows",
        "PasquillGiffordRow": "siting.readers.table_rows",
        "WindExponentRow": "siting.readers.table_rows",
        # table_schema.py: the shape of every config/ lookup table file, and its validation
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
