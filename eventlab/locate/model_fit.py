"""Model-matched location: fit the network model's fault to the measured phasors.

Unknowns ``theta``: the distance ``m`` (fraction of the route from the
reference terminal), the fault resistance ``R_f`` (and ``R_g`` for
two-phase-to-ground faults), and optionally the logarithms of scale factors
on the source impedances behind the local and the remote bus and, for
ground faults seen from both ends or two-phase-to-ground faults seen from
one, of the line's Z0 (prior: its tolerance).

For each trial ``theta`` the fault solver (:func:`eventlab.network.faults.solve_fault`)
is run twice, once with only the local-side sources driving and once with only
the remote-side sources (the fault state is linear in the source EMFs).  The
two complex EMF multipliers ``a = (a_L, a_R)`` are then *calibrated* so that
the model's pre-fault positive-sequence voltage and current match the measured
ones at every recorded terminal (least squares; exact with one terminal), and
the residual compares the model's superimposed (fault minus pre-fault) phase
voltages and currents with the measured ones, weighted by the measurement
accuracy::

    r(theta) = [ (dX_model(theta; a(theta)) - dX_meas) / sigma ;  ln k / s_k ]

minimised with :func:`scipy.optimize.least_squares` within bounds.  The
source scales carry a prior (log-normal, ``s_k``) so that a single end, which
can see the remote infeed only through the fault-current distribution, still
gives a determined fit.

Interval (linearised covariance; e.g. Press et al., *Numerical Recipes*, 3rd
ed., 2007, sec. 15.5 and 15.6, from memory)::

    C = s^2 (J^T J)^-1 + sum_j G_j G_j^T s_j^2,    G_j = -(J^T J)^-1 J^T dr/dc_j

where ``s^2 = max(1, 2 cost / (n - p))`` and ``c_j`` are quantities held fixed
in the fit but known only to a tolerance ``s_j``: line Z0 and Z1, and the
ratio and phase errors of each terminal's current and voltage transformers
(common to the three phases of a set).  The interval is
``m +/- k sqrt(C_mm)`` (``k = 2`` by default).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from eventlab.errors import FitDidNotConverge, ModelError
from eventlab.network.faults import FaultResult, FaultSpec, solve_fault
from eventlab.network.model import NetworkModel, Terminal
from eventlab.symmetrical import abc_to_012

from .inputs import TerminalPhasors
from .line import LineData
from .loops import fault_resistance_from_loop, loop_voltage, select_loop
from .model_link import fraction_on_line, line_from
from .radial import stage_loop

#: Ratio error and phase displacement limits [fraction, minutes of arc] of
#: protective CT classes (IEC 61869-2:2012, table for 5P/10P, from memory)
#: and of VT classes (IEC 61869-3:2011, tables for 0.2 ... 6P, from memory).
CT_CLASSES: dict[str, tuple[float, float]] = {
    "0.2": (0.002, 10.0), "0.5": (0.005, 30.0), "1": (0.01, 60.0),
    "5P": (0.01, 60.0), "10P": (0.03, 180.0),  # 10P has no phase limit; 3 deg assumed
}
VT_CLASSES: dict[str, tuple[float, float]] = {
    "0.2": (0.002, 10.0), "0.5": (0.005, 20.0), "1": (0.01, 40.0),
    "3P": (0.03, 120.0), "6P": (0.06, 240.0),
}


@dataclass(frozen=True)
class FitOptions:
    """Settings of the model-matched solve.

    Parameters
    ----------
    fit_local_source, fit_remote_source : bool
        Fit a scale on the source impedances behind the local / remote bus.
    source_prior : float
        Standard deviation of ``ln k`` for the source scales (0.5: a factor
        1.65 either way at one sigma).  Measured both ways: on 100 random
        events whose sources were off the model file's by up to a factor 4
        (``bench_location_random.py --n 100``) 1.0 took the single-ended worst
        case from 0.42 % of the line to 0.23 %, but on the perturbed model of
        ``bench_location_accuracy.py`` (remote source 30 % weaker, Z0 5 % high)
        it took the single-phase worst case from 3.77 % to 4.10 % (0.7: 3.94 %)
        and the true-model one from 0.12 % to 0.15 %: where one end cannot tell
        the remote source from Z0 and the distance, a looser prior lets the fit
        wander further.  A caller who expects large source errors can widen it.
    ct_class, vt_class : str
        Accuracy classes, keys of :data:`CT_CLASSES` / :data:`VT_CLASSES`; the
        class limits are taken as two standard deviations.
    noise_fraction : float
        Random error of each phasor [fraction of its magnitude] (DFT leakage,
        quantisation), the weight of the residual.
    floor_fraction : float
        Further random error of each phasor [fraction of the largest phasor of
        its kind at the same end].  The defaults (0.2 % each) are about 2.5
        times the error measured on the location benchmark's quick grid: the
        superimposed fault-window phasors of its 40 simulated records (both
        ends, 16 to 256 samples per cycle, 0.1 % noise, anti-aliasing filter)
        were off the fault solver's by 0.025 % (median) and 0.08 % (95th
        percentile) of the nominal voltage and of the largest fault current.
        At 0.5 % each the source and Z0 priors outweighed the data: with the
        perturbed model the two-ended answer was 0.35 % off at worst and the
        single-ended two-phase-to-ground 0.75 %; at 0.2 % 0.10 % and 0.29 %,
        with the true model unchanged within 0.02 % of the line.
    z0_tolerance, z1_tolerance : float
        One-sigma tolerance of the line's Z0 and Z1 [fraction].
    coverage_factor : float
        ``k`` of the interval ``m +/- k sigma``.
    r_max_ohm : float
        Upper bound of ``R_f`` and ``R_g`` [ohm] (1000: a tree contact or a
        fault through dry ground reaches several hundred ohm; at 300 a
        simulated 450-ohm A-G fault at 20 % of the 230 kV line read 26 % of
        the line off with the fit on its bound, at 1000 0.06 %).
    """

    fit_local_source: bool = True
    fit_remote_source: bool = True
    source_prior: float = 0.5
    ct_class: str = "5P"
    vt_class: str = "0.5"
    noise_fraction: float = 0.002
    floor_fraction: float = 0.002
    z0_tolerance: float = 0.05
    z1_tolerance: float = 0.02
    coverage_factor: float = 2.0
    r_max_ohm: float = 1000.0

    def __post_init__(self) -> None:
        if self.ct_class not in CT_CLASSES:
            raise ModelError(f"FitOptions.ct_class: expected one of {', '.join(CT_CLASSES)}, "
                             f"got {self.ct_class!r}")
        if self.vt_class not in VT_CLASSES:
            raise ModelError(f"FitOptions.vt_class: expected one of {', '.join(VT_CLASSES)}, "
                             f"got {self.vt_class!r}")


@dataclass(frozen=True)
class ModelFitResult:
    """Result of :func:`fit_fault`.

    Distances are from the reference terminal (``terminal``) along the route.
    ``emf_multipliers`` are the calibrated complex factors on the model's
    local-side and remote-side source EMFs.
    """

    line_id: str
    terminal: str
    fault_type: str
    distance_km: float
    length_km: float
    r_fault_ohm: float
    r_ground_ohm: float
    local_z_scale: float
    remote_z_scale: float
    emf_multipliers: tuple[complex, complex]
    sigma_km: float
    interval_km: tuple[float, float]
    sigma_parts_km: dict
    residual_rms: float
    chi2_scale: float
    converged: bool
    nfev: int
    assumptions: tuple[str, ...]
    used_terminals: tuple[str, ...]
    model: NetworkModel = field(repr=False, compare=False)
    z0_scale: float = 1.0
    # the fault resistance of the stage after the other end opened first, where the
    # reference end recorded one (sequential clearing) [ohm]
    r_fault_open_ohm: float | None = None

    @property
    def fraction(self) -> float:
        return self.distance_km / self.length_km

    def spec(self) -> FaultSpec:
        """The fitted fault as a solver :class:`FaultSpec` (fraction from the ``from`` bus)."""
        t = self.model.terminal(self.terminal)
        f = fraction_on_line(self.model, self.line_id, t, self.fraction)
        return FaultSpec(self.line_id, float(np.clip(f, 0.0, 1.0)), self.fault_type,
                         self.r_fault_ohm, self.r_ground_ohm)


# ----------------------------------------------------------------------------- helpers

def _groups(model: NetworkModel, line_id: str, ref: Terminal) -> tuple[list[int], list[int]]:
    """Indices of local-side and remote-side sources (remote: at the far bus)."""
    far = model.line(line_id).other_end(ref.bus)
    remote = [k for k, s in enumerate(model.sources) if s.bus == far]
    local = [k for k in range(len(model.sources)) if k not in remote]
    return local, remote


def _variant(model: NetworkModel, line_id: str, ref: Terminal, keep: list[int],
             z_local: float, z_remote: float, z0_line: float = 1.0,
             z1_line: float = 1.0) -> NetworkModel:
    """Model with only sources ``keep`` driving and impedance scales applied."""
    far = model.line(line_id).other_end(ref.bus)
    srcs = []
    for k, s in enumerate(model.sources):
        scale = z_remote if s.bus == far else (z_local if s.bus == ref.bus else 1.0)
        srcs.append(dataclasses.replace(
            s, z1_ohm=s.z1_ohm * scale, z2_ohm=s.z2_ohm * scale, z0_ohm=s.z0_ohm * scale,
            emf_pu=s.emf_pu if k in keep else 0.0))
    lines = model.lines
    if z0_line != 1.0 or z1_line != 1.0:
        lines = tuple(dataclasses.replace(ln, sections=tuple(dataclasses.replace(
            sec, z0_ohm_per_km=sec.z0_ohm_per_km * z0_line,
            z1_ohm_per_km=sec.z1_ohm_per_km * z1_line) for sec in ln.sections))
            if ln.id == line_id else ln for ln in model.lines)
    return dataclasses.replace(model, sources=tuple(srcs), lines=lines)


@dataclass
class _Problem:
    model: NetworkModel
    line_id: str
    ref: Terminal
    ends: tuple[TerminalPhasors, ...]
    terminals: tuple[Terminal, ...]
    fault_type: str
    opts: FitOptions
    names: list[str]
    groups: tuple[list[int], list[int]]
    sigma: np.ndarray = None
    meas: np.ndarray = None
    pre: np.ndarray = None
    pre_sigma: np.ndarray = None
    # the reference end's stage with the other end open (None: not seen), the line
    # from that end, and the weight of the stage's fault-point mismatch [V]
    stage_end: TerminalPhasors | None = None
    stage_line: LineData | None = None
    stage_sigma: float = 1.0

    def unpack(self, x):
        p = dict(zip(self.names, x, strict=True))
        return (p["m"], p["rf"], p.get("rg", 0.0), math.exp(p.get("ln_ks", 0.0)),
                math.exp(p.get("ln_kr", 0.0)))

    def bases(self, x, z0_line=1.0, z1_line=1.0) -> list[FaultResult]:
        m, rf, rg, ks, kr = self.unpack(x)
        z0_line = z0_line * math.exp(dict(zip(self.names, x, strict=True)).get("ln_kz0", 0.0))
        f = float(np.clip(fraction_on_line(self.model, self.line_id, self.ref, m), 0.0, 1.0))
        spec = FaultSpec(self.line_id, f, self.fault_type, max(rf, 0.0), max(rg, 0.0))
        return [solve_fault(_variant(self.model, self.line_id, self.ref, g, ks, kr,
                                     z0_line, z1_line), spec)
                for g in self.groups if g]

    def states(self, bases, ends):
        """Calibrate the EMF multipliers; model superimposed phasors at the ends."""
        sign = [-1.0 if t.ct_polarity == "reversed" else 1.0 for t in self.terminals]
        a_rows, b = [], []
        noise = self.opts.noise_fraction
        for t, s, e in zip(self.terminals, sign, ends, strict=True):
            v1 = np.array([abc_to_012(r.terminals[t.id].v_abc_pre)[1] for r in bases])
            i1 = np.array([s * abc_to_012(r.terminals[t.id].i_abc_pre)[1] for r in bases])
            v1m, i1m = abc_to_012(e.v_pre)[1], abc_to_012(e.i_pre)[1]
            # weights as for the fault residual: relative to each quantity, with a
            # floor for a lightly loaded line
            sv = noise * max(abs(v1m), 1.0)
            si = noise * max(abs(i1m), 0.05 * float(np.max(np.abs(e.i_fault))), 1e-6)
            a_rows += [v1 / sv, i1 / si]
            b += [v1m / sv, i1m / si]
        amat, bvec = np.array(a_rows), np.array(b)
        a = np.linalg.lstsq(amat, bvec, rcond=None)[0]
        out = []
        for t, s in zip(self.terminals, sign, strict=True):
            dv = sum(ak * (r.terminals[t.id].v_abc - r.terminals[t.id].v_abc_pre)
                     for ak, r in zip(a, bases, strict=True))
            di = sum(ak * s * (r.terminals[t.id].i_abc - r.terminals[t.id].i_abc_pre)
                     for ak, r in zip(a, bases, strict=True))
            out.append(np.concatenate([dv, di]))
        return a, np.concatenate(out)

    def residual_from(self, model_vec, meas_vec, x):
        d = (model_vec - meas_vec) / self.sigma
        r = [d.real, d.imag]
        p = dict(zip(self.names, x, strict=True))
        for key in ("ln_ks", "ln_kr"):
            if key in p:
                prior = self.opts.source_prior * (STAGE_SOURCE_PRIOR_FACTOR
                                                  if self.stage_end is not None else 1.0)
                r.append(np.array([p[key] / prior]))
        if "ln_kz0" in p:
            r.append(np.array([p["ln_kz0"] / self.opts.z0_tolerance]))
        return np.concatenate(r)

    def stage_residual(self, x, z1_line: float = 1.0, end: TerminalPhasors | None = None):
        """Fault-point mismatch of the stage with the other end open, weighted (2,) or (0,)."""
        if self.stage_end is None:
            return np.empty(0)
        p = dict(zip(self.names, x, strict=True))
        line = self.stage_line.scaled(z1_line, math.exp(p.get("ln_kz0", 0.0)))
        v_l, i_l = stage_loop(end or self.stage_end, line, p["m"] * line.length_km)
        r_loop = max(p["rf_open"], 0.0) / fault_resistance_from_loop(self.fault_type, 1.0)
        d = (v_l - r_loop * i_l) / self.stage_sigma
        return np.array([d.real, d.imag])

    def total(self, vec, meas, x, z1_line: float = 1.0, end: TerminalPhasors | None = None):
        """Residuals of the fault window, the priors and the stage with the other end open."""
        return np.concatenate([self.residual_from(vec, meas, x),
                               self.stage_residual(x, z1_line, end)])

    def residual(self, x):
        _, vec = self.states(self.bases(x), self.ends)
        return self.total(vec, self.meas, x)


#: a suspect current's weight: its standard deviation this many times the largest
#: current of its end (the fit then all but ignores it).  On the saturating-CT
#: sample (close-in A-G, VELLMOOR's CT saturating) leaving the phase-A current out
#: took the two-ended fit from 6.19 km to 5.784 km (truth 5.784 km) and Rf from
#: 1.79 to 0.30 ohm (truth 0.3), single-ended from 5.83 to 5.80 km
SUSPECT_SIGMA_FACTOR = 1e4


#: with the stage fed from one end (the other end opened first) the distance no
#: longer hangs on the sources, and their prior is this many times looser: on 60
#: random sequential-clearing events with the sources off by 0.5-4
#: (``bench_location_random.py --n 60 --sequential``) the single-ended worst is
#: 0.42 % of the line, against 1.27 % with the prior as without the stage (the
#: line's Z0, fitted then, lets the source errors pull the distance) and 1.02 %
#: with no use of the stage at all; with the line's Z0 written 5 % high five
#: simulated cases moved by 0.05 % at most
STAGE_SOURCE_PRIOR_FACTOR = 2.0


def _measured(ends: Sequence[TerminalPhasors]) -> np.ndarray:
    return np.concatenate([np.concatenate([e.v_superimposed, e.i_superimposed]) for e in ends])


def _sigmas(ends: Sequence[TerminalPhasors], noise: float, floor: float) -> np.ndarray:
    """Standard deviation of each fault-window phasor [V], [A].

    ``noise`` of the phasor's own magnitude plus ``floor`` of the largest
    phasor of its kind at that end: the leakage of the fault transient into
    a one-cycle window is of the size of the largest signal, so the small
    currents of the sound phases are not trusted to a fraction of themselves.
    """
    out = []
    for e in ends:
        v_scale = max(np.max(np.abs(e.v_pre)), np.max(np.abs(e.v_fault)))
        i_scale = max(np.max(np.abs(e.i_fault)), np.max(np.abs(e.i_pre)), 1e-6)
        sv = noise * np.abs(e.v_fault) + floor * v_scale
        si = noise * np.abs(e.i_fault) + floor * i_scale
        # a current flagged as distorted (saturating CT) is left out of the fit:
        # its phasor can be several per cent and tens of degrees off
        si = np.where(np.asarray(e.i_suspect), SUSPECT_SIGMA_FACTOR * i_scale, si)
        out.append(np.concatenate([sv, si]))
    return np.concatenate(out)


def _scaled_end(e: TerminalPhasors, ct: complex = 1.0, vt: complex = 1.0) -> TerminalPhasors:
    stage = {} if e.i_remote_open is None else {
        "v_remote_open": e.v_remote_open * vt, "i_remote_open": e.i_remote_open * ct}
    return dataclasses.replace(e, v_pre=e.v_pre * vt, v_fault=e.v_fault * vt,
                               i_pre=e.i_pre * ct, i_fault=e.i_fault * ct, **stage)


# ----------------------------------------------------------------------------- the fit

def fit_fault(model: NetworkModel, line_id: str, ends: Sequence[TerminalPhasors],
              terminals: Sequence[Terminal], *, start_fraction: float = 0.5,
              start_r_ohm: float = 1.0, options: FitOptions | None = None) -> ModelFitResult:
    """Fit distance, fault resistance and source scales to the measured phasors.

    Parameters
    ----------
    model : NetworkModel
    line_id : str
    ends : sequence of TerminalPhasors
        Measured ends (the first is the reference); remote ends must already
        be referred to the reference end's time (see
        :func:`eventlab.locate.two_ended.align_remote`).
    terminals : sequence of Terminal
        Model terminal of each end.
    start_fraction, start_r_ohm : float
        Starting point (e.g. from a single-ended method) [-], [ohm].
    options : FitOptions, optional

    Returns
    -------
    ModelFitResult

    Raises
    ------
    FitDidNotConverge
        When the optimiser stops without meeting its tolerances.

    Notes
    -----
    See the module docstring for the residual and the interval.
    """
    opts = options or FitOptions()
    ends = tuple(ends)
    terminals = tuple(terminals)
    ref = terminals[0]
    code = ends[0].fault_type
    groups = _groups(model, line_id, ref)
    names = ["m", "rf"]
    two_phase_ground = code in ("ABG", "BCG", "CAG")
    if two_phase_ground:
        names.append("rg")
    # the stage after the other end opened first (sequential clearing): the fault
    # fed from this end alone, with its own fault resistance (an arc changes with
    # its current).  It reads the same loop impedance as the two-end stage, so it
    # does not tell Z0 from the distance either; Z0 is still fitted then, with its
    # tolerance as prior, because held it put the whole Z0 error on the distance
    # through the stage (A-G at 80 and 93 % with Z0 written 5 % high: -2.16 and
    # -2.48 % of the line held, measured with the source prior as without the stage;
    # -1.70 and -1.66 % fitted)
    stage = ends[0] if ends[0].i_remote_open is not None and code != "ABC" else None
    if stage is not None:
        names.append("rf_open")
    if opts.fit_local_source and any(model.sources[k].bus == ref.bus for k in groups[0]):
        names.append("ln_ks")
    if opts.fit_remote_source and groups[1]:
        names.append("ln_kr")
    # with both ends the zero-sequence currents of both sides make the line's
    # Z0 observable: fit its scale (prior: the Z0 tolerance) instead of
    # carrying its whole tolerance into the interval.  With one end and a
    # two-phase-to-ground fault the phase-to-phase loop locates the fault
    # free of Z0 and Rg, while the zero-sequence quantities are explained by
    # Z0, Rg and the sources together: holding Z0 fixed there lets a Z0 error
    # pull the distance, so the scale is fitted too (for a single-phase fault
    # one end cannot tell Z0 from the distance; its tolerance stays in the
    # interval as a held quantity)
    fit_z0 = code.endswith("G") and (len(ends) >= 2 or two_phase_ground or stage is not None)
    if fit_z0:
        names.append("ln_kz0")
    prob = _Problem(model, line_id, ref, ends, terminals, code, opts, names, groups)
    prob.meas = _measured(ends)
    prob.sigma = _sigmas(ends, opts.noise_fraction, opts.floor_fraction)
    if stage is not None:
        prob.stage_end = stage
        prob.stage_line = line_from(model, line_id, ref)
        # the measured loop voltage and the line's drop at the stage's current set
        # the size of what measurement errors leave at the fault point
        z_line = abs(prob.stage_line.z_to(prob.stage_line.length_km)[0])
        v_loop = abs(loop_voltage(stage.v_remote_open, select_loop(code)))
        i_max = float(np.max(np.abs(stage.i_remote_open)))
        prob.stage_sigma = max((opts.noise_fraction + opts.floor_fraction)
                               * (v_loop + z_line * i_max), 1e-9)

    r_start = float(np.clip(start_r_ohm, 0.0, opts.r_max_ohm))
    start = {"m": (float(np.clip(start_fraction, 0.0, 1.0)), 0.0, 1.0, 0.1),
             "rf": (r_start, 0.0, opts.r_max_ohm, 10.0),
             "rg": (1.0, 0.0, opts.r_max_ohm, 10.0),
             "rf_open": (r_start, 0.0, opts.r_max_ohm, 10.0)}
    log_scale = (0.0, math.log(0.1), math.log(10.0), 0.3)
    x0, lo, hi, x_scale = (list(v) for v in zip(*(start.get(nm, log_scale) for nm in names),
                                                strict=True))

    def run(xs):
        return least_squares(prob.residual, np.array(xs), bounds=(lo, hi), x_scale=x_scale,
                             method="trf", xtol=1e-9, ftol=1e-9, gtol=1e-9, max_nfev=200)

    best = run(x0)
    n_res = best.fun.size
    if 2.0 * best.cost / max(n_res - len(x0), 1) > 4.0:
        # a poor fit: try once more from the other half of the line (local minimum?)
        alt = list(x0)
        alt[0] = 1.0 - x0[0] if abs(x0[0] - 0.5) > 0.2 else (0.25 if x0[0] > 0.5 else 0.75)
        other = run(alt)
        if other.cost < best.cost:
            best = other
    sol = best
    if sol.status <= 0:
        raise FitDidNotConverge(f"model fit on line {line_id}: {sol.message} after "
                                f"{sol.nfev} evaluations")
    x = sol.x
    n, p = sol.fun.size, x.size
    chi2 = max(1.0, 2.0 * sol.cost / max(n - p, 1))
    jac = sol.jac
    jtj_inv = np.linalg.pinv(jac.T @ jac)
    length = model.line(line_id).length_km
    parts: dict[str, float] = {"fit": math.sqrt(chi2 * jtj_inv[0, 0]) * length}

    # consider parameters: dr/dc by a forward difference at the solution
    bases = prob.bases(x)
    r0 = sol.fun

    def sens(r_c, h):
        g = -jtj_inv @ jac.T @ ((r_c - r0) / h)
        return g[0] * length  # [km] per unit of c

    h = 1e-4
    held = [("line Z1", {"z1_line": 1 + h}, opts.z1_tolerance)]
    if not fit_z0:
        held.insert(0, ("line Z0", {"z0_line": 1 + h}, opts.z0_tolerance))
    for label, kw, tol in held:
        _, vec = prob.states(prob.bases(x, **kw), ends)
        parts[label] = abs(sens(prob.total(vec, prob.meas, x, kw.get("z1_line", 1.0)),
                                h)) * tol
    ct_r, ct_ph = CT_CLASSES[opts.ct_class]
    vt_r, vt_ph = VT_CLASSES[opts.vt_class]
    for k, t in enumerate(terminals):
        for label, ct, vt, tol in (
                ("CT ratio", 1 + h, 1.0, ct_r / 2), ("CT phase", np.exp(1j * h), 1.0,
                                                     math.radians(ct_ph / 60) / 2),
                ("VT ratio", 1.0, 1 + h, vt_r / 2), ("VT phase", 1.0, np.exp(1j * h),
                                                     math.radians(vt_ph / 60) / 2)):
            pert = list(ends)
            pert[k] = _scaled_end(ends[k], ct, vt)
            _, vec = prob.states(bases, pert)
            r_c = prob.total(vec, _measured(pert), x,
                             end=pert[0] if k == 0 and stage is not None else None)
            parts[f"{label} {t.id}"] = abs(sens(r_c, h)) * tol
    sigma_km = math.sqrt(sum(v * v for v in parts.values()))
    m, rf, rg, ks, kr = prob.unpack(x)
    d = m * length
    half = opts.coverage_factor * sigma_km
    a, _ = prob.states(bases, ends)
    a = tuple(complex(v) for v in a) + (0j,) * (2 - len(a))
    assumptions = (
        "the faulted line as the network model has it (series impedance and capacitance "
        "per km, distributed: exact equivalent pi per piece); loads are the model's linear "
        "elements",
        "source EMFs calibrated to the measured pre-fault positive-sequence voltage and "
        "current; the fault is fitted on superimposed (fault minus pre-fault) phasors",
        f"source impedance scales fitted with a log-normal prior (sigma "
        f"{opts.source_prior * (STAGE_SOURCE_PRIOR_FACTOR if stage is not None else 1.0):g})"
        if ("ln_ks" in names or "ln_kr" in names) else "source impedances as in the model",
        f"CT class {opts.ct_class}, VT class {opts.vt_class}: class limits taken as two "
        f"standard deviations, common to the three phases of a set",
        (f"line Z0 scale fitted (prior sigma {opts.z0_tolerance:.0%}); Z1 tolerance "
         f"{opts.z1_tolerance:.0%} (one sigma)" if fit_z0 else
         f"line Z0 tolerance {opts.z0_tolerance:.0%} and Z1 tolerance {opts.z1_tolerance:.0%} "
         f"(one sigma)"),
        f"interval = estimate +/- {opts.coverage_factor:g} sigma, linearised; residual scale "
        f"{math.sqrt(chi2):.2f}",
        "mutual coupling to parallel circuits as in the network model",
    ) + (("the stage after the other end opened first fitted too (its own fault "
          "resistance; the open line's charging from the model)",) if stage is not None
         else ()) + tuple(
        f"fault-window current of phase{'s' if sum(e.i_suspect) > 1 else ''} "
        f"{', '.join(p for p, b in zip('ABC', e.i_suspect, strict=True) if b)} at "
        f"{t.id} left out (CT saturation suspected)"
        for e, t in zip(ends, terminals, strict=True) if any(e.i_suspect))
    return ModelFitResult(
        line_id=line_id, terminal=ref.id, fault_type=code, distance_km=d, length_km=length,
        r_fault_ohm=float(rf), r_ground_ohm=float(rg), local_z_scale=ks, remote_z_scale=kr,
        emf_multipliers=a[:2], sigma_km=sigma_km,
        interval_km=(max(0.0, d - half), min(length, d + half)),
        sigma_parts_km=parts, residual_rms=float(np.sqrt(np.mean(sol.fun ** 2))),
        chi2_scale=math.sqrt(chi2), converged=bool(sol.status > 0), nfev=int(sol.nfev),
        assumptions=assumptions, used_terminals=tuple(t.id for t in terminals),
        model=model, z0_scale=float(math.exp(dict(zip(names, x, strict=True)).get("ln_kz0", 0.0))),
        r_fault_open_ohm=None if stage is None else float(
            dict(zip(names, x, strict=True))["rf_open"]))


def computed_phasors(fit: ModelFitResult, ends: Sequence[TerminalPhasors],
                     terminals: Sequence[Terminal], *, nominal: bool = False,
                     options: FitOptions | None = None) -> list[tuple[np.ndarray, np.ndarray]]:
    """The model's fault-window ``(v_abc, i_abc)`` at each end for the fitted fault.

    Sources are calibrated to the ends' pre-fault phasors as in the fit, so
    the phasors are in the records' angle reference.  ``nominal=True`` keeps
    the source impedances as the model file has them (no fitted scales), to
    set the model as the protection study has it beside the records.
    Currents into the line [A], voltages line-to-ground [V].
    """
    model = fit.model
    ref = model.terminal(fit.terminal)
    terminals = tuple(terminals)
    opts = options or FitOptions()
    names = ["m", "rf", "rg", "ln_ks", "ln_kr", "ln_kz0"]
    prob = _Problem(model, fit.line_id, ref, tuple(ends), terminals, fit.fault_type, opts,
                    names, _groups(model, fit.line_id, ref))
    ks, kr = (1.0, 1.0) if nominal else (fit.local_z_scale, fit.remote_z_scale)
    x = [fit.fraction, fit.r_fault_ohm, fit.r_ground_ohm, math.log(ks), math.log(kr),
         0.0 if nominal else math.log(fit.z0_scale)]
    bases = prob.bases(x)
    a, _ = prob.states(bases, ends)
    out = []
    for t in terminals:
        s = -1.0 if t.ct_polarity == "reversed" else 1.0
        v = sum(ak * r.terminals[t.id].v_abc for ak, r in zip(a, bases, strict=True))
        i = sum(ak * s * r.terminals[t.id].i_abc for ak, r in zip(a, bases, strict=True))
        out.append((np.asarray(v), np.asarray(i)))
    return out
