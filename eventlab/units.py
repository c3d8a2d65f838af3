"""Conversions at the edges: degrees, polar pairs, miles.

Inside eventlab phasors are complex RMS values and angles are radians; the
files and screens show magnitude and angle in degrees.  This is the one module
that converts.
"""

from __future__ import annotations

import math

import numpy as np

KM_PER_MILE = 1.609344  # international mile, exact by definition


def polar_deg(z: complex) -> list[float]:
    """Complex phasor -> ``[magnitude, angle in degrees]`` for JSON and screens."""
    z = complex(z)
    return [abs(z), math.degrees(math.atan2(z.imag, z.real))]


def from_polar_deg(magnitude: float, angle_deg: float) -> complex:
    """``magnitude`` and ``angle_deg`` [deg] -> complex phasor."""
    return complex(magnitude * np.exp(1j * math.radians(angle_deg)))


def wrap_deg(angle_deg: float) -> float:
    """Wrap an angle [deg] into (-180, 180]."""
    a = (angle_deg + 180.0) % 360.0 - 180.0
    return 180.0 if a == -180.0 else a


def km_to_miles(km: float) -> float:
    """[km] -> [mi]."""
    return km / KM_PER_MILE
