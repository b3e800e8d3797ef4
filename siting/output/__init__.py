"""The layer that writes files: output folders (overwrite rule, staging, lock), tables, GeoTIFF,
run record, and each command's writer.
"""
