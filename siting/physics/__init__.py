"""Physics on arrays: emission, plume, deposition, stability, sun, season, assessment arithmetic.

Nothing here reads or writes a file, prints, or knows a CRS; every formula names its source.
"""
