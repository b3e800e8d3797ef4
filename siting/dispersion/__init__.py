"""Dispersion engines on arrays: sector-averaged (frequency table), hourly, FFT convolution, placement kernel.

They combine the physics into annual means at receptors; they read and write no files.
"""
