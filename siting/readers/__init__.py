"""Readers of inputs: scenario, config tables, frequency tables, hourly records, habitats, bundled data.

Each turns a file into validated objects and arrays; none writes a file, draws, or starts a run.
"""
