"""The layer that writes files: output folders (overwrite rule, staging, lock), tables, GeoTIFF,
run record, and each command's writer.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # compare.py: the files of ``siting compare``: comparison.csv, difference_<run>.tif, run.json
        "difference_file_name": "siting.output.compare",
        "compare_record": "siting.output.compare",
        "write_compare_outputs": "siting.output.compare",
        # folder.py: output folders: the overwrite rule, staging, the writing lock, recovery
        "is_siting_output": "siting.output.folder",
        "check_output_dir": "siting.output.folder",
        "recover_interrupted": "siting.output.folder",
        "staged_folder": "siting.output.folder",
        "InterruptedAfterWriting": "siting.output.folder",
        # geopackage.py: results.gpkg of ``siting screen``: the run's layers and their styles
        "results_layers": "siting.output.geopackage",
        "write_layer_styles": "siting.output.geopackage",
        "write_results_gpkg": "siting.output.geopackage",
        # geotiff.py: GeoTIFF output: one profile shared by every output raster
        "write_geotiff": "siting.output.geotiff",
        "write_large_geotiff": "siting.output.geotiff",
        # place.py: the files of ``siting place``: suitability.tif, positions.csv, run.json, map
        "write_place_map": "siting.output.place",
        "write_place_outputs": "siting.output.place",
        # portable.py: paths as the outputs name them, nothing of the machine's folders
        "portable_record": "siting.output.portable",
        "relative_name": "siting.output.portable",
        # records.py: the run record's shared parts: input files, their hashes, packed inputs
        "sha256_of": "siting.output.records",
        "input_paths": "siting.output.records",
        "run_record_base": "siting.output.records",
        "package_inputs": "siting.output.records",
        "output_hashes": "siting.output.records",
        # region.py: files of a regional run (``siting region``): GeoTIFFs, tables and run.json
        "region_record": "siting.output.region",
        "write_region_outputs": "siting.output.region",
        # screen.py: the files of ``siting screen``: tables, GeoTIFFs, run.json, report, map
        "run_record": "siting.output.screen",
        "estimate_screen_bytes": "siting.output.screen",
        "write_report": "siting.output.screen",
        "write_report_pdf": "siting.output.screen",
        "write_screen_map": "siting.output.screen",
        "write_outputs": "siting.output.screen",
        # screen_options.py: options.csv and difference_<option>.tif of a run with options
        "options_csv_table": "siting.output.screen_options",
        "write_option_files": "siting.output.screen_options",
        "difference_file": "siting.output.screen_options",
        # tables.py: CSV tables that a spreadsheet opens safely
        "write_csv": "siting.output.tables",
        # verify.py: the files of ``siting verify``: findings.json and verify.html, written atomically
        "write_verify_report": "siting.output.verify",
        "write_verify_outputs": "siting.output.verify",
        # weather.py: the files of ``siting weather``: frequency table, charts and summary
        "write_weather_outputs": "siting.output.weather",
    },
)
