"""Fault loops: which voltage and currents a locator uses for a fault type.

For a transposed line the voltage drop of phase ``p`` over the stretch from
the terminal to distance ``d`` is, with sequence currents phase-``p`` referred,

    dV_p = Z1(d) I1 + Z2(d) I2 + Z0(d) I0 = Z1(d) (I_p - I0) + Z0(d) I0
         = Z1(d) (I_p + k0 3 I0),   k0 = (Z0 - Z1) / (3 Z1)   (homogeneous line)

(the residual-compensated phase-to-ground loop of distance protection;
IEEE Std C37.114-2014, the guide for fault location, from memory).  The phase-to-phase
loop ``p - q`` has no zero-sequence term, and the three-phase fault is
measured on the positive-sequence loop.  A loop is therefore described by
its voltage and the two currents that multiply ``Z1(d)`` and ``Z0(d)``.

Loop choice (common practice, no source): single-phase-to-ground faults use
the faulted phase's ground loop; phase-to-phase and two-phase-to-ground
faults use the loop between the two faulted phases (its drop and fault
voltage do not involve the ground path); three-phase faults use the
positive-sequence loop.

Mutual coupling (zero sequence, a parallel circuit over the whole route):
the ground loop's drop gains ``Z0m(d) I0,par`` with ``I0,par`` the
zero-sequence current into the parallel circuit at the same bus, so the
compensated current becomes ``I_p + k0 3 I0 + k0m 3 I0,par`` with
``k0m = Z0m / (3 Z1)`` (mutual coupling compensation of ground distance
elements; IEEE Std C37.114-2014, from memory).  Phase loops have no
zero-sequence term and are unaffected.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from eventlab.faulttypes import check_fault_type, faulted_phases
from eventlab.symmetrical import abc_to_012

from .line import LineData

LoopKind = Literal["ground", "phase", "positive"]
_NAMES = "ABC"


@dataclass(frozen=True)
class LoopSpec:
    """The loop measured for a fault type: ``kind`` and the phases involved."""

    kind: LoopKind
    phases: tuple[int, ...]

    @property
    def name(self) -> str:
        if self.kind == "ground":
            return f"{_NAMES[self.phases[0]]}G"
        if self.kind == "phase":
            return f"{_NAMES[self.phases[0]]}{_NAMES[self.phases[1]]}"
        return "positive sequence"


def select_loop(fault_type: str) -> LoopSpec:
    """The loop a locator measures for ``fault_type`` (see module notes)."""
    code = check_fault_type(fault_type)
    ph = faulted_phases(code)
    if code == "ABC":
        return LoopSpec("positive", (0, 1, 2))
    if len(ph) == 1:
        return LoopSpec("ground", ph)
    # pairs in the trade's order AB, BC, CA
    pair = {(0, 1): (0, 1), (1, 2): (1, 2), (0, 2): (2, 0)}[ph]
    return LoopSpec("phase", pair)


def residual_compensation(z1: complex, z0: complex) -> complex:
    """Residual (zero-sequence) compensation factor ``k0 = (Z0 - Z1) / (3 Z1)`` [-]."""
    return complex((z0 - z1) / (3.0 * z1))


def loop_voltage(v_abc: np.ndarray, loop: LoopSpec) -> complex:
    """Loop voltage [V]: ``V_p``, ``V_p - V_q`` or ``V1``."""
    v = np.asarray(v_abc, dtype=complex)
    if loop.kind == "ground":
        return complex(v[loop.phases[0]])
    if loop.kind == "phase":
        return complex(v[loop.phases[0]] - v[loop.phases[1]])
    return complex(abc_to_012(v)[1])


def loop_current(i_abc: np.ndarray, loop: LoopSpec) -> complex:
    """Plain loop current [A]: ``I_p``, ``I_p - I_q`` or ``I1`` (no compensation)."""
    return loop_voltage(i_abc, loop)


def loop_drop_currents(i_abc: np.ndarray, loop: LoopSpec) -> tuple[complex, complex]:
    """Currents ``(i_z1, i_z0)`` [A] with ``drop = Z1(d) i_z1 + Z0(d) i_z0``."""
    i = np.asarray(i_abc, dtype=complex)
    if loop.kind == "ground":
        i0 = complex(abc_to_012(i)[0])
        return complex(i[loop.phases[0]]) - i0, i0
    return loop_current(i, loop), 0j


def mutual_drop_current(i_parallel_residual: complex | None, loop: LoopSpec) -> complex:
    """Current ``i_zm`` [A] multiplying ``Z0m(d)`` in the loop's drop.

    ``I0,par = 3 I0,par / 3`` for ground loops (the parallel circuit's
    residual current into it at the same bus), zero for phase loops and when
    the parallel circuit's current is not recorded.
    """
    if loop.kind != "ground" or i_parallel_residual is None:
        return 0j
    return complex(i_parallel_residual) / 3.0


def loop_drop(line: LineData, d_km: float, i_abc: np.ndarray, loop: LoopSpec,
              i_zm: complex = 0j) -> complex:
    """Voltage drop [V] of the loop from the line's from-end to ``d_km``.

    ``i_zm``: see :func:`mutual_drop_current`.
    """
    i_z1, i_z0 = loop_drop_currents(i_abc, loop)
    z1, z0 = line.z_to(d_km)
    return z1 * i_z1 + z0 * i_z0 + line.z0m_to(d_km) * i_zm


def compensated_current(i_abc: np.ndarray, loop: LoopSpec, k0: complex) -> complex:
    """Residual-compensated loop current ``I_p + k0 3 I0`` [A] (phase loops: ``I_p - I_q``)."""
    i_z1, i_z0 = loop_drop_currents(i_abc, loop)
    # I_p + k0 3 I0 = (I_p - I0) + (1 + 3 k0) I0 = i_z1 + (Z0/Z1) i_z0
    return i_z1 + (1.0 + 3.0 * k0) * i_z0


def superimposed_fault_factor(loop: LoopSpec, d1: complex, d0: complex) -> complex:
    """Ratio of the local superimposed loop current to the loop's fault current.

    With current distribution factors ``D1 = D2`` (positive/negative) and
    ``D0`` (zero sequence) -- the share of the fault current coming from this
    end -- a single-phase-to-ground fault has ``I_f0 = I_f1 = I_f2 = I_f / 3``
    and ``dI_p = (2 D1 + D0) I_f / 3``; phase and positive-sequence loops have
    ``dI_loop = D1 I_f,loop`` (no zero sequence in the loop).
    """
    if loop.kind == "ground":
        return (2.0 * d1 + d0) / 3.0
    return complex(d1)


def fault_resistance_from_loop(fault_type: str, r_loop_ohm: float) -> float:
    """Fault resistance [ohm] as the fault solver defines it, from the loop's resistance.

    ``r_loop_ohm`` is the ratio (real part) of the loop's fault voltage to the
    loop's fault current.  The solver's conventions
    (:mod:`eventlab.network.faults`): AG ``V_f,p = R_f I_f,p`` (factor 1);
    AB ``R_f`` is the total resistance between the phases, so
    ``V_f,p - V_f,q = R_f I_f,p = (R_f / 2)(I_f,p - I_f,q)`` (factor 2); ABG
    ``R_f`` in each phase to a common point, ``V_f,p - V_f,q = R_f (I_f,p - I_f,q)``
    (factor 1); ABC ``R_f`` per phase, ``V_f1 = R_f I_f1`` (factor 1).
    """
    code = check_fault_type(fault_type)
    factor = 2.0 if select_loop(code).kind == "phase" and not code.endswith("G") else 1.0
    return float(r_loop_ohm) * factor
