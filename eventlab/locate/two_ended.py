"""Two-ended methods: both terminals' fault-window phasors.

For a short (series-impedance) line the fault-point voltage seen from both
ends is the same:

    V_L - Z(d) I_L = V_R - (Z_L - Z(d)) I_R                                 (1)

per sequence (the sequence networks of a transposed line are decoupled), with
``I_L`` and ``I_R`` the currents into the line at the two ends.  Fault
resistance, load and source impedances do not enter (1).  With time-aligned
records (1) is solved directly for ``d``; without, the remote phasors carry an
unknown rotation ``exp(j delta)`` that the magnitudes of both sides of (1)
eliminate.

Line charging: where the model gives shunt capacitance, each piece of line
between a terminal, the section joints and the fault point is its exact
equivalent pi (the distributed line, :mod:`eventlab.network.longline`), the
same representation as the network model's fault solver; ``V_f(d)`` and the current arriving at
the fault are then propagated piece by piece from each end per sequence, and
(1) becomes ``V_f,L(d) = V_f,R(L - d)``.  Without capacitance this reduces to
the series form above.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from eventlab.errors import SignalError
from eventlab.network.longline import equivalent_pi
from eventlab.symmetrical import abc_to_012, seq012_to_abc

from .estimate import LocatorEstimate
from .inputs import TerminalPhasors
from .line import LineData
from .loops import fault_resistance_from_loop, loop_current, loop_voltage, select_loop


@dataclass(frozen=True)
class SyncCheck:
    """How well the two records' clocks agree.

    Attributes
    ----------
    offset_s : float or None
        Remote minus local absolute inception instant [s] (None when a record
        lacks a start time or an inception).
    offset_samples : float or None
        The same in samples of the local record.
    synchronised : bool
        True when the records carry absolute times and ``|offset_s|`` is
        within the tolerance.
    reason : str
        Plain words for the report.
    """

    offset_s: float | None
    offset_samples: float | None
    synchronised: bool
    reason: str
    # the remote pre-fault V1 against the local one carried along the line, after the
    # alignment by the clocks [deg]; turned back when beyond the limit (``realigned``)
    prefault_angle_deg: float | None = None
    realigned: bool = False

    def to_dict(self) -> dict:
        return {"offset_s": self.offset_s, "offset_samples": self.offset_samples,
                "synchronised": self.synchronised, "reason": self.reason,
                "prefault_angle_deg": self.prefault_angle_deg, "realigned": self.realigned}


def sync_check(local: TerminalPhasors, remote: TerminalPhasors,
               max_offset_s: float = 0.5e-3) -> SyncCheck:
    """Compare the two ends' inception instants in absolute time.

    The inception instant is detected to within about a sample at each end;
    an offset larger than ``max_offset_s`` and than one and a half samples
    means the clocks are not aligned.
    """
    t_l = local.absolute_time(local.inception_s)
    t_r = remote.absolute_time(remote.inception_s)
    if t_l is None or t_r is None:
        return SyncCheck(None, None, False,
                         "a record lacks a start time or a detected inception; "
                         "records treated as not synchronised")
    if local.phasor_time_s is None or remote.phasor_time_s is None:
        return SyncCheck(None, None, False, "phasor reference instants not given; "
                         "records treated as not synchronised")
    off = (t_r - t_l).total_seconds()
    spc = local.samples_per_cycle
    off_samples = None if spc is None else off * spc * local.frequency_hz
    # each end's inception is found to within about a sample: allow one and a
    # half samples of the coarser record beyond the stated tolerance
    rates = [e.samples_per_cycle * e.frequency_hz for e in (local, remote)
             if e.samples_per_cycle]
    limit = max(max_offset_s, 1.5 / min(rates)) if rates else max_offset_s
    ok = abs(off) <= limit
    if ok:
        why = (f"inception instants agree within {abs(off) * 1e3:.3f} ms; "
               "records used as time-aligned")
    else:
        why = (f"inception instants differ by {off * 1e3:.3f} ms (more than "
               f"{limit * 1e3:.3f} ms); clocks not aligned, unsynchronised method used")
    return SyncCheck(off, off_samples, ok, why)


def align_remote(local: TerminalPhasors, remote: TerminalPhasors) -> TerminalPhasors:
    """Refer the remote phasors to the local phasor instant using the record clocks.

    ``X_R' = X_R exp(j w (t_L - t_R))`` with ``t_L``, ``t_R`` the absolute
    phasor reference instants.
    """
    t_l = local.absolute_time(local.phasor_time_s)
    t_r = remote.absolute_time(remote.phasor_time_s)
    if t_l is None or t_r is None:
        raise SignalError("two-ended synchronised: a record lacks record_start or phasor_time_s")
    return remote.rotated(local.omega * (t_l - t_r).total_seconds())


def _sequence_for(fault_type: str) -> int:
    """Negative sequence for unbalanced faults, positive for three-phase."""
    return 1 if fault_type == "ABC" else 2


def to_fault(line: LineData, d_km: float, v_012: np.ndarray, i_012: np.ndarray,
             omega: float) -> tuple[np.ndarray, np.ndarray]:
    """Sequence voltage at ``d_km`` and the current arriving there from the from-end.

    Parameters
    ----------
    line : LineData
    d_km : float
        Distance from the from-end [km] (clamped to the line).
    v_012, i_012 : complex array (3,)
        Sequence voltage [V] and current into the line [A] at the from-end.
    omega : float
        Angular frequency [rad/s] for the shunt admittance.

    Returns
    -------
    v_f_012, i_f_012 : complex arrays (3,)
        Voltage at ``d_km`` [V] and the current leaving the last piece into the
        point [A] (the piece's half shunt at that point already taken).

    Notes
    -----
    Equivalent pi per piece (exact for the distributed line,
    :func:`eventlab.network.longline.equivalent_pi`): ``I_s = I - (Y'/2) V``,
    ``V' = V - Z' I_s``, ``I' = I_s - (Y'/2) V'`` with ``Z'``, ``Y'/2`` from
    ``Z = z l`` and ``Y = j w c l`` (c1 for the positive and negative, c0 for
    the zero sequence).
    """
    v = np.array(v_012, dtype=complex)
    i = np.array(i_012, dtype=complex)
    d = float(np.clip(d_km, 0.0, line.length_km))
    start = 0.0
    for sec in line.sections:
        end = start + sec.length_km
        piece = min(end, d) - start
        if piece > 0:
            z = np.array([sec.z0_ohm_per_km, sec.z1_ohm_per_km, sec.z1_ohm_per_km]) * piece
            c = np.array([sec.c0_nf_per_km, sec.c1_nf_per_km, sec.c1_nf_per_km]) * 1e-9 * piece
            z, half = equivalent_pi(z, 1j * omega * c)
            i_s = i - half * v
            v = v - z * i_s
            i = i_s - half * v
        if end >= d:
            break
        start = end
    return v, i


def _sides(local: TerminalPhasors, remote: TerminalPhasors, line: LineData):
    """``d -> (V_f from local, V_f from remote, I arriving from local, from remote)``.

    Sequence quantities (3,) at distance ``d`` [km] from the local end; the
    ends' sequence phasors are taken once, for the many ``d`` a search tries.
    """
    w = local.omega
    vl0, il0 = abc_to_012(local.v_fault), abc_to_012(local.i_fault)
    vr0, ir0 = abc_to_012(remote.v_fault), abc_to_012(remote.i_fault)
    far = LineData(line.line_id, tuple(reversed(line.sections)))  # structures not needed
    length = line.length_km

    def at(d: float):
        vl, il = to_fault(line, d, vl0, il0, w)
        vr, ir = to_fault(far, length - d, vr0, ir0, w)
        return vl, vr, il, ir

    return at


def _both_sides(local: TerminalPhasors, remote: TerminalPhasors, line: LineData, d: float):
    """(V_f from local, V_f from remote, I arriving from local, from remote), sequence (3,)."""
    return _sides(local, remote, line)(d)


def _resistance(local: TerminalPhasors, remote_aligned: TerminalPhasors, line: LineData,
                d_km: float) -> float:
    loop = select_loop(local.fault_type)
    vl, _, il, ir = _both_sides(local, remote_aligned, line, d_km)
    v_f = loop_voltage(seq012_to_abc(vl), loop)
    i_f = loop_current(seq012_to_abc(il + ir), loop)
    r_loop = (v_f * np.conj(i_f)).real / max(abs(i_f) ** 2, 1e-300)
    return fault_resistance_from_loop(local.fault_type, r_loop)


def roots_along(fun, length: float, n: int = 141) -> list[float]:
    """Roots of ``fun(d)`` for d in -0.2 .. 1.2 of ``length`` (grid of ``n``, then brentq)."""
    grid = np.linspace(-0.2 * length, 1.2 * length, n)
    vals = np.array([fun(x) for x in grid])
    return [brentq(fun, grid[k], grid[k + 1], xtol=1e-12 * length)
            for k in range(n - 1) if vals[k] == 0 or vals[k] * vals[k + 1] < 0]


def two_ended_synchronised(local: TerminalPhasors, remote: TerminalPhasors, line: LineData,
                           *, aligned: bool = False) -> LocatorEstimate:
    """Two-ended method with time-aligned records (positive sequence).

    Parameters
    ----------
    local, remote : TerminalPhasors
        Phasors of the from-end and the to-end of ``line`` [V], [A].
    line : LineData
        The line seen from ``local``.
    aligned : bool
        True when ``remote`` is already referred to the local phasor instant;
        otherwise it is aligned with :func:`align_remote`.

    Notes
    -----
    Equation (1) on positive-sequence quantities: ``d`` minimises
    ``|V_f,L(d) - V_f,R(L - d)|`` (for a series line
    ``d = Re(a conj(b)) / |b|^2`` with ``a = V_L - V_R + Z_L I_R``,
    ``b = z1 (I_L + I_R)``).  The fault resistance follows from the fault
    loop: ``R = Re(V_f / I_f)`` with ``I_f`` the sum of the currents arriving
    from both sides.  Source: IEEE Std C37.114-2014, two-ended methods (from
    memory); A. A. Girgis, D. G. Hart, W. L. Peterson, "A new fault location
    technique for two- and three-terminal lines", IEEE Trans. Power Delivery
    7(1), 1992 (from memory).
    """
    rem = remote if aligned else align_remote(local, remote)
    s = abc_to_012(local.i_fault)[1] + abc_to_012(rem.i_fault)[1]
    if abs(s) < 1e-9:
        raise SignalError("two-ended: the sum of the end currents is zero; no fault current")
    length = line.length_km

    sides = _sides(local, rem, line)

    def mismatch(d):
        vl, vr, _, _ = sides(d)
        return abs(vl[1] - vr[1])

    grid = np.linspace(0.0, length, 41)
    vals = [mismatch(x) for x in grid]
    k = int(np.argmin(vals))
    lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
    d = float(minimize_scalar(mismatch, bounds=(lo, hi), method="bounded",
                              options={"xatol": 1e-9 * length}).x)
    return LocatorEstimate("two_ended_sync", d, length,
                           terminal=local.terminal_id or line.from_terminal,
                           fault_resistance_ohm=_resistance(local, rem, line, d),
                           notes=("positive-sequence quantities, time-aligned records",),
                           extra={"mismatch_v": float(mismatch(d))})


def _pick_root(roots, local, remote, line, seq, delta_pre):
    """Of two roots on the line keep the physical one.

    The fault impedance ``V_f / I_f`` of the fault loop is resistive at the
    true distance and not at the other root; for a (nearly) bolted fault, where
    both look alike, the rotation must agree with the one the pre-fault
    through current gives (``I_L,pre = -I_R,pre``).
    """
    zl = line.z1_ohm
    loop = select_loop(local.fault_type)
    scores = []
    for r in roots:
        vl, vr, _, _ = _both_sides(local, remote, line, r)
        delta = float(np.angle(vl[seq] / vr[seq])) if abs(vr[seq]) > 0 else 0.0
        vl, _, il, ir = _both_sides(local, remote.rotated(delta), line, r)
        v_f = loop_voltage(seq012_to_abc(vl), loop)
        i_f = loop_current(seq012_to_abc(il + ir), loop)
        z_f = v_f / i_f if abs(i_f) > 0 else 0j
        score = abs(z_f.imag) / max(abs(z_f), 1e-12 * abs(zl))
        if abs(z_f) < 1e-3 * abs(zl) and delta_pre is not None:
            score = abs(np.angle(np.exp(1j * (delta - delta_pre))))
        scores.append((score, abs(r - line.length_km / 2), r))
    return min(scores)[2]


#: largest difference of the two sides' fault-point voltage magnitudes, as a fraction
#: of the larger terminal voltage of the sequence used, at which their closest
#: approach is taken for the fault when they touch without crossing (a nearly bolted
#: three-phase fault: a simulated 1-ohm A-B-C fault at 25 % of the line left 0.2 %)
UNSYNC_TOUCH_REL = 0.02


def two_ended_unsynchronised(local: TerminalPhasors, remote: TerminalPhasors,
                             line: LineData) -> LocatorEstimate:
    """Two-ended method without time alignment.

    Notes
    -----
    The magnitudes of both sides of (1) are equal whatever the rotation:

        |V_f,L(d)| = |V_f,R(L - d)|   (series line: |V_L - Z(d) I_L| = |V_R - (Z_L - Z(d)) I_R|)  (2)

    with negative-sequence quantities for unbalanced faults and positive-sequence
    quantities for three-phase faults; (2) is a quadratic in ``d`` for a
    homogeneous series line, solved here by bracketing along the route.  The
    rotation ``delta = angle(V_f,L / V_f,R)`` gives the fault resistance as for
    the synchronised method.  Of two roots on the line the one with a
    resistive fault impedance is kept.  Source: D. Novosel, D. G. Hart,
    E. Udren, J. Garitty, "Unsynchronized two-terminal fault location
    estimation", IEEE Trans. Power Delivery 11(1), pp. 130-138, 1996 (from
    memory).
    """
    seq = _sequence_for(local.fault_type)
    length = line.length_km
    sides = _sides(local, remote, line)
    touch = False

    def g(d):
        vl, vr, _, _ = sides(d)
        return abs(vl[seq]) ** 2 - abs(vr[seq]) ** 2

    i1_pre_l, i1_pre_r = abc_to_012(local.i_pre)[1], abc_to_012(remote.i_pre)[1]
    have_pre = abs(i1_pre_r) > 1e-9 and abs(i1_pre_l) > 1e-9
    delta_pre = float(np.angle(-i1_pre_l / i1_pre_r)) if have_pre else None
    roots = roots_along(g, length)
    if roots:
        inside = [r for r in roots if 0.0 <= r <= length] or [
            min(roots, key=lambda r: min(abs(r), abs(r - length)))]
        if len(inside) > 1 and delta_pre is not None:
            # the pre-fault through current gives the rotation roughly
            # (line charging aside): keep the root nearest to the distance it
            # gives, unless the fault impedance tells them apart clearly
            d_pre = two_ended_synchronised(local, remote.rotated(delta_pre), line,
                                           aligned=True).distance_km
            d_r = _pick_root(inside, local, remote, line, seq, delta_pre)
            d_n = min(inside, key=lambda r: abs(r - d_pre))
            d = d_r if abs(d_r - d_pre) <= 0.05 * length else d_n
        elif len(inside) > 1:
            d = _pick_root(inside, local, remote, line, seq, delta_pre)
        else:
            d = inside[0]
    else:
        # a double root (both sides vanish at the fault: bolted three-phase fault)
        grid = np.linspace(0.0, length, 201)
        vals = np.abs([g(x) for x in grid])
        k = int(np.argmin(vals))
        lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
        d = float(minimize_scalar(lambda x: abs(g(x)), bounds=(lo, hi), method="bounded",
                                  options={"xatol": 1e-10 * length}).x)
        v_l = abc_to_012(local.v_fault)[seq]
        v_r = abc_to_012(remote.v_fault)[seq]
        scale = max(abs(v_l), abs(v_r), 1e-300)
        vl_d, vr_d, _, _ = sides(d)
        # measured phasors make the two sides touch rather than cross: take the
        # closest approach when the fault-point voltages agree there within
        # UNSYNC_TOUCH_REL of the terminal voltage
        if abs(abs(vl_d[seq]) - abs(vr_d[seq])) > UNSYNC_TOUCH_REL * scale:
            raise SignalError("two-ended unsynchronised: no distance satisfies the equation "
                              "near the line; check the pairing of the records with the ends")
        touch = True
    d = float(np.clip(d, 0.0, length)) if -0.01 * length < d < 1.01 * length else d
    vl, vr, _, _ = _both_sides(local, remote, line, d)
    v_scale = max(abs(abc_to_012(local.v_fault)[seq]), abs(abc_to_012(remote.v_fault)[seq]),
                  1e-300)
    v_pre_scale = max(abs(abc_to_012(local.v_pre)[1]), 1e-300)
    if delta_pre is not None and abs(vl[seq]) < 0.05 * v_pre_scale:
        # the fault-point voltage is too small to carry the angle (a nearly
        # bolted fault): the pre-fault through current gives it
        delta = delta_pre
    elif abs(vr[seq]) > 1e-6 * v_scale:
        delta = float(np.angle(vl[seq] / vr[seq]))
    elif delta_pre is not None:
        delta = delta_pre
    else:
        delta = 0.0
    rem = remote.rotated(delta)
    seq_name = "negative" if seq == 2 else "positive"
    return LocatorEstimate("two_ended_unsync", d, line.length_km,
                           terminal=local.terminal_id or line.from_terminal,
                           fault_resistance_ohm=_resistance(local, rem, line, d),
                           notes=(f"{seq_name}-sequence quantities, unknown angle solved",)
                           + (("the two sides touch rather than cross (a nearly bolted "
                               "fault): their closest approach taken",) if touch else ()),
                           extra={"sync_angle_deg": float(np.degrees(delta))})


def two_ended_uncertainty(local: TerminalPhasors, remote: TerminalPhasors, line: LineData, *,
                          synchronised: bool, ct_sigma: tuple[float, float],
                          vt_sigma: tuple[float, float], z1_tolerance: float,
                          time_sigma_s: float = 50e-6) -> dict[str, float]:
    """One-sigma contributions [km] to the two-ended distance, by linearisation.

    Each of: ratio and phase error of each end's CT and VT set (``ct_sigma``,
    ``vt_sigma`` as ``(ratio [-], phase [rad])`` standard deviations), the line
    Z1 tolerance, and for synchronised records the clock alignment
    ``time_sigma_s`` [s], is perturbed by a small step and the distance
    recomputed: ``s_d = |dd/dc| s_c``.  ``remote`` must already be aligned
    when ``synchronised``.
    """
    def solve(lo, re, ln):
        if synchronised:
            return two_ended_synchronised(lo, re, ln, aligned=True).distance_km
        return two_ended_unsynchronised(lo, re, ln).distance_km

    d0 = solve(local, remote, line)
    h = 1e-5
    parts: dict[str, float] = {}

    def scaled(e, ct=1.0, vt=1.0):
        return replace(e, v_pre=e.v_pre * vt, v_fault=e.v_fault * vt,
                       i_pre=e.i_pre * ct, i_fault=e.i_fault * ct)

    for label, idx in (("local", 0), ("remote", 1)):
        for name, ct, vt, s in (("CT ratio", 1 + h, 1.0, ct_sigma[0]),
                                ("CT phase", np.exp(1j * h), 1.0, ct_sigma[1]),
                                ("VT ratio", 1.0, 1 + h, vt_sigma[0]),
                                ("VT phase", 1.0, np.exp(1j * h), vt_sigma[1])):
            ends = [local, remote]
            ends[idx] = scaled(ends[idx], ct, vt)
            parts[f"{name} {label}"] = abs(solve(ends[0], ends[1], line) - d0) / h * s
    parts["line Z1"] = abs(solve(local, remote, line.scaled(1 + h, 1 + h)) - d0) / h * z1_tolerance
    if synchronised:
        rot = local.omega * h * 1e-3
        parts["time alignment"] = (abs(solve(local, remote.rotated(rot), line) - d0)
                                   / (h * 1e-3) * time_sigma_s)
    return parts
