"""Shared fixtures: the bundled dispersion table and its sigma schemes, the demo run once, and
the headless Chromium of the browser tests."""

import os
import shutil
from pathlib import Path

import pytest

from siting.readers.tables import load_dispersion, sigma_scheme, wind_exponents


@pytest.fixture(scope="session")
def dispersion():
    return load_dispersion()


@pytest.fixture(scope="session")
def briggs_rural(dispersion):
    return sigma_scheme(dispersion, "rural", "briggs")


@pytest.fixture(scope="session")
def briggs_urban(dispersion):
    return sigma_scheme(dispersion, "urban", "briggs")


@pytest.fixture(scope="session")
def pasquill_gifford(dispersion):
    return sigma_scheme(dispersion, "rural", "pasquill_gifford")


@pytest.fixture(scope="session")
def rural_exponents(dispersion):
    return wind_exponents(dispersion, "rural")


#: Names under which Chromium is looked up on PATH (Debian: chromium; Ubuntu: chromium-browser).
_CHROMIUM_NAMES = ("chromium", "chromium-browser")


@pytest.fixture(scope="session")
def chromium_executable() -> Path:
    """Chromium for the browser tests: $SITING_CHROMIUM, else chromium on PATH; skip if none."""
    configured = os.environ.get("SITING_CHROMIUM")
    if configured:
        path = shutil.which(configured)
        if path is None:  # asked for explicitly: a wrong path is an error, not a skip
            pytest.fail(f"SITING_CHROMIUM={configured!r} is not an executable file")
        return Path(path)
    for name in _CHROMIUM_NAMES:
        path = shutil.which(name)
        if path is not None:
            return Path(path)
    pytest.skip(
        "no Chromium found: set SITING_CHROMIUM to its executable or put one of "
        f"{', '.join(_CHROMIUM_NAMES)} on PATH (Debian: apt-get install chromium)"
    )


@pytest.fixture(scope="session")
def demo_output(tmp_path_factory) -> Path:
    """Output folder of `siting demo --quiet`, run once per session."""
    from siting.cli import main

    out = tmp_path_factory.mktemp("demo") / "demo"
    assert main(["demo", "--out", str(out), "--quiet"]) == 0
    return out
