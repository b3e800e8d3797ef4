"""The version of siting, in one place (read by the build and by every run record)."""

__version__ = "0.1.0"
