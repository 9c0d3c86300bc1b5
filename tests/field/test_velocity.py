"""Velocity head: v = sqrt(2 g dh) (Bernoulli)."""
import numpy as np
import pytest

from bedflux import InputError
from bedflux.field import head_from_velocity, velocity_from_head


def test_one_centimetre_of_head():
    # Bernoulli: 1 cm of velocity head is 0.443 m/s with g = 9.80665 (references 5: 0.442869);
    # the rounded 0.44 m/s is the usual field figure (common practice).
    assert velocity_from_head(0.010) == pytest.approx(0.442869, rel=1e-6)
    assert round(float(velocity_from_head(0.010)), 2) == 0.44


def test_inverse():
    # U^2 / (2 g): 0.5 m/s -> 0.0127465 m (references 5).
    assert head_from_velocity(0.5) == pytest.approx(0.0127465, rel=4e-6)  # value given to 6 figures
    v = np.array([0.1, 0.7, 1.3])
    np.testing.assert_allclose(velocity_from_head(head_from_velocity(v)), v, rtol=1e-12)


def test_negative_head_refused():
    with pytest.raises(InputError):
        velocity_from_head(-0.01)
