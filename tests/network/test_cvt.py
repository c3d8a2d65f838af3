"""The CVT model of the simulator against circuit algebra and scipy's integrator."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import lsim

from eventlab.network.emt_cvt import Cvt, cvt_gain, cvt_output, cvt_state_space

F_HZ = 60.0
V_SEC = 115.0 / math.sqrt(3.0)
W0 = 2.0 * math.pi * F_HZ


def impedance_algebra_gain(p: Cvt, f_hz: float) -> complex:
    """Divider EMF to burden voltage from the circuit's impedances (no state space).

    Series branch: C_e, the tuning reactor L_c (tuned with C_e at 60 Hz) and R_c;
    shunt at the output: burden, magnetising reactance and (active) R_f in series
    with L_f || C_f tuned at 60 Hz; all referred to the intermediate voltage by the
    square of the voltage ratio (circuit theory, common practice, no source).
    """
    s = 2j * math.pi * f_hz
    v_int = p.intermediate_kv * 1e3
    n2 = (v_int / V_SEC) ** 2
    ce = p.capacitance_f
    lc = 1.0 / (W0 * W0 * ce)
    z_series = 1.0 / (s * ce) + s * lc + p.r_series_ohm
    y_shunt = p.burden_va / v_int ** 2 + 1.0 / (s * p.x_magnetising_ohm / W0)
    if p.fsc == "active":
        cf = p.fsc_capacitance_f / n2
        lf = 1.0 / (W0 * W0 * cf)
        y_tank = 1.0 / (s * lf) + s * cf                # zero at 60 Hz: the tank is open
        y_shunt += y_tank / (1.0 + p.fsc_resistance_ohm * n2 * y_tank)
    z_shunt = 1.0 / y_shunt
    return z_shunt / (z_shunt + z_series)


@pytest.mark.parametrize("fsc", ["active", "passive"])
@pytest.mark.parametrize("f_hz", [3.0, 20.0, 45.0, 60.0, 61.0, 180.0, 1000.0])
def test_state_space_is_the_circuit(fsc, f_hz):
    p = Cvt(fsc=fsc)
    want = impedance_algebra_gain(p, f_hz)
    assert cvt_gain(p, F_HZ, V_SEC, at_hz=f_hz) == pytest.approx(want, rel=1e-9)


def test_tuned_gain_is_the_resistive_divider_of_the_load():
    # tuned: C_e and L_c cancel, the active suppression circuit's tank is open, and
    # the gain is R_load / (R_load + R_c) with R_load = burden || j X_m
    p = Cvt()
    v_int = p.intermediate_kv * 1e3
    z_load = 1.0 / (p.burden_va / v_int ** 2 + 1.0 / (1j * p.x_magnetising_ohm))
    assert cvt_gain(p, F_HZ, V_SEC) == pytest.approx(z_load / (z_load + p.r_series_ohm),
                                                     rel=1e-12)
    # the phase displacement the simulator leaves in: hundredths of a degree
    assert abs(math.degrees(np.angle(cvt_gain(p, F_HZ, V_SEC)))) < 0.01


# the simulator's internal rate is at least 1024 steps a cycle (SimulationSpec)
STEPS = 1024


def _collapse(n_cycles=12, steps=STEPS, at_cycle=2.25, residual=0.0):
    dt = 1.0 / (F_HZ * steps)
    t = np.arange(n_cycles * steps) * dt
    v = 187.8e3 * np.cos(W0 * t)
    v[t >= at_cycle / F_HZ] *= residual
    return t, dt, v


@pytest.mark.parametrize("fsc", ["active", "passive"])
def test_time_response_matches_scipy_lsim(fsc):
    # the bilinear recursion against scipy.signal.lsim (matrix exponential with the
    # input linear between samples), started from the same periodic state
    p = Cvt(fsc=fsc)
    t, dt, v = _collapse(residual=0.1)
    ours = cvt_output(v[None, :], dt, F_HZ, p, V_SEC)[0]
    a, b, c = cvt_state_space(p, F_HZ, V_SEC)
    v_int = p.intermediate_kv * 1e3
    k_div = v_int / (230e3 / math.sqrt(3.0))            # any ratio: the model is linear
    # periodic steady state of the continuous system for the first cycle's sinusoid
    x0 = np.real(np.linalg.solve(1j * W0 * np.eye(a.shape[0]) - a, b[:, 0]) * 187.8e3 * k_div)
    _, y, _ = lsim((a, b, c, np.zeros((1, 1))), k_div * v, t, X0=x0)
    ref = y / (k_div * abs(cvt_gain(p, F_HZ, V_SEC)))
    assert np.max(np.abs(ours - ref)) < 2e-4 * 187.8e3


@pytest.mark.parametrize("fsc", ["active", "passive"])
def test_starts_settled_and_follows_a_steady_sinusoid(fsc):
    t, dt, v = _collapse(residual=1.0)                    # no collapse: steady state
    out = cvt_output(v[None, :], dt, F_HZ, Cvt(fsc=fsc), V_SEC)[0]
    # the circuit's own phase displacement (< 0.01 deg) is all that separates them
    assert np.max(np.abs(out - v)) < 2e-4 * 187.8e3


def test_subsidence_transient_after_a_voltage_collapse():
    # a bolted close-in fault: the primary collapses to zero; the CVT's output does
    # not, and rings out (energy left in C_e, L_c and the suppression circuit).  At a
    # voltage zero the series current, and the reactor's energy, are at their peak:
    # the transient is larger than after a collapse at a voltage peak.  Required: a
    # transient of at least a per cent of the peak a cycle later, decaying to under
    # half of that within half a second, and none before the collapse.
    for fsc in ("active", "passive"):
        peaks = {}
        for label, at_cycle in (("zero", 2.25), ("peak", 2.0)):
            t, dt, v = _collapse(n_cycles=40, at_cycle=at_cycle)
            out = cvt_output(v[None, :], dt, F_HZ, Cvt(fsc=fsc), V_SEC)[0]

            def peak(cycle, out=out):
                return float(np.max(np.abs(out[cycle * STEPS:(cycle + 1) * STEPS]))) / 187.8e3

            peaks[label] = (peak(3), peak(32))
            assert np.all(np.abs(out[:2 * STEPS] - v[:2 * STEPS]) < 2e-4 * 187.8e3)
        assert peaks["zero"][0] > 0.01 and peaks["zero"][0] > peaks["peak"][0]
        assert peaks["zero"][1] < 0.5 * peaks["zero"][0]


def test_rejects_bad_parameters():
    with pytest.raises(ValueError, match="capacitance_f"):
        Cvt(capacitance_f=0.0)
    with pytest.raises(ValueError, match="fsc"):
        Cvt(fsc="magnetic")
