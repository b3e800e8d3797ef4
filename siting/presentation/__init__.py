"""Presentation: number formats, verdict colours, figures, the HTML reports and the maps.

Renders to strings and bytes; siting.output writes them.
"""
