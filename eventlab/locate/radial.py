"""The fault fed from one end alone: the stage after the other end opened first.

With sequential clearing the far end's breaker opens first and the fault
stays on, fed through this end only, until this end's own protection trips
it (a zone-2 delay, say).  In that stage there is no remote infeed and no
load: this end's current is the fault current, less what the line's shunt
capacitance draws.  Propagating this end's sequence phasors along the line
to a trial point ``d`` (the exact equivalent pi per piece,
:func:`eventlab.locate.two_ended.to_fault`) gives the fault-point voltage
``V_f(d)`` and the current arriving from this side; the open remainder of
the line, from ``d`` to the open far end, draws ``Y_open(L - d) V_f(d)``
per sequence.  The fault current is then

    I_f(d) = I_arriving(d) - Y_open(L - d) V_f(d)

and the fault's loop (the same as the impedance methods',
:func:`eventlab.locate.loops.select_loop`) is purely resistive at the fault:

    Im[V_f,loop(d) conj(I_f,loop(d))] = 0                                   (1)

which is solved for ``d``; ``R_loop = Re(V_f,loop / I_f,loop)`` there.  Fault
resistance, the sources and the pre-fault load do not enter (1), so this is
exact for a transposed line whatever the network behind either end (common
practice, no source: the radial case in which the reactance principle is
exact, T. Takagi et al., IEEE Trans. PAS-101(8), 1982, from memory; here with
the line's capacitance).  What remains are the line parameters (Z0 for ground
faults) and the instrument transformers.  Zero-sequence mutual coupling to a
parallel circuit is not compensated; the estimate says so.
"""

from __future__ import annotations

import numpy as np

from eventlab.errors import SignalError
from eventlab.symmetrical import abc_to_012, seq012_to_abc

from .estimate import LocatorEstimate
from .inputs import TerminalPhasors
from .line import LineData
from .loops import fault_resistance_from_loop, loop_current, loop_voltage, select_loop
from .two_ended import roots_along, to_fault

_UNIT_V = np.ones(3, dtype=complex)
_NO_I = np.zeros(3, dtype=complex)


def open_line_admittance(line: LineData, length_km: float, omega: float) -> np.ndarray:
    """Sequence admittance [S] (0, 1, 2) looking into ``length_km`` of ``line`` open at its end.

    The line is taken from its to-end backwards, so ``line`` is the line seen
    from the end that stays closed; ``length_km`` is measured from the open
    (to-) end.  Zero for no length or a line without capacitance.
    """
    if length_km <= 0.0:
        return np.zeros(3, dtype=complex)
    far = line.reversed()
    v, i = to_fault(far, length_km, _UNIT_V, _NO_I, omega)
    # ``i`` arrives at the point from the open side: the stub draws its negative
    return -i / v


def stage_loop(end: TerminalPhasors, line: LineData, d_km: float) -> tuple[complex, complex]:
    """Loop voltage [V] and fault current [A] at ``d_km`` in the stage with the other end open.

    ``V_f,loop(d)`` and ``I_f,loop(d)`` of (1) (module notes), from the end's
    ``v_remote_open``, ``i_remote_open``; ``d_km`` is clamped to the line.
    """
    length = line.length_km
    d = min(max(float(d_km), 0.0), length)
    loop = select_loop(end.fault_type)
    vf, i_arr = to_fault(line, d, abc_to_012(end.v_remote_open),
                         abc_to_012(end.i_remote_open), end.omega)
    i_f = i_arr - open_line_admittance(line, length - d, end.omega) * vf
    return loop_voltage(seq012_to_abc(vf), loop), loop_current(seq012_to_abc(i_f), loop)


def radial_stage(end: TerminalPhasors, line: LineData) -> LocatorEstimate:
    """Locate from the stage of the fault after the other end opened first.

    Parameters
    ----------
    end : TerminalPhasors
        Phasors of the terminal at ``line``'s from-end, with ``v_remote_open``
        and ``i_remote_open`` (the stage fed from this end alone) [V], [A].
    line : LineData
        The line seen from that end, with its capacitance where the model
        gives it.

    Returns
    -------
    LocatorEstimate
        Distance [km] and fault resistance [ohm] (see the module notes).

    Raises
    ------
    SignalError
        When the end has no such stage, or (1) has no root on the line.
    """
    if end.i_remote_open is None or end.v_remote_open is None:
        raise SignalError(f"{end.station}: no stage of the fault with the other end open "
                          f"(the other end did not open first, or that stage was shorter "
                          f"than two cycles)")
    loop = select_loop(end.fault_type)
    length = line.length_km

    def g(d: float) -> float:
        v_l, i_l = stage_loop(end, line, d)
        # continued beyond the ends with the line's slope, so a point just outside
        # (measurement error) still gives a root
        return float((v_l * np.conj(i_l)).imag / max(abs(i_l) ** 2, 1e-300)) \
            - (d - min(max(d, 0.0), length)) * abs(line.z_to(length)[0]) / length

    roots = roots_along(g, length)
    if not roots:
        raise SignalError(f"{end.station}: the stage with the other end open has no "
                          f"resistive fault point on line {line.line_id}")
    # the root nearest the line
    d = min(roots, key=lambda x: max(-x, x - length, 0.0))
    v_l, i_l = stage_loop(end, line, d)
    if abs(i_l) < 1e-9:
        raise SignalError(f"{end.station}: no fault current in the stage with the other end "
                          f"open")
    r_f = fault_resistance_from_loop(end.fault_type, (v_l / i_l).real)
    notes = [f"loop {loop.name}",
             "the stage after the other end opened first: this end's current is the "
             "fault current less the open line's charging; sources and load do not enter"]
    if loop.kind == "ground" and line.z0m_ohm_per_km != 0:
        notes.append(f"mutual coupling with {line.parallel_line or 'the parallel circuit'} "
                     f"not compensated in this stage")
    return LocatorEstimate("radial_stage", float(d), length,
                           terminal=end.terminal_id or line.from_terminal,
                           fault_resistance_ohm=float(r_f), notes=tuple(notes),
                           extra={"stage_window_start_s": end.remote_open_start_s})
