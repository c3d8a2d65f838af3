"""Whether an end's measurements can be trusted: its own direction, and the two ends together.

Two checks that need no fault model:

* **Direction at one end** (:func:`direction_check`).  For a fault on the
  line, ``Z = -dV/dI`` at its end (negative sequence for an unbalanced fault,
  the superimposed positive sequence for a three-phase one) is the source
  impedance behind the bus, in the first quadrant; an end whose CT set is
  wired with the polarity reversed reads it in the third (the principle of a
  directional element; common practice, no source).
* **The two ends' pre-fault state** (:func:`prefault_agreement`).  The local
  end's positive-sequence voltage and current, carried along the line (exact
  equivalent pi per piece), give the voltage and the current the other end
  must see.  Magnitudes and the power-factor angle need no common clock, so a
  CT or VT ratio error at either end shows as a ratio off 1.

Which end is wrong when the ends disagree (:func:`suspect_end`): a ratio
error of ``k`` scales the apparent source impedance ``-dV/dI`` at that end by
``1/k`` (CT) or ``k`` (VT) against the model's, while the other end's stays
where the model has it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eventlab.errors import ModelError
from eventlab.symmetrical import abc_to_012

from .inputs import TerminalPhasors
from .line import LineData
from .model_link import external_two_port, line_from, pair_ends
from .two_ended import to_fault

#: an angle of ``-dV/dI`` in this range [deg] reads a fault behind the bus: with the
#: CT polarity reversed the source impedance's 60-90 deg become -120..-90 deg (the
#: directional element's principle; the margins common practice, no source)
REVERSE_ANGLE_RANGE = (-175.0, -5.0)
#: the sequence current judged must be at least this fraction of the end's largest
#: fault-window phase current (a weak or absent infeed leaves only charging current;
#: common practice, no source)
DIRECTION_MIN_CURRENT = 0.05
#: limits of the pre-fault agreement (common practice, no source): VTs of class 3P
#: and better are within 3 %, protective CTs within a few per cent at load, the
#: line's constants within a few per cent of the drop and the charging
VOLTAGE_RATIO_LIMIT = 0.05
CURRENT_RATIO_LIMIT = 0.10
PF_ANGLE_LIMIT_DEG = 10.0
#: the current agreement is judged only where the pre-fault current is at least this
#: fraction of the end's largest fault-window phase current (common practice, no source)
PREFAULT_MIN_CURRENT = 0.02


def has_prefault(end: TerminalPhasors) -> bool:
    """Whether an end's pre-fault phasors were measured (none: zeros)."""
    return bool(np.all(np.isfinite(end.i_pre)) and np.any(np.abs(end.i_pre) > 0)
                and np.all(np.isfinite(end.v_pre)) and np.any(np.abs(end.v_pre) > 0))


def source_impedance_seen(end: TerminalPhasors) -> complex | None:
    """``-dV/dI`` at an end [ohm]: the source impedance behind its bus for a fault ahead.

    Negative sequence for unbalanced faults, the superimposed positive sequence
    for three-phase faults (None without pre-fault phasors); None where the
    sequence current is under :data:`DIRECTION_MIN_CURRENT` of the end's
    largest fault-window phase current.  Currents are into the line.
    """
    if end.fault_type == "ABC":
        if not has_prefault(end):
            return None
        dv = abc_to_012(end.v_fault)[1] - abc_to_012(end.v_pre)[1]
        di = abc_to_012(end.i_fault)[1] - abc_to_012(end.i_pre)[1]
    else:
        dv, di = abc_to_012(end.v_fault)[2], abc_to_012(end.i_fault)[2]
    i_max = float(np.max(np.abs(end.i_fault)))
    if not (np.isfinite(di) and np.isfinite(dv)) or not abs(di) > DIRECTION_MIN_CURRENT * i_max \
            or abs(dv) == 0.0:
        return None
    return complex(-dv / di)


def direction_check(end: TerminalPhasors) -> tuple[str, float] | None:
    """``("forward" | "reverse", angle of -dV/dI [deg])`` at an end, or None (not judged)."""
    z = source_impedance_seen(end)
    if z is None:
        return None
    angle = math.degrees(math.atan2(z.imag, z.real))
    lo, hi = REVERSE_ANGLE_RANGE
    return ("reverse" if lo <= angle <= hi else "forward"), angle


@dataclass(frozen=True)
class PrefaultAgreement:
    """The remote end's pre-fault state measured against the local end's carried along.

    ``v_ratio``, ``i_ratio``: measured over expected magnitudes of the remote
    end's positive-sequence voltage and current (``i_ratio`` None when the load
    current is too small to judge); ``pf_angle_diff_deg``: the angle of
    ``V1 / I1`` measured minus expected [deg] (None with ``i_ratio``).
    """

    v_ratio: float
    i_ratio: float | None
    pf_angle_diff_deg: float | None
    # angle of the measured over the expected remote V1 [deg]: meaningful only for
    # records on one clock (the phase offset that remains after their alignment)
    v_angle_deg: float = 0.0

    @property
    def agrees(self) -> bool:
        ok = abs(self.v_ratio - 1.0) <= VOLTAGE_RATIO_LIMIT
        if self.i_ratio is not None:
            ok = ok and abs(self.i_ratio - 1.0) <= CURRENT_RATIO_LIMIT
            ok = ok and abs(self.pf_angle_diff_deg) <= PF_ANGLE_LIMIT_DEG
        return ok

    def words(self) -> str:
        parts = [f"voltage {self.v_ratio:.3f}"]
        if self.i_ratio is not None:
            parts += [f"current {self.i_ratio:.3f}",
                      f"power-factor angle {self.pf_angle_diff_deg:+.1f} deg"]
        return "measured / expected at the remote end: " + ", ".join(parts)


def prefault_agreement(local: TerminalPhasors, remote: TerminalPhasors,
                       line: LineData) -> PrefaultAgreement | None:
    """Check the remote end's pre-fault V1, I1 against the local end's carried along ``line``.

    ``line`` runs from the local end.  None when either end has no pre-fault
    phasors.
    """
    if not (has_prefault(local) and has_prefault(remote)):
        return None
    v012 = abc_to_012(local.v_pre)
    i012 = abc_to_012(local.i_pre)
    v_far, i_far = to_fault(line, line.length_km, v012, i012, local.omega)
    v_exp, i_exp = complex(v_far[1]), -complex(i_far[1])       # into the line at the far end
    v_meas = complex(abc_to_012(remote.v_pre)[1])
    i_meas = complex(abc_to_012(remote.i_pre)[1])
    v_ratio = abs(v_meas) / abs(v_exp) if abs(v_exp) > 0 else math.inf
    floor = PREFAULT_MIN_CURRENT * max(float(np.max(np.abs(local.i_fault))),
                                       float(np.max(np.abs(remote.i_fault))))
    v_angle = math.degrees(np.angle(v_meas / v_exp)) if abs(v_exp) > 0 else 0.0
    if min(abs(i_exp), abs(i_meas), abs(complex(i012[1]))) <= floor:
        return PrefaultAgreement(v_ratio, None, None, v_angle)
    i_ratio = abs(i_meas) / abs(i_exp)
    pf = math.degrees(np.angle((v_meas / i_meas) / (v_exp / i_exp)))
    return PrefaultAgreement(v_ratio, i_ratio, pf, v_angle)


def suspect_end(agreement: PrefaultAgreement, seen: tuple[complex | None, complex | None],
                model_z: tuple[complex | None, complex | None]) -> int | None:
    """Which end (0 local, 1 remote) a failed pre-fault agreement points at, or None.

    ``seen``: :func:`source_impedance_seen` at each end; ``model_z``: the
    model's source impedance behind each end's bus in the same sequence
    [ohm].  A remote CT reading ``k`` times too high makes ``i_ratio = k`` and
    the remote ``|-dV/dI|`` ``1/k`` of the model's; a local CT reading ``k``
    too high makes ``i_ratio = 1/k`` and the local one ``1/k``.  A VT error
    acts the other way round on ``v_ratio``.  The end whose apparent source
    impedance accounts for the mismatch, with the other end's near the
    model's, is the suspect: its explanation's misfit (in log ratio) must be
    under a quarter of the mismatch's own, and the other explanation's larger
    by at least half of it (an unmodelled tap load or model sources off by as much as
    the mismatch blame neither end).
    """
    if any(z is None or z == 0 for z in (*seen, *model_z)):
        return None
    r = [math.log(abs(s) / abs(m)) for s, m in zip(seen, model_z, strict=True)]
    # the log factor the remote end's CT (or VT) would have to be off by
    k_i = math.log(agreement.i_ratio) if agreement.i_ratio is not None else 0.0
    k_v = math.log(agreement.v_ratio)
    use_i = abs(k_i) > abs(k_v)
    k = k_i if use_i else k_v
    if k == 0.0:
        return None
    sign = -1.0 if use_i else 1.0          # a CT error shows inverted in -dV/dI
    remote_misfit = abs(r[1] - sign * k) + abs(r[0])
    local_misfit = abs(r[0] + sign * k) + abs(r[1])
    best, other = sorted((remote_misfit, local_misfit))
    if best > 0.25 * abs(k) or other - best < 0.5 * abs(k):
        return None
    return 1 if remote_misfit < local_misfit else 0


def pair_agreement(model, ends: tuple[TerminalPhasors, TerminalPhasors],
                   line: str | None = None):
    """``(pairing, PrefaultAgreement or None)`` of two ends on the model's line."""
    pairing = pair_ends(model, ends, line)
    local, remote = pairing.ends
    return pairing, prefault_agreement(local, remote,
                                       line_from(model, pairing.line_id, pairing.terminals[0]))


def through_fault(model, ends: tuple[TerminalPhasors, TerminalPhasors],
                  line: str | None = None) -> str | None:
    """Words for a fault outside the line that both ends saw, or None.

    One end reads the fault ahead, the other behind its bus
    (:func:`direction_check`), and the two agree on the pre-fault power flow
    (power-factor angle within 90 deg: neither CT set is reversed, which would
    turn it by 180 deg): the fault current went through the line.  None when
    the pre-fault current is too small to tell a reversed CT set from it.
    """
    seen = [direction_check(e) for e in ends]
    rev = [d is not None and d[0] == "reverse" for d in seen]
    fwd = [d is not None and d[0] == "forward" for d in seen]
    if sum(rev) != 1 or sum(fwd) != 1:
        return None
    _, agreement = pair_agreement(model, ends, line)
    if agreement is None or agreement.pf_angle_diff_deg is None \
            or abs(agreement.pf_angle_diff_deg) >= 90.0:
        return None
    k = rev.index(True)
    return (f"{ends[1 - k].station} sees the fault ahead (-dV/dI at {seen[1 - k][1]:+.0f} "
            f"deg), {ends[k].station} behind its bus ({seen[k][1]:+.0f} deg), and the two "
            f"records agree on the pre-fault power flow (power-factor angle "
            f"{agreement.pf_angle_diff_deg:+.1f} deg apart, so no CT set is reversed): the "
            f"fault current went through the line, to a fault beyond {ends[k].station}")


def check_pair(model, ends: tuple[TerminalPhasors, TerminalPhasors],
               line: str | None = None) -> tuple[int | None, str | None]:
    """The two ends' pre-fault agreement on the model's line: ``(suspect, words)``.

    ``(None, None)`` when they agree or cannot be judged; ``(k, words)`` when
    they disagree and end ``k`` (0 or 1) accounts for it
    (:func:`suspect_end`); ``(None, words)`` when they disagree and neither
    end can be told.  Raises what :func:`~eventlab.locate.model_link.pair_ends`
    raises.
    """
    pairing, agreement = pair_agreement(model, ends, line)
    local, remote = pairing.ends
    t_local = pairing.terminals[0]
    if agreement is None or agreement.agrees:
        return None, None
    try:
        z1, _ = external_two_port(model, pairing.line_id, t_local.bus)
        model_z = (complex(z1[0, 0]), complex(z1[1, 1]))
    except ModelError:
        model_z = (None, None)
    seen = (source_impedance_seen(local), source_impedance_seen(remote))
    k = suspect_end(agreement, seen, model_z)
    words = (f"the two records disagree on the pre-fault state of line {pairing.line_id} "
             f"({agreement.words()}; the local end's carried along the line)")
    if k is not None:
        z_words = ", ".join(
            f"{e.station} {abs(s) / abs(m):.2f}" for e, s, m in zip(ends, seen, model_z,
                                                                    strict=True))
        words += (f"; the apparent source impedance -dV/dI over the model's is {z_words}: "
                  f"a CT or VT ratio (or the units) of {ends[k].station} suspected")
    else:
        words += ": a CT or VT ratio at one end suspected, the records do not say which"
    return k, words
