"""Seasonal emission weights and partial scrubbing: conservation and limiting cases.

The model parameters are "common practice, no source"; these checks are analytic properties
(conservation of the annual total, the limits the issue names), not published values.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.physics.seasonal import (
    temperature_emission_weights,
    treated_ammonia_share,
    ventilation_fraction,
)

RNG = np.random.default_rng(42)
TEMPS_C = 10 + 8 * np.sin(np.linspace(0, 2 * np.pi, 8760)) + RNG.normal(0, 3, 8760)


def test_weights_conserve_the_annual_total():
    """Mean weight is 1, so sum over hours of Q w_h equals the factor-based total (conservation)."""
    w = temperature_emission_weights(TEMPS_C)
    assert_allclose(w.mean(), 1.0, rtol=1e-12)
    assert_allclose((5626.0 / 8760 * w).sum(), 5626.0, rtol=1e-12)


def test_warm_hours_weigh_more():
    """Weights rise with temperature: exp(k dT) between any two hours (model definition)."""
    w = temperature_emission_weights(np.array([0.0, 10.0, 20.0]), 0.05)
    assert_allclose(w[2] / w[1], np.exp(0.5), rtol=1e-12)
    assert_allclose(temperature_emission_weights(TEMPS_C, 0.0), 1.0)


def test_ventilation_ramp():
    """r = r_min below the ramp, 1 above it, linear between (model definition)."""
    r = ventilation_fraction(np.array([-5.0, 10.0, 17.5, 25.0, 35.0]), 0.1, 10.0, 25.0)
    assert_allclose(r, [0.1, 0.1, 0.55, 1.0, 1.0], rtol=1e-12)


def test_treated_share_equals_design_share_at_full_ventilation():
    """Always at maximum ventilation: treated share = design share (issue 3 check)."""
    assert_allclose(treated_ammonia_share(np.ones(100), 0.4), 0.4, rtol=1e-12)


def test_treated_share_is_one_for_full_design():
    """A scrubber sized for the whole maximum flow treats all the ammonia (issue 3 check)."""
    r = ventilation_fraction(TEMPS_C)
    assert_allclose(treated_ammonia_share(r, 1.0), 1.0, rtol=1e-12)


def test_partial_scrubber_treats_more_than_its_design_share():
    """Most hours run below maximum, so a 50 % scrubber treats more than 50 % of the ammonia."""
    r = ventilation_fraction(TEMPS_C)
    w = temperature_emission_weights(TEMPS_C)
    share = treated_ammonia_share(r, 0.5, w)
    assert 0.5 < share < 1.0
    shares = [treated_ammonia_share(r, d, w) for d in (0.2, 0.4, 0.6, 0.8, 1.0)]
    assert np.all(np.diff(shares) > 0)  # monotone in the design share


def test_bad_inputs_raise():
    """Non-finite temperatures and out-of-range shares are refused."""
    with pytest.raises(ValueError, match="finite"):
        temperature_emission_weights(np.array([1.0, np.nan]))
    with pytest.raises(ValueError, match="design_share"):
        treated_ammonia_share(np.ones(3), 1.5)
