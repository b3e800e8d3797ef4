"""Shared fixtures: the bundled dispersion table and its sigma schemes."""

import pytest

from siting.tables import load_dispersion, sigma_scheme, wind_exponents


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
