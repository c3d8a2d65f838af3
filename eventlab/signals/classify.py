"""Fault classification (phase selection) from fault-window phasors.

The ten shunt types of :mod:`eventlab.faulttypes`, or ``"none"``.  Evidence:

* superimposed (delta) phase currents ``dI = I_fault - I_prefault`` and
  their loop (phase-to-phase) differences ``dI_AB, dI_BC, dI_CA``;
* the zero- and negative-sequence levels (ground involvement, unbalance);
* the angle between ``I2`` and ``I0`` (sector method: AG/BCG near 0 deg,
  BG/CAG near -120 deg, CG/ABG near +120 deg);
* superimposed voltages in the same way where the currents are too small to
  decide (weak infeed), and the positive-sequence voltage sag for
  three-phase faults.

References: the sector method of comparing ``I2`` with ``I0`` and the
delta-current loop selector are described in G. Benmouyal and J. Mahseredjian,
"A combined directional and faulted phase selector element based on
incremental quantities", IEEE Trans. Power Delivery 16(4), 2001, and in
J. Roberts and A. Guzman, "Directional element design and evaluation",
Western Protective Relay Conference, 1994 (from memory).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from eventlab.faulttypes import NO_FAULT, check_fault_type
from eventlab.symmetrical import abc_to_012

_PH = "ABC"
#: angle of x2 / x0 [deg] at the centre of each sector, and the lone phase
_SECTORS = ((0.0, 0), (-120.0, 1), (120.0, 2))
_DLG = {0: "BCG", 1: "CAG", 2: "ABG"}
_SLG = {0: "AG", 1: "BG", 2: "CG"}
_LL = {0: "AB", 1: "BC", 2: "CA"}        # loop index -> code (loops AB, BC, CA)

#: thresholds (common practice, no source; chosen with margin between the ideal
#: values of the fault types: ground ratio 0 vs >= 0.3, loop ratio 0.5 vs 1.0)
GROUND_RATIO = 0.10      # |3 x0| / max |dx_p| above which ground is involved
BALANCE_RATIO = 0.10     # |x2| and |x0| below this times |dx1|: balanced (ABC)
LOOP_EQUAL = 0.75        # min/max loop delta above this: all three loops alike (ABC)
SAG_FAULT = 0.90         # V1 fault / V1 prefault below this: a voltage sag
WEAK_CURRENT = 0.20      # max |dI| under this times the prefault max |I|: currents ambiguous
V0_GROUND = 0.02         # |V0| over the prefault |V1| that confirms ground with >= 0.03 ratio
DLG_SECOND = 0.50        # two-phase pattern: second largest |dI| at least this of the largest
DLG_THIRD = 0.20         # ... and the smallest at most this of the largest
GROUND_Z0 = 0.04         # |3 dI0| / max |dI_p| that counts as ground when V0 confirms it
V0_MIN = 0.002           # |dV0| over the prefault |V1| for that confirmation
Z0_SECTOR_DEG = 50.0     # arg(-dV0 / dI0) within this of +75 deg (forward) or -105 (reverse)
ABC_STEP = 2.0           # balanced step over this times the load current with a sag ...
ABC_SAG = 0.97           # ... below this: a resistive three-phase fault


@dataclass(frozen=True)
class Classification:
    """Fault type with its confidence and the evidence used.

    ``type`` is one of the ten codes or ``"none"``; ``confidence`` in [0, 1];
    ``basis`` is ``"currents"`` or ``"voltages"`` (weak infeed) or ``""``;
    ``evidence`` holds the numbers the decision used (ratios, angles [deg]).
    """

    type: str
    confidence: float
    ground: bool
    basis: str
    evidence: Mapping[str, float | str] = field(default_factory=dict)
    reason: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "evidence", MappingProxyType(dict(self.evidence)))

    def to_dict(self) -> dict:
        return {"type": self.type, "confidence": round(float(self.confidence), 3),
                "ground": self.ground, "basis": self.basis, "reason": self.reason,
                "evidence": {k: (round(float(v), 4) if isinstance(v, float | int | np.floating)
                                 else v) for k, v in self.evidence.items()}}


def _wrap180(deg: float) -> float:
    return float((deg + 180.0) % 360.0 - 180.0)


def _decide(d_abc: np.ndarray, x_012: np.ndarray, basis: str,
            v0_ratio: float | None = None, z0_ground: bool = False) -> Classification:
    """Phase selection from superimposed phasors ``d_abc`` and fault-window sequence ``x_012``."""
    d_abc = np.asarray(d_abc, dtype=complex)
    mags = np.abs(d_abc)
    m = float(mags.max())
    d012 = abc_to_012(d_abc)
    loops = np.abs(np.array([d_abc[0] - d_abc[1], d_abc[1] - d_abc[2], d_abc[2] - d_abc[0]]))
    x0, x2 = x_012[0], x_012[2]
    pre = "di" if basis == "currents" else "dv"
    ev: dict[str, float | str] = {
        f"{pre}_{p}": float(v) for p, v in zip(_PH, mags, strict=True)}
    ev.update({f"{pre}_loop_{p}": float(v) for p, v in zip(("AB", "BC", "CA"), loops,
                                                            strict=True)})
    d1 = max(abs(d012[1]), 1e-300)
    ground_ratio = 3.0 * abs(x0) / max(m, 1e-300)
    ev["ground_ratio"] = ground_ratio
    ev["neg_ratio"] = abs(x2) / d1
    ev["zero_ratio"] = abs(x0) / d1
    loop_ratio = float(loops.min() / max(loops.max(), 1e-300))
    ev["loop_min_over_max"] = loop_ratio
    balanced = ev["neg_ratio"] < BALANCE_RATIO and ev["zero_ratio"] < BALANCE_RATIO
    if balanced and loop_ratio > LOOP_EQUAL:
        margin = min(1.0 - ev["neg_ratio"] / BALANCE_RATIO, (loop_ratio - LOOP_EQUAL) /
                     (1.0 - LOOP_EQUAL))
        return Classification("ABC", 0.5 + 0.5 * _clip01(margin), False, basis, ev,
                              "balanced superimposed quantities in all three loops")
    # a zero-sequence voltage confirms a weaker ground current (high resistance to ground)
    by_v0 = (v0_ratio is not None and v0_ratio > V0_GROUND
             and ground_ratio > 0.3 * GROUND_RATIO) or z0_ground
    if v0_ratio is not None:
        ev["v0_over_v1_prefault"] = float(v0_ratio)
    if (ground_ratio > GROUND_RATIO or by_v0) and abs(x0) > 0:
        ang = _wrap180(float(np.degrees(np.angle(x2 / x0))))
        ev["angle_x2_x0_deg"] = ang
        centre, lone = min(_SECTORS, key=lambda s: abs(_wrap180(ang - s[0])))
        off = abs(_wrap180(ang - centre))
        others = [p for p in range(3) if p != lone]
        ratio = mags[lone] / max(mags[others].max(), 1e-300)
        ev["lone_phase"] = _PH[lone]
        ev["lone_over_others"] = float(ratio)
        m_sector = 1.0 - off / 60.0
        m_ratio = abs(np.log(max(ratio, 1e-300))) / np.log(3.0)
        g_margin = (min(1.0, (ground_ratio - GROUND_RATIO) / GROUND_RATIO)
                    if ground_ratio > GROUND_RATIO else 0.25)
        conf = 0.5 + 0.5 * _clip01(min(m_sector, m_ratio, g_margin))
        # two phases carry the superimposed current and the third almost none: a
        # two-phase-to-ground fault whatever the sector (fault resistance to ground turns
        # arg(I2/I0) of such a fault towards the neighbouring single-phase sector)
        order = np.argsort(mags)[::-1]
        big, mid, small = mags[order]
        if mid >= DLG_SECOND * big and small <= DLG_THIRD * big:
            healthy = int(order[2])
            ev["pattern"] = "two phases"
            agree = healthy == lone
            conf_p = 0.5 + 0.5 * _clip01(min(1.0 - small / (DLG_THIRD * big), g_margin))
            return Classification(
                _DLG[healthy], conf_p if agree else 0.5 + 0.25 * (conf_p - 0.5),
                True, basis, ev,
                f"ground; phases other than {_PH[healthy]} carry the superimposed current"
                + ("" if agree else f" (the I2/I0 sector points at phase {_PH[lone]}: "
                                    f"resistance to ground)"))
        if ratio >= 1.0:
            return Classification(_SLG[lone], conf, True, basis, ev,
                                  f"ground; I2/I0 sector of phase {_PH[lone]}; phase "
                                  f"{_PH[lone]} carries the superimposed current")
        return Classification(_DLG[lone], conf, True, basis, ev,
                              f"ground; I2/I0 sector of phase {_PH[lone]}; the other two "
                              f"phases carry the superimposed current")
    k = int(np.argmax(loops))
    if loop_ratio > LOOP_EQUAL:
        return Classification("ABC", 0.5 + 0.5 * _clip01((loop_ratio - LOOP_EQUAL) /
                                                         (1.0 - LOOP_EQUAL)) * 0.5,
                              False, basis, ev, "all three loops alike, some unbalance")
    second = np.sort(loops)[-2]
    conf = 0.5 + 0.5 * _clip01(min((LOOP_EQUAL - loop_ratio) / LOOP_EQUAL,
                                   (loops[k] / max(second, 1e-300) - 1.0),
                                   1.0 - ground_ratio / GROUND_RATIO))
    return Classification(_LL[k], conf, False, basis, ev,
                          f"no ground; loop {('AB', 'BC', 'CA')[k]} carries the largest "
                          f"superimposed current")


def _clip01(x: float) -> float:
    return float(min(1.0, max(0.0, x)))


def classify_fault(i_pre_abc, i_fault_abc, v_pre_abc=None, v_fault_abc=None, *,
                   min_current_a: float = 0.0, noise_floor_a: float = 0.0,
                   noise_floor_v: float = 0.0) -> Classification:
    """Fault type from pre-fault and fault-window phasors of one terminal.

    Parameters
    ----------
    i_pre_abc, i_fault_abc : complex array, shape (3,)
        Phase currents [A] (complex RMS) in the pre-fault and fault windows.
    v_pre_abc, v_fault_abc : complex array, shape (3,), optional
        Phase-to-ground voltages [V] in the same windows.
    min_current_a : float
        Superimposed current [A] below which the currents are not trusted
        (e.g. a few times the noise level).
    noise_floor_a, noise_floor_v : float
        Phasor noise levels [A], [V]: the zero-sequence confirmation of a
        weak ground path needs ``|3 dI0|`` and ``|dV0|`` above them.

    Returns
    -------
    Classification
        ``type`` one of AG BG CG AB BC CA ABG BCG CAG ABC, or ``"none"`` when
        neither currents nor voltages show a shunt fault.

    Notes
    -----
    Ground involvement: ``|3 I0| > 0.1 max_p |dI_p|``, or above 0.03 with
    ``|V0| > 0.02 |V1_prefault|``, or (high resistance to ground) the
    superimposed zero-sequence pair agrees with a zero-sequence source:
    ``|3 dI0| > 0.04 max_p |dI_p|``, ``|dV0| > 0.002 |V1_prefault|``, both
    above the noise, and ``arg(-dV0 / dI0)`` within 50 deg of +75 deg (fault
    ahead: ``dV0 = -Z0s dI0``) or of -105 deg (fault behind).  A bolted
    phase-to-phase fault has ``dI0 = dV0 = 0`` exactly (sequence
    connection without the zero-sequence network: Grainger and Stevenson,
    *Power System Analysis*, 1994, sec. 12.4, from memory).  Ground faults: if
    two phases carry at least half the largest superimposed current and the
    third at most a fifth, the two-phase-to-ground fault of those two
    (resistance to ground turns the I2/I0 angle of such a fault towards the
    neighbouring sector); otherwise the sector of ``arg(I2 / I0)`` (0, -120,
    +120 deg for the lone phase A, B, C), then single-phase if the lone phase
    carries the largest superimposed current, else the two-phase-to-ground
    fault of the other two phases.
    Ungrounded: three-phase if the three loop deltas are alike
    (min/max > 0.75) and ``|I2|, |I0| < 0.1 |dI1|``; else the loop with the
    largest delta.  Voltages replace currents when the largest superimposed
    current is under ``max(min_current_a, 0.2 max_p |I_pre|)`` (weak infeed).
    """
    i_pre = np.asarray(i_pre_abc, dtype=complex)
    i_f = np.asarray(i_fault_abc, dtype=complex)
    d_i = i_f - i_pre
    have_v = v_pre_abc is not None and v_fault_abc is not None
    sag = None
    if have_v:
        v_pre = np.asarray(v_pre_abc, dtype=complex)
        v_f = np.asarray(v_fault_abc, dtype=complex)
        v1_pre = abs(abc_to_012(v_pre)[1])
        v012_f = abc_to_012(v_f)
        sag = abs(v012_f[1]) / v1_pre if v1_pre > 0 else np.nan
        v_unbal = max(abs(v012_f[0]), abs(v012_f[2])) / v1_pre if v1_pre > 0 else np.nan
    m_i = float(np.abs(d_i).max())
    weak = m_i <= max(float(min_current_a), WEAK_CURRENT * float(np.abs(i_pre).max()))
    v0_ratio = (abs(v012_f[0]) / v1_pre) if have_v and v1_pre > 0 else None
    z0_ground = False
    z0_ang = None
    if have_v and v1_pre > 0 and m_i > 0:
        di0 = abc_to_012(d_i)[0]
        dv0 = abc_to_012(v_f - v_pre)[0]
        if (3.0 * abs(di0) > max(GROUND_Z0 * m_i, 3.0 * float(noise_floor_a))
                and abs(dv0) > max(V0_MIN * v1_pre, float(noise_floor_v))):
            z0_ang = float(np.degrees(np.angle(-dv0 / di0)))
            z0_ground = min(abs(_wrap180(z0_ang - 75.0)),
                            abs(_wrap180(z0_ang + 105.0))) <= Z0_SECTOR_DEG
    if weak and have_v:
        out = _decide(v_f - v_pre, v012_f, "voltages")
    elif m_i > 0:
        out = _decide(d_i, abc_to_012(i_f), "currents", v0_ratio, z0_ground)
    else:
        return Classification(NO_FAULT, 1.0, False, "", {}, "no superimposed current")
    ev = dict(out.evidence)
    if z0_ang is not None:
        ev["angle_minus_dv0_di0_deg"] = z0_ang
    if sag is not None:
        ev["v1_fault_over_prefault"] = float(sag)
        ev["v_unbalance"] = float(v_unbal)
    i_pre_max = float(np.abs(i_pre).max())
    ev["di_max_a"] = m_i
    ev["i_prefault_max_a"] = i_pre_max
    # a balanced change with no voltage sag is a load change or switching
    if out.type == "ABC":
        # a step to over twice the load current with some sag is a resistive
        # three-phase fault, not a load change (common practice, no source)
        big_step = i_pre_max > 0 and m_i > ABC_STEP * i_pre_max
        no_sag = sag is not None and (sag >= ABC_SAG or (sag >= SAG_FAULT and not big_step))
        small_step = sag is None and m_i < 2.0 * i_pre_max
        if no_sag or small_step:
            return Classification(NO_FAULT, 0.5 + 0.5 * _clip01((sag - SAG_FAULT) / 0.05)
                                  if sag is not None else 0.6, False, out.basis, ev,
                                  "balanced change without a voltage sag (load change or "
                                  "switching)")
    check_fault_type(out.type)
    return Classification(out.type, out.confidence, out.ground, out.basis, ev, out.reason)
