"""Inception timing and classification under noise, low and high sample rates, fault resistance.

Reference: the waveforms of ``faultwaves.py`` (numpy only; textbook
sequence-network connections, RL transient), whose scenario fixes the true
inception instant.  Noise: seeded Gaussian, standard deviation = level x the
rated peak of each channel (``sqrt(2) V_ln`` for voltages, ``sqrt(2) 1000 A``
for currents).  ``python tests/signals/measure_inception.py`` prints the
full grid (all ten types, four inception angles, 16..256 samples a cycle,
0..100 ohm).
"""

from __future__ import annotations

import numpy as np
import pytest

from eventlab.faulttypes import FAULT_TYPES, NO_FAULT
from eventlab.signals.classify import classify_fault
from eventlab.signals.timeline import build_timeline, refine_onset, superimposed

from .faultwaves import System, fault_event, steady_phasors
from .inception_cases import inception_instants, timeline_of


def test_inception_angles_are_voltage_zero_and_peak():
    s = System()
    v_pre, _ = steady_phasors(s, 0.5, None)
    inc = inception_instants(s)
    w = 2 * np.pi * s.f0_hz
    v_a = np.real(v_pre[0] * np.exp(1j * w * inc["zero"]))
    assert abs(v_a) < 1e-6 * abs(v_pre[0])
    assert abs(np.real(v_pre[0] * np.exp(1j * w * inc["peak"]))) == pytest.approx(
        abs(v_pre[0]))


def _errors_ms(noise, n, r_fault_ohm, seeds, types=FAULT_TYPES, t0=0.05):
    s = System()
    errs, wrong = [], []
    for ftype in types:
        for name, ti in inception_instants(s, t0).items():
            for seed in seeds:
                e = fault_event(ftype, ti, noise=noise, seed=seed, samples_per_cycle=n,
                                r_fault_ohm=r_fault_ohm, duration_s=0.25 + (ti - 0.05))
                tl = timeline_of(e)
                errs.append(np.inf if tl.inception_s is None else abs(tl.inception_s - ti))
                if tl.fault_type != ftype:
                    wrong.append((ftype, name, seed, tl.fault_type))
    return 1e3 * np.array(errs), wrong


@pytest.mark.parametrize("n", [16, 64, 256])
def test_clean_inception_within_one_sample(n):
    # issue 3: within one sample on clean records, every type, angle and 0 / 60 ohm; the
    # change point resolves the instant inside the sample (measured: under 0.7 sample,
    # under 0.2 sample at 0 ohm)
    for rf in (0.0, 60.0):
        errs, wrong = _errors_ms(0.0, n, rf, seeds=(0,))
        dt_ms = 1e3 / (n * 60)
        print(f"clean N={n} Rf={rf:g}: max {errs.max():.3f} ms (dt {dt_ms:.3f} ms)")
        assert errs.max() <= dt_ms
        assert not wrong


@pytest.mark.parametrize("noise", [0.01, 0.02])
@pytest.mark.parametrize("n", [16, 64, 256])
@pytest.mark.parametrize("r_fault_ohm", [0.0, 60.0])
def test_noisy_inception(noise, n, r_fault_ohm):
    # issue 3 goal: within 0.5 ms at 1 % and 2 % noise.  Met for 99 % of the cases
    # measured (ten types x four angles x two seeds here); the rest within 1.5 ms (a
    # slow onset, e.g. a current starting at its zero with a small superimposed part)
    errs, wrong = _errors_ms(noise, n, r_fault_ohm, seeds=(0, 1))
    share = float(np.mean(errs <= 0.5))
    print(f"noise {100 * noise:g} % N={n} Rf={r_fault_ohm:g}: max {errs.max():.3f} ms, "
          f"p95 {np.percentile(errs, 95):.3f} ms, within 0.5 ms {100 * share:.1f} %")
    assert share >= 0.95
    assert np.percentile(errs, 90) <= 0.25
    assert errs.max() <= 1.5
    assert not wrong


def test_noisy_inception_after_longer_prefault():
    # six pre-fault cycles: the change point's reference averages four earlier cycles
    errs, wrong = _errors_ms(0.02, 64, 20.0, seeds=(0, 1), t0=0.1)
    print(f"2 % noise, six pre-fault cycles: max {errs.max():.3f} ms")
    assert np.mean(errs <= 0.5) >= 0.95 and errs.max() <= 1.5
    assert not wrong


def test_refine_onset_on_a_numpy_step():
    # a sinusoid switched on at a known instant between samples, white noise of known
    # sigma: the change point lands on the right sample; with a continuous channel (zero
    # at the instant) the instant is found to an eighth of a sample when clean
    n, k_true = 64, 300.375
    j = np.arange(600, dtype=float)
    w = 2 * np.pi / n
    on = j >= k_true
    cur = np.where(on, np.sin(w * (j - k_true) + 0.7) - np.sin(0.7) * np.exp(
        -(j - k_true) / 100.0), 0.0)
    volt = np.where(on, 0.3 * np.cos(w * (j - k_true) + 0.2), 0.0)
    d = np.vstack([volt, cur])
    pos = refine_onset(d, 304, n, lo=200, continuous=np.array([False, True]))
    assert abs(pos - k_true) <= 0.125
    rng = np.random.default_rng(7)
    hits = 0
    for _ in range(20):
        dn = d + rng.normal(scale=0.02, size=d.shape)
        dn[:, :64] = np.nan
        pos = refine_onset(dn, 306, n, lo=200, continuous=np.array([False, True]))
        hits += int(np.ceil(pos)) == int(np.ceil(k_true))
    assert hits >= 18


@pytest.mark.parametrize("ftype", ["ABG", "BCG", "CAG"])
@pytest.mark.parametrize("r_fault_ohm", [60.0, 100.0])
def test_two_phase_to_ground_through_high_resistance(ftype, r_fault_ohm):
    # formerly read as phase-to-phase: the superimposed zero-sequence pair dV0 = -Z0s dI0
    # (fault ahead) confirms the ground path
    s = System()
    for fraction in (0.1, 0.5, 0.9):
        v_pre, i_pre = steady_phasors(s, fraction, None)
        v_f, i_f = steady_phasors(s, fraction, ftype, r_fault_ohm)
        c = classify_fault(i_pre, i_f, v_pre, v_f)
        assert c.type == ftype, (fraction, c.reason)
        # a bolted phase-to-phase fault at the same place stays ungrounded
        ll = ftype[:2]
        v_l, i_l = steady_phasors(s, fraction, ll, 0.0)
        assert classify_fault(i_pre, i_l, v_pre, v_l).type == ll


def test_three_phase_fault_through_high_resistance():
    # formerly "none" from 60 ohm on: a balanced step over twice the load current with a
    # sag below 0.97 is a fault.  Not met (a limit of one end's view): 100 ohm at 0.9 of
    # the line, a step of 1.9 times the load with a 2.4 % sag, which a load pickup can
    # also give
    s = System()
    for r_fault_ohm, fractions in ((60.0, (0.1, 0.5, 0.9)), (100.0, (0.1, 0.5))):
        for fraction in fractions:
            v_pre, i_pre = steady_phasors(s, fraction, None)
            v_f, i_f = steady_phasors(s, fraction, "ABC", r_fault_ohm)
            assert classify_fault(i_pre, i_f, v_pre, v_f).type == "ABC"


@pytest.mark.parametrize("noise", [0.01, 0.02])
@pytest.mark.parametrize("ftype", ["ABG", "BCG", "CAG", "ABC", "AB", "BC", "CA"])
def test_high_resistance_through_the_timeline(noise, ftype):
    # 100 ohm to ground (2LG) or per phase (ABC) with noise; the phase-to-phase faults
    # bolted with the same noise must not turn grounded
    rf = 0.0 if len(ftype) == 2 else 100.0
    for seed in (0, 1):
        e = fault_event(ftype, 0.0507, noise=noise, seed=seed, r_fault_ohm=rf)
        tl = timeline_of(e)
        assert tl.fault_type == ftype
        assert abs(tl.inception_s - e["truth"]["inception_s"]) <= 1.5e-3


def _steady(noise, case, n=64):
    s = System()
    fs = n * s.f0_hz
    t = np.arange(15 * n) / fs
    a = np.exp(-2j * np.pi / 3)
    rot = np.array([1, a, a * a])[:, None] * np.exp(2j * np.pi * 60 * t)
    v = np.sqrt(2) * np.real(s.v_ln_rms * rot)
    i = np.sqrt(2) * np.real(300 * np.exp(-0.3j) * rot)
    if case == "load change":
        i[:, t >= 0.1] *= 1.8
    elif case == "load step with sag":
        # twice the load and a 2 % sag: still a load change
        i[:, t >= 0.1] *= 2.5
        v[:, t >= 0.1] *= 0.98
    elif case == "energisation":
        i[:, t < 0.1] = 0.0
    elif case == "de-energisation":
        i[:, t >= 0.1] = 0.0
    rng = np.random.default_rng(11)
    v = v + rng.normal(scale=noise * np.sqrt(2) * s.v_ln_rms, size=v.shape)
    i = i + rng.normal(scale=noise * np.sqrt(2) * 1000.0, size=i.shape)
    return t, v, i, n


@pytest.mark.parametrize("noise", [0.0, 0.01, 0.02])
@pytest.mark.parametrize("case", ["recorder test", "load change", "load step with sag",
                                  "energisation", "de-energisation"])
def test_no_fault_stays_no_fault(noise, case):
    t, v, i, n = _steady(noise, case)
    tl = build_timeline(t, v, i, n)
    assert tl.fault_type == NO_FAULT
    assert tl.inception_s is None


def test_superimposed_noise_is_sqrt2_sigma():
    # common practice, no source: the difference of two independent samples of white
    # noise of std sigma has std sqrt(2) sigma
    rng = np.random.default_rng(3)
    x = rng.normal(scale=1.0, size=(1, 64 * 200))
    d = superimposed(x, 64)
    assert np.nanstd(d) == pytest.approx(np.sqrt(2), rel=0.03)
