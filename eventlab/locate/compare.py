"""Measured versus computed: the records beside the model for the located fault."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from eventlab.network.faults import (
    FaultSpec,
    iec60909_fault,
    iec60909_voltage_factor,
    solve_fault,
)
from eventlab.network.model import NetworkModel, Terminal
from eventlab.symmetrical import abc_to_012
from eventlab.units import polar_deg, wrap_deg

from .inputs import TerminalPhasors
from .model_fit import FitOptions, ModelFitResult, computed_phasors

_QUANTITIES = ("VA", "VB", "VC", "IA", "IB", "IC", "3I0")


@dataclass(frozen=True)
class ComparisonRow:
    """One terminal and quantity: measured and computed complex RMS phasors [V] or [A]."""

    terminal: str
    quantity: str
    measured: complex
    computed: complex

    @property
    def ratio(self) -> float:
        """|measured| / |computed| [-] (inf when the model computes zero)."""
        c = abs(self.computed)
        return abs(self.measured) / c if c > 0 else math.inf

    @property
    def angle_diff_deg(self) -> float:
        """Angle of measured minus angle of computed [deg], wrapped to (-180, 180]."""
        return wrap_deg(math.degrees(np.angle(self.measured) - np.angle(self.computed)))

    def to_dict(self) -> dict:
        ratio = self.ratio
        return {"terminal": self.terminal, "quantity": self.quantity,
                "measured": polar_deg(self.measured), "computed": polar_deg(self.computed),
                "ratio": ratio if math.isfinite(ratio) else None,
                "angle_diff_deg": self.angle_diff_deg}


@dataclass(frozen=True)
class Comparison:
    """The table, the verdicts in plain words and the study's bolted-fault currents."""

    rows: tuple[ComparisonRow, ...]
    verdicts: tuple[str, ...]
    bolted_fault_currents: dict
    ratio_tolerance: float
    angle_tolerance_deg: float

    @property
    def agrees(self) -> bool:
        return not self.verdicts


def comparison_rows(terminal: str, measured: TerminalPhasors, v_abc: np.ndarray,
                    i_abc: np.ndarray) -> list[ComparisonRow]:
    """Rows for one terminal from measured fault-window and computed phasors."""
    meas = list(measured.v_fault) + list(measured.i_fault) + [
        3.0 * abc_to_012(measured.i_fault)[0]]
    comp = list(v_abc) + list(i_abc) + [3.0 * abc_to_012(i_abc)[0]]
    return [ComparisonRow(terminal, q, complex(m), complex(c))
            for q, m, c in zip(_QUANTITIES, meas, comp, strict=True)]


#: a fitted line Z0 scale further than this from 1 is reported in the verdicts
#: (common practice, no source: line Z0 from calculated constants is seldom known
#: better than a few per cent)
Z0_SCALE_NOTE = 0.03


def verdicts(rows: Sequence[ComparisonRow], fault_type: str, fit: ModelFitResult | None = None,
             ratio_tolerance: float = 0.10, angle_tolerance_deg: float = 10.0, *,
             suspect: Mapping[str, Sequence[bool]] | None = None) -> list[str]:
    """Plain-words reading of the disagreements (empty when everything agrees).

    Rules (common practice, no source): quantities smaller than 5 % of the
    largest of their kind at a terminal are not judged; currents off by about
    180 deg on every phase suggest reversed CT polarity; one ratio common to
    all currents with agreeing voltages suggests a CT ratio (or channel scale)
    error, or a wrong source strength in the model when the fit moved the
    source; faulted-phase currents smaller than computed and leading them
    suggest CT saturation; a residual current disagreeing while phase currents
    agree suggests the line or source Z0, or mutual coupling.  ``suspect``
    (terminal id -> per-phase flags, :attr:`TerminalPhasors.i_suspect`) names
    the currents whose waveform already showed a saturating CT: when they are
    the ones that disagree, that is the reading.
    """
    out: list[str] = []
    by_term: dict[str, list[ComparisonRow]] = {}
    for r in rows:
        by_term.setdefault(r.terminal, []).append(r)
    faulted = {"A": "A" in fault_type, "B": "B" in fault_type, "C": "C" in fault_type}
    for term, rs in by_term.items():
        cur = [r for r in rs if r.quantity in ("IA", "IB", "IC")]
        vol = [r for r in rs if r.quantity in ("VA", "VB", "VC")]
        res = [r for r in rs if r.quantity == "3I0"]
        imax = max(abs(r.computed) for r in cur) or 1.0
        vmax = max(abs(r.computed) for r in vol) or 1.0

        def off(r: ComparisonRow) -> bool:
            return (abs(r.ratio - 1.0) > ratio_tolerance
                    or abs(r.angle_diff_deg) > angle_tolerance_deg)

        big_cur = [r for r in cur if abs(r.computed) > 0.05 * imax]
        big_vol = [r for r in vol if abs(r.computed) > 0.05 * vmax]
        cur_off = [r for r in big_cur if off(r)]
        vol_off = [r for r in big_vol if off(r)]
        if big_cur and all(abs(abs(r.angle_diff_deg) - 180.0) < 30.0 for r in big_cur):
            out.append(f"{term}: measured currents are opposite to the computed ones on every "
                       f"phase: reversed CT polarity (or channel sign) suspected")
            continue
        if cur_off:
            ratios = np.array([r.ratio for r in big_cur])
            common = np.ptp(ratios) < 0.05 and abs(np.mean(ratios) - 1) > ratio_tolerance
            sat = [r for r in cur_off if faulted.get(r.quantity[1], False)
                   and r.ratio < 1 - ratio_tolerance and r.angle_diff_deg > 0]
            flagged = {f"I{p}" for p, b in zip("ABC", (suspect or {}).get(term, ()),
                                                strict=False) if b}
            if flagged and {r.quantity for r in cur_off} <= flagged:
                names = ", ".join(f"{r.quantity} ({r.ratio:.2f}, {r.angle_diff_deg:+.1f} deg)"
                                  for r in cur_off)
                out.append(f"{term}: {names} off the model while the other currents and the "
                           f"voltages agree, and the waveform departs from a sinusoid with "
                           f"offset: CT saturation suspected (the fit left "
                           f"{'it' if len(flagged) == 1 else 'them'} out)")
            elif common and not vol_off:
                out.append(f"{term}: every measured current is {np.mean(ratios):.2f} times the "
                           f"computed one while voltages agree: CT ratio or channel scaling "
                           f"error, or the source strength in the model, suspected")
            elif sat:
                names = ", ".join(r.quantity for r in sat)
                out.append(f"{term}: faulted-phase current(s) {names} smaller than computed "
                           f"and leading: CT saturation suspected")
            else:
                names = ", ".join(f"{r.quantity} ({r.ratio:.2f}, {r.angle_diff_deg:+.1f} deg)"
                                  for r in cur_off)
                out.append(f"{term}: currents disagree with the model: {names}; suspected "
                           f"model error (source strength, Z0, mutual coupling) or a "
                           f"measurement problem (CT ratio, polarity, saturation)")
        elif res and abs(res[0].computed) > 0.05 * imax and off(res[0]):
            out.append(f"{term}: residual current 3I0 disagrees ({res[0].ratio:.2f}, "
                       f"{res[0].angle_diff_deg:+.1f} deg) while phase currents agree: line "
                       f"or source Z0, or mutual coupling, suspected in the model")
        if vol_off:
            names = ", ".join(f"{r.quantity} ({r.ratio:.2f}, {r.angle_diff_deg:+.1f} deg)"
                              for r in vol_off)
            out.append(f"{term}: voltages disagree with the model: {names}; VT ratio or "
                       f"wiring, or the source strength in the model, suspected")
    if fit is not None:
        for label, k in (("local", fit.local_z_scale), ("remote", fit.remote_z_scale)):
            if abs(math.log(k)) > math.log(1.25):
                # at the reference end -dV/dI is the local source: a CT reading 1/k
                # times the true current, or a VT k times the true voltage, looks the
                # same from one end (with two the pre-fault agreement tells them apart)
                alt = (f", or the reference end's CT ratio (currents {1 / k:.2f} times the "
                       f"true) or VT ratio ({k:.2f} times)"
                       if label == "local" and len(fit.used_terminals) == 1 else "")
                out.append(f"the fit put the {label} source impedance at {k:.2f} times the "
                           f"model's: source strength in the model suspected{alt}")
        if abs(math.log(fit.z0_scale)) > math.log(1.0 + Z0_SCALE_NOTE):
            out.append(f"the fit put the line's Z0 at {fit.z0_scale:.3f} times the model's: "
                       f"the line's zero-sequence constants (earth resistivity, earth "
                       f"wires) in the model suspected")
    return out


def bolted_fault_currents(model: NetworkModel, spec: FaultSpec) -> dict:
    """Currents the model as written gives for a bolted fault at the located point.

    Returns ``fault_a`` ``[|I_a|, |I_b|, |I_c|]`` and ``terminals_a``
    ``{id: [...]}`` [A] with the model's EMFs as written (no calibration), and
    under ``iec60909`` the same by the IEC 60909 method for ``c_max`` and
    ``c_min`` (:func:`eventlab.network.faults.iec60909_fault`: equivalent
    voltage source, no load, no line capacitance), as a protection study
    has them.
    """
    bolted = FaultSpec(spec.line, spec.fraction, spec.type, 0.0, 0.0)
    res = solve_fault(model, bolted)

    def currents(r):
        return {"fault_a": [float(abs(x)) for x in r.fault.i_abc],
                "terminals_a": {tid: [float(abs(x)) for x in st.i_abc]
                                for tid, st in r.terminals.items()}}

    out = {"fault_type": spec.type, "fraction_from_from_bus": spec.fraction, **currents(res)}
    kv = model.bus(model.line(spec.line).from_bus).kv
    out["iec60909"] = {
        f"c_{case}": {"c": iec60909_voltage_factor(case, kv),
                      **currents(iec60909_fault(model, bolted, case))}
        for case in ("max", "min")}
    return out


def compare(fit: ModelFitResult, ends: Sequence[TerminalPhasors],
            terminals: Sequence[Terminal], *, ratio_tolerance: float = 0.10,
            angle_tolerance_deg: float = 10.0, options: FitOptions | None = None) -> Comparison:
    """Measured beside computed at every measured terminal for the fitted fault.

    The computed phasors use the model's source impedances as written (sources
    calibrated to the measured pre-fault state, fitted distance and
    resistance), so that a wrong source strength shows as a disagreement.
    """
    comp = computed_phasors(fit, ends, terminals, nominal=True, options=options)
    rows: list[ComparisonRow] = []
    for t, e, (v, i) in zip(terminals, ends, comp, strict=True):
        rows += comparison_rows(t.id, e, v, i)
    words = verdicts(rows, fit.fault_type, fit, ratio_tolerance, angle_tolerance_deg,
                     suspect={t.id: e.i_suspect for t, e in zip(terminals, ends, strict=True)})
    return Comparison(tuple(rows), tuple(words), bolted_fault_currents(fit.model, fit.spec()),
                      ratio_tolerance, angle_tolerance_deg)
