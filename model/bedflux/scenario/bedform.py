"""Dynamic head along a bed of dunes or ripples (Elliott & Brooks 1997).

The amplitude of the pressure head that stream flow over bedforms imposes on the bed is

    h_m = 0.28 (U^2 / 2 g) (H / (0.34 d))^(3/8)   for H / d <= 0.34
    h_m = 0.28 (U^2 / 2 g) (H / (0.34 d))^(3/2)   for H / d >  0.34

with U the mean stream velocity, H the bedform height and d the stream depth (Elliott & Brooks
1997, Water Resources Research 33(1), as used by Packman et al. 2000).
"""
from __future__ import annotations

import numpy as np

#: Standard gravity (m/s^2).
GRAVITY = 9.80665


def dynamic_head_amplitude(velocity: float, height: float, depth: float) -> float:
    """Amplitude h_m (m) of the dynamic head over bedforms.

    Parameters
    ----------
    velocity
        Mean stream velocity U (m/s).
    height
        Bedform height H (m).
    depth
        Stream depth d (m).
    """
    ratio = height / (0.34 * depth)
    exponent = 3.0 / 8.0 if height / depth <= 0.34 else 1.5
    return float(0.28 * velocity**2 / (2.0 * GRAVITY) * ratio**exponent)


def bedform_head(x: np.ndarray, amplitude: float, wavelength: float, phase: float = 0.0) -> np.ndarray:
    """The dynamic head ``amplitude cos(2 pi x / wavelength + phase)`` at positions ``x`` (m)."""
    return amplitude * np.cos(2.0 * np.pi * np.asarray(x, dtype=float) / wavelength + phase)
