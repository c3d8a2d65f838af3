"""``analyze()``: the signal chain of one event, as a tree of frozen dataclasses.

records -> line terminals (channel roles) -> phasors (one-cycle DFT, offset
mitigation, frequency tracking when off nominal) -> timeline, windows,
classification -> :class:`Analysis`, whose ``to_dict()`` is the documented
JSON (README, "Analysis JSON").

With a network model, ``location`` (:class:`~eventlab.locate.api.LocationReport`)
and ``comparison`` (measured versus computed) are filled by the location step;
without one they are None and ().  JSON keys are only ever added.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from datetime import timedelta
from types import MappingProxyType
from typing import Any

import numpy as np

from eventlab import __version__
from eventlab.errors import ChannelMapError, ModelError, SignalError
from eventlab.faulttypes import involves_ground
from eventlab.locate.api import LocateOptions, LocationReport, locate_event
from eventlab.locate.compare import ComparisonRow
from eventlab.locate.consistency import (
    check_pair,
    direction_check,
    has_prefault,
    through_fault,
)
from eventlab.locate.inputs import from_fault_interval, with_remote_open
from eventlab.locate.model_link import station_terminals
from eventlab.records.model import Record, uniform_step
from eventlab.records.roles import TerminalChannels, map_terminals
from eventlab.signals.classify import Classification
from eventlab.signals.frequency import (
    estimate_frequency,
    frequency_from_phasor,
    tracked_phasors,
)
from eventlab.signals.phasors import (
    FilterKind,
    check_filter_kind,
    dft_phasors,
    fault_window_current,
    moving_rms,
    window_phasor,
)
from eventlab.signals.sequence import sequence_phasors
from eventlab.signals.timeline import (
    Timeline,
    build_timeline,
    fed_from_one_end,
    saturating_phases,
)
from eventlab.symmetrical import abc_to_012
from eventlab.units import polar_deg

PHASES = ("A", "B", "C")
ROLES_V = ("VA", "VB", "VC")
ROLES_I = ("IA", "IB", "IC")
#: deviation from nominal [Hz] above which phasors are re-estimated with tracking
TRACK_ABOVE_HZ = 0.05


@dataclass(frozen=True)
class AnalysisOptions:
    """Options of :func:`analyze` (all optional).

    ``filter``: phasor filter kind for the whole-record phasors ("full",
    "half", "cosine"); ``mitigate_offset``: fault-window currents by least
    squares with a decaying offset term; ``tau_s``: the offset's time constant
    [s] (None: fitted per phase in the fault window,
    :func:`~eventlab.signals.phasors.window_phasor_fitted_decay`);
    ``track_frequency``: re-estimate phasors with tracking when the pre-fault
    frequency is off nominal by more than 0.05 Hz; ``channel_maps``: per
    record (by index) a role -> channel-name map for
    :func:`~eventlab.records.roles.map_terminals`; ``terminals``: per record
    (by index) the id of its model ``[[terminal]]``, where the station names
    do not pair them; ``locate``: settings of
    the location step (:class:`~eventlab.locate.api.LocateOptions`), used when
    a network model is given.
    """

    filter: FilterKind = "full"
    mitigate_offset: bool = True
    tau_s: float | None = None
    track_frequency: bool = True
    channel_maps: Mapping[int, Mapping[str, str]] = field(default_factory=dict)
    terminals: Mapping[int, str] = field(default_factory=dict)
    locate: LocateOptions = field(default_factory=LocateOptions)

    def __post_init__(self) -> None:
        check_filter_kind(self.filter)
        object.__setattr__(self, "channel_maps", MappingProxyType(
            {int(k): MappingProxyType(dict(v)) for k, v in dict(self.channel_maps).items()}))
        object.__setattr__(self, "terminals", MappingProxyType(
            {int(k): str(v) for k, v in dict(self.terminals).items()}))


@dataclass(frozen=True)
class RecordInfo:
    """What a reader of the event needs to know about one record."""

    index: int
    source: str | None
    station: str
    device: str
    revision: int
    data_format: str
    start: str | None            # ISO 8601, as in the .cfg
    trigger: str | None
    trigger_s: float | None      # trigger from the first sample [s]
    sample_rate_hz: float
    samples_per_cycle: int       # of the phasors and timeline (after resampling)
    nominal_frequency_hz: float
    frequency_hz: float | None   # estimated from the pre-fault positive-sequence voltage
    tracked: bool                # phasors re-estimated with frequency tracking
    resampled: bool              # rate not a whole number of samples per cycle: resampled
    n_samples: int
    duration_s: float
    n_analog: int
    n_status: int
    values: str

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


@dataclass(frozen=True)
class TerminalAnalysis:
    """The signal chain of one line terminal of one record."""

    record: int
    label: str
    channels: Mapping[str, str]                 # role -> record channel name
    timeline: Timeline
    classification: Classification | None
    prefault: Mapping[str, complex]             # channel name -> phasor [V]/[A]
    fault: Mapping[str, complex]
    v012_prefault: np.ndarray = field(repr=False, compare=False)
    i012_prefault: np.ndarray = field(repr=False, compare=False)
    v012_fault: np.ndarray = field(repr=False, compare=False)
    i012_fault: np.ndarray = field(repr=False, compare=False)
    peak_a: tuple[float, float, float] | None = None      # instantaneous, inception..clearing
    rms_fault: Mapping[str, float] = field(default_factory=dict)     # true RMS, fault window
    rms_prefault: Mapping[str, float] = field(default_factory=dict)
    flags: tuple[str, ...] = ()
    # what the location step must know of the measurements (their words are in flags)
    currents_acb: bool = False      # pre-fault currents run A-C-B under A-B-C voltages
    dead_start: bool = False        # the record begins with the line de-energised
    v0_unknown: bool = False        # voltages derived from line-to-line channels

    @property
    def fault_type(self) -> str:
        return self.timeline.fault_type


@dataclass(frozen=True)
class Analysis:
    """Result of :func:`analyze`; ``to_dict()`` gives the documented JSON."""

    records: tuple[RecordInfo, ...]
    terminals: tuple[TerminalAnalysis, ...]
    primary: int | None                     # index into terminals of the headline terminal
    warnings: tuple[str, ...] = ()
    location: LocationReport | None = None  # with a network model: the located fault
    comparison: tuple[ComparisonRow, ...] = ()  # measured vs computed, per terminal/quantity

    @property
    def fault_type(self) -> str:
        if self.primary is None:
            return "none"
        return self.terminals[self.primary].fault_type

    def to_dict(self) -> dict:
        head = self.terminals[self.primary] if self.primary is not None else None
        return {
            "eventlab_version": __version__,
            "fault": _fault_dict(head),
            "timeline": _timeline_dict(
                head.timeline if head else None,
                self.records[head.record].nominal_frequency_hz if head else None),
            "phasors": _phasors_dict(head),
            "sequence": _sequence_dict(head),
            "records": [r.to_dict() for r in self.records],
            "terminals": [_terminal_dict(t, self.records[t.record].nominal_frequency_hz)
                          for t in self.terminals],
            "location": (None if self.location is None
                         else self.location.to_dict()["location"]),
            "comparison": [c.to_dict() for c in self.comparison],
            "warnings": list(self.warnings),
        }


# ------------------------------------------------------------------ JSON helpers
def _pd(z) -> list[float] | None:
    if z is None or not np.isfinite(complex(z)):
        return None
    m, d = polar_deg(z)
    return [m, d]


def _fault_dict(t: TerminalAnalysis | None) -> dict:
    if t is None or t.classification is None:
        return {"type": "none", "confidence": None, "ground": False, "basis": "",
                "reason": "no fault found" if t is not None else "no line terminal",
                "evidence": {}, "record": None if t is None else t.record,
                "terminal": None if t is None else t.label}
    d = t.classification.to_dict()
    d["type"] = t.fault_type
    d["record"] = t.record
    d["terminal"] = t.label
    return d


def _timeline_dict(tl: Timeline | None, f0: float | None) -> dict:
    if tl is None:
        return {"inception_s": None, "clearing_s": None, "duration_ms": None,
                "duration_cycles": None, "relay_time_ms": None, "breaker_time_ms": None,
                "trip_s": None, "poles": {p: None for p in PHASES}, "pole_events": [],
                "intervals": [], "status_edges": [], "flags": []}
    return {
        "inception_s": tl.inception_s, "clearing_s": tl.clearing_s,
        "duration_ms": tl.duration_ms, "duration_cycles": tl.duration_cycles,
        "relay_time_ms": tl.relay_time_ms, "breaker_time_ms": tl.breaker_time_ms,
        "trip_s": tl.trip_s,
        "poles": {p: {"open_s": s} for p, s in zip(PHASES, tl.pole_open_s, strict=True)},
        "pole_events": [e.to_dict() for e in tl.poles],
        "intervals": [{
            "kind": iv.kind, "type": iv.type, "start_s": iv.start_s, "end_s": iv.end_s,
            "duration_ms": iv.duration_ms,
            "duration_cycles": None if iv.duration_ms is None or not f0
            else iv.duration_ms * 1e-3 * f0,
            "confidence": round(float(iv.classification.confidence), 3),
            "cleared_by_poles": iv.cleared_by_poles,
            "poles_open_s": {p: s for p, s in zip(PHASES, iv.pole_open_s, strict=True)},
            "offset_tau_ms": None if iv.tau_s is None else 1e3 * iv.tau_s,
            "waveform_residual": None if iv.i_residual is None else {
                "currents": [float(x) for x in iv.i_residual],
                "voltages": [float(x) for x in iv.v_residual],
                "currents_steady_part": None if iv.i_distortion is None else [
                    float(x) for x in iv.i_distortion]},
            "windows": {"prefault": iv.prefault.to_dict() if iv.prefault else None,
                        "fault": iv.fault.to_dict()},
            "remote_open": None if iv.remote_open is None else iv.remote_open.to_dict(),
        } for iv in tl.intervals],
        "status_edges": [e.to_dict() for e in tl.edges],
        "flags": list(tl.flags),
    }


def _phasors_dict(t: TerminalAnalysis | None) -> dict:
    if t is None:
        return {"prefault": {}, "fault": {}}
    return {"prefault": {k: _pd(z) for k, z in t.prefault.items()},
            "fault": {k: _pd(z) for k, z in t.fault.items()},
            "reference": "complex RMS, primary V/A, angle in degrees against a nominal-"
                         "frequency reference from the record's first sample"}


def _seq(x012) -> dict:
    return {str(k): _pd(x012[k]) for k in range(3)}


def _sequence_dict(t: TerminalAnalysis | None) -> dict:
    if t is None:
        return {"prefault": None, "fault": None}
    out = {}
    for name, v, i in (("prefault", t.v012_prefault, t.i012_prefault),
                       ("fault", t.v012_fault, t.i012_fault)):
        if v is None or i is None:
            out[name] = None
            continue
        out[name] = {"V0": _pd(v[0]), "V1": _pd(v[1]), "V2": _pd(v[2]),
                     "I0": _pd(i[0]), "I1": _pd(i[1]), "I2": _pd(i[2])}
    return out


def _terminal_dict(t: TerminalAnalysis, f0: float) -> dict:
    return {
        "record": t.record, "label": t.label, "channels": dict(t.channels),
        "fault": _fault_dict(t) if t.classification is not None else _fault_dict(t),
        "timeline": _timeline_dict(t.timeline, f0),
        "phasors": _phasors_dict(t), "sequence": _sequence_dict(t),
        "peak_a": None if t.peak_a is None else dict(zip(PHASES, t.peak_a, strict=True)),
        "rms": {"prefault": dict(t.rms_prefault), "fault": dict(t.rms_fault)},
        "flags": list(t.flags),
    }


# ------------------------------------------------------------------ the chain
#: a record whose voltages run further than this (relative) from its lf field's
#: frequency is analysed at the wrong frequency: warned, and not located from
#: (off-nominal operation stays within about 1 %; common practice, no source)
FREQ_OFF_REL = 0.05

#: a record is resampled onto a grid of at most this many times its own samples (its
#: slowest rate segment at 1/64 of the fastest); beyond that the times are corrupt
GRID_MAX_FACTOR = 64


def _rate(record: Record) -> tuple[float, int, bool]:
    """(sample rate [Hz], samples per cycle used, resampled?) of a fixed-rate record.

    A rate that is not a whole number of samples per nominal cycle is
    resampled (Akima) to the next multiple of four samples per cycle, at
    least 16.
    """
    t = record.time
    where = record.source or record.station
    if record.n_samples < 2:
        raise SignalError(f"{where}: record holds {record.n_samples} samples; expected "
                          f"several cycles")
    d = np.diff(t)
    if not np.all(d > 0):
        k = int(np.flatnonzero(d <= 0)[0])
        raise SignalError(f"{where}: time does not increase at sample {k + 2}; expected "
                          f"increasing sample times")
    # several rate segments (C37.111 nrates > 1): the fastest rate, the rest resampled;
    # evenly spaced time stamps of a coarse unit (260/261 us for 3840 Hz): the span
    # over the steps, not the median step
    step = uniform_step(t)
    dt = step if step is not None else float(np.min(d))
    fs = 1.0 / dt
    f0 = record.frequency_hz
    if not (f0 and np.isfinite(f0) and f0 > 0):
        raise SignalError(f"{where}: field lf = {f0!r}; expected the nominal line frequency")
    n = fs / f0
    if n < 8:
        raise SignalError(f"{where}: {fs:.6g} Hz is {n:.4g} samples per {f0:g} Hz cycle; "
                          f"expected at least 8")
    if abs(n - round(n)) <= 1e-3 * n:
        return fs, int(round(n)), not _uniform(t)
    return fs, max(16, 4 * int(np.ceil(n / 4.0))), True


def _uniform(t: np.ndarray) -> bool:
    """True when the sample times are evenly spaced (within 1 % of a step)."""
    return uniform_step(t) is not None


def _gaps_filled(term: TerminalChannels, record: Record, k_rec: int,
                 warnings: list[str]) -> TerminalChannels:
    """``term`` with missing samples (NaN: C37.111 missing-data codes) interpolated.

    Linear interpolation in time between the neighbouring recorded samples
    (held at the record's ends), with a warning naming the channel, the count,
    the longest gap and where it is; a channel with no sample at all reads zero.
    """
    t = record.time

    def fill(ch):
        if ch is None:
            return None
        x = np.asarray(ch.values, dtype=float)
        bad = ~np.isfinite(x)
        if not bad.any():
            return ch
        good = ~bad
        if not good.any():
            y = np.zeros_like(x)
            warnings.append(f"record {k_rec}: channel {ch.name} holds no recorded sample; "
                            f"read as zero")
        else:
            y = x.copy()
            y[bad] = np.interp(t[bad], t[good], x[good])
            edges = np.diff(np.concatenate([[0], bad.astype(np.int8), [0]]))
            starts, stops = np.nonzero(edges == 1)[0], np.nonzero(edges == -1)[0]
            j = int(np.argmax(stops - starts))
            warnings.append(f"record {k_rec}: channel {ch.name}: {int(bad.sum())} missing "
                            f"sample(s) filled by linear interpolation (longest gap "
                            f"{int(stops[j] - starts[j])} from {t[starts[j]]:.4f} s); phasors "
                            f"within a cycle of a gap are estimates")
        y.setflags(write=False)
        return replace(ch, values=y)

    return replace(term, voltages=tuple(fill(c) for c in term.voltages),
                   currents=tuple(fill(c) for c in term.currents),
                   neutral_current=fill(term.neutral_current),
                   neutral_voltage=fill(term.neutral_voltage),
                   parallel_residual=fill(term.parallel_residual))


def _on_grid(channels: Sequence, t: np.ndarray, t_new: np.ndarray) -> np.ndarray:
    """Channel values at the instants ``t_new`` [s], shape (len(channels), len(t_new)).

    Each channel's samples were taken at ``t + skew_s`` (C37.111 ``skew``: the
    channel's time skew from the start of the sample period), so a channel
    with skew, or any channel when the grid changes, is interpolated from its
    own instants.  Akima interpolation (H. Akima, J. ACM 17(4), 1970): local,
    so a fault's step does not ring back into the pre-fault samples the way a
    global cubic spline does (the inception detector would see that ringing);
    its phasor error at 16.7 samples a cycle is about 0.05 %.
    """
    from scipy.interpolate import Akima1DInterpolator

    out = np.empty((len(channels), t_new.size))
    for k, ch in enumerate(channels):
        x = np.asarray(ch.values, dtype=float)
        skew = float(getattr(ch, "skew_s", 0.0) or 0.0)
        if skew == 0.0 and t_new is t:
            out[k] = x
        else:
            out[k] = Akima1DInterpolator(t + skew, x)(t_new, extrapolate=True)
    return out


def _ro(x) -> np.ndarray:
    a = np.array(x, dtype=complex, copy=True)
    a.setflags(write=False)
    return a


def _iso(dt) -> str | None:
    return None if dt is None else dt.isoformat()


def _terminal(record: Record, k_rec: int, term: TerminalChannels, n: int, fs: float,
              opts: AnalysisOptions, warnings: list[str]) -> tuple[TerminalAnalysis, float | None,
                                                                   bool]:
    f0 = record.frequency_hz
    term = _gaps_filled(term, record, k_rec, warnings)
    extra_ch = [c for c in (term.neutral_current, term.neutral_voltage,
                            term.parallel_residual) if c is not None]
    skewed = [c.name for c in (*term.voltages, *term.currents, *extra_ch)
              if getattr(c, "skew_s", 0.0)]
    if abs(fs - n * f0) > 1e-6 * fs or not _uniform(record.time):
        m = int(np.floor(record.time[-1] * n * f0)) + 1
        if m > GRID_MAX_FACTOR * record.n_samples:
            raise SignalError(f"{record.source or record.station}: the sample times span "
                              f"{record.time[-1]:.6g} s for {record.n_samples} samples, "
                              f"{m} samples at {n * f0:g} Hz; expected time stamps or sample "
                              f"numbers that follow the record's rates (a corrupt one?)")
        t = np.arange(m) / (n * f0)
        idx = np.clip(np.searchsorted(record.time, t, side="right") - 1, 0, record.time.size - 1)
        trips = tuple(replace(ch, values=np.asarray(ch.values)[idx]) for ch in term.trips)
        bkrs = tuple(replace(ch, values=np.asarray(ch.values)[idx]) for ch in term.breakers)
        fs = n * f0
    else:
        t = record.time
        trips, bkrs = term.trips, term.breakers
    if t is record.time and not skewed:
        v, i = term.v_abc, term.i_abc
    else:
        v = _on_grid(term.voltages, record.time, t)
        i = _on_grid(term.currents, record.time, t)
    if skewed:
        warnings.append(f"record {k_rec}: channel skew applied (values interpolated to the "
                        f"common sample instants) for {', '.join(skewed)}")
    extra_values = {id(c): (_on_grid([c], record.time, t)[0]
                            if (t is not record.time or c.name in skewed)
                            else np.asarray(c.values, dtype=float)) for c in extra_ch}
    v_ph = dft_phasors(v, n, opts.filter)
    i_ph = dft_phasors(i, n, opts.filter)
    # a record that begins with the line de-energised: until current first flows the
    # line-side VTs hold only the trapped charge decaying, no system state (it would
    # read as faults and a VT circuit fault); it is set to zero up to the energisation,
    # and a terminal that never carries current (an open end) has no fault
    i_rated = _rated_current(term)
    dead_start = _dead_at_start(v_ph, i_ph, n, i_rated)
    min_fault_a = 0.0
    if dead_start is not None:
        i_abs = np.max(np.abs(np.nan_to_num(i)), axis=0)
        i_ref = max(float(i_abs.max()), i_rated or 0.0)
        min_fault_a = DEAD_CURRENT_RATIO * i_ref
        on = np.flatnonzero(i_abs > min_fault_a * np.sqrt(2.0))
        if on.size:
            v = np.array(v, dtype=float)
            v[:, :on[0]] = 0.0
            v_ph = dft_phasors(v, n, opts.filter)
    have_v = bool(np.abs(v).max() > 0)

    v1_all = np.abs(sequence_phasors(v_ph)[1])
    v1_live = float(np.max(v1_all[np.isfinite(v1_all)])) if have_v and np.any(
        np.isfinite(v1_all)) else 0.0

    def freq(stop: int, ph) -> float | None:
        """Frequency [Hz] from V1 over samples 0..stop (None if too short or no voltage).

        None too where V1 there is under :data:`LIVE_VOLTAGE_RATIO` of the record's
        largest: a dead line's trapped charge decaying on line-side VTs is no measure
        of the system frequency.
        """
        if not have_v or stop < 2 * n:
            return None
        seg = v1_all[n - 1:stop]
        seg = seg[np.isfinite(seg)]
        if not seg.size or not np.min(seg) >= LIVE_VOLTAGE_RATIO * v1_live:
            return None
        try:
            return frequency_from_phasor(sequence_phasors(ph[:, :stop])[1], fs, f0)
        except SignalError:
            return None

    def track(f: float):
        return (tracked_phasors(v, fs, f, f0, samples_per_cycle=n, kind=opts.filter),
                tracked_phasors(i, fs, f, f0, samples_per_cycle=n, kind=opts.filter))

    def off(f: float | None) -> bool:
        return (opts.track_frequency and f is not None
                and TRACK_ABOVE_HZ < abs(f - f0) < 0.5 * f0)

    # 1. a first estimate from the record's first three cycles (pre-trigger data)
    f_used = None
    f_est = freq(min(3 * n, t.size), v_ph)
    if off(f_est):
        try:
            f_est = estimate_frequency(v, n, fs, f0, 0, min(3 * n, t.size), iterations=2)
        except SignalError as exc:  # e.g. A-C-B rotation: V1 turns backwards
            warnings.append(f"record {k_rec}: no frequency estimate from the first cycles "
                            f"({exc}); phasors at the nominal frequency")
            f_est = None
        if off(f_est):
            v_ph, i_ph = track(f_est)
            f_used = f_est
    tl = build_timeline(t, v, i, n, trips=trips, breakers=bkrs, v_ph=v_ph, i_ph=i_ph,
                        mitigate_offset=opts.mitigate_offset, tau_s=opts.tau_s,
                        cycle_samples=None if f_used is None else fs / f_used,
                        min_fault_current_a=min_fault_a)
    # 2. the estimate from the whole pre-fault part (whole record without a fault); the
    #    tracked phasors are referred to the nominal reference, so their rotation still
    #    measures f - f0
    stop = t.size
    if tl.intervals:
        stop = tl.intervals[0].prefault.end_index + 1 if tl.intervals[0].prefault else 0
    f_b = freq(stop, v_ph)
    if f_b is not None:
        f_est = f_b
    if off(f_est) and (f_used is None or abs(f_est - f_used) > TRACK_ABOVE_HZ):
        v_ph, i_ph = track(f_est)
        f_used = f_est
        tl = build_timeline(t, v, i, n, trips=trips, breakers=bkrs, v_ph=v_ph, i_ph=i_ph,
                            mitigate_offset=opts.mitigate_offset, tau_s=opts.tau_s,
                            cycle_samples=fs / f_used, min_fault_current_a=min_fault_a)
    tracked = f_used is not None
    roles = term.roles()
    names_v = [c.name for c in term.voltages]
    names_i = [c.name for c in term.currents]
    extra = [(c, c.name) for c in extra_ch]
    pre: dict[str, complex] = {}
    flt: dict[str, complex] = {}
    rms_pre: dict[str, float] = {}
    rms_flt: dict[str, float] = {}
    cls = None
    v012p = i012p = v012f = i012f = None
    peak = None
    flags = list(tl.flags)
    if "VA" in term.derived:
        flags.append(f"{V0_UNKNOWN_FLAG}: the phase voltages are derived from line-to-line "
                     f"channels with no zero sequence")
    if tl.intervals:
        iv = tl.intervals[0]
        cls = iv.classification
        kf = iv.fault.end_index
        kp = iv.prefault.end_index if iv.prefault is not None else None
        for names, ph_now, ph_fault in ((names_v, v_ph, iv.v_fault), (names_i, i_ph, iv.i_fault)):
            for p, name in enumerate(names):
                if kp is not None:
                    pre[name] = complex(ph_now[p, kp])
                flt[name] = complex(ph_fault[p])
        for ch, name in extra:
            x = extra_values[id(ch)]
            if kp is not None:
                pre[name] = complex(window_phasor(x, kp, n))
            if opts.mitigate_offset and kf >= n - 1:
                # the same window and offset removal as the phase quantities
                length = iv.fault.end_index - iv.fault.start_index + 1
                tau = opts.tau_s if ch is not term.neutral_voltage else None
                flt[name] = complex(fault_window_current(
                    x, kf, n, fs, tau, max(length, n),
                    cycle_samples=None if f_used is None else fs / f_used).phasor)
            else:
                flt[name] = complex(window_phasor(x, kf, n))
        rv = moving_rms(np.vstack([v, i]), n)
        for p, name in enumerate(names_v + names_i):
            if kp is not None:
                rms_pre[name] = float(rv[p, kp])
            rms_flt[name] = float(rv[p, kf])
        if kp is not None:
            v012p = abc_to_012(np.array([pre[nm] for nm in names_v]))
            i012p = abc_to_012(np.array([pre[nm] for nm in names_i]))
        v012f = abc_to_012(np.asarray(iv.v_fault))
        i012f = abc_to_012(np.asarray(iv.i_fault))
        last = tl.intervals[-1]
        # peak of the recorded samples (not of a resampled grid) from inception to the end
        t_end = last.end_s if last.end_s is not None else float(record.time[-1])
        k0 = int(np.searchsorted(record.time, iv.start_s))
        k1 = max(int(np.searchsorted(record.time, t_end, side="right")), k0 + 1)
        peak = tuple(float(x) for x in np.max(np.abs(term.i_abc[:, k0:k1]), axis=1))
    else:
        # no fault: steady phasors at the end of the first full cycle and at the record's end
        for names, ph in ((names_v, v_ph), (names_i, i_ph)):
            for p, name in enumerate(names):
                pre[name] = complex(ph[p, n - 1]) if np.isfinite(ph[p, n - 1]) else complex(
                    np.nan)
    v012p, i012p, v012f, i012f = (None if x is None else _ro(x)
                                  for x in (v012p, i012p, v012f, i012f))
    i_n = flt.get(term.neutral_current.name) if term.neutral_current is not None else None
    if dead_start is not None:
        # the line was de-energised when the record began: its "pre-fault" is no state
        # of the line in service, and the checks on it would read a blown VT fuse
        checks = [f"{DEAD_START_FLAG} (positive-sequence voltage {100 * dead_start:.0f} % of "
                  f"the record's largest, no current): what follows is the line being "
                  f"energised, and a fault then has no pre-fault state of the line in service"]
    elif v012p is None and t.size >= n:
        # no pre-fault window: the record's first full cycle stands for it (a standing
        # unbalance from a miswired CT makes the whole record look faulted)
        v_first, i_first = abc_to_012(v_ph[:, n - 1]), abc_to_012(i_ph[:, n - 1])
        if i012f is not None:
            i_scale = i012f
        else:  # the largest current phasors of the record
            mag = np.abs(i_ph[:, n - 1:]).max(axis=0)
            i_scale = abc_to_012(i_ph[:, n - 1 + int(np.argmax(np.where(np.isfinite(mag),
                                                                          mag, -1.0)))])
        checks = measurement_checks(v_first, i_first, i_scale, i_n, i_rated)
    else:
        checks = measurement_checks(v012p, i012p, i012f, i_n, i_rated)
    if tl.intervals:
        iv0 = tl.intervals[0]
        checks += saturation_checks(iv0.i_fault, iv0.i_distortion, tuple(names_i))
    flags.extend(checks)
    warnings.extend(f"record {k_rec} terminal {term.label or '(single)'}: {c}" for c in checks)
    ta = TerminalAnalysis(
        record=k_rec, label=term.label, channels=MappingProxyType(dict(roles)), timeline=tl,
        classification=cls, prefault=MappingProxyType(pre), fault=MappingProxyType(flt),
        v012_prefault=v012p, i012_prefault=i012p, v012_fault=v012f, i012_fault=i012f,
        peak_a=peak, rms_fault=MappingProxyType(rms_flt), rms_prefault=MappingProxyType(rms_pre),
        flags=tuple(flags), currents_acb=any(CURRENT_ACB_FLAG in c for c in checks),
        dead_start=dead_start is not None, v0_unknown="VA" in term.derived)
    return ta, f_est, tracked


#: words of the measurement check that finds A-C-B rotating voltages (the location
#: step looks for them)
ACB_FLAG = "rotate A-C-B"
#: words of the check that finds currents rotating A-C-B under A-B-C voltages (two
#: CT phases swapped): that end is left out of the location
CURRENT_ACB_FLAG = "currents run A-C-B"

#: words of the flag for a terminal whose voltages are line-to-line only
V0_UNKNOWN_FLAG = "V0 not measured"
#: words of the flag for a record that begins with the line de-energised
DEAD_START_FLAG = "the record begins with the line de-energised"
#: currents under this fraction of the record's largest (or of the CT rating) are none:
#: a dead line, an open end (common practice, no source)
DEAD_CURRENT_RATIO = 0.02


def _rated_current(term: TerminalChannels) -> float | None:
    """The largest CT primary rating of a terminal's phase currents [A], or None."""
    rated = [c.primary for c in term.currents
             if c.secondary > 0 and c.primary > c.secondary and np.isfinite(c.primary)]
    return float(max(rated)) if rated else None


def _dead_at_start(v_ph, i_ph, n: int, i_rated: float | None = None) -> float | None:
    """V1 of the first full cycle over the record's largest, where the line starts dead.

    Dead: that V1 under :data:`LIVE_VOLTAGE_RATIO` of the largest, and every phase
    current under :data:`DEAD_CURRENT_RATIO` of the largest or, where the CT rating
    ``i_rated`` [A] is known, of that (an open end's CT carries nothing the whole
    record); a fault at the record's start depresses the voltage but drives current.
    None otherwise.
    """
    if v_ph.shape[-1] < n:
        return None
    v1 = np.abs(sequence_phasors(v_ph)[1])
    imag = np.abs(i_ph)
    first_i = imag[:, n - 1]
    if not (np.isfinite(v1[n - 1]) and np.all(np.isfinite(first_i))):
        return None
    v_max = float(np.max(v1[np.isfinite(v1)]))
    i_max = float(np.max(imag[np.isfinite(imag)]))
    first_v = float(v1[n - 1])
    i_ref = max(i_max, i_rated or 0.0)
    if not (v_max > 0 and first_v < LIVE_VOLTAGE_RATIO * v_max
            and float(np.max(first_i)) <= DEAD_CURRENT_RATIO * i_ref):
        return None
    return first_v / v_max


#: a voltage under this fraction of the record's largest positive-sequence voltage is
#: no live system voltage (a dead line's trapped charge, a de-energised bus); the
#: frequency is not estimated from it (common practice, no source)
LIVE_VOLTAGE_RATIO = 0.5

#: Plausibility limits of :func:`measurement_checks` (common practice, no source):
#: a healthy pre-fault system has unbalance well under these.
PREFAULT_UNBALANCE_LIMIT = 0.3     # |I0| or |I2| over |I1|, pre-fault
PREFAULT_V_UNBALANCE_LIMIT = 0.1   # |V0| or |V2| over |V1|, pre-fault
RESIDUAL_MISMATCH_LIMIT = 0.1      # |IN - 3 I0| over max(|3 I0|, 5 % of |I1|), fault window


def measurement_checks(v012_pre, i012_pre, i012_fault=None, i_n_fault=None,
                       i_rated_a: float | None = None) -> list[str]:
    """Plain-words flags for measurements that do not look like a healthy terminal.

    Parameters
    ----------
    v012_pre, i012_pre : complex array (3,) or None
        Pre-fault sequence voltages [V] and currents [A] (0, 1, 2).
    i012_fault : complex array (3,), optional
        Fault-window sequence currents [A].
    i_n_fault : complex, optional
        Fault-window phasor of a measured neutral (residual) current [A].
    i_rated_a : float, optional
        The CT's rated primary current [A]: the A-C-B current check's noise gate
        is then 2 % of it where that is less than 2 % of the fault current.

    Returns
    -------
    list of str
        Empty when nothing is suspect.

    Notes
    -----
    A reversed or miswired CT on one phase turns a balanced load into one
    with ``|I0| = |I2| = 2/3 |I1|`` of the healthy value; a reversed phase
    sequence swaps positive and negative sequence; a missing VT phase gives
    ``|V0| = |V2| = |V1| / 2``.  A measured residual current that differs from
    ``IA + IB + IC`` points at CT wiring, ratio or saturation.  The limits are
    common practice (no source).  See :func:`saturation_checks` for the
    waveform's own evidence of CT saturation.
    """
    out: list[str] = []
    if v012_pre is not None:
        v0, v1, v2 = (abs(complex(x)) for x in v012_pre)
        if v1 > 0 and v2 > v1:
            out.append(f"pre-fault voltages {ACB_FLAG} (|V2| {v2:.4g} V > |V1| {v1:.4g} V): "
                       f"phase sequence or VT wiring suspected")
        elif v1 > 0 and max(v0, v2) > PREFAULT_V_UNBALANCE_LIMIT * v1:
            out.append(f"pre-fault voltages unbalanced (|V0|/|V1| {v0 / v1:.2f}, |V2|/|V1| "
                       f"{v2 / v1:.2f}): VT wiring, polarity or a blown VT fuse suspected")
    v_abc_order = v012_pre is not None and abs(complex(v012_pre[1])) > abs(complex(v012_pre[2]))
    if i012_pre is not None and i012_fault is not None:
        i0, i1, i2 = (abs(complex(x)) for x in i012_pre)
        i_scale = max(abs(complex(x)) for x in i012_fault)
        # the noise gate: 2 % of the fault current, or of the CT's rating where it is
        # known (a close-in fault's current would hide a load of a few hundred amperes)
        gate = 0.02 * (i_scale if i_rated_a is None else min(i_scale, i_rated_a))
        if v_abc_order and i2 > max(i1, gate, 1e-9):
            # two phases swapped: |I2| = |I|, I1 = I0 = 0; one phase reversed:
            # |I2| = |I0| = 2 |I1|
            what = ("one phase's CT polarity or wiring reversed" if i0 > 0.3 * i2
                    else "two CT phases swapped")
            out.append(f"pre-fault {CURRENT_ACB_FLAG} (|I2| {i2:.4g} A > |I1| {i1:.4g} A, "
                       f"|I0| {i0:.4g} A) under A-B-C voltages: {what} suspected")
        # only where the load current is well above the noise of the fault-scaled CT
        elif i1 > 0.02 * i_scale and max(i0, i2) > PREFAULT_UNBALANCE_LIMIT * i1:
            out.append(f"pre-fault currents unbalanced (|I0|/|I1| {i0 / i1:.2f}, |I2|/|I1| "
                       f"{i2 / i1:.2f}): CT polarity or wiring of one phase suspected")
    if i_n_fault is not None and i012_fault is not None and np.isfinite(complex(i_n_fault)):
        three_i0 = 3.0 * complex(i012_fault[0])
        ref = max(abs(three_i0), 0.05 * abs(complex(i012_fault[1])), 1e-9)
        mis = abs(complex(i_n_fault) - three_i0) / ref
        if mis > RESIDUAL_MISMATCH_LIMIT:
            out.append(f"measured residual current differs from IA + IB + IC by {100 * mis:.0f} "
                       f"% in the fault window: CT saturation, ratio or wiring suspected")
    return out


def saturation_checks(i_fault, i_distortion, names=("IA", "IB", "IC")) -> list[str]:
    """Flags for fault currents whose waveform says their CT saturates.

    Parameters
    ----------
    i_fault : array (3,) or None
        Fault-window phase currents [A].
    i_distortion : array (3,) or None
        What the fit left of each over the steady part of the fault while the
        voltages stayed steady (fraction of the fundamental,
        :attr:`~eventlab.signals.timeline.FaultInterval.i_distortion`).
    names : three str
        Channel names, for the messages.

    Notes
    -----
    A current carrying at least half the largest fault current whose
    waveform departs from a sinusoid with decaying offset by more than
    :data:`~eventlab.signals.timeline.CT_DISTORTION_LIMIT` of its RMS while the
    voltages stay steady: a CT driven into saturation clips each half-cycle,
    which no sinusoid with an offset can follow (common practice, no source).
    """
    if i_fault is None or i_distortion is None:
        return []
    res = np.asarray(i_distortion, dtype=float)
    return [f"{nm}: the fault current departs from a sinusoid with decaying offset by "
            f"{100 * float(r):.1f} % of its RMS while the voltages stay steady: CT "
            f"saturation suspected"
            for nm, hit, r in zip(names, saturating_phases(i_fault, res), res, strict=True)
            if hit]


def model_terminal(model, record: Record, line: str | None = None,
                   terminal_id: str | None = None):
    """The model's ``[[terminal]]`` for a record.

    ``terminal_id`` given: that terminal (:class:`~eventlab.errors.ModelError`
    if the model has none of that id).  Otherwise the terminal at the
    record's station (case-insensitive, spaces and underscores alike; else by
    the words of the name, :func:`~eventlab.locate.model_link.station_terminals`),
    on ``line`` when given; None when no terminal or more than one matches
    (the record's channels are then mapped from their names).  When the
    station name finds none, the record's device id (``rec_dev_id``) is tried
    the same way: recorders are often named after the bay they sit in
    ("VELLMOOR-VM-CR1 DFR") while the station field holds a code or a
    number.
    """
    return model_terminal_found(model, record, line, terminal_id)[0]


def model_terminal_found(model, record: Record, line: str | None = None,
                         terminal_id: str | None = None):
    """:func:`model_terminal` and how it was found: ``(terminal or None, how)``.

    ``how`` is ``"terminal id"``, ``"station name"``, ``"station name (partial
    match)"``, ``"device id"`` or ``""`` when nothing matched.
    """
    if terminal_id is not None:
        return model.terminal(terminal_id), "terminal id"
    hits, how = station_terminals(model, record.station, line)
    if len(hits) == 1:
        return hits[0], how
    if not hits and record.device.strip():
        by_device, _ = station_terminals(model, record.device, line)
        if len(by_device) == 1:
            return by_device[0], "device id"
    return None, ""


def _reversed_currents(term: TerminalChannels) -> TerminalChannels:
    def neg(ch):
        if ch is None:
            return None
        v = -np.asarray(ch.values)
        v.setflags(write=False)
        return replace(ch, values=v)

    return replace(term, currents=tuple(neg(c) for c in term.currents),
                   neutral_current=neg(term.neutral_current),
                   parallel_residual=neg(term.parallel_residual))


def analyze(records: Sequence[Record] | Record, model=None, line: str | None = None,
            options: AnalysisOptions | None = None) -> Analysis:
    """Run the signal chain on one record or several (e.g. the two ends of a line).

    Parameters
    ----------
    records : Record or sequence of Record
    model : NetworkModel, optional
        For the model-based steps: fault location and the measured-versus-computed
        comparison (:func:`eventlab.locate.locate_event`, one end per faulted
        record, distances from the first).
        The signal chain takes from it the channel map of the record's
        terminal (:func:`model_terminal`; currents negated for
        ``ct_polarity = "reversed"``) unless ``options.channel_maps`` gives
        one.
    line : str, optional
        Line id in ``model``: the faulted line (default: found from the first
        record's station).
    options : AnalysisOptions, optional

    Returns
    -------
    Analysis
        Headline (``primary``): the first terminal, in record order, that
        holds a fault; else the first terminal.
    """
    if isinstance(records, Record):
        records = [records]
    records = list(records)
    if not records:
        raise SignalError("analyze: no record given; expected at least one")
    opts = options if options is not None else AnalysisOptions()
    infos = []
    terms: list[TerminalAnalysis] = []
    warnings: list[str] = []
    model_terms: dict[int, Any] = {}   # record index -> model [[terminal]] it was mapped with
    spc: dict[int, int] = {}           # record index -> samples per cycle used
    off_freq: dict[int, str] = {}      # record index -> why its frequency is not lf's
    for k, rec in enumerate(records):
        fs, n, resampled = _rate(rec)
        spc[k] = n
        if resampled and not _uniform(rec.time):
            warnings.append(f"record {k}: the sample rate changes within the record "
                            f"({', '.join(f'{r.samp_hz:g} Hz' for r in rec.rates)}); "
                            f"resampled to {n} per cycle ({n * rec.frequency_hz:g} Hz) for "
                            f"the phasors and the timeline")
        elif resampled:
            warnings.append(f"record {k}: {fs:g} Hz is not a whole number of samples per "
                            f"{rec.frequency_hz:g} Hz cycle; resampled to {n} per cycle "
                            f"({n * rec.frequency_hz:g} Hz) for the phasors and the timeline")
        cmap = opts.channel_maps.get(k)
        mt, how = (None, "") if (cmap is not None or model is None) else model_terminal_found(
            model, rec, line, opts.terminals.get(k))
        if mt is not None and how == "device id":
            warnings.append(f"record {k}: station {rec.station!r} is not in the model; paired "
                            f"with terminal {mt.id} (station {mt.station}) by the record's "
                            f"device id {rec.device!r}: give --terminal if that is wrong")
        found = None
        if mt is not None:
            try:
                found = map_terminals(rec, dict(mt.channels), label=mt.id)
            except ChannelMapError as exc:
                warnings.append(f"record {k}: the model's channel map of terminal {mt.id} "
                                f"does not fit ({exc}); channels mapped from their names")
                mt = None
        if mt is not None and found is not None:
            if getattr(mt, "ct_polarity", "normal") == "reversed":
                found = tuple(_reversed_currents(t) for t in found)
                warnings.append(f"record {k}: terminal {mt.id} has ct_polarity = reversed in "
                                f"the model: currents negated (positive from bus into line)")
        if mt is not None and found is not None:
            model_terms[k] = mt
        if found is None:
            found = map_terminals(rec, cmap)
        f_first, tracked_any = None, False
        for term in found:
            named = dict(zip(("VA", "VB", "VC", "IA", "IB", "IC"),
                             (*term.voltages, *term.currents), strict=True))
            for ph in term.derived:
                if ph.startswith("I"):
                    warnings.append(f"record {k}: no {ph} channel: {ph} derived as "
                                    f"{named[ph].name} (two phase CTs and the residual); the "
                                    f"residual check on it is void")
            if "VA" in term.derived:
                warnings.append(f"record {k}: line-to-line voltages only: phase voltages "
                                f"derived as {', '.join(named[p].name for p in ('VA', 'VB', 'VC'))}"
                                f" with no zero sequence (V0 is not measured): ground faults "
                                f"are not located from this record")
            odd = [f"{c.name} ({c.unit!r})" for c in (*term.voltages, *term.currents)
                   if c.unit not in ("V", "A")]
            if odd:
                warnings.append(f"record {k}: unit of {', '.join(odd)} is not one eventlab "
                                f"reads as a voltage or a current (V, kV, A, kA ...); the "
                                f"values are taken as V and A unscaled")
            ta, f_est, tracked = _terminal(rec, k, term, n, fs, opts, warnings)
            terms.append(ta)
            if f_first is None:
                f_first = f_est
            tracked_any |= tracked
        why_freq = _off_frequency(f_first, rec.frequency_hz)
        if why_freq is not None:
            off_freq[k] = why_freq
            warnings.append(f"record {k}: the voltages run at {f_first:.2f} Hz, the cfg's lf "
                            f"field says {rec.frequency_hz:g} Hz: the phasors, the timing "
                            f"and any location are computed for {rec.frequency_hz:g} Hz; "
                            f"check lf")
        trig_s = None
        if rec.start is not None and rec.trigger is not None:
            trig_s = (rec.trigger - rec.start).total_seconds() + 1e-9 * (rec.trigger_ns -
                                                                         rec.start_ns)
        infos.append(RecordInfo(
            index=k, source=rec.source, station=rec.station, device=rec.device,
            revision=rec.revision, data_format=rec.data_format, start=_iso(rec.start),
            trigger=_iso(rec.trigger), trigger_s=trig_s, sample_rate_hz=fs,
            samples_per_cycle=n, nominal_frequency_hz=rec.frequency_hz, frequency_hz=f_first,
            tracked=tracked_any, resampled=resampled, n_samples=rec.n_samples, duration_s=rec.duration_s,
            n_analog=len(rec.analog), n_status=len(rec.status), values=rec.values))
    primary = next((j for j, t in enumerate(terms) if t.fault_type != "none"),
                   0 if terms else None)
    location = None
    if model is not None:
        location = _locate(records, terms, model, line, model_terms, spc, opts, warnings,
                           off_freq)
    comparison = ()
    if location is not None and location.comparison is not None:
        comparison = tuple(location.comparison.rows)
    return Analysis(records=tuple(infos), terminals=tuple(terms), primary=primary,
                    warnings=tuple(warnings), location=location, comparison=comparison)


def on_one_clock(records: Sequence[Record], warnings: list[str] | None = None) -> list[Record]:
    """The records with their start times in UTC, where every one says its time code.

    Records from recorders in other time zones (C37.111-2013 ``time_code``,
    :attr:`Record.utc_offset`) are compared on one clock; where a record does
    not say its time code (1999 and earlier), the stamps are compared as
    written.  ``warnings`` gets a line when the codes differ (and were
    applied) or when only some records carry one.
    """
    records = list(records)
    offsets = [r.utc_offset for r in records]
    if len(records) < 2 or all(o is None for o in offsets):
        return records
    if any(o is None for o in offsets):
        if any(o for o in offsets if o is not None):      # a zone beside a record with none
            (warnings if warnings is not None else []).append(
                "location: some records state a time code and some do not: their time "
                "stamps are compared as written")
        return records
    if len(set(offsets)) > 1 and warnings is not None:
        warnings.append("location: the records' time stamps are in different time codes (" +
                        ", ".join(f"{r.station} {r.time_code}" for r in records) +
                        "): compared in UTC")
    return [r if r.start is None else replace(r, start=r.start - o,
                                              trigger=None if r.trigger is None
                                              else r.trigger - o)
            for r, o in zip(records, offsets, strict=True)]


def _left_out(ta: TerminalAnalysis, fault_type: str, energised: bool) -> str | None:
    """Why a terminal's measurements keep it out of the location (known before its
    phasors are judged), or None."""
    if ta.currents_acb:
        return ("its pre-fault currents run A-C-B under A-B-C voltages (CT phases swapped "
                "or one reversed); a location needs the phase currents as the model has them")
    if ta.dead_start and not energised:
        return ("it begins with the line de-energised and the fault is not fed from this "
                "end alone (both ends closed onto it, or a three-phase fault, which does not "
                "show it): eventlab's methods and the model fit start from the line in "
                "service before the fault; the record of the first trip, or the other "
                "end's, locates it")
    if ta.v0_unknown and involves_ground(fault_type):
        return ("its voltages are line-to-line only (V0 is not measured), and a ground "
                "fault's location needs the zero-sequence voltage")
    return None


def _off_frequency(f_hz: float | None, lf_hz: float) -> str | None:
    """Why a record's measured frequency keeps it out of the location, or None."""
    if f_hz is None or abs(f_hz - lf_hz) <= FREQ_OFF_REL * lf_hz:
        return None
    return (f"its signals run at {f_hz:.2f} Hz against the lf field's {lf_hz:g} Hz (a wrong "
            f"lf, or a record of another system)")


def _widened_by_each_end(model, ends, line, opts, warnings):
    """Both ends' location, its interval widened to hold each end's own interval.

    For two records that disagree where neither end can be blamed
    (:func:`eventlab.locate.consistency.check_pair`): the search zone must
    hold what each record alone says.
    """
    try:
        rep = locate_event(model, ends, line=line, options=opts.locate)
    except (ModelError, SignalError) as exc:
        warnings.append(f"location: not made ({exc})")
        return None
    lo, hi = rep.interval_km
    for k, end in enumerate(ends):
        try:
            own = locate_event(model, [end], line=line, options=opts.locate)
            own = own.seen_from(model, rep.reference_terminal) if k else own
        except (ModelError, SignalError):
            continue
        lo, hi = min(lo, own.interval_km[0]), max(hi, own.interval_km[1])
    return rep.widened(model, (lo, hi), f"interval widened to {lo:.2f} .. {hi:.2f} km to hold "
                                        f"each record's own answer (the records disagree)")


def locate_analysis(analysis: Analysis, records: Sequence[Record], model,
                    line: str | None = None, options: AnalysisOptions | None = None,
                    use: Sequence[int] | None = None
                    ) -> tuple[LocationReport | None, tuple[str, ...]]:
    """The location step of :func:`analyze` on an analysis already made.

    For studies that analyse records once and locate them with several models
    (or from one end and from both): the same checks, pairing and fallbacks as
    ``analyze(records, model=...)``, on ``analysis`` (made from ``records``,
    with or without a model: channels stay as it mapped them).

    Parameters
    ----------
    analysis : Analysis
    records : sequence of Record
        The records ``analysis`` was made from, in the same order.
    model : NetworkModel
    line : str, optional
    options : AnalysisOptions, optional
        Its ``terminals`` and ``locate`` apply.
    use : sequence of int, optional
        Indices of the records to locate from (default: all), e.g. ``(0,)``
        for the first record alone.

    Returns
    -------
    (LocationReport or None, warnings)
        The report (None where :func:`analyze` would give none) and the
        location's own warnings.
    """
    opts = options if options is not None else AnalysisOptions()
    records = list(records)
    if len(records) != len(analysis.records):
        raise SignalError(f"locate_analysis: {len(records)} records for an analysis of "
                          f"{len(analysis.records)}")
    keep = tuple(range(len(records))) if use is None else tuple(use)
    renum = {k: j for j, k in enumerate(keep)}
    terms = [replace(t, record=renum[t.record]) for t in analysis.terminals
             if t.record in renum]
    recs = [records[k] for k in keep]
    model_terms: dict[int, Any] = {}
    off_freq: dict[int, str] = {}
    spc: dict[int, int] = {}
    for j, k in enumerate(keep):
        info = analysis.records[k]
        spc[j] = info.samples_per_cycle
        mt = model_terminal(model, records[k], line, opts.terminals.get(k))
        if mt is not None:
            model_terms[j] = mt
        why_freq = _off_frequency(info.frequency_hz, info.nominal_frequency_hz)
        if why_freq is not None:
            off_freq[j] = why_freq
    warnings: list[str] = []
    rep = _locate(recs, terms, model, line, model_terms, spc, opts, warnings, off_freq)
    return rep, tuple(warnings)


#: two ends' inceptions further apart than this [cycles] in absolute time, with
#: different fault types, mean that the later end missed the inception
MISSED_INCEPTION_CYCLES = 2.0


def _missed_inception(ends) -> int | None:
    """Index of the end whose first fault interval began after the fault did, or None.

    Only when the two ends disagree on the fault type: then the end whose
    inception is later by more than :data:`MISSED_INCEPTION_CYCLES` in
    absolute time (both records carry start times) saw only what followed,
    typically the other end's opening.
    """
    a, b = ends
    if a.fault_type == b.fault_type:
        return None
    ta = a.absolute_time(a.inception_s)
    tb = b.absolute_time(b.inception_s)
    if ta is None or tb is None:
        return None
    dt = (tb - ta).total_seconds()
    limit = MISSED_INCEPTION_CYCLES / a.frequency_hz
    if dt > limit:
        return 1
    if dt < -limit:
        return 0
    return None


#: a phase's pre-fault voltage under this fraction of the largest phase's is a VT
#: circuit fault (a blown fuse, an open or dead channel), not a system condition: a
#: transmission system's phase voltages agree within a few per cent before a fault
#: (common practice, no source)
DEAD_VT_RATIO = 0.8


#: a three-phase fault's change at one end and the other end's first pole opening
#: (both records' clocks) at most this many cycles apart make the change that opening
STAGE_CONFIRM_CYCLES = 1.5


def confirmed_stage(end, mine: tuple, other: tuple, warnings: list[str] | None = None):
    """``end`` with its stage fed from one end, where the other record confirms it.

    ``mine`` and ``other`` are ``(Record, TerminalAnalysis)`` of the end and of
    the line's other end; ``warnings`` gets a line when the stage is confirmed.

    A three-phase fault's record cannot tell the other end's opening from a
    change of the fault (:class:`~eventlab.signals.timeline.RemoteOpenStage`
    ``confirmed`` False); the other end's record can: its first pole opening,
    in absolute time, within :data:`STAGE_CONFIRM_CYCLES` of the change.
    """
    rec, ta = mine
    orec, ota = other
    stage = ta.timeline.intervals[0].remote_open if ta.timeline.intervals else None
    if stage is None or stage.confirmed or rec.start is None or orec.start is None:
        return end
    opened = [s for s in ota.timeline.pole_open_s if s is not None]
    if not opened:
        return end
    far = orec.start + timedelta(seconds=min(opened))
    here = rec.start + timedelta(seconds=stage.change_s)
    dt = (here - far).total_seconds()
    if abs(dt) > STAGE_CONFIRM_CYCLES / rec.frequency_hz:
        return end
    (warnings if warnings is not None else []).append(
        f"location: {rec.station}'s currents changed at {stage.change_s:.4f} s, "
        f"{1e3 * dt:+.1f} ms from {orec.station}'s first pole opening (both records' "
        f"clocks): the fault was then fed from {rec.station} alone, and that stage "
        f"locates it")
    return with_remote_open(end, stage)


#: pre-fault |V1| outside this range of the model bus's nominal phase voltage: the
#: record's scaling (ratios, the P/S flag, units) or the model does not fit, and a
#: location from it would be off by the same factor as its impedances
#: (transmission systems run within about +/-10 %; common practice, no source)
V_NOMINAL_RANGE = (0.7, 1.3)


def _unusable(end, kv_nominal: float | None = None) -> str | None:
    """Why an end's phasors cannot locate a fault, or None.

    A dead or missing measurement, voltages that do not fit the model's bus
    (``kv_nominal``: its nominal line-to-line voltage [kV], see
    :data:`V_NOMINAL_RANGE`), pre-fault currents that a reversed or swapped CT
    phase unbalances (:data:`PREFAULT_UNBALANCE_LIMIT`), or currents that read
    the fault behind the bus (:func:`direction_check`: the whole CT set's
    polarity reversed, or a fault that is not on this line).
    """
    for kind, pre, flt in (("current", end.i_pre, end.i_fault),
                           ("voltage", end.v_pre, end.v_fault)):
        both = np.maximum(np.abs(pre), np.abs(flt))
        if not np.all(np.isfinite(both)):
            return f"its {kind} phasors are not finite"
        dead = [p for p, x in zip("ABC", both, strict=True) if not x > 1e-9 * both.max()]
        if dead:
            return (f"no {kind} recorded in phase{'s' if len(dead) > 1 else ''} "
                    f"{', '.join(dead)} (empty, missing or dead channel); a location needs "
                    f"the three phase {kind}s")
    if end.energised:
        # no pre-fault state in service to check: the line was dead before the fault
        seen = direction_check(end)
        if seen is not None and seen[0] == "reverse":
            return (f"its currents read the fault behind the bus (negative-sequence -dV/dI "
                    f"at {seen[1]:+.0f} deg): the CT polarity reversed, or the fault is not "
                    f"on this line")
        return None
    vp = np.abs(end.v_pre)
    if vp.max() > 0 and vp.min() < DEAD_VT_RATIO * vp.max():
        p = "ABC"[int(np.argmin(vp))]
        return (f"before the fault phase {p} read {100 * vp.min() / vp.max():.0f} % of the "
                f"highest phase voltage (a blown VT fuse, an open or dead VT circuit); a "
                f"location needs sound voltages")
    if kv_nominal and vp.max() > 0:
        v1 = abs(abc_to_012(end.v_pre)[1])
        ratio = v1 / (kv_nominal * 1e3 / np.sqrt(3.0))
        lo, hi = V_NOMINAL_RANGE
        if not lo <= ratio <= hi:
            return (f"its pre-fault positive-sequence voltage is {v1 / 1e3:.4g} kV, "
                    f"{100 * ratio:.3g} % of the model's {kv_nominal:g} kV bus "
                    f"({kv_nominal / np.sqrt(3.0):.4g} kV phase to ground): check the "
                    f"record's ratios, its primary/secondary flag and units, and that the "
                    f"model is this line's")
    if has_prefault(end):
        i0, i1, i2 = np.abs(abc_to_012(end.i_pre))
        i_scale = float(np.max(np.abs(abc_to_012(end.i_fault))))
        if i1 > 0.02 * i_scale and max(i0, i2) > PREFAULT_UNBALANCE_LIMIT * i1:
            return (f"its pre-fault currents are unbalanced (|I0|/|I1| {i0 / i1:.2f}, "
                    f"|I2|/|I1| {i2 / i1:.2f}) where its voltages are not: a reversed, "
                    f"swapped or miswired CT phase; a location needs the phase currents as "
                    f"the model has them")
    seen = direction_check(end)
    if seen is not None and seen[0] == "reverse":
        seq = "superimposed positive" if end.fault_type == "ABC" else "negative"
        return (f"its currents read the fault behind the bus ({seq}-sequence -dV/dI at "
                f"{seen[1]:+.0f} deg, where a fault on the line gives the source impedance's "
                f"angle, about +60 to +90 deg): the CT polarity of the whole set reversed "
                f"(or the fault is not on this line)")
    return None


def _locate(records: Sequence[Record], terms: Sequence[TerminalAnalysis], model,
            line: str | None, model_terms: Mapping[int, Any], spc: Mapping[int, int],
            opts: AnalysisOptions, warnings: list[str],
            off_freq: Mapping[int, str] | None = None):
    """:func:`_locate_ends`, with distances from the first record's terminal.

    Where the first record shows no fault (a miswired CT can hide it) and another
    record locates, the report is given from the first record's terminal, and a
    warning says so.
    """
    rep = _locate_ends(records, terms, model, line, model_terms, spc, opts, warnings,
                       off_freq)
    if rep is None or any(t.record == 0 and t.timeline.intervals for t in terms):
        return rep
    try:
        first = model_terms.get(0) or model_terminal(model, records[0], line,
                                                     opts.terminals.get(0))
    except ModelError:
        first = None
    if first is None or first.line != rep.line_id or first.id == rep.reference_terminal:
        return rep
    warnings.append(f"location: {records[0].station} shows no fault of its own: located from "
                    f"the other record, distances given from {first.id}")
    return rep.seen_from(model, first.id)


def _locate_ends(records: Sequence[Record], terms: Sequence[TerminalAnalysis], model,
                 line: str | None, model_terms: Mapping[int, Any], spc: Mapping[int, int],
                 opts: AnalysisOptions, warnings: list[str],
                 off_freq: Mapping[int, str] | None = None):
    """Fault location from the first fault interval of each record's faulted terminal.

    One end per record (the first terminal of the record that holds a fault),
    in record order: distances are from the first record's terminal.  Returns
    None, with a warning saying why, when there is nothing to locate.  A
    record whose voltages rotate A-C-B is not located from: the signal chain
    reads its phases as A-B-C, and what it finds there (a fault from the first
    sample, the wrong type) would send a patrol to the wrong place.
    """
    records = on_one_clock(records, warnings)
    acb = sorted({records[t.record].station for t in terms
                  if any(ACB_FLAG in f for f in t.flags)})
    if acb:
        warnings.append(f"location: not made: the voltages of {', '.join(acb)} rotate A-C-B "
                        f"and eventlab reads phases as A-B-C (check the VT wiring, or the "
                        f"phase sequence of the system)")
        return None
    ends = []
    kvs: list[float | None] = []     # nominal kV of each end's bus in the model
    known: list[str | None] = []     # a reason found before the phasors (frequency)
    shorts: list[str | None] = []    # less than a cycle of the fault in the record
    sources: list[tuple[Record, TerminalAnalysis]] = []   # each end's record and terminal
    for k, rec in enumerate(records):
        ta = next((t for t in terms if t.record == k and t.timeline.intervals), None)
        if ta is None:
            continue
        iv = ta.timeline.intervals[0]
        mt = model_terms.get(k)
        try:
            kvs.append(None if mt is None else model.bus(mt.bus).kv)
        except ModelError:
            kvs.append(None)
        # a line energised onto the fault from this end, the other end open (its sound
        # phases carry the open line's charging only): located as the stage fed from
        # this end alone.  The other end's record says whether it closed too: it
        # carries the fault's current (an interval of its own) or, beginning dead as
        # well, none at all
        others = [t for t in terms if t.record != k]
        other_closed = any(t.timeline.intervals for t in others)
        other_open = bool(others) and not other_closed and all(t.dead_start for t in others)
        energised = ta.dead_start and not other_closed and (
            other_open or fed_from_one_end(iv.i_fault, iv.v_fault, iv.type) is not None)
        known.append((off_freq or {}).get(k) or _left_out(ta, iv.type, energised))
        shorts.append(f"it holds less than a cycle of the fault ({iv.fault.note}): no "
                      f"phasor of the fault can be measured from it" if iv.fault.short
                      else None)
        sources.append((rec, ta))
        ip_name = ta.channels.get("IP")
        i_par = ta.fault.get(ip_name) if ip_name is not None else None
        end = from_fault_interval(
            iv, station=rec.station, frequency_hz=rec.frequency_hz,
            terminal_id=mt.id if mt is not None else None, record_start=rec.start,
            time0_s=0.0, samples_per_cycle=spc.get(k),
            i_parallel_residual=None if i_par is None or not np.isfinite(i_par) else i_par)
        ends.append(replace(end, energised=True) if energised else end)
    if not ends:
        warnings.append("location: no fault in the records, nothing to locate")
        return None
    if len(ends) > 2:
        warnings.append(f"location: {len(ends)} faulted records; the first two are used")
        ends, kvs, known, sources = ends[:2], kvs[:2], known[:2], sources[:2]
        shorts = shorts[:2]
    if len(ends) == 2:
        ends = [confirmed_stage(ends[k], sources[k], sources[1 - k], warnings)
                for k in range(2)]
    for e, (rec, ta) in zip(ends, sources, strict=True):
        stage = ta.timeline.intervals[0].remote_open
        if (stage is not None and not stage.confirmed and stage.in_fault_window
                and e.i_remote_open is None):
            warnings.append(f"location: {rec.station}'s currents changed at "
                            f"{stage.change_s:.4f} s, inside its fault window: that window may "
                            f"mix two states (the other end opening, or the fault changing; a "
                            f"three-phase fault does not say which) and the location from it "
                            f"may be off; the other end's record would tell")
    if len(ends) == 2:
        try:
            outside = through_fault(model, tuple(ends), line)
        except ModelError:
            outside = None
        if outside is not None:
            warnings.append(f"location: not made: the fault is not on the line: {outside}")
            return None
    unusable = [why or _unusable(e, kv) for e, kv, why in zip(ends, kvs, known, strict=True)]
    if all(u or sh for u, sh in zip(unusable, shorts, strict=True)):
        warnings.append("location: not made: " + "; ".join(
            f"{e.station}: {u or sh}" for e, u, sh in zip(ends, unusable, shorts, strict=True)))
        return None
    if len(ends) == 2:
        # a measurement that cannot be used outranks the fault types' disagreement,
        # which a miswired end causes too
        late, why = None, None
        if any(unusable):
            late = 0 if unusable[0] else 1
            why = unusable[late]
        else:
            late = _missed_inception(ends)
            if late is None and any(shorts):
                late = 0 if shorts[0] else 1
                why = shorts[late]
        if late is None:
            try:
                late, disagreement = check_pair(model, tuple(ends), line)
            except ModelError:
                late, disagreement = None, None
            if disagreement is not None and late is None:
                warnings.append(f"location: {disagreement}; the location below uses both, "
                                f"its interval widened to hold each record's own answer")
                return _widened_by_each_end(model, ends, line, opts, warnings)
            elif disagreement is not None:
                why = disagreement
        if late is not None:
            bad, good = ends[late], ends[1 - late]
            first_t = None
            if late == 0:
                # the first record's terminal, whether or not its channels were mapped
                # by the model's channel map
                try:
                    first_t = model_terms.get(0) or model_terminal(model, records[0], line,
                                                                   opts.terminals.get(0))
                except ModelError:
                    first_t = None
            tail = (f"; located from {good.station} alone"
                    + ("" if first_t is None else f", distances given from {first_t.id}"))
            warnings.append(
                f"location: {bad.station} not used: {why}{tail}" if why is not None else
                f"location: {bad.station} shows the fault only from {bad.inception_s:.4f} s, "
                f"with type {bad.fault_type} against {good.fault_type} at {good.station}: it "
                f"missed the inception (a high-resistance fault seen weakly at that end?) and "
                f"its phasors are not of the fault's first stage" + tail)
            if late == 1:
                ends = ends[:1]
            else:
                try:
                    rep = locate_event(model, [good], line=line, options=opts.locate)
                    return rep if first_t is None else rep.seen_from(model, first_t.id)
                except (ModelError, SignalError) as exc:
                    warnings.append(f"location: not made ({exc})")
                    return None
    try:
        rep = locate_event(model, ends, line=line, options=opts.locate)
        chi = None if rep.fit is None else rep.fit.chi2_scale
        if len(ends) == 2 and chi is not None and chi > opts.locate.max_fit_residual_scale:
            # the model cannot match both records: one end's instrument transformers (a
            # ratio the pre-fault state cannot show at light load) or the model; neither
            # the fit nor a two-ended method can be trusted to hold the fault
            warnings.append(f"location: the two records and the model do not agree (the "
                            f"fit's residual is {chi:.0f} times the measurement accuracy): "
                            f"a CT or VT ratio or wiring at one end, or the model, "
                            f"suspected; the interval is widened to hold each record's own "
                            f"answer")
            return _widened_by_each_end(model, ends, line, opts, warnings)
        return rep
    except (ModelError, SignalError) as exc:
        if len(ends) < 2:
            warnings.append(f"location: not made ({exc})")
            return None
        warnings.append(f"location: the two records could not be used together ({exc}); "
                        f"located from {ends[0].station} alone")
    try:
        return locate_event(model, ends[:1], line=line, options=opts.locate)
    except (ModelError, SignalError) as exc:
        warnings.append(f"location: not made ({exc})")
        return None

