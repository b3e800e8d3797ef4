"""Dispersion engines on arrays: sector-averaged (frequency table), hourly, FFT convolution, placement kernel.

They combine the physics into annual means at receptors; they read and write no files.

Every public function and class of the subpackage is exported here (``__all__``) and imported
on first use; docs/API.md lists them with their summaries.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # convolution.py: many sources of the same release parameters: the field as an FFT convolution
        "ReleaseClass": "siting.dispersion.convolution",
        "release_class": "siting.dispersion.convolution",
        "UnitKernel": "siting.dispersion.convolution",
        "kernel_half_size": "siting.dispersion.convolution",
        "offset_concentration_g_m3_per_g_s": "siting.dispersion.convolution",
        "OffsetLattice": "siting.dispersion.convolution",
        "offset_lattice": "siting.dispersion.convolution",
        "centre_line_profiles": "siting.dispersion.convolution",
        "unit_kernel": "siting.dispersion.convolution",
        "CellValues": "siting.dispersion.convolution",
        "place_on_cells": "siting.dispersion.convolution",
        "near_field_correction": "siting.dispersion.convolution",
        "tile_concentration": "siting.dispersion.convolution",
        "convolve_emissions": "siting.dispersion.convolution",
        "tile_working_bytes": "siting.dispersion.convolution",
        # grid.py: the receptor grid: a north-up regular grid with named edges
        "GridSpec": "siting.dispersion.grid",
        "grid_around": "siting.dispersion.grid",
        # hourly.py: long-term mean hour by hour, each hour's own Gaussian plume
        "HourlyWeather": "siting.dispersion.hourly",
        "group_identical_hours": "siting.dispersion.hourly",
        "spread_lateral_density_per_m": "siting.dispersion.hourly",
        "element_hourly_mean_g_m3_per_g_s": "siting.dispersion.hourly",
        "source_hourly_mean_g_m3_per_g_s": "siting.dispersion.hourly",
        # placement.py: one house's screening figures at many candidate positions
        "PolarKernel": "siting.dispersion.placement",
        "site_maxima": "siting.dispersion.placement",
        "share_of_threshold": "siting.dispersion.placement",
        "required_reduction_percent": "siting.dispersion.placement",
        "max_places": "siting.dispersion.placement",
        # sector.py: annual mean over a weather frequency table, sector averaged
        "WeatherClasses": "siting.dispersion.sector",
        "ReleaseElement": "siting.dispersion.sector",
        "DispersionSettings": "siting.dispersion.sector",
        "rectangle_elements": "siting.dispersion.sector",
        "depletion_table_m": "siting.dispersion.sector",
        "table_position": "siting.dispersion.sector",
        "depletion_integral_table": "siting.dispersion.sector",
        "virtual_distances_m": "siting.dispersion.sector",
        "release_wind_and_height": "siting.dispersion.sector",
        "DepletionTables": "siting.dispersion.sector",
        "RadialProfiles": "siting.dispersion.sector",
        "radial_profiles": "siting.dispersion.sector",
        "sector_position": "siting.dispersion.sector",
        "element_concentration_g_m3_per_g_s": "siting.dispersion.sector",
        "receptor_reach_m": "siting.dispersion.sector",
        "receptor_range_m": "siting.dispersion.sector",
        "source_concentration_g_m3_per_g_s": "siting.dispersion.sector",
    },
)
