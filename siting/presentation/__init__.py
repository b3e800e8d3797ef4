"""Presentation: number formats, verdict colours, figures, the HTML reports and the maps.

Renders to strings and bytes; siting.output writes them.

Exported here (``__all__``, imported on first use): the number formats, the figures and the
four pages' renderers. The pages' building blocks (figure_parts, html_parts, report_record,
notes, webassets, webmap_grid, webmap_sites, webmap_text) are reached by their modules.
"""

from siting._lazy import lazy_exports

__all__, __getattr__, __dir__ = lazy_exports(
    __name__,
    {
        # formats.py: number formats, deposition classes and their colours, the sites' order
        "is_missing": "siting.presentation.formats",
        "format_number": "siting.presentation.formats",
        "format_for_column": "siting.presentation.formats",
        "format_percent": "siting.presentation.formats",
        "deposition_class_edges": "siting.presentation.formats",
        "deposition_class_colours": "siting.presentation.formats",
        "most_affected_order": "siting.presentation.formats",
        # figures.py, weather_figures.py: the report's figures and the weather charts, as
        # matplotlib Figures (drawn into a given Axes or their own); figure_parts.py: to PNG
        "figure_png": "siting.presentation.figure_parts",
        "deposition_figure": "siting.presentation.figures",
        "pc_vs_distance_figure": "siting.presentation.figures",
        "wind_rose_figure": "siting.presentation.weather_figures",
        "wind_rose_from_table_figure": "siting.presentation.weather_figures",
        "stability_by_speed_figure": "siting.presentation.weather_figures",
        # weather_view.py: the weather summary's source, position and distance in words
        "weather_summary_view": "siting.presentation.weather_view",
        "station_words": "siting.presentation.weather_view",
        # rule_text.py: a rule set in words
        "condition_words": "siting.presentation.rule_text",
        "rule_words": "siting.presentation.rule_text",
        "rule_set_in_words": "siting.presentation.rule_text",
        # report.py, place_report.py, verify_report.py, webmap.py, webmap_place.py: the pages
        "render_report": "siting.presentation.report",
        "render_place_report": "siting.presentation.place_report",
        "render_verify_report": "siting.presentation.verify_report",
        "render_screen_map": "siting.presentation.webmap",
        "render_place_map": "siting.presentation.webmap_place",
    },
)
