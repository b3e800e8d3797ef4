"""Runs: screen, place, verify, region and the sensitivity re-runs (orchestration only).

A run reads through the readers, computes through the engines and returns a result; the
command's writer in siting.output puts it on disk.
"""
