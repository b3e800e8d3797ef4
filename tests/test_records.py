"""Tests of siting.output.records: the library versions run.json records."""

from __future__ import annotations

import subprocess
import sys
import textwrap

from siting.output.records import _RECORDED_LIBRARIES, _library_versions


def test_recorded_versions_are_the_libraries_own():
    """Each version read from the installed metadata is the one the library itself reports
    (reference: each module's own ``__version__``, the value run.json held before)."""
    import folium
    import geopandas
    import numpy
    import pandas
    import rasterio
    import shapely

    modules = {m.__name__: m for m in (numpy, pandas, geopandas, shapely, rasterio, folium)}
    versions = _library_versions()
    assert list(versions) == list(_RECORDED_LIBRARIES)
    assert versions == {name: modules[name].__version__ for name in _RECORDED_LIBRARIES}


def test_reading_the_versions_imports_none_of_the_libraries():
    """Reading the versions imports none of the recorded libraries (start-up time: folium
    alone takes about 0.4 s to import); checked in a fresh interpreter."""
    code = textwrap.dedent(
        """
        import sys
        from siting.output.records import _RECORDED_LIBRARIES, _library_versions
        _library_versions()
        print(sorted(name for name in _RECORDED_LIBRARIES if name in sys.modules))
        """
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"
