"""Timeline on numpy-made faults: inception, clearing, trip, intervals, windows."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from eventlab.faulttypes import FAULT_TYPES, NO_FAULT, faulted_phases
from eventlab.signals.timeline import build_timeline, superimposed

from .faultwaves import Event, Scenario, System, fault_event, make_event


def _timeline(e, **kw):
    trips = [SimpleNamespace(name="TRIP", values=e["trip"], normal=0)]
    bkrs = [SimpleNamespace(name="52A", values=e["breaker"], normal=1)]
    return build_timeline(e["t"], e["v_abc"], e["i_abc"], e["samples_per_cycle"],
                          trips=trips, breakers=bkrs, **kw)


# inception angles: 0.0500 s is a voltage zero of phase A at 60 Hz (3 cycles), the others
# 45 and 110 degrees later
INCEPTIONS = [0.0500, 0.0500 + 45 / 360 / 60, 0.0500 + 110 / 360 / 60]


@pytest.mark.parametrize("ftype", FAULT_TYPES)
@pytest.mark.parametrize("inception_s", INCEPTIONS)
def test_clean_inception_within_one_sample_and_type(ftype, inception_s):
    e = fault_event(ftype, inception_s)
    tl = _timeline(e)
    dt = 1 / e["fs_hz"]
    truth = e["truth"]
    # task requirement: within one sample on clean records
    assert abs(tl.inception_s - truth["inception_s"]) <= dt
    assert tl.fault_type == ftype
    assert len(tl.intervals) == 1
    # clearing = last opening of the faulted phases (poles open at current zeros)
    want = max(truth["open_s"][p] for p in faulted_phases(ftype))
    assert abs(tl.clearing_s - want) <= 3 * dt
    for p in range(3):
        assert abs(tl.pole_open_s[p] - truth["open_s"][p]) <= 3 * dt
    assert tl.relay_time_ms == pytest.approx(1e3 * (truth["trip_s"] - tl.inception_s), abs=1e-9)
    assert tl.duration_ms == pytest.approx(1e3 * (tl.clearing_s - tl.inception_s))
    assert tl.duration_cycles == pytest.approx(tl.duration_ms * 60 / 1e3)
    assert tl.breaker_time_ms == pytest.approx(1e3 * (tl.clearing_s - truth["trip_s"]))
    iv = tl.intervals[0]
    assert iv.prefault.end_index <= iv.start_index - e["samples_per_cycle"]
    assert iv.fault.start_index > iv.start_index
    assert iv.fault.end_index < min(i for i in (round(s * e["fs_hz"]) for s in truth["open_s"]))


@pytest.mark.parametrize("ftype", FAULT_TYPES)
@pytest.mark.parametrize("inception_s", INCEPTIONS)
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_noisy_inception_within_half_ms_and_type(ftype, inception_s, seed):
    # noise: 0.5 % of nominal peak on every channel (seeded)
    e = fault_event(ftype, inception_s, noise=0.005, seed=seed)
    tl = _timeline(e)
    assert abs(tl.inception_s - e["truth"]["inception_s"]) <= 0.5e-3
    assert tl.fault_type == ftype


@pytest.mark.parametrize("n", [16, 32, 128])
def test_other_sample_rates(n):
    e = fault_event("CAG", 0.0512, samples_per_cycle=n)
    tl = _timeline(e)
    assert abs(tl.inception_s - e["truth"]["inception_s"]) <= 1 / e["fs_hz"]
    assert tl.fault_type == "CAG"


def test_fifty_hertz_system():
    e = fault_event("BG", 0.061, system=System(f0_hz=50.0))
    tl = _timeline(e)
    assert tl.fault_type == "BG"
    assert tl.duration_cycles == pytest.approx(tl.duration_ms * 50 / 1e3)


def test_evolving_fault_gives_two_intervals():
    sc = Scenario(events=[Event("AG", 0.0503), Event("ABG", 0.0503 + 0.030)],
                  relay_time_s=0.045, breaker_time_s=0.040)
    e = make_event(sc)
    tl = _timeline(e)
    assert [iv.type for iv in tl.intervals] == ["AG", "ABG"]
    assert [iv.kind for iv in tl.intervals] == ["fault", "evolved"]
    assert abs(tl.intervals[1].start_s - 0.0803) <= 0.5e-3
    assert tl.intervals[0].end_s == tl.intervals[1].start_s
    assert tl.fault_type == "AG"
    # the overall clearing is that of the evolved fault (phases A and B)
    want = max(e["truth"]["open_s"][p] for p in (0, 1))
    assert abs(tl.clearing_s - want) <= 3 / e["fs_hz"]


def test_reclose_onto_fault_gives_second_interval():
    sc = Scenario(events=[Event("BC", 0.0503)], reclose_s=0.30, duration_s=0.50)
    e = make_event(sc)
    tl = _timeline(e)
    assert [iv.kind for iv in tl.intervals] == ["fault", "reclose"]
    assert [iv.type for iv in tl.intervals] == ["BC", "BC"]
    assert abs(tl.intervals[1].start_s - e["truth"]["reclose_s"]) <= 1 / e["fs_hz"]
    # the headline clearing is the first fault's
    assert tl.clearing_s < 0.2


def test_reclose_without_fault_is_not_a_fault():
    sc = Scenario(events=[Event("AG", 0.0503)], reclose_s=0.30, reclose_fault=False,
                  duration_s=0.50)
    tl = _timeline(make_event(sc))
    assert [iv.kind for iv in tl.intervals] == ["fault"]


def _steady(n_cycles=15, n=64, load_change_at=None, energise_at=None, noise=0.0):
    s = System()
    fs = n * s.f0_hz
    t = np.arange(n_cycles * n) / fs
    a = np.exp(-2j * np.pi / 3)
    v = np.sqrt(2) * np.real(s.v_ln_rms * np.array([1, a, a * a])[:, None]
                             * np.exp(2j * np.pi * 60 * t))
    i = np.sqrt(2) * np.real(300 * np.exp(-0.3j) * np.array([1, a, a * a])[:, None]
                             * np.exp(2j * np.pi * 60 * t))
    if load_change_at is not None:
        i[:, t >= load_change_at] *= 1.8
    if energise_at is not None:
        i[:, t < energise_at] = 0.0
    rng = np.random.default_rng(4)
    v += rng.normal(scale=noise * s.v_ln_rms, size=v.shape)
    i += rng.normal(scale=noise * 300, size=i.shape)
    return t, v, i, n


@pytest.mark.parametrize("case", ["recorder test", "load change", "energisation"])
def test_records_without_a_fault(case):
    kw = {"recorder test": {"noise": 0.002}, "load change": {"load_change_at": 0.1},
          "energisation": {"energise_at": 0.1}}[case]
    t, v, i, n = _steady(**kw)
    tl = build_timeline(t, v, i, n)
    assert tl.fault_type == NO_FAULT
    assert tl.inception_s is None and tl.clearing_s is None and tl.duration_ms is None


def test_superimposed_is_zero_in_steady_state():
    t, v, i, n = _steady()
    d = superimposed(i, n)
    assert np.isnan(d[:, :n]).all()
    assert np.nanmax(np.abs(d)) < 1e-9 * 300


@pytest.mark.parametrize("ftype", FAULT_TYPES)
def test_weak_infeed_end_classified_from_voltages(ftype):
    # local source impedance 1000 times the normal one: local fault currents are under the
    # noise; the voltages carry the event
    weak = System(zs=(4000 + 40000j, 2000 + 20000j), load_angle_deg=2.0)
    e = fault_event(ftype, 0.0507, system=weak, noise=0.002, seed=1)
    tl = _timeline(e)
    assert tl.fault_type == ftype
    assert tl.intervals[0].classification.basis == "voltages"
    assert abs(tl.inception_s - e["truth"]["inception_s"]) <= 0.5e-3
    assert tl.clearing_s is not None


@pytest.mark.parametrize("ftype", ["AG", "BC", "CAG", "ABC"])
def test_short_fault_window_flagged(ftype):
    # cleared about one cycle after inception: the fault window cannot wait one cycle
    sc = Scenario(events=[Event(ftype, 0.0507)], relay_time_s=0.004, breaker_time_s=0.008)
    e = make_event(sc)
    tl = _timeline(e)
    iv = tl.intervals[0]
    assert iv.fault.flagged and iv.fault.note
    assert iv.fault.start_index > iv.start_index
    assert tl.fault_type == ftype
    assert abs(tl.inception_s - e["truth"]["inception_s"]) <= 1 / e["fs_hz"]


def test_onset_is_a_departure_from_the_baseline_not_from_zero():
    # a dead line's trapped charge leaking away: its superimposed value (x(t) - x(t-T))
    # sits off zero by the decay over one cycle, for many cycles; no onset there, and
    # a later step is found where it is (common practice, no source)
    from eventlab.signals.timeline import detect_onset
    n = 32
    rng = np.random.default_rng(3)
    t = np.arange(40 * n)
    v = 180e3 * np.exp(-t / (10.0 * n)) + rng.normal(0.0, 150.0, t.size)
    d = superimposed(v[None, :], n, n)
    peak = np.array([2e5])
    base, search = (10 * n, 11 * n), (11 * n, 13 * n)
    b = d[0, base[0]:base[1]]
    spread = 5 * 1.4826 * np.median(np.abs(b - np.median(b))) + 0.005 * peak[0]
    assert np.all(np.abs(b) > spread)          # off zero by more than the threshold
    assert detect_onset(d, search, base, peak) is None
    v2 = v.copy()
    v2[12 * n:] += 1.5e4 * np.sin(2 * np.pi * t[12 * n:] / n)
    d2 = superimposed(v2[None, :], n, n)
    k = detect_onset(d2, search, base, peak)
    assert k is not None and abs(k - 12 * n) <= 2


def _staged_bg(healthy_after_a: float):
    """B-G fault whose second stage has the faulted current five times larger.

    Stage 1 (0.1 s): both ends in, IB 1.5 kA, the sound phases carry 400 A of load.
    Stage 2 (0.16 s): IB 5 kA and the sound phases carry ``healthy_after_a``: 400 A
    for an arc whose resistance dropped (the load stays), 20 A (line charging) for
    the other end opening first.  This end's poles open at 0.30 s.  Phasors written
    down directly (made-up values, 60 Hz, 64 samples per cycle).
    """
    f, n = 60.0, 64
    t = np.arange(int(0.35 * f * n)) / (f * n)
    w = 2 * np.pi * f
    a = np.exp(-2j * np.pi / 3)
    e = 132.8e3 * np.array([1, a, a * a])
    load = 400.0 * np.exp(-1j * np.radians(10)) * np.array([1, a, a * a])
    v = np.zeros((3, t.size))
    i = np.zeros((3, t.size))
    for k, tk in enumerate(t):
        if tk < 0.1:
            vv, ii = e, load
        elif tk < 0.16:
            vv = e * np.array([1.0, 0.75, 1.0])
            ii = load + np.array([0, 1500.0 * a * np.exp(-1.3j), 0])
        elif tk < 0.30:
            vv = e * np.array([1.0, 0.35, 1.0])
            ii = np.array([healthy_after_a * np.exp(-0.1j), 5000.0 * a * np.exp(-1.35j),
                           healthy_after_a * a * a * np.exp(-0.1j)])
        else:
            vv, ii = e, np.zeros(3)
        v[:, k] = np.sqrt(2) * np.real(vv * np.exp(1j * w * tk))
        i[:, k] = np.sqrt(2) * np.real(ii * np.exp(1j * w * tk))
    return build_timeline(t, v, i, n)


def test_a_fault_that_grows_is_not_the_other_end_opening():
    # the sound phases keep their load: the second stage is the fault's, both ends in
    tl = _staged_bg(400.0)
    assert tl.fault_type == "BG"
    assert all(iv.remote_open is None for iv in tl.intervals)


def test_the_other_end_opening_is_seen_when_the_sound_phases_lose_their_load():
    tl = _staged_bg(20.0)
    stage = tl.intervals[-1].remote_open
    assert stage is not None
    # the departure is the last sample still on the old state: one sample early at most
    assert 0.16 - 1 / 3840 - 1e-9 <= stage.change_s <= 0.16 + 1 / 60
    assert abs(stage.i[1]) == pytest.approx(5000.0, rel=0.01)


def test_fed_from_one_end_on_a_lightly_loaded_line():
    # little load before the fault: the sound phases' current cannot fall much when
    # the far end opens, but then it is line charging, leading its voltage by about
    # 90 degrees; the same magnitude lagging is a fault share or load, not charging
    from eventlab.signals.timeline import fed_from_one_end

    a = np.exp(-2j * np.pi / 3)
    v = 132.8e3 * np.array([0.4, a, a * a])
    before = np.array([2400.0, 70.0 * a, 70.0 * a * a])
    lead = np.array([2400.0, 45.0 * a * 1j, 45.0 * a * a * 1j])
    lag = np.array([2400.0, -45.0 * a * 1j, -45.0 * a * a * 1j])
    assert fed_from_one_end(lead, v, "AG", before) == pytest.approx(45.0 / 2400.0)
    assert fed_from_one_end(lag, v, "AG", before) is None
    # without the earlier currents only the ratio is tested; three-phase: never
    assert fed_from_one_end(lag, v, "AG") is not None
    assert fed_from_one_end(lead, v, "ABC", before) is None
