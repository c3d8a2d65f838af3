"""Fault-loop selection and residual compensation."""

from __future__ import annotations

import numpy as np
import pytest

from eventlab.locate.loops import (
    compensated_current,
    fault_resistance_from_loop,
    loop_drop_currents,
    residual_compensation,
    select_loop,
)
from eventlab.symmetrical import abc_to_012, seq012_to_abc


def test_k0_definition():
    # k0 = (Z0 - Z1) / (3 Z1): IEEE Std C37.114-2014, residual compensation (from memory)
    z1, z0 = complex(3.0, 38.0), complex(26.0, 115.0)
    assert residual_compensation(z1, z0) == pytest.approx((z0 - z1) / (3 * z1), rel=1e-15)


@pytest.mark.parametrize("code, kind, phases", [
    ("AG", "ground", (0,)), ("BG", "ground", (1,)), ("CG", "ground", (2,)),
    ("AB", "phase", (0, 1)), ("BC", "phase", (1, 2)), ("CA", "phase", (2, 0)),
    ("ABG", "phase", (0, 1)), ("BCG", "phase", (1, 2)), ("CAG", "phase", (2, 0)),
    ("ABC", "positive", (0, 1, 2)),
])
def test_loop_selection(code, kind, phases):
    # common practice, no source: ground loop for 1-phase faults, phase loop otherwise
    loop = select_loop(code)
    assert (loop.kind, loop.phases) == (kind, phases)


def test_ground_loop_drop_equals_sequence_drop():
    # Fortescue: the phase-A drop of a transposed line is Z0 I0 + Z1 I1 + Z2 I2
    # (C. L. Fortescue, AIEE Trans. 37, 1918; common practice)
    rng = np.random.default_rng(3)
    i_abc = rng.normal(size=3) + 1j * rng.normal(size=3)
    z1, z0 = complex(0.03, 0.38) * 40, complex(0.26, 1.15) * 40
    i012 = abc_to_012(i_abc)
    expected = z0 * i012[0] + z1 * i012[1] + z1 * i012[2]
    i_z1, i_z0 = loop_drop_currents(i_abc, select_loop("AG"))
    assert z1 * i_z1 + z0 * i_z0 == pytest.approx(expected, rel=1e-12)
    k0 = residual_compensation(z1, z0)
    assert z1 * compensated_current(i_abc, select_loop("AG"), k0) == pytest.approx(expected,
                                                                                   rel=1e-12)


def test_phase_loop_has_no_zero_sequence():
    i_abc = seq012_to_abc(np.array([5.0 + 1j, 0.0, 0.0]))  # pure zero sequence
    i_z1, i_z0 = loop_drop_currents(i_abc, select_loop("BC"))
    assert abs(i_z1) < 1e-12 and i_z0 == 0


def test_resistance_conventions_follow_solver():
    # eventlab.network.faults: AB has Rf in total between the phases
    assert fault_resistance_from_loop("AB", 3.0) == 6.0
    assert fault_resistance_from_loop("ABG", 3.0) == 3.0
    assert fault_resistance_from_loop("AG", 3.0) == 3.0
    assert fault_resistance_from_loop("ABC", 3.0) == 3.0
