"""The entry point the analysis calls: :func:`locate_event` -> :class:`LocationReport`."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from eventlab.errors import EventlabError, FitDidNotConverge, ModelError, SignalError
from eventlab.network.model import NetworkModel
from eventlab.units import km_to_miles

from .compare import Comparison, compare
from .consistency import prefault_agreement
from .estimate import LocatorEstimate
from .inputs import TerminalPhasors
from .line import LineData
from .model_fit import CT_CLASSES, VT_CLASSES, FitOptions, ModelFitResult, fit_fault
from .model_link import (
    distribution_angle,
    external_two_port,
    line_from,
    pair_ends,
    sampled_distribution,
)
from .radial import radial_stage
from .single_ended import eriksson, modified_takagi, reactance, takagi
from .structures import StructureSpan, locate_structures
from .two_ended import (
    SyncCheck,
    align_remote,
    sync_check,
    two_ended_synchronised,
    two_ended_uncertainty,
    two_ended_unsynchronised,
)

#: Printed with every location (project safety rule).
CAUTION = ("Fault location is an estimate to direct a patrol, not a clearance: treat the "
           "line as energized until it is isolated and earthed under the local switching "
           "and safety rules; confirm the fault by patrol. Local codes and licensed "
           "practice take precedence.")

SINGLE_ENDED = ("reactance", "takagi", "modified_takagi", "eriksson")


@dataclass(frozen=True)
class LocateOptions:
    """Settings of :func:`locate_event`.

    Parameters
    ----------
    fit : FitOptions
        Model-matched solve settings (accuracy classes, tolerances, priors).
    terminal_map : mapping, optional
        Explicit station name -> model terminal id pairing.
    max_sync_offset_s : float
        Largest inception-instant offset [s] between the records for which
        their clocks are trusted as aligned.
    time_sigma_s : float
        One-sigma clock alignment error of synchronised records [s].
    max_prefault_angle_deg : float
        Time-aligned records whose remote pre-fault V1 is further than this
        from the local one carried along the line [deg] are turned to the
        pre-fault state (0.5: the line's Z1 tolerance moves the expected angle
        by about a tenth of a degree at full load).
    ratio_tolerance, angle_tolerance_deg : float
        Measured-versus-computed tolerance [-], [deg].
    run_fit : bool
        Run the model-matched solve.
    max_fit_residual_scale : float
        With two ends, a fit whose residual exceeds this many times the
        stated measurement accuracy is not stood behind (the two-ended answer
        is given).
    """

    fit: FitOptions = field(default_factory=FitOptions)
    terminal_map: Mapping[str, str] | None = None
    max_sync_offset_s: float = 0.5e-3
    time_sigma_s: float = 10e-6
    max_prefault_angle_deg: float = 0.5
    ratio_tolerance: float = 0.10
    angle_tolerance_deg: float = 10.0
    run_fit: bool = True
    max_fit_residual_scale: float = 5.0


@dataclass(frozen=True)
class LocationReport:
    """Everything the location step found; :meth:`to_dict` gives the JSON contract."""

    line_id: str
    reference_terminal: str
    length_km: float
    fault_type: str
    best: LocatorEstimate
    interval_km: tuple[float, float]
    methods: tuple[LocatorEstimate, ...]
    fit: ModelFitResult | None
    structures: StructureSpan
    comparison: Comparison | None
    sync: SyncCheck | None
    uncertainty_km: dict
    assumptions: tuple[str, ...]
    notes: tuple[str, ...]
    caution: str = CAUTION

    @property
    def distance_km(self) -> float:
        return self.best.distance_km

    def seen_from(self, model: NetworkModel, terminal_id: str) -> LocationReport:
        """The same location with every distance from the line's terminal ``terminal_id``.

        For a two-terminal line the other end's distance along the route is
        ``L - d``; intervals are mirrored and the structures re-read from that
        end.  The report itself when it is already from there.
        """
        if terminal_id == self.reference_terminal:
            return self
        t = model.terminal(terminal_id)
        if t.line != self.line_id:
            raise ModelError(f"{model.source_name}: terminal {terminal_id!r} is not on line "
                             f"{self.line_id}")
        length = self.length_km

        def flip(lo_hi):
            lo, hi = lo_hi
            return (length - float(hi), length - float(lo))

        def est(m: LocatorEstimate) -> LocatorEstimate:
            extra = dict(m.extra)
            if "interval_km" in extra:
                extra["interval_km"] = list(flip(extra["interval_km"]))
            return replace(m, distance_km=length - m.distance_km, terminal=terminal_id,
                           extra=extra)

        interval = flip(self.interval_km)
        fit = self.fit
        if fit is not None:
            fit = replace(fit, distance_km=length - fit.distance_km, terminal=terminal_id,
                          interval_km=flip(fit.interval_km))
        best = est(self.best)
        structures = locate_structures(line_from(model, self.line_id, t), best.distance_km,
                                       interval)
        return replace(self, reference_terminal=terminal_id, best=best, interval_km=interval,
                       methods=tuple(est(m) for m in self.methods), fit=fit,
                       structures=structures,
                       notes=self.notes + (f"distances given from {terminal_id} (located from "
                                           f"{self.reference_terminal})",))

    def widened(self, model: NetworkModel, interval_km: tuple[float, float],
                why: str) -> LocationReport:
        """The same report with its interval widened to hold ``interval_km`` too.

        The structures are re-read for the wider interval and ``why`` becomes a
        note (e.g. the two records disagree and each end's own answer must stay
        inside the search zone).
        """
        lo = max(0.0, min(self.interval_km[0], float(interval_km[0])))
        hi = min(self.length_km, max(self.interval_km[1], float(interval_km[1])))
        if (lo, hi) == tuple(self.interval_km):
            return self
        t = model.terminal(self.reference_terminal)
        structures = locate_structures(line_from(model, self.line_id, t), self.best.distance_km,
                                       (lo, hi))
        return replace(self, interval_km=(lo, hi), structures=structures,
                       notes=self.notes + (why,))

    def to_dict(self) -> dict:
        b = self.best
        loc = {
            "distance_km": float(b.distance_km),
            "distance_mi": km_to_miles(float(b.distance_km)),
            "fraction": float(b.fraction),
            "fault_resistance_ohm": (None if b.fault_resistance_ohm is None
                                     else float(b.fault_resistance_ohm)),
            "interval_km": [float(self.interval_km[0]), float(self.interval_km[1])],
            "method": b.method,
            "line": self.line_id,
            "reference_terminal": self.reference_terminal,
            "length_km": float(self.length_km),
            "fault_type": self.fault_type,
            "structures": self.structures.to_dict(),
            "methods": [m.to_dict() for m in self.methods],
            "uncertainty_km": {k: float(v) for k, v in self.uncertainty_km.items()},
            "assumptions": list(self.assumptions),
            "notes": list(self.notes),
            "caution": self.caution,
        }
        if self.sync is not None:
            loc["sync"] = self.sync.to_dict()
        if self.fit is not None:
            f = self.fit
            loc["model_fit"] = {
                "distance_km": float(f.distance_km), "fault_resistance_ohm": f.r_fault_ohm,
                "ground_resistance_ohm": f.r_ground_ohm, "local_source_z_scale": f.local_z_scale,
                "remote_source_z_scale": f.remote_z_scale, "line_z0_scale": f.z0_scale,
                "residual_rms": f.residual_rms,
                "residual_scale": f.chi2_scale, "interval_km": list(f.interval_km),
                "sigma_km": f.sigma_km, "evaluations": f.nfev,
                "terminals": list(f.used_terminals),
                "fault_resistance_open_ohm": f.r_fault_open_ohm,
            }
        comp = []
        if self.comparison is not None:
            comp = [r.to_dict() for r in self.comparison.rows]
            loc["verdict"] = (list(self.comparison.verdicts) or [
                "measured and computed currents and voltages agree within "
                f"{self.comparison.ratio_tolerance:.0%} and "
                f"{self.comparison.angle_tolerance_deg:g} deg"])
            loc["bolted_fault_currents"] = self.comparison.bolted_fault_currents
        return {"location": loc, "comparison": comp}


def _try(notes: list[str], label: str, fn, *args, **kwargs):
    try:
        return fn(*args, **kwargs)
    except (SignalError, ModelError, FitDidNotConverge) as exc:
        notes.append(f"{label}: not run ({exc})")
        return None
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
        # phasors the checks let through but the arithmetic cannot take (non-finite
        # residuals, a singular system): this method gives no answer, the others may
        notes.append(f"{label}: not run (numerical failure: {exc})")
        return None


def _radial_interval(radial: LocatorEstimate, code: str, length: float, opts: LocateOptions):
    """``(interval, parts, assumption)`` of a ``radial_stage`` answer: line tolerances only."""
    sigma = math.hypot(opts.fit.z0_tolerance if code.endswith("G") else 0.0,
                       opts.fit.z1_tolerance) * radial.distance_km / 2
    k = opts.fit.coverage_factor
    interval = (max(0.0, radial.distance_km - k * sigma),
                min(length, radial.distance_km + k * sigma))
    words = (f"stage with the other end open: interval +/- {k:g} sigma from the line "
             f"impedance tolerances (Z1 {opts.fit.z1_tolerance:.0%}"
             + (f", Z0 {opts.fit.z0_tolerance:.0%}" if code.endswith("G") else "")
             + ", as two sigma, on the distance)")
    return interval, {"line_z": sigma}, words


def _locate_energised(model: NetworkModel, pairing, ld: LineData, opts: LocateOptions,
                      notes: list[str]) -> LocationReport:
    """A line energised from its one recorded end onto a fault (switch onto fault).

    The other end is open and the line was dead before: the fault-window
    phasors are the fault fed from this end alone, located by ``radial_stage``
    (the open line's charging taken off, no sources, no pre-fault state); the
    simple reactance method beside it.  No model fit and no comparison: they
    start from the line in service before the fault.
    """
    end, t = pairing.ends[0], pairing.terminals[0]
    code = end.fault_type
    stage = replace(end, v_remote_open=end.v_fault, i_remote_open=end.i_fault)
    methods = [m for m in (_try(notes, "reactance", reactance, end, ld),
                           _try(notes, "radial_stage", radial_stage, stage, ld))
               if m is not None]
    radial = next((m for m in methods if m.method == "radial_stage"), None)
    if radial is None:
        raise SignalError(f"locate: the line energised onto the fault from {t.id}: the stage "
                          f"fed from that end gives no location; " + "; ".join(notes))
    interval, parts, words = _radial_interval(radial, code, ld.length_km, opts)
    notes.append(f"the line was energised from {t.id} onto the fault (the record begins with "
                 f"it de-energised, the other end open): located from the fault fed from "
                 f"this end alone (radial_stage); no model fit or comparison, which start "
                 f"from the line in service")
    return LocationReport(
        line_id=pairing.line_id, reference_terminal=t.id, length_km=ld.length_km,
        fault_type=code, best=radial, interval_km=(float(interval[0]), float(interval[1])),
        methods=tuple(methods), fit=None,
        structures=locate_structures(ld, radial.distance_km, interval), comparison=None,
        sync=None, uncertainty_km={k: float(v) for k, v in parts.items()},
        assumptions=("the line's other end open: the fault current is this end's current "
                     "less the open line's charging (the model's line, distributed)", words),
        notes=tuple(notes))


#: the impedance methods this far beyond an end of the line [fraction of its length],
#: with the fit stopped at that end and not matching the records, put the fault
#: outside the line (a fault at the far bus itself reads within a few per cent and
#: fits; common practice, no source)
BEYOND_MARGIN = 0.05


def _beyond_the_line(fit: ModelFitResult | None, methods: Sequence[LocatorEstimate],
                     length: float, max_residual: float) -> str | None:
    """Words for a fault that lies outside the line, or None.

    All of: the model fit stopped at an end of the line (its bound), its
    residual over ``max_residual`` times the measurement accuracy, and every
    single-ended impedance method run (Takagi, modified Takagi, Eriksson)
    beyond that end by more than :data:`BEYOND_MARGIN` of the line.
    """
    if fit is None or fit.chi2_scale <= max_residual:
        return None
    far = fit.fraction >= 1.0 - 1e-4
    if not (far or fit.fraction <= 1e-4):
        return None
    judged = [m for m in methods if m.method in ("takagi", "modified_takagi", "eriksson")]
    if not judged:
        return None
    lim = (1.0 + BEYOND_MARGIN) * length if far else -BEYOND_MARGIN * length
    if not all((m.distance_km > lim) if far else (m.distance_km < lim) for m in judged):
        return None
    return (", ".join(f"{m.method} {m.distance_km:.1f} km" for m in judged)
            + f" on the {length:g} km line; the model fit stops at its "
              f"{'far' if far else 'near'} end, {fit.chi2_scale:.0f} times the measurement "
              f"accuracy off the records")


def locate_event(model: NetworkModel, ends: Sequence[TerminalPhasors], line: str | None = None,
                 options: LocateOptions | None = None) -> LocationReport:
    """Locate the fault from one or two line ends' phasors.

    Parameters
    ----------
    model : NetworkModel
        The network model (:func:`eventlab.network.model.load_model`).
    ends : sequence of TerminalPhasors
        One or two ends; distances are given from the first end's terminal.
    line : str, optional
        The faulted line; found from the first end's station when None.
    options : LocateOptions, optional

    Returns
    -------
    LocationReport
        The answer eventlab stands behind (the model-matched fit on every
        given end where it converged and, with two ends, matches them; else
        the two-ended method where both ends are given; else the modified
        Takagi method), every method's estimate, the interval, structures,
        the measured-versus-computed table and the caution.

    Raises
    ------
    ModelError
        When the ends cannot be paired with the model's terminals.
    """
    opts = options or LocateOptions()
    pairing = pair_ends(model, ends, line, opts.terminal_map)
    line_id = pairing.line_id
    ends = pairing.ends
    terms = pairing.terminals
    ref_end, ref_t = ends[0], terms[0]
    ld = line_from(model, line_id, ref_t)
    length = ld.length_km
    code = ref_end.fault_type
    notes: list[str] = [f"{e.station} paired with terminal {t.id} by {h}"
                        for e, t, h in zip(ends, terms, pairing.how, strict=True)]
    if len(ends) == 2 and ends[1].fault_type != code:
        notes.append(f"fault types differ between the ends ({code}, {ends[1].fault_type}); "
                     f"{code} from {ref_end.station} used")
        ends = (ends[0], _with_type(ends[1], code))
    methods: list[LocatorEstimate] = []
    if ref_end.energised:
        if len(ends) > 1:
            notes.append(f"{ends[1].station} not used: the line was energised from "
                         f"{ref_end.station} onto the fault, the other end open")
        return _locate_energised(model, replace(pairing, ends=ends[:1], terminals=terms[:1],
                                                how=pairing.how[:1]), ld, opts, notes)

    # single-ended methods on the reference end
    for fn in (reactance, takagi):
        est = _try(notes, fn.__name__, fn, ref_end, ld)
        if est is not None:
            methods.append(est)
    start = methods[-1].fraction if methods else 0.5
    mt = None
    angle = 0.0
    for _ in range(3):
        angle = _try(notes, "modified_takagi angle", distribution_angle, model, line_id, ref_t,
                     float(min(max(start, 0.0), 1.0)), code) or 0.0
        mt = _try(notes, "modified_takagi", modified_takagi, ref_end, ld, angle)
        if mt is None:
            break
        start = mt.fraction
    if mt is not None:
        methods.append(mt)
    try:
        if ld.z0m_ohm_per_km != 0 and code.endswith("G"):
            # a coupled parallel circuit shares the zero-sequence current in a way a
            # two-port cannot hold: the model's own distribution along the line
            kw = {"distribution": sampled_distribution(model, line_id, ref_t)}
        else:
            kw = {"external": external_two_port(model, line_id, ref_t.bus)}
    except ModelError as exc:
        notes.append(f"eriksson: not run ({exc})")
    else:
        est = _try(notes, "eriksson", eriksson, ref_end, ld, **kw)
        if est is not None:
            methods.append(est)

    # the stage after the other end opened first, at either end
    for k, (e, t) in enumerate(zip(ends, terms, strict=True)):
        if e.i_remote_open is None:
            continue
        est = _try(notes, f"radial_stage ({t.id})", radial_stage, e,
                   line_from(model, line_id, t))
        if est is None:
            continue
        if k:
            est = LocatorEstimate(
                est.method, length - est.distance_km, length, ref_t.id,
                est.fault_resistance_ohm,
                est.notes + (f"from {t.id}'s record, after {ref_t.id} opened first",),
                dict(est.extra, measured_from=t.id))
        methods.append(est)
    radial = next((m for m in methods if m.method == "radial_stage"), None)
    # the other end opened within the fault window of an end: that window mixes two
    # states and every method on it errs (on simulated records with the far end
    # opening 20-25 ms after inception, by up to 20 % of the line), while the stage
    # after the opening locates within 0.02 %
    mixed = [t.id for e, t in zip(ends, terms, strict=True) if e.window_holds_remote_opening]
    if mixed and radial is not None:
        notes.append(f"the other end opened within the fault window of {', '.join(mixed)}: "
                     f"that window mixes the fault fed from both ends with the fault fed from "
                     f"one; the answer is from the stage fed from one end (radial_stage)")

    # two-ended
    sync = None
    two = None
    two_parts: dict[str, float] = {}
    fit_ends = [ref_end]
    ct_r, ct_ph = CT_CLASSES[opts.fit.ct_class]
    vt_r, vt_ph = VT_CLASSES[opts.fit.vt_class]
    ct_sigma = (ct_r / 2, math.radians(ct_ph / 60) / 2)
    vt_sigma = (vt_r / 2, math.radians(vt_ph / 60) / 2)
    if len(ends) == 2:
        remote = ends[1]
        sync = sync_check(ref_end, remote, opts.max_sync_offset_s)
        uns = _try(notes, "two_ended_unsync", two_ended_unsynchronised, ref_end, remote, ld)
        if uns is not None:
            methods.append(uns)
        synced = None
        if sync.synchronised:
            aligned = align_remote(ref_end, remote)
            agreement = prefault_agreement(ref_end, aligned, ld)
            if agreement is not None:
                off = agreement.v_angle_deg
                sync = replace(sync, prefault_angle_deg=off)
                if abs(off) > opts.max_prefault_angle_deg:
                    # time stamps that agree, phasors that do not: the recorders'
                    # anti-aliasing filters or channel skews differ (a 2nd-order filter at
                    # 360 Hz lags 60 Hz by 13.6 deg, one at 1152 Hz by 4.2 deg)
                    aligned = aligned.rotated(-math.radians(off))
                    sync = replace(sync, realigned=True)
                    notes.append(
                        f"two_ended_sync: the time stamps agree but the remote pre-fault "
                        f"positive-sequence voltage is {off:+.2f} deg off the local one "
                        f"carried along the line (more than {opts.max_prefault_angle_deg:g} "
                        f"deg: the recorders' anti-aliasing filters or channel skews "
                        f"differ?); the remote phasors were turned by {-off:+.2f} deg to the "
                        f"pre-fault state")
            synced = _try(notes, "two_ended_sync", two_ended_synchronised, ref_end, aligned,
                          ld, aligned=True)
            if synced is not None:
                methods.append(synced)
                two = synced
                fit_ends.append(aligned)
        else:
            notes.append(f"two_ended_sync: not run ({sync.reason})")
        if two is None and uns is not None:
            two = uns
            fit_ends.append(remote.rotated(np.radians(uns.extra["sync_angle_deg"])))
        if two is not None:
            is_sync = two.method == "two_ended_sync"
            rem_for = fit_ends[1] if len(fit_ends) > 1 else remote
            two_parts = _try(notes, "two-ended interval", two_ended_uncertainty, ref_end,
                             rem_for, ld, synchronised=is_sync, ct_sigma=ct_sigma,
                             vt_sigma=vt_sigma, z1_tolerance=opts.fit.z1_tolerance,
                             time_sigma_s=opts.time_sigma_s) or {}

    # model-matched solve
    fit = None
    comparison = None
    if opts.run_fit:
        seed = two or mt or (methods[-1] if methods else None)
        r0 = next((m.fault_resistance_ohm for m in reversed(methods)
                   if m.fault_resistance_ohm is not None), 1.0) or 1.0
        fit = _try(notes, "model_fit", fit_fault, model, line_id, fit_ends,
                   terms[:len(fit_ends)], start_fraction=seed.fraction if seed else 0.5,
                   start_r_ohm=max(r0, 0.0), options=opts.fit)
        if fit is not None:
            methods.append(LocatorEstimate(
                "model_fit", fit.distance_km, length, ref_t.id, fit.r_fault_ohm,
                (f"{len(fit_ends)} terminal(s)",),
                {"interval_km": list(fit.interval_km), "ground_resistance_ohm": fit.r_ground_ohm,
                 "remote_source_z_scale": fit.remote_z_scale,
                 "local_source_z_scale": fit.local_z_scale}))
            try:
                comparison = compare(fit, fit_ends, terms[:len(fit_ends)],
                                     ratio_tolerance=opts.ratio_tolerance,
                                     angle_tolerance_deg=opts.angle_tolerance_deg,
                                     options=opts.fit)
            except EventlabError as exc:
                notes.append(f"comparison: not made ({exc})")

    # the answer stood behind
    assumptions: list[str] = [
        "single-ended impedance methods: series-impedance line (shunt capacitance "
        "neglected); two-ended methods and the model fit: the model's line with its "
        "capacitance (distributed: exact equivalent pi per piece)"]
    if mixed and radial is not None:
        fit_ok = False
        two = None
        if comparison is not None:
            comparison = replace(comparison, verdicts=(
                f"the fault window of {', '.join(mixed)} holds the other end's opening: its "
                f"measured phasors mix two states, so this table does not judge the model",)
                + tuple(comparison.verdicts))
    elif fit is not None and two is not None and fit.chi2_scale > opts.max_fit_residual_scale:
        notes.append(f"model fit residual {fit.chi2_scale:.1f} times the measurement accuracy "
                     f"(more than {opts.max_fit_residual_scale:g}): the model does not match "
                     f"the records; the two-ended answer is given instead")
        fit_ok = False
    else:
        fit_ok = fit is not None
    if fit_ok:
        best = methods[-1]
        interval = fit.interval_km
        parts = fit.sigma_parts_km
        assumptions += list(fit.assumptions)
    elif two is not None:
        best = two
        sigma = math.sqrt(sum(v * v for v in two_parts.values()))
        k = opts.fit.coverage_factor
        interval = (max(0.0, two.distance_km - k * sigma), min(length, two.distance_km + k * sigma))
        parts = two_parts
        assumptions.append(f"two-ended interval: +/- {k:g} sigma from CT class "
                           f"{opts.fit.ct_class}, VT class {opts.fit.vt_class} (limits as two "
                           f"sigma), line Z1 tolerance {opts.fit.z1_tolerance:.0%}"
                           + (", clock alignment" if two.method == "two_ended_sync" else ""))
    elif radial is not None:
        best = radial
        interval, parts, words = _radial_interval(radial, code, length, opts)
        assumptions.append(words)
    elif mt is not None or methods:
        best = mt or methods[-1]
        half = 0.05 * length
        interval = (max(0.0, best.distance_km - half), min(length, best.distance_km + half))
        parts = {}
        assumptions.append("no model fit: interval +/- 5 % of the line length "
                           "(common practice, no source)")
    else:
        raise SignalError(f"locate: no method could locate the fault on line {line_id}; "
                          + "; ".join(notes))
    if radial is not None and best is not radial and not (
            interval[0] <= radial.distance_km <= interval[1]):
        notes.append(f"the stage with the other end open reads {radial.distance_km:.2f} km, "
                     f"outside the interval: a model error (the remote source, the line) or "
                     f"a fault that changed when the other end opened")
    beyond = _beyond_the_line(fit, methods, length, opts.max_fit_residual_scale)
    if beyond is not None:
        raise SignalError(f"locate: the fault appears to lie beyond an end of line {line_id} "
                          f"({beyond}): a fault outside this line (on the next line, or at "
                          f"the far bus), or a model that is not this network's; no location "
                          f"on this line is given")
    st = locate_structures(ld, best.distance_km, interval)
    return LocationReport(
        line_id=line_id, reference_terminal=ref_t.id, length_km=length, fault_type=code,
        best=best, interval_km=(float(interval[0]), float(interval[1])),
        methods=tuple(methods), fit=fit, structures=st, comparison=comparison, sync=sync,
        uncertainty_km={k: float(v) for k, v in parts.items()},
        assumptions=tuple(assumptions), notes=tuple(notes))


def _with_type(end: TerminalPhasors, code: str) -> TerminalPhasors:
    return replace(end, fault_type=code)


__all__ = ["CAUTION", "LocateOptions", "LocationReport", "locate_event"]
