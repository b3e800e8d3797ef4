"""Dispersion engines on arrays: sector-averaged (frequency table), hourly, FFT convolution, placement kernel.

They combine the physics into annual means at receptors; they read and write no files.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # cells.py: sources placed on grid cells (a sparse raster) and the near-field correction
        "CellValues": "siting.dispersion.cells",
        "place_on_cells": "siting.dispersion.cells",
        "near_field_correction": "siting.dispersion.cells",
        # convolution.py: many sources of the same release parameters: the field as an FFT convolution
        "tile_concentration": "siting.dispersion.convolution",
        "convolve_emissions": "siting.dispersion.convolution",
        "tile_working_bytes": "siting.dispersion.convolution",
        # depletion.py: plume depletion integrals on log-spaced distance tables
        "depletion_table_m": "siting.dispersion.depletion",
        "table_position": "siting.dispersion.depletion",
        "depletion_integral_table": "siting.dispersion.depletion",
        "DepletionTables": "siting.dispersion.depletion",
        # grid.py: the receptor grid: a north-up regular grid with named edges
        "GridSpec": "siting.dispersion.grid",
        "grid_around": "siting.dispersion.grid",
        # hourly.py: long-term mean hour by hour, each hour's own Gaussian plume
        "HourlyWeather": "siting.dispersion.hourly",
        "group_identical_hours": "siting.dispersion.hourly",
        "spread_lateral_density_per_m": "siting.dispersion.hourly",
        "element_hourly_mean_g_m3_per_g_s": "siting.dispersion.hourly",
        "source_hourly_mean_g_m3_per_g_s": "siting.dispersion.hourly",
        # inputs.py: what every engine is given: weather classes, release elements, settings
        "WeatherClasses": "siting.dispersion.inputs",
        "ReleaseElement": "siting.dispersion.inputs",
        "DispersionSettings": "siting.dispersion.inputs",
        "rectangle_elements": "siting.dispersion.inputs",
        # kernels.py: release classes and their unit-source kernels on a grid's offsets
        "ReleaseClass": "siting.dispersion.kernels",
        "release_class": "siting.dispersion.kernels",
        "UnitKernel": "siting.dispersion.kernels",
        "kernel_half_size": "siting.dispersion.kernels",
        "offset_concentration_g_m3_per_g_s": "siting.dispersion.kernels",
        "OffsetLattice": "siting.dispersion.kernels",
        "offset_lattice": "siting.dispersion.kernels",
        "centre_line_profiles": "siting.dispersion.kernels",
        "unit_kernel": "siting.dispersion.kernels",
        # placement.py: one house's screening figures at many candidate positions
        "PolarKernel": "siting.dispersion.placement",
        "site_maxima": "siting.dispersion.placement",
        "share_of_threshold": "siting.dispersion.placement",
        "required_reduction_percent": "siting.dispersion.placement",
        "max_places": "siting.dispersion.placement",
        # release.py: an element's wind and effective release height in one weather class
        "virtual_distances_m": "siting.dispersion.release",
        "release_wind_and_height": "siting.dispersion.release",
        # sector.py: annual mean over a weather frequency table, sector averaged
        "RadialProfiles": "siting.dispersion.sector",
        "radial_profiles": "siting.dispersion.sector",
        "sector_position": "siting.dispersion.sector",
        "element_concentration_g_m3_per_g_s": "siting.dispersion.sector",
        "receptor_reach_m": "siting.dispersion.sector",
        "receptor_range_m": "siting.dispersion.sector",
        "source_concentration_g_m3_per_g_s": "siting.dispersion.sector",
    },
)
