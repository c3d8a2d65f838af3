"""Timeline of an event at one line terminal.

Fault inception from superimposed (delta) quantities against one cycle
earlier; pole opening and closing per phase; trip and breaker-status edges;
fault intervals (an evolving fault and a reclosure onto a fault give separate
intervals), each with its pre-fault and fault windows and its classification.

Arrays in, frozen dataclasses out; times are seconds from the record's first
sample.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from eventlab.errors import SignalError
from eventlab.faulttypes import NO_FAULT, faulted_phases
from eventlab.signals.classify import ABC_SAG, ABC_STEP, Classification, classify_fault
from eventlab.signals.phasors import (
    dft_phasors,
    fault_window_current,
    window_fit,
    window_model,
)
from eventlab.signals.sequence import sequence_phasors
from eventlab.signals.windows import Window, fault_window, prefault_window, steady_window
from eventlab.symmetrical import abc_to_012

PHASES = ("A", "B", "C")

#: detector settings (common practice, no source)
ONSET_REL = 0.005        # delta above this fraction of the channel's local peak ...
ONSET_SIGMAS = 5.0       # ... plus this many baseline standard deviations
OPEN_REL = 0.03          # pole open: |i| below this fraction of the phase's fault peak
NEG_ZERO_RATIO = 0.10    # |I2| or |I0| over max(|I1|, scale): unbalanced fault
#: a fault interval whose fault-window currents are all under this fraction of the
#: record's largest current phasor is no fault (a dead line's voltages changing; common
#: practice, no source: a shunt fault on a live line drives current)
DEAD_LINE_CURRENT = 0.02
#: the same for the change of I2 or I0 from the record's first cycle (a standing
#: unbalance does not count): a 450-ohm A-G fault at 20 % of the 230 kV demo line
#: gives 7 % at the far end, under NEG_ZERO_RATIO (common practice, no source)
DELTA_UNBAL_RATIO = 0.05
V_SAG = 0.90             # |V1| under this times the reference: voltage sag
V_UNBAL = 0.05           # |V2| or |V0| over the reference |V1|
_CP_LEN = 0.5            # change point: pre and post segment [cycles]
_CP_BACK = 0.25          # candidates back from the threshold detector's sample [cycles]
_CP_FWD = 0.0            # ... and forward beyond the next sample [cycles] (see refine_onset)
_CP_DEG_STEP = 0         # polynomial degree of the post-onset offset: voltages
_CP_DEG_CONT = 1         # ... currents (decaying offset)
_BASE_MIN = 64           # fewest samples for a noise baseline (where the record holds them)
_CP_FRACTIONS = (np.arange(8) + 0.5) / 8.0   # sub-sample onset offsets tried
_CURRENT_ROWS = np.array([False, False, False, True, True, True])   # rows of [dv; di]


@dataclass(frozen=True)
class PoleEvent:
    """A pole (phase) opening or closing at this terminal, from its current."""

    phase: str
    kind: str           # "open" | "close"
    time_s: float
    index: int

    def to_dict(self) -> dict:
        return {"phase": self.phase, "kind": self.kind, "time_s": self.time_s,
                "index": self.index}


@dataclass(frozen=True)
class StatusEdge:
    """A change of a status channel: ``state`` is the new value (0/1)."""

    channel: str
    role: str           # "trip" | "breaker" | "status"
    time_s: float
    index: int
    state: int
    asserted: bool      # the new state differs from the channel's normal state

    def to_dict(self) -> dict:
        return {"channel": self.channel, "role": self.role, "time_s": self.time_s,
                "index": self.index, "state": self.state, "asserted": self.asserted}


@dataclass(frozen=True)
class RemoteOpenStage:
    """The part of a fault fed from this end alone: the line's other end opened first.

    Sequential clearing (common practice, no source): when the other end's
    breaker opens before this one, the fault stays on through this end only,
    and this end's current is then the fault current (plus the charging of the
    line).  Recognised where the currents and voltages changed before this
    terminal's poles opened and, over the window after the change, every
    unfaulted phase carries at most :data:`REMOTE_OPEN_HEALTHY_RATIO` times the
    smallest faulted-phase current (with the other end open, the unfaulted
    phases of an unbalanced fault carry no fault current; :func:`fed_from_one_end`).
    A three-phase fault's stage stays unconfirmed (``confirmed``): one end
    cannot tell the other end's opening from a change of the fault.

    Attributes
    ----------
    change_s : float
        Record time the currents (else the voltages) departed from the two-end
        state [s].
    window : Window
        The window the phasors come from (from one cycle after the change,
        up to three cycles, ending an eighth of a cycle before this end's first
        pole opens).
    i, v : complex arrays (3,)
        Current [A] and voltage [V] phasors over ``window``, on the record's
        DFT reference (the same as the fault window's).
    healthy_ratio : float
        Largest unfaulted-phase current over the smallest faulted-phase
        current in ``window``.
    in_fault_window : bool
        The other end opened inside the fault window's first cycle (within
        about two cycles of inception): that window then mixes the fault fed
        from both ends with the fault fed from this end alone.
    confirmed : bool
        False for a three-phase fault: the record shows a change before this
        end's poles opened but cannot show it was the other end's opening;
        the other end's record can (its poles' opening times, see
        :func:`eventlab.analysis.analyze`).
    """

    change_s: float
    window: Window
    i: np.ndarray = field(repr=False, compare=False)
    v: np.ndarray = field(repr=False, compare=False)
    healthy_ratio: float = 0.0
    in_fault_window: bool = False
    confirmed: bool = True

    def to_dict(self) -> dict:
        return {"change_s": self.change_s, "window": self.window.to_dict(),
                "healthy_ratio": self.healthy_ratio, "in_fault_window": self.in_fault_window,
                "confirmed": self.confirmed,
                "currents": [[float(abs(x)), float(np.degrees(np.angle(x)))] for x in self.i],
                "voltages": [[float(abs(x)), float(np.degrees(np.angle(x)))] for x in self.v]}


#: unfaulted-phase current over the smallest faulted-phase current at most this in
#: the stage after a change for it to be the other end's opening: radial, they carry
#: line charging only (a few per cent of the fault current: 135 A for 300 km of
#: 230 kV line against 1.2 kA in a 50-ohm ground fault is 11 %), while with both
#: ends closed they carry load and the difference of the two ends' distributions
#: (common practice, no source)
REMOTE_OPEN_HEALTHY_RATIO = 0.2
#: ... and the largest unfaulted-phase current at most this fraction of what it was
#: with both ends closed (load gone: 25 A of charging against 400 A of load on the
#: sequential-clearing sample, 0.06; common practice for the margin, no source)
REMOTE_OPEN_HEALTHY_DROP = 0.3
#: changes followed at most, each to the next, to find the last one before this
#: end's poles open (the stage fed from this end alone)
STAGE_MAX_CHANGES = 20


@dataclass(frozen=True)
class FaultInterval:
    """One fault stage: from ``start_s`` to ``end_s`` (None if still on at the record's end)."""

    kind: str                       # "fault" | "evolved" | "reclose"
    type: str
    start_s: float
    end_s: float | None
    start_index: int
    end_index: int | None
    classification: Classification
    prefault: Window | None
    fault: Window
    pole_open_s: tuple[float | None, float | None, float | None]
    cleared_by_poles: bool
    tau_s: float | None             # offset time constant of the fault window [s] (given, or
                                    # fitted on the phase with the largest offset)
    i_prefault: np.ndarray = field(repr=False, compare=False)   # (3,) [A]
    v_prefault: np.ndarray = field(repr=False, compare=False)   # (3,) [V]
    i_fault: np.ndarray = field(repr=False, compare=False)
    v_fault: np.ndarray = field(repr=False, compare=False)
    # what the fault-window fit leaves, RMS over the window / fundamental RMS, per phase
    # (None when the window was not fitted): a saturating CT or an arc leaves per cents
    i_residual: np.ndarray | None = field(default=None, repr=False, compare=False)
    v_residual: np.ndarray | None = field(default=None, repr=False, compare=False)
    # the same for the currents over the whole steady part of the stage when the window
    # was cut short while the voltages stayed steady (else i_residual; None when the
    # network changed inside): the evidence of a saturating CT
    i_distortion: np.ndarray | None = field(default=None, repr=False, compare=False)
    # the fault fed from this end alone after the other end opened first (None if not seen)
    remote_open: RemoteOpenStage | None = field(default=None, compare=False)

    @property
    def duration_ms(self) -> float | None:
        return None if self.end_s is None else 1e3 * (self.end_s - self.start_s)


@dataclass(frozen=True)
class Timeline:
    """Timeline of one terminal; the headline figures refer to the first fault."""

    inception_s: float | None
    clearing_s: float | None
    duration_ms: float | None
    duration_cycles: float | None
    relay_time_ms: float | None
    breaker_time_ms: float | None
    trip_s: float | None
    pole_open_s: tuple[float | None, float | None, float | None]
    intervals: tuple[FaultInterval, ...]
    poles: tuple[PoleEvent, ...]
    edges: tuple[StatusEdge, ...]
    flags: tuple[str, ...]
    fault_type: str


# ------------------------------------------------------------------ pieces
def superimposed(samples, samples_per_cycle: int,
                 cycle_samples: float | None = None) -> np.ndarray:
    """``dx_k = x_k - x(t_k - T)`` along the last axis (NaN for the first cycle).

    Parameters
    ----------
    samples : array (..., n)
    samples_per_cycle : int
        Samples per nominal cycle ``N``.
    cycle_samples : float, optional
        Length of the actual cycle ``T`` [samples] when the frequency is off
        nominal (``fs / f``); ``x(t_k - T)`` is then interpolated linearly
        between samples.  Default ``N``.

    Notes
    -----
    Superimposed (incremental) quantities: the change against the same point
    of the previous cycle; zero in a steady state.
    """
    x = np.asarray(samples, dtype=float)
    n = int(samples_per_cycle)
    d = np.full(x.shape, np.nan)
    if cycle_samples is None or abs(cycle_samples - n) < 1e-9:
        d[..., n:] = x[..., n:] - x[..., :-n]
        return d
    c = float(cycle_samples)
    k0 = int(np.ceil(c)) + 1
    if x.shape[-1] <= k0:
        return d
    pos = np.arange(k0, x.shape[-1]) - c
    j = np.floor(pos).astype(int)
    w = pos - j
    d[..., k0:] = x[..., k0:] - (x[..., j] * (1.0 - w) + x[..., j + 1] * w)
    return d


def detect_onset(delta, search: tuple[int, int], baseline: tuple[int, int],
                 peak: np.ndarray | None = None, *, baseline_max: bool = False) -> int | None:
    """First sample of a disturbance in ``delta`` (c, n) within ``search`` = [a, b).

    A channel exceeds its threshold when it departs from the baseline's median
    by ``5 sigma + 0.005 peak``, with ``sigma``
    from the median absolute deviation of ``delta`` over ``baseline`` (or, with
    ``baseline_max``, ``1.2 max|delta|`` over the baseline instead of
    ``5 sigma``: for a baseline that holds a decaying offset), ``peak`` the
    channel's largest instantaneous value near the event.  The onset is the
    first sample that exceeds in some channel that also exceeds in at least
    two more of the following seven samples (a lone spike is not an onset).
    """
    d = np.atleast_2d(np.asarray(delta, dtype=float))
    a, b = max(search[0], 0), min(search[1], d.shape[-1])
    if b - a < 1:
        return None
    b0, b1 = max(baseline[0], 0), max(min(baseline[1], d.shape[-1]), 0)
    level = np.zeros(d.shape[0])
    centre = np.zeros((d.shape[0], 1))
    if b1 - b0 >= 4:
        base = d[:, b0:b1]
        base = np.where(np.isfinite(base), base, 0.0)
        if baseline_max:
            level = 1.2 * np.max(np.abs(base), axis=1)
        else:
            # departures from the baseline's own median: a dead line's trapped charge
            # leaking away gives a superimposed value that sits off zero for cycles
            centre = np.median(base, axis=1, keepdims=True)
            level = ONSET_SIGMAS * 1.4826 * np.median(np.abs(base - centre), axis=1)
    d = d - centre
    pk = np.zeros(d.shape[0]) if peak is None else np.asarray(peak, dtype=float)
    thr = level + ONSET_REL * pk
    seg = np.abs(d[:, a:min(b + 7, d.shape[-1])])
    seg = np.where(np.isfinite(seg), seg, 0.0)
    over = seg > thr[:, None]
    width = min(8, over.shape[1])
    c = np.cumsum(np.pad(over, ((0, 0), (1, 0))), axis=1)
    cnt = c[:, width:] - c[:, :-width]                 # exceedances in [k, k + width - 1]
    need = 3 if width >= 8 else 1
    okc = over[:, :cnt.shape[1]] & (cnt >= need)
    hits = np.nonzero(okc.any(axis=0)[:b - a])[0]
    if not hits.size:
        return None
    k = a + int(hits[0])
    # step back over samples that already depart from the noise (2.5 sigma plus a
    # quarter of the relative term, same sign)
    # in a channel that triggered, at most three samples
    chans = np.nonzero(okc[:, k - a])[0]
    low = (0.5 * level if not baseline_max else level) + 0.25 * ONSET_REL * pk
    for _ in range(3):
        j = k - 1
        if j < max(a - 3, 0):
            break
        dj, dk = d[chans, j], d[chans, k]
        if np.any(np.isfinite(dj) & (np.abs(dj) > low[chans]) & (np.sign(dj) == np.sign(dk))):
            k = j
        else:
            break
    return k


def refine_onset(delta, k_coarse: int, samples_per_cycle: int, *, lo: int,
                 hi: int | None = None, sigma=None, peak=None,
                 cycle_samples: float | None = None, continuous=None,
                 samples=None, max_cycles: int = 4) -> float:
    """Change point of the superimposed channels ``delta`` (c, n) near ``k_coarse``.

    Parameters
    ----------
    delta : array (c, n)
        Superimposed samples (currents and voltages, any units), NaN where
        undefined.
    k_coarse : int
        First sample flagged by a threshold detector (:func:`detect_onset`);
        under noise it is late by up to a quarter cycle.
    samples_per_cycle : int
        Samples per nominal cycle ``N``.
    lo, hi : int
        Candidate onsets ``k`` lie in ``[max(lo, k_coarse - N/4), hi]``; ``lo`` is
        the first sample that may start a fault (after the baseline), ``hi``
        defaults to ``k_coarse + 1`` (``_CP_FWD`` cycles more: measured better
        under 2 % noise, worse on a record whose CT saturates early).
    sigma : array (c,), optional
        Noise standard deviation of each channel's delta; default from the median
        absolute deviation of ``delta`` over the cycle before the candidates.
    peak : array (c,), optional
        Channel scale; the noise used as weight is at least ``1e-6 peak``
        (clean records).
    cycle_samples : float, optional
        Actual cycle length [samples] (off nominal); default ``N``.
    continuous : bool array (c,), optional
        Channels that cannot step at the onset (currents: the network is
        inductive); their post-onset model is constrained to zero at the
        onset instant.
    samples : array (c, n), optional
        The raw samples ``delta`` was made from.  Given, the fit uses the
        change against the mean of up to ``max_cycles`` earlier cycles (as
        many as the record holds before the segment): its noise is
        ``sqrt(1 + 1/K)`` instead of ``sqrt(2)`` times that of the samples, and
        harmonics in the steady state still cancel.
    max_cycles : int
        Most cycles averaged for the reference.

    Returns
    -------
    float
        The onset instant [samples from the record's first sample]: the first
        fault sample is ``ceil`` of it.  With continuous channels the instant
        is resolved to an eighth of a sample (the offset within the sample that
        best meets the constraint), else it is half a sample before the first
        fault sample.

    Notes
    -----
    Maximum-likelihood change point under white Gaussian noise (D. V.
    Hinkley, "Inference about the change-point in a sequence of random
    variables", Biometrika 57(1), 1970; M. Basseville and I. V. Nikiforov,
    *Detection of Abrupt Changes*, Prentice Hall 1993, ch. 2): for each
    candidate ``k`` the cost is

    ``J(k) = sum_c [ sum_{j=a}^{k-1} d_cj^2 + ||(I - P_k) d_c[k:b]||^2 ] / sigma_c^2``

    with ``d = 0`` before the fault and, after it, ``d`` in the span of
    ``cos wt, sin wt, 1`` for step channels (voltages) and ``cos wt, sin wt,
    1, t`` for continuous ones (currents: the superimposed fundamental and a
    decaying offset to first order), the latter constrained to zero at the
    onset instant ``k - f``: the constrained fit explains
    ``(c^T theta)^2 / (c^T G^-1 c)`` less than the free one (``c`` the basis
    at ``k - f``, ``G`` the Gram matrix).  ``P_k`` is the projection on the
    span over the rows from ``k``; the data are the fixed segment ``[a, b)``
    from ``M = max(N/2, 12)`` samples before the first candidate to ``L =
    max(N/2, 6)`` after the last (within a cycle of the onset, where the
    delta still compares fault with pre-fault).  Reverse prefix sums of the
    Gram matrix make all candidates one batched solve.  The onset is the
    ``(k, f)`` of least ``J``.  All channels (three currents, three voltages)
    enter with their own noise weight.
    """
    d = np.atleast_2d(np.asarray(delta, dtype=float))
    n = int(samples_per_cycle)
    n_t = d.shape[-1]
    L = max(int(_CP_LEN * n), 6)          # post segment within a cycle of the onset
    M = max(int(_CP_LEN * n), 12)
    c_len = float(n if cycle_samples is None else cycle_samples)
    k_lo = max(int(lo), k_coarse - int(_CP_BACK * n), M)
    k_hi = min(k_coarse + 1 + int(_CP_FWD * n) if hi is None else int(hi), n_t - L)
    if k_hi < k_lo:
        return k_coarse - 0.5
    seg = d[:, k_lo - M:k_hi + L]
    ok = np.isfinite(seg).all(axis=1)
    if not ok.any():
        return k_coarse - 0.5
    seg = seg[ok]
    if sigma is None:
        b0 = max(k_lo - M - max(n, _BASE_MIN), 0)
        base = d[ok, b0:k_lo - M]
        base = base[:, np.isfinite(base).all(axis=0)]
        if base.shape[1] < 4:
            base = seg[:, :M]
        med = np.median(base, axis=1, keepdims=True)
        sig = 1.4826 * np.median(np.abs(base - med), axis=1)
    else:
        sig = np.asarray(sigma, dtype=float)[ok]
    n_cyc = min(int(max_cycles), int((k_lo - M - 1) // c_len)) if samples is not None else 1
    if n_cyc >= 2:
        x = np.atleast_2d(np.asarray(samples, dtype=float))[ok]
        a0 = k_lo - M - int(np.ceil(n_cyc * c_len)) - 2
        xs = x[:, max(a0, 0):k_hi + L]
        ref = np.zeros((xs.shape[0], seg.shape[1]))
        for m in range(1, n_cyc + 1):
            dm = superimposed(xs, m * n, None if cycle_samples is None else m * c_len)
            ref += dm[:, -seg.shape[1]:]
        seg_k = ref / n_cyc
        if np.isfinite(seg_k).all():
            seg = seg_k
            # white noise: the one-cycle delta has sqrt(2) sigma, this one sqrt(1 + 1/K)
            sig = sig * np.sqrt((1.0 + 1.0 / n_cyc) / 2.0)
    pk = np.max(np.abs(seg), axis=1) if peak is None else np.asarray(peak, dtype=float)[ok]
    sig = np.maximum(sig, 1e-6 * np.maximum(pk, 1e-300))
    z = seg / sig[:, None]
    n_s = seg.shape[1]
    w = 2.0 * np.pi / c_len
    rows = np.arange(M, M + k_hi - k_lo + 1)                 # candidate k at row k - k_lo + M
    cont = np.zeros(d.shape[0], dtype=bool) if continuous is None else \
        np.asarray(continuous, dtype=bool)[ok]
    fracs = np.asarray(_CP_FRACTIONS)
    cost = np.zeros((fracs.size, rows.size))
    if (~cont).any():
        cost += _cp_cost(z[~cont], rows, w, n_s, _CP_DEG_STEP, None)[None, :]
    if cont.any():
        cost += _cp_cost(z[cont], rows, w, n_s, _CP_DEG_CONT, fracs)
    else:
        cost[:] = cost[fracs.size // 2]
        fracs = np.full(fracs.size, 0.5)
    fi, m = np.unravel_index(int(np.argmin(cost)), cost.shape)
    return float(k_lo + m - fracs[fi])


def _cp_basis(j, w: float, n_s: int, deg: int) -> np.ndarray:
    u = 2.0 * (j - 0.5 * (n_s - 1)) / n_s
    return np.column_stack([np.cos(w * j), np.sin(w * j)] + [u ** p for p in range(deg + 1)])


def _cp_cost(z, rows, w: float, n_s: int, deg: int, fracs) -> np.ndarray:
    """Change-point cost of each candidate row for channels ``z`` (c, n_s), noise-scaled.

    Pre part: sum of squares before the row; post part: least-squares residual on
    the basis of :func:`_cp_basis` over the rows from the candidate on (its span
    on absolute rows is the post-onset model of every candidate: one reverse
    cumulative Gram matrix serves all).  With ``fracs``, the fit is constrained
    to zero at ``row - f`` for each ``f``: the constrained fit explains
    ``(c^T theta)^2 / (c^T G^-1 c)`` less; returns (len(fracs), len(rows)) then,
    else (len(rows),).
    """
    j = np.arange(n_s, dtype=float)
    basis = _cp_basis(j, w, n_s, deg)
    gram = np.cumsum((basis[:, :, None] * basis[:, None, :])[::-1], axis=0)[::-1]
    bz = np.cumsum((z.T[:, :, None] * basis[:, None, :])[::-1], axis=0)[::-1]
    e2 = (z * z).sum(axis=0)
    zz = np.cumsum(e2[::-1])[::-1]
    z2c = np.concatenate([[0.0], np.cumsum(e2)])
    g = gram[rows]
    r = bz[rows]                                             # (n_k, c, p)
    coef = np.linalg.solve(g, np.swapaxes(r, 1, 2))          # (n_k, p, c)
    cost = z2c[rows] + zz[rows] - np.einsum("kcp,kpc->k", r, coef)
    if fracs is None:
        return cost
    out = np.empty((len(fracs), rows.size))
    for q, f in enumerate(fracs):
        cvec = _cp_basis(rows - f, w, n_s, deg)               # (n_k, p)
        den = np.einsum("kp,kp->k", cvec, np.linalg.solve(g, cvec[:, :, None])[:, :, 0])
        val = np.einsum("kp,kpc->kc", cvec, coef)             # model value at the onset
        out[q] = cost + (val * val).sum(axis=1) / den
    return out


def pole_events(time_s, i_abc, samples_per_cycle: int, floor_a: float = 0.0,
                start_index: int = 0) -> tuple[PoleEvent, ...]:
    """Pole openings and closings per phase from the phase currents.

    A pole is open from the first sample after which ``|i|`` stays under its
    threshold for at least half a cycle, until ``|i|`` exceeds it again.  The
    threshold is ``max(floor_a, 0.03 * max|i|)`` per phase; a phase whose
    largest current is under ``3 floor_a`` (noise only) has no events.

    Parameters
    ----------
    time_s : (n,) [s]
    i_abc : (3, n) [A]
    samples_per_cycle : int
    floor_a : float
        Absolute floor [A] (a few noise standard deviations).
    start_index : int
        Only events at or after this sample are reported.
    """
    i = np.abs(np.asarray(i_abc, dtype=float))
    n = int(samples_per_cycle)
    half = max(n // 2, 2)
    out = []
    for p in range(3):
        x = i[p]
        peak = float(np.nanmax(x[start_index:])) if x[start_index:].size else 0.0
        if peak <= 3.0 * floor_a:
            continue            # current at the noise level: the pole state cannot be told
        thr = max(floor_a, OPEN_REL * peak)
        below = x <= thr
        # quiet[k]: samples k .. k+half-1 are all below
        c = np.concatenate([[0], np.cumsum(below)])
        quiet = np.zeros_like(below)
        m = below.size - half + 1
        if m > 0:
            quiet[:m] = (c[half:] - c[:-half]) == half
        state_open = False
        k = start_index
        # walk the (few) transitions: vectorised searches, not a loop over samples
        while k < below.size:
            if not state_open:
                cand = np.nonzero(quiet[k:])[0]
                if not cand.size:
                    break
                k = k + int(cand[0])
                if k > start_index or not below[max(k - 1, 0)]:
                    out.append(PoleEvent(PHASES[p], "open", float(time_s[k]), k))
                state_open = True
            else:
                cand = np.nonzero(~below[k:])[0]
                if not cand.size:
                    break
                k = k + int(cand[0])
                out.append(PoleEvent(PHASES[p], "close", float(time_s[k]), k))
                state_open = False
    return tuple(sorted(out, key=lambda e: (e.index, e.phase)))


def status_edges(time_s, channels: Sequence, role: str) -> tuple[StatusEdge, ...]:
    """Edges of status channels (objects with ``name``, ``values`` 0/1, ``normal``)."""
    out = []
    for ch in channels:
        v = np.asarray(ch.values).astype(np.int8)
        ks = np.nonzero(np.diff(v))[0] + 1
        normal = int(getattr(ch, "normal", 0))
        for k in ks:
            out.append(StatusEdge(str(ch.name), role, float(time_s[k]), int(k), int(v[k]),
                                  int(v[k]) != normal))
    return tuple(sorted(out, key=lambda e: e.index))


def fault_indicator(v_ph, i_ph, live, v1_ref: float, i_scale: float,
                    noise_floor_a: float = 0.0, i1_ref: complex | None = None,
                    i012_ref=None, v012_standing=None) -> np.ndarray:
    """Per-sample True where the phasors show a shunt fault.

    Parameters
    ----------
    v_ph, i_ph : complex (3, n)
        Phasors [V], [A] (NaN where undefined).
    live : bool (n,)
        Some pole carries current (voltage criteria only then).
    v1_ref : float
        Healthy positive-sequence voltage [V] (0: no voltage criteria).
    i_scale : float
        Current scale [A]: max of the pre-event ``|I1|`` and 5 % of the largest
        phase current phasor; the unbalance criteria need ``|I2|`` or ``|I0|``
        above 5 % of it and above 10 % of ``max(|I1|, i_scale)``.
    noise_floor_a : float
        Phasor noise level [A]: ``|I2|``, ``|I0|`` must also exceed it.
    i1_ref : complex, optional
        Pre-event positive-sequence current phasor [A].
    i012_ref : complex (3,), optional
        Pre-event sequence currents [A]: with them, a change of ``I2`` or
        ``I0`` by more than :data:`DELTA_UNBAL_RATIO` of ``max(|I1|, scale)``
        (and the floor) also shows a fault.
    v012_standing : complex (3,), optional
        Sequence voltages [V] of an unbalance that stands from the record's
        start while the currents are balanced (a blown VT fuse, a dead VT
        channel): the voltage unbalance criteria then test the change of
        ``V2`` and ``V0`` from these instead of their size.

    Notes
    -----
    Fault if ``|I2|`` or ``|I0|`` > 0.1 max(|I1|, scale), or, with a live
    pole, ``|V1| < 0.9 V1ref`` or ``|V2|``, ``|V0|`` > 0.05 ``V1ref``
    (common practice, no source), or (a resistive three-phase fault, whose
    sag may be slight) ``|I1 - I1ref| > 2 max(|I1ref|, noise)`` with
    ``|V1| < 0.97 V1ref`` -- the classifier then tells such a fault from a
    load step.
    """
    i012 = sequence_phasors(i_ph)
    m0, m1, m2 = np.abs(i012)
    base = np.maximum(m1, i_scale)
    floor = max(0.05 * i_scale, noise_floor_a)
    f = ((m2 > NEG_ZERO_RATIO * base) & (m2 > floor)) | ((m0 > NEG_ZERO_RATIO * base)
                                                          & (m0 > floor))
    if i012_ref is not None and np.all(np.isfinite(i012_ref)):
        d0 = np.abs(i012[0] - i012_ref[0])
        d2 = np.abs(i012[2] - i012_ref[2])
        f |= (((d2 > DELTA_UNBAL_RATIO * base) & (d2 > floor))
              | ((d0 > DELTA_UNBAL_RATIO * base) & (d0 > floor)))
    if v1_ref > 0:
        v012 = sequence_phasors(v_ph)
        vm0, vm1, vm2 = np.abs(v012)
        if v012_standing is not None:
            vm0 = np.abs(v012[0] - v012_standing[0])
            vm2 = np.abs(v012[2] - v012_standing[2])
        f |= live & ((vm1 < V_SAG * v1_ref) | (vm2 > V_UNBAL * v1_ref)
                     | (vm0 > V_UNBAL * v1_ref))
        if i1_ref is not None and np.isfinite(i1_ref):
            step = np.abs(i012[1] - i1_ref)
            f |= live & (vm1 < ABC_SAG * v1_ref) & (
                step > ABC_STEP * max(abs(i1_ref), noise_floor_a, 1e-12))
    # NaN compares False above: the first incomplete window never shows a fault
    return f


def _runs(mask: np.ndarray, min_len: int, max_gap: int) -> list[tuple[int, int]]:
    """(start, stop) of True runs, gaps up to ``max_gap`` closed, runs under ``min_len`` dropped."""
    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return []
    d = np.diff(np.concatenate([[0], m.astype(np.int8), [0]]))
    starts = list(np.nonzero(d == 1)[0])
    stops = list(np.nonzero(d == -1)[0])
    merged = []
    for s, e in zip(starts, stops, strict=True):
        if merged and s - merged[-1][1] <= max_gap:
            merged[-1] = (merged[-1][0], e)
        else:
            merged.append((s, e))
    return [(int(s), int(e)) for s, e in merged if e - s >= min_len]


# ------------------------------------------------------------------ the timeline
def build_timeline(time_s, v_abc, i_abc, samples_per_cycle: int, *,
                   trips: Sequence = (), breakers: Sequence = (),
                   v_ph=None, i_ph=None, mitigate_offset: bool = True,
                   tau_s: float | None = None,
                   cycle_samples: float | None = None,
                   min_fault_current_a: float = 0.0) -> Timeline:
    """Timeline, windows and classification of one terminal.

    Parameters
    ----------
    time_s : array (n,)
        Sample times [s] from the record's first sample (uniform rate).
    v_abc, i_abc : array (3, n)
        Phase-to-ground voltages [V] and phase currents [A].
    samples_per_cycle : int
        Samples per nominal cycle.
    trips, breakers : sequences of status channels
        Objects with ``name``, ``values`` and ``normal`` (``StatusChannel``).
    v_ph, i_ph : complex (3, n), optional
        Full-cycle DFT phasors if already computed (else computed here).
    mitigate_offset : bool
        Fault-window current phasors by least squares with a decaying offset
        term: time constant ``tau_s`` if given, else fitted per phase in the
        window (:func:`~eventlab.signals.phasors.window_phasor_fitted_decay`).
    tau_s : float, optional
        Offset time constant [s].
    cycle_samples : float, optional
        Actual cycle length [samples] (``fs / f``) for the superimposed
        quantities when the frequency is off nominal (with tracked phasors).
    min_fault_current_a : float
        A fault interval whose fault-window currents all stay under this [A]
        (and under :data:`DEAD_LINE_CURRENT` of the record's largest) is no
        fault: e.g. an open end's CT, given by the caller from its rating.

    Returns
    -------
    Timeline
    """
    t = np.asarray(time_s, dtype=float)
    v = np.asarray(v_abc, dtype=float)
    i = np.asarray(i_abc, dtype=float)
    n = int(samples_per_cycle)
    n_t = t.size
    if v.shape != (3, n_t) or i.shape != (3, n_t):
        raise SignalError(f"v_abc {v.shape} and i_abc {i.shape}: expected (3, {n_t})")
    if n_t < 3 * n:
        raise SignalError(f"record of {n_t} samples: expected at least three cycles "
                          f"({3 * n} samples)")
    dt = float(np.median(np.diff(t)))
    fs = 1.0 / dt
    flags: list[str] = []
    v_ph = dft_phasors(v, n) if v_ph is None else np.asarray(v_ph)
    i_ph = dft_phasors(i, n) if i_ph is None else np.asarray(i_ph)

    # references from the first full window and the record as a whole
    finite = np.nonzero(np.isfinite(v_ph).all(axis=0) & np.isfinite(i_ph).all(axis=0))[0]
    if not finite.size:
        raise SignalError("no complete phasor window in the record; expected at least one "
                          "cycle of data")
    k_ref = int(finite[0])
    v1_all = np.abs(sequence_phasors(v_ph[:, finite])[1])
    v1_first = float(v1_all[0])
    v1_med = float(np.median(v1_all))
    v1_ref = v1_first if v1_first >= 0.5 * v1_med else v1_med
    i1_first_ph = complex(abc_to_012(i_ph[:, k_ref])[1])
    i1_first = abs(i1_first_ph)
    i_peak_ph = float(np.max(np.abs(i_ph[:, finite])))
    i_scale = max(i1_first, 0.05 * i_peak_ph, 1e-12)

    d_i = superimposed(i, n, cycle_samples)
    d_v = superimposed(v, n, cycle_samples)
    # noise of each current from the superimposed value over the first steady cycle
    noise_i = 1.4826 * np.median(np.abs(d_i[:, 2 * n:3 * n]), axis=1) / np.sqrt(2)
    floor_a = max(6.0 * float(noise_i.max()), 1e-9)
    poles = pole_events(t, i, n, floor_a=floor_a)
    # live[k]: some pole carries current
    live = np.zeros(n_t, dtype=bool)
    for p in range(3):
        mine = [e for e in poles if e.phase == PHASES[p]]
        # a pole whose first event is a close was open before it (a record that begins
        # with the line de-energised)
        st = np.full(n_t, not (mine and mine[0].kind == "close"), dtype=bool)
        for e in mine:
            st[e.index:] = e.kind == "close"
        live |= st
    # phasor noise: E|X|^2 = 2 sigma^2 / N for white noise of std sigma; eight times that
    noise_ph_a = 8.0 * float(noise_i.max()) * np.sqrt(2.0 / n)
    noise_v = 1.4826 * np.median(np.abs(d_v[:, 2 * n:3 * n]), axis=1) / np.sqrt(2)
    noise_ph_v = 8.0 * float(noise_v.max()) * np.sqrt(2.0 / n)
    # weak-infeed current level and the noise floors of the zero-sequence pair [A, A, V]
    floors = (3.0 * noise_ph_a, noise_ph_a, noise_ph_v)
    # a voltage unbalance standing from the first cycle while the currents are
    # balanced is the VT circuit's (a blown fuse, a dead channel), not a fault
    v012_first = abc_to_012(v_ph[:, k_ref])
    i012_first = abc_to_012(i_ph[:, k_ref])
    standing = None
    if (v1_ref > 0 and max(abs(v012_first[0]), abs(v012_first[2])) > V_UNBAL * v1_ref
            and max(abs(i012_first[0]), abs(i012_first[2]))
            <= NEG_ZERO_RATIO * max(abs(i012_first[1]), i_scale)):
        standing = v012_first
        flags.append(f"voltages unbalanced from the record's start (|V0|/|V1| "
                     f"{abs(v012_first[0]) / v1_ref:.2f}, |V2|/|V1| "
                     f"{abs(v012_first[2]) / v1_ref:.2f}) with balanced currents: a VT "
                     f"circuit fault (blown fuse, dead channel) suspected; the fault is "
                     f"detected from the change of the voltages and from the currents")
    fault = fault_indicator(v_ph, i_ph, live, v1_ref, i_scale, noise_ph_a, i1_first_ph,
                            i012_first, standing)
    runs = _runs(fault, min_len=max(n // 4, 2), max_gap=n // 2)

    edges = status_edges(t, trips, "trip") + status_edges(t, breakers, "breaker")
    edges = tuple(sorted(edges, key=lambda e: e.index))

    intervals: list[FaultInterval] = []
    prev_end = 0           # end of the previous interval (read once there is one)
    chans = np.vstack([d_v, d_i])
    raw = np.vstack([v, i])
    for a, b in runs:
        # search back up to two cycles from where the phasors saw the fault; the
        # cycle before the search is the baseline (noise, off-nominal residual).  A
        # record with less than two cycles before the fault (relays keep as few)
        # has a shorter baseline, at least a quarter cycle of superimposed samples
        # (they begin one cycle into the record): the search had started at two
        # cycles, and a fault 1.5 cycles into a record was timed 8 ms late, its
        # pre-fault window holding fault samples (located 22 km off).  Records with
        # three cycles or more before the phasors saw it keep a full-cycle baseline
        # (off nominal frequency the superimposed samples need it)
        earliest = n + max(n // 4, 2)
        floor = 2 * n if a >= 3 * n else earliest
        s0 = max(a - 2 * n, (prev_end + n) if intervals else 0, floor)
        search = (min(s0, a), a + 1)
        # baseline: the cycle before the search, at least 64 samples where the record
        # holds them (a MAD over 16 samples is too loose a noise estimate at 16 a cycle)
        base = (max(search[0] - max(n, _BASE_MIN), n), search[0])
        lo, hi = max(a - 2 * n, 0), min(b + n, n_t)
        peak = np.nanmax(np.abs(raw[:, lo:hi]), axis=1)
        k_on = detect_onset(chans, search, base, peak)
        onset_s = None
        if k_on is None:
            k_on = max(a - n + 1, 1)
            flags.append(f"inception near {t[k_on]:.4f} s estimated from phasors "
                         f"(no clear superimposed step)")
        elif k_on > n:
            pos = refine_onset(chans, k_on, n, lo=search[0], peak=peak,
                               cycle_samples=cycle_samples, continuous=_CURRENT_ROWS,
                               samples=raw)
            k_on = int(np.ceil(pos))
            onset_s = float(t[k_on] - (k_on - pos) * dt)
        # found at the first sample the search allows (the record's start): the fault
        # may have begun earlier, within the first cycle, where the superimposed
        # samples do not reach; every cycle before the onset found may hold it
        # (the threshold detector can be late by a quarter cycle; half a cycle kept)
        early = not intervals and search[0] == earliest and n < k_on <= earliest + n // 2
        if k_on <= n:
            flags.append("the record starts in a fault: no pre-fault cycle")
        elif early:
            flags.append(f"fault at {t[k_on]:.4f} s: found at the earliest sample the record "
                         f"allows, give or take half a cycle (it starts less than two cycles "
                         f"before); it may have "
                         f"begun earlier, so no pre-fault window is taken")
        kind = "fault"
        if any(e.kind == "close" and prev_end - n <= e.index <= k_on + n // 4 for e in poles) \
                and intervals:
            kind = "reclose"
        stages = _stages(t, v, i, v_ph, i_ph, n, fs, k_on, b, poles, kind, mitigate_offset,
                         tau_s, d_v, d_i, peak, flags, floors, onset_s,
                         cycle_samples=cycle_samples, prefault_ok=not early)
        intervals.extend(stages)
        last = stages[-1]
        prev_end = (last.end_index if last.end_index is not None else b) + n // 2

    if not intervals:
        return Timeline(None, None, None, None, None, None, _first_trip(edges, None),
                        (None, None, None), (), poles, edges, tuple(flags), NO_FAULT)

    # a "fault" with no current (under DEAD_LINE_CURRENT of the record's largest current
    # phasor) is a voltage change on a de-energised line (its trapped charge decaying on
    # line-side VTs), not a fault: no fault on a line drives no current
    i_mag = np.abs(i_ph)
    i_top = float(np.max(i_mag[np.isfinite(i_mag)])) if np.any(np.isfinite(i_mag)) else 0.0
    i_least = max(DEAD_LINE_CURRENT * i_top, float(min_fault_current_a))
    dead = [iv for iv in intervals if iv.type != NO_FAULT and i_least > 0
            and float(np.max(np.abs(iv.i_fault))) < i_least]
    if dead:
        flags.append("; ".join(f"a change of the voltages at {iv.start_s:.4f} s with no "
                               f"current (a de-energised line's trapped charge?) is not taken "
                               f"for a fault" for iv in dead))
    # drop "faults" that the classifier calls no fault (load change, switching)
    dead_ids = {id(iv) for iv in dead}
    real = [iv for iv in intervals if iv.type != NO_FAULT and id(iv) not in dead_ids]
    if not real:
        flags.append("disturbance without a shunt fault: " +
                     "; ".join(f"{iv.start_s:.4f} s {iv.classification.reason}"
                               for iv in intervals))
        return Timeline(None, None, None, None, None, None, _first_trip(edges, None),
                        (None, None, None), (), poles, edges, tuple(flags), NO_FAULT)
    intervals = real
    first = intervals[0]
    # the first fault and its evolutions end together
    group = [first]
    for iv in intervals[1:]:
        if iv.kind == "evolved":
            group.append(iv)
        else:
            break
    inception = first.start_s
    clearing = group[-1].end_s
    trip_s = _first_trip(edges, inception - 1.0 / (fs / n))
    duration_ms = None if clearing is None else 1e3 * (clearing - inception)
    f0 = fs / n
    relay_ms = None if trip_s is None else 1e3 * (trip_s - inception)
    brk_ms = None if (trip_s is None or clearing is None) else 1e3 * (clearing - trip_s)
    if clearing is None:
        flags.append("the fault is still on at the end of the record")
    return Timeline(
        inception_s=inception, clearing_s=clearing, duration_ms=duration_ms,
        duration_cycles=None if duration_ms is None else duration_ms * 1e-3 * f0,
        relay_time_ms=relay_ms, breaker_time_ms=brk_ms, trip_s=trip_s,
        pole_open_s=group[-1].pole_open_s, intervals=tuple(intervals), poles=poles,
        edges=edges, flags=tuple(flags), fault_type=first.type)


def _first_trip(edges, after_s):
    for e in edges:
        if e.role == "trip" and e.asserted and (after_s is None or e.time_s >= after_s):
            return e.time_s
    return None


def _classify_at(t, v, i, v_ph, i_ph, n, fs, k_pre_win, win: Window, tau_s, mitigate,
                 floors=(0.0, 0.0, 0.0), cycle_samples=None):
    i_pre = i_ph[:, k_pre_win.end_index] if k_pre_win is not None else np.zeros(3, complex)
    v_pre = v_ph[:, k_pre_win.end_index] if k_pre_win is not None else None
    k = win.end_index
    tau_used = None
    if mitigate and k >= n - 1:
        # least squares with the decaying term (the mimic filter's first difference
        # would amplify the line's capacitive ringing at high sample rates); without a
        # given time constant each phase gets its own, fitted
        wf = fault_window_current(i, k, n, fs, tau_s, cycle_samples=cycle_samples)
        i_f, tau_used = wf.phasor, wf.tau_s
    else:
        i_f = i_ph[:, k]
    v_f = v_ph[:, k]
    if v_pre is not None and np.abs(v_pre).max() <= 0:
        v_pre = None
    c = classify_fault(i_pre, i_f, v_pre, None if v_pre is None else v_f,
                       min_current_a=floors[0], noise_floor_a=floors[1],
                       noise_floor_v=floors[2])
    return (c, i_pre, v_pre if v_pre is not None else np.zeros(3, complex), i_f, v_f,
            tau_used)


def _stages(t, v, i, v_ph, i_ph, n, fs, k_on, run_end, poles, kind, mitigate, tau_given,
            d_v, d_i, peak, flags, floors=(0.0, 0.0, 0.0),
            onset_s: float | None = None, *,
            cycle_samples: float | None = None,
            prefault_ok: bool = True) -> list[FaultInterval]:
    """The interval(s) of one disturbance: the fault and, if it evolves, its later stages.

    ``prefault_ok`` False: no pre-fault window (the record may start after the
    fault did).
    """
    n_t = t.size
    cs = cycle_samples
    pre = prefault_window(t, k_on, n) if prefault_ok else None
    if pre is not None and pre.flagged:
        flags.append(pre.note)
    # pole openings after inception (the first of each phase)
    opens = [None, None, None]
    for e in poles:
        p = PHASES.index(e.phase)
        if e.kind == "open" and e.index > k_on and opens[p] is None \
                and e.index <= run_end + 2 * n:
            opens[p] = e.index
    first_open = min([k for k in opens if k is not None], default=None)
    stop = first_open if first_open is not None else min(run_end, n_t)
    win = fault_window(t, k_on, stop, n)
    c, i_pre, v_pre, i_f, v_f, tau = _classify_at(t, v, i, v_ph, i_ph, n, fs, pre, win,
                                                  tau_given, mitigate, floors, cs)
    if win.flagged:
        flags.append(f"fault at {t[k_on]:.4f} s: {win.note}")
    # evolving fault: classify each half cycle after the fault window, before the opening
    bounds = [(k_on, c, win, i_f, v_f)]
    onset_notes: list[str] = []    # flags on the stages' onsets, kept if the stages stand
    k = win.end_index + n // 2
    pending = None
    while c.type != NO_FAULT and k < stop - 2:
        ck = classify_fault(i_pre, i_ph[:, k], None if pre is None else v_pre,
                            None if pre is None else v_ph[:, k], min_current_a=floors[0],
                            noise_floor_a=floors[1], noise_floor_v=floors[2])
        cur = bounds[-1][1].type
        if ck.type != cur and ck.type != NO_FAULT:
            if pending is not None and pending[1] == ck.type:
                # confirmed: find the onset of the new stage before the first new window
                # the delta compares fault with fault only a cycle after the last
                # stage began; half a cycle of that is the baseline
                k_prev = bounds[-1][0]
                s0 = max(pending[0] - 2 * n, k_prev + n + n // 2)
                k_ev = detect_onset(np.vstack([d_v, d_i]), (s0, pending[0] + 1),
                                    (s0 - n // 2, s0), peak, baseline_max=True
                                    ) if s0 <= pending[0] else None
                if k_ev is None:
                    k_ev = max(pending[0] - n + 1, k_prev + 1)
                    onset_notes.append(f"evolving fault near {t[k_ev]:.4f} s: onset "
                                       f"estimated from phasors")
                if len(bounds) == 1 and bounds[0][2].end_index >= k_ev - 1:
                    # the first stage's window reached into the next stage: redo it
                    w1 = fault_window(t, k_on, k_ev, n)
                    c1, _, _, i1, v1, tau1 = _classify_at(t, v, i, v_ph, i_ph, n, fs, pre,
                                                          w1, tau_given, mitigate, floors, cs)
                    if c1.type != NO_FAULT:
                        bounds[0] = (k_on, c1, w1, i1, v1)
                        cur = c1.type
                        tau = tau1
                w2 = fault_window(t, k_ev, stop, n, settle_cycles=0.5)
                c2, _, _, i2, v2, _ = _classify_at(t, v, i, v_ph, i_ph, n, fs, pre, w2, None,
                                                   False, floors, cs)
                if c2.type == NO_FAULT or c2.type == cur:
                    c2 = ck
                bounds.append((k_ev, c2, w2, i2, v2))
                pending = None
                k = w2.end_index + n // 2
                continue
            pending = (k, ck.type)
        else:
            pending = None
        k += n // 2
    # end of the disturbance
    if c.type != NO_FAULT:
        ph_all = sorted({p for _, cc, _, _, _ in bounds if cc.type != NO_FAULT
                         for p in faulted_phases(cc.type)})
    else:
        ph_all = []
    faulted_open = [opens[p] for p in ph_all]
    if ph_all and all(o is not None for o in faulted_open):
        k_end = max(faulted_open)
        by_poles = True
    else:
        # no pole opening here: the fault ended (remote clearing) about a window before
        # the phasor indicator dropped
        k_end = None
        if run_end < n_t:
            # the fault's end is a disturbance too: look for its superimposed step in the
            # two cycles before the indicator dropped, against the fault's own steady state
            s0 = max(run_end - 2 * n, bounds[-1][0] + n + n // 2)
            k_end = detect_onset(np.vstack([d_v, d_i]), (s0, run_end), (s0 - n // 2, s0), peak,
                                 baseline_max=True) if s0 < run_end else None
            if k_end is None:
                k_end = run_end - n // 2
        by_poles = False
        if c.type != NO_FAULT and k_end is not None:
            flags.append(f"fault at {t[k_on]:.4f} s: end estimated from phasors (no pole "
                         f"opening of the faulted phases at this terminal)")
    pole_s = tuple(None if o is None else float(t[o]) for o in opens)
    out = []
    for j, (ks, cc, ww, ii, vv) in enumerate(bounds):
        ke = bounds[j + 1][0] if j + 1 < len(bounds) else k_end
        i_res = v_res = i_last = None
        radial = None
        if mitigate and cc.type != NO_FAULT:
            # the phasors over the steady part of the stage (the type stays the one of
            # its first cycle, where the stages were told apart); voltages get the
            # offset term too: behind a source of another X/R they carry one
            full = steady_window(t, ww, bounds[j + 1][0] if j + 1 < len(bounds) else stop, n)
            if full.end_index >= n - 1:
                length, wi, k_dep = _steady_length(i, full, n, fs, tau_given, cs)
                sw = steady_window(t, ww, full.start_index + length + 1, n)
                wv = fault_window_current(v, sw.end_index, n, fs, None, length,
                                          cycle_samples=cs)
                ii, vv, ww = wi.phasor, wv.phasor, sw
                if not sw.flagged:  # a flagged window may reach into the pole opening
                    i_res, v_res = _ro_real(wi.residual), _ro_real(wv.residual)
                    i_last = i_res
                    if sw.end_index < full.end_index:
                        # the currents departed from one steady state: if the voltages
                        # did too, the network changed (the other end opened first);
                        # if they stayed steady, the current measurement did (a CT
                        # driven into saturation by the offset)
                        lf = full.end_index - full.start_index + 1
                        wi_f = fault_window_current(i, full.end_index, n, fs, tau_given, lf,
                                                    cycle_samples=cs)
                        wv_f = fault_window_current(v, full.end_index, n, fs, None, lf,
                                                    cycle_samples=cs)
                        vm = np.abs(wv.phasor)
                        big_v = vm >= 0.5 * vm.max() if vm.max() > 0 else vm > 0
                        changed = bool(np.any(big_v & (wv_f.residual > RESIDUAL_GROWTH_V
                                                       * wv.residual + 0.0005)))
                        if changed:
                            i_last = None
                            k_c = k_dep if k_dep is not None else sw.end_index + 1
                            held = k_c - n // 8 < sw.start_index + n
                            flags.append(
                                f"fault at {t[k_on]:.4f} s: currents and voltages changed at "
                                f"about {t[min(k_c, n_t - 1)]:.4f} s, before this terminal's "
                                f"poles opened (the other end clearing first, or the fault "
                                f"changing): " + (
                                    "it came within two cycles of inception, so the one-cycle "
                                    "fault window holds part of it and this end's phasors "
                                    "mix two states" if held else
                                    "the fault window ends before it"))
                        else:
                            i_last = _ro_real(wi_f.residual)
                if j == 0:
                    tau = wi.tau_s
            if j + 1 == len(bounds) and full.end_index >= n - 1:
                # the other end opening first, at any time before this end's poles
                radial = remote_open_stage(t, v, i, n, fs, full.start_index, stop, cc.type,
                                           i_before=ii, tau_s=tau if j == 0 else None,
                                           cycle_samples=cs)
        out.append(FaultInterval(
            kind=kind if j == 0 else "evolved", type=cc.type,
            start_s=onset_s if (j == 0 and onset_s is not None) else _onset_time(t, ks),
            end_s=None if ke is None else (_onset_time(t, ke) if j + 1 < len(bounds)
                                           else float(t[ke])),
            start_index=int(ks), end_index=None if ke is None else int(ke),
            classification=cc, prefault=pre, fault=ww, pole_open_s=pole_s,
            cleared_by_poles=by_poles and j + 1 == len(bounds),
            tau_s=tau if j == 0 else None, i_prefault=_ro(i_pre), v_prefault=_ro(v_pre),
            i_fault=_ro(ii), v_fault=_ro(vv), i_residual=i_res, v_residual=v_res,
            i_distortion=i_last, remote_open=radial))
    merged = _merge_pole_scatter(out, n / fs, flags)
    if merged is out:
        flags.extend(onset_notes)
    return merged


#: the stages between a fault and the same fault fed from this end alone last at
#: most this many cycles to count as the other end's poles opening one by one
#: (each pole at its own current zero: half a cycle apart at most, seen through a
#: one-cycle window and the half-cycle confirmation; common practice, no source)
POLE_SCATTER_CYCLES = 3.0


def _merge_pole_scatter(out: list[FaultInterval], cycle_s: float,
                        flags: list[str]) -> list[FaultInterval]:
    """One interval where an 'evolution' was the other end's poles opening one by one.

    While the far breaker's poles open at their own current zeros the near
    end briefly sees another type (B-C looks like B-C-G while one far pole
    is open).  When the fault then settles, fed from this end alone
    (:func:`fed_from_one_end`), into a type whose phases every earlier stage
    holds, the stages are one fault of that type whose last part is its
    :class:`RemoteOpenStage`: B-C, B-C-G, B-C within
    :data:`POLE_SCATTER_CYCLES` of the first change, or B-C-G, B-C when the
    far end opened within the first fault window (the first stage then ends
    within that many cycles plus two of inception).
    """
    if len(out) < 2 or out[0].kind != "fault":
        return out
    first, last = out[0], out[-1]
    own = set(faulted_phases(last.type))
    if any(not own <= set(faulted_phases(iv.type)) for iv in out[:-1]):
        return out
    if first.type == last.type:
        if len(out) < 3 or last.start_s - out[1].start_s > POLE_SCATTER_CYCLES * cycle_s:
            return out
    elif last.start_s - first.start_s > (POLE_SCATTER_CYCLES + 2.0) * cycle_s:
        return out
    ratio = fed_from_one_end(last.i_fault, last.v_fault, last.type, first.i_fault)
    if ratio is None:
        return out
    seen = out[1:-1] if first.type == last.type else out[:-1]
    flags.append(f"fault at {first.start_s:.4f} s: the other end opened first, by about "
                 f"{out[1].start_s:.4f} s; the {', '.join(iv.type for iv in seen)} seen until "
                 f"{last.start_s:.4f} s was its poles opening one by one, not an evolving "
                 f"fault")
    # a first stage of another type saw the far poles opening in its window; one of
    # the same type did if the scatter began within an eighth of a cycle of its end
    in_window = (first.type != last.type
                 or out[1].start_s <= first.fault.end_s + cycle_s / 8)
    stage = RemoteOpenStage(change_s=out[1].start_s, window=last.fault, i=last.i_fault,
                            v=last.v_fault, healthy_ratio=ratio, in_fault_window=in_window)
    return [dataclasses.replace(first, type=last.type, classification=last.classification,
                                end_s=last.end_s, end_index=last.end_index,
                                cleared_by_poles=last.cleared_by_poles, remote_open=stage)]


def remote_open_stage(t, v, i, n: int, fs: float, k_steady: int, stop: int, fault_type: str,
                      *, i_before=None, tau_s: float | None = None,
                      cycle_samples: float | None = None) -> RemoteOpenStage | None:
    """The stage after the other end opened first, or None (see :class:`RemoteOpenStage`).

    Parameters
    ----------
    t : array (n_t,)
        Sample times [s].
    v, i : arrays (3, n_t)
        Phase voltages [V] and currents [A].
    n : int
        Samples per cycle.
    fs : float
        Sample rate [Hz].
    k_steady : int
        First sample of the fault's steady part (both ends closed): the change
        is the currents' (else the voltages') departure from the state of the
        cycle that begins there (:func:`departure`), followed to the last one
        before ``stop``.
    stop : int
        First sample with a pole of this end open (or the end of the fault).
    fault_type : str
        Type of the fault stage.
    i_before : complex array (3,), optional
        Fault-window currents [A] (both ends closed): when given, the largest
        unfaulted-phase current must also have fallen to
        :data:`REMOTE_OPEN_HEALTHY_DROP` of theirs, so a fault that changed
        (its faulted-phase current grew, the load stayed) is not taken for the
        other end's opening.
    tau_s : float, optional
        Offset time constant of the fault [s]: the state the currents and the
        voltages are carried forward in decays with it (one cycle alone does not
        tell a time constant well enough to carry a voltage's offset forward).
    cycle_samples : float, optional
        Tracked samples per cycle (see :func:`fault_window_current`).
    """
    ph = list(faulted_phases(fault_type))
    if not ph:
        return None
    # the currents' departure; the voltages' only where the currents show none (the
    # voltages' first-cycle state carries the fault transient less well: on a
    # simulated close-in B-G fault they departed 0.04 s before the far end opened)
    tau_n = None if tau_s is None else tau_s * fs
    k_change = departure(i, k_steady, stop, n, tau_n)
    if k_change is None:
        k_change = departure(v, k_steady, stop, n, tau_n)
    if k_change is None:
        return None
    # a departure at once after the reference cycle: the change was inside that
    # cycle, which is also the shortest fault window
    in_window = int(k_change) <= k_steady + n + n // 8
    # the last change before this end's poles open: a state that departs again
    # within what follows was not yet the one fed from this end alone (the first
    # departure can come early, from the transient; on a random simulated A-G
    # event 27 ms before the far end opened, and a window there mixed both states)
    for _ in range(STAGE_MAX_CHANGES):
        later = departure(i, int(k_change) + n, stop, n, tau_n)
        if later is None:
            break
        k_change = later
    start = int(k_change) + n          # the other end's three poles and the filters settle
    end = min(int(stop) - n // 8, start + 3 * n) - 1
    if end - start + 1 < n or end >= t.size:
        return None
    length = end - start + 1
    wi = fault_window_current(i, end, n, fs, None, length, cycle_samples=cycle_samples)
    wv = fault_window_current(v, end, n, fs, None, length, cycle_samples=cycle_samples)
    # three-phase: nothing in this record tells the other end's opening from a change
    # of the fault; the stage waits for the other record to confirm it
    confirmed = len(ph) < 3
    ratio = fed_from_one_end(wi.phasor, wv.phasor, fault_type, i_before) if confirmed else 0.0
    if ratio is None:
        return None
    return RemoteOpenStage(change_s=float(t[int(k_change)]),
                           window=Window(start, end, float(t[start]), float(t[end])),
                           i=_ro(wi.phasor), v=_ro(wv.phasor), healthy_ratio=ratio,
                           in_fault_window=in_window, confirmed=confirmed)


def fed_from_one_end(i_abc, v_abc, fault_type: str, i_before=None) -> float | None:
    """The unfaulted-phase ratio if these phasors show the fault fed from this end alone.

    Parameters
    ----------
    i_abc, v_abc : complex arrays (3,)
        Phasors of the stage [A], [V].
    fault_type : str
    i_before : complex array (3,), optional
        Currents of the fault with both ends closed [A].

    Returns
    -------
    float or None
        Largest unfaulted-phase current over the smallest faulted-phase current,
        when it is at most :data:`REMOTE_OPEN_HEALTHY_RATIO` and the unfaulted
        phases carry line charging only: their largest current fell to
        :data:`REMOTE_OPEN_HEALTHY_DROP` of ``i_before``'s, or every one of them
        leads its own phase voltage by 90 +/- 45 degrees (capacitive: a line
        with little load before the fault); else None.  Three-phase faults:
        None always.
    """
    ph = list(faulted_phases(fault_type))
    healthy = [p for p in range(3) if p not in ph]
    if not healthy or not ph:
        return None
    i_abc = np.asarray(i_abc)
    v_abc = np.asarray(v_abc)
    mag = np.abs(i_abc)
    smallest = float(mag[ph].min())
    if not smallest > 0:
        return None
    ratio = float(mag[healthy].max()) / smallest
    if ratio > REMOTE_OPEN_HEALTHY_RATIO:
        return None
    if i_before is None:
        return ratio
    # the unfaulted phases lose their load and their share of the fault current
    # when the other end opens; a fault that changes (an arc's resistance, say)
    # leaves them with their load
    mb = np.abs(np.asarray(i_before))
    if float(mag[healthy].max()) <= REMOTE_OPEN_HEALTHY_DROP * float(mb[healthy].max()):
        return ratio
    if not np.all(np.abs(v_abc[healthy]) > 0):
        return None
    lead = np.degrees(np.angle(i_abc[healthy] / v_abc[healthy]))
    return ratio if np.all(np.abs(lead - 90.0) <= 45.0) else None


def _onset_time(t, k: int) -> float:
    """Inception time [s]: half a sample before the first sample that shows the fault."""
    if k <= 0:
        return float(t[0])
    return float(0.5 * (t[k - 1] + t[k]))


#: fit residual of a current carrying at least half the largest fault current
#: (RMS over the window / its fundamental RMS) above which its CT is taken to
#: saturate: behind the fit's low-pass (phasors.fit_prefilter) healthy simulated
#: records stay under 0.4 % (sample events, the location benchmark's quick grid),
#: the saturating CT sample leaves 8.1 % over the steady part of the fault
#: (measured; the limit itself common practice, no source)
CT_DISTORTION_LIMIT = 0.04


def saturating_phases(i_fault, residual) -> np.ndarray:
    """Per phase (bool, 3): a large current whose waveform departs from sinusoid plus offset.

    ``i_fault`` [A] the fault-window phasors, ``residual`` what a fit left of
    each (fraction of its fundamental); see :data:`CT_DISTORTION_LIMIT`.
    """
    mags = np.abs(np.asarray(i_fault, dtype=complex))
    big = mags >= 0.5 * float(mags.max()) if mags.max() > 0 else np.zeros(3, bool)
    return big & (np.asarray(residual, dtype=float) > CT_DISTORTION_LIMIT)


#: the fault's first-cycle model, carried forward, must miss a current by more than
#: this fraction of the largest fundamental, at the fundamental (one-cycle DFT of the
#: miss), for the state to count as changed.  Measured on the 40 cases of the
#: location benchmark's quick grid: before the far end opens the miss stays within
#: 0.33 % (95th percentile 0.18 %); a cycle after it opened 25 ms early it is 2.3 to
#: 67 % (common practice for the margin, no source)
PREDICTION_REL = 0.02
#: a departure stands only where one state fitted over the whole steady part leaves
#: more than this factor (+0.05 %) of the cut window's residual in a current of at
#: least ``ONE_STATE_BIG`` of the largest.  Measured: the other end opening 15 to 25 ms
#: early (simulated A-G, B-C, ABC at 30 and 90 %, 20 and 64 samples a cycle) 19 to 85
#: times; the bundled saturating CT 2.8 times; a first cycle spoilt by aliased ringing
#: (A-G at 90 %, 20 samples a cycle, no anti-aliasing filter) 1.5 times
ONE_STATE_GROWTH = 2.0
ONE_STATE_BIG = 0.3
#: ... or by more than this many times what the first cycle's fit leaves of the
#: channel (its residual RMS, as a fraction of the largest fundamental): leftover
#: ringing leaks into the carried-forward miss at about its own size
DEPARTURE_LEFTOVER_FACTOR = 1.0
#: where the window was cut short: the voltages' fit over the whole steady part
#: leaving more than this factor (+0.05 %) of the cut window's says the network
#: changed (the other end opening: 1.4-8 times on simulated records), not the CT (a
#: saturating CT left it unchanged)
RESIDUAL_GROWTH_V = 1.2


def departure(x, start: int, stop: int, n: int, tau_samples=None) -> int | None:
    """First sample after the first cycle where ``x`` leaves the state of its first cycle.

    The sinusoid-plus-offset fitted to ``x[:, start:start + n]``
    (:func:`~eventlab.signals.phasors.window_fit`) is carried forward to
    ``stop``, and the one-cycle DFT of what it misses is taken along the way
    (ringing and harmonics, which a sample-by-sample test would mistake for a
    change, fall out).  Where that exceeds ``PREDICTION_REL`` of the largest
    fundamental in any channel (a sound phase too: the other end opening one
    pole changes it most), the departure is the last earlier sample at which
    every channel still missed by under a quarter of that: where the miss
    began to grow.  None: no departure.
    """
    if stop <= start + n:
        return None
    ph, tau, off, res = window_fit(x, start + n - 1, n, tau_samples)
    scale = float(np.abs(ph).max())
    if not scale > 0:
        return None
    # what the first cycle's fit leaves (ringing, aliased travelling waves) shows in
    # the carried-forward miss at about its own size: a change must stand above it
    leftover = float(np.max(np.nan_to_num(np.asarray(res, dtype=float)) * np.abs(ph))) / scale
    limit = max(PREDICTION_REL, DEPARTURE_LEFTOVER_FACTOR * leftover)
    k = np.arange(start, stop)
    miss = x[:, k] - window_model(ph, tau, off, start, k, n)
    rel = np.abs(dft_phasors(miss, n)) / scale                     # (c, len), NaN first n-1
    rel = np.where(np.isfinite(rel), rel, 0.0)
    over = np.nonzero((rel[:, n:] > limit).any(axis=0))[0]
    if not over.size:
        return None
    j_cross = n + int(over[0])
    quiet = np.nonzero((rel[:, n - 1:j_cross] <= 0.25 * limit).all(axis=0))[0]
    j_start = n - 1 + int(quiet[-1]) if quiet.size else n - 1
    return int(start + j_start)


def _steady_length(i, sw: Window, n: int, fs: float, tau_s: float | None,
                   cycle_samples: float | None = None):
    """Longest window from ``sw``'s start over which the currents stay one steady state.

    The window ends an eighth of a cycle before the currents depart from the
    state of its first cycle (:func:`departure`: the other end opened first, a
    CT began to saturate), at least one cycle.  Returns ``(length, WindowFit, departure index or None)``.
    """
    start = sw.start_index
    longest = max(sw.end_index - start + 1, n)
    k_dep = departure(i, start, start + longest, n, None if tau_s is None else tau_s * fs)
    length = longest if k_dep is None else max(min(k_dep - n // 8 - start, longest), n)
    fit = fault_window_current(i, start + length - 1, n, fs, tau_s, length,
                               cycle_samples=cycle_samples)
    if length < longest:
        # a first cycle spoilt by ringing (a record taken without an anti-aliasing
        # filter) is carried forward wrong and seems to depart; one state fitted over
        # the whole window then leaves about what the cut window did, where a change of
        # state (the other end opening, a CT saturating) leaves several times more
        whole = fault_window_current(i, start + longest - 1, n, fs, tau_s, longest,
                                     cycle_samples=cycle_samples)
        mag = np.abs(whole.phasor)
        big = mag >= ONE_STATE_BIG * mag.max()
        if np.all(np.asarray(whole.residual)[big]
                  <= ONE_STATE_GROWTH * np.asarray(fit.residual)[big] + 0.0005):
            return longest, whole, None
    return length, fit, k_dep


def _ro_real(x) -> np.ndarray:
    a = np.array(x, dtype=float, copy=True)
    a.setflags(write=False)
    return a


def _ro(x) -> np.ndarray:
    a = np.array(x, dtype=complex, copy=True)
    a.setflags(write=False)
    return a
