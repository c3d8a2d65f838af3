"""Time-domain simulator: steady state against the fault solver, records, truth.

The simulator (companion-model nodal analysis in the time domain) and the
fault solver (symmetrical components in the frequency domain) are two
independent computations of the same circuit; the steady-state fault phasors
of the simulated waveforms, estimated with ``numpy.fft`` over a whole number
of cycles, must agree with the solver within 0.5 % and 0.5 degree (the
acceptance figure of the simulator's issue).
"""

from __future__ import annotations

import json
import math

import comtrade
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from eventlab.errors import ModelError
from eventlab.faulttypes import FAULT_TYPES
from eventlab.network.emt import GROUND, CircuitBuilder, Stepper, element_current_index
from eventlab.network.emt_ct import CtSaturation
from eventlab.network.faults import FaultSpec, prefault, solve_fault
from eventlab.network.model import model_from_dict
from eventlab.network.simulate import SimulationSpec, simulate, write_simulation
from eventlab.records import read_record

ROLES_V = ("VA", "VB", "VC")
ROLES_I = ("IA", "IB", "IC")


def _model(sections=None, c_nf=None, angle_deg=-10.0, transformer=None, mutual=False,
           z2=None):
    line = {"id": "L1", "from": "W", "to": "E"}
    if sections is None:
        line.update(length_km=80.0, z1_ohm_per_km=[0.03, 0.35], z0_ohm_per_km=[0.25, 1.1])
        if c_nf is not None:
            line.update(c1_nf_per_km=c_nf[0], c0_nf_per_km=c_nf[1])
    else:
        line["section"] = sections
    d = {
        "system": {"name": "test", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "W", "kv": 230.0}, {"id": "E", "kv": 230.0}],
        "source": [
            {"bus": "W", "z1_ohm": [1.2, 14.0], "z0_ohm": [2.0, 22.0], "emf_pu": 1.02},
            {"bus": "E", "z1_ohm": [3.0, 30.0], "z0_ohm": [4.5, 45.0], "angle_deg": angle_deg},
        ],
        "line": [line],
        "terminal": [
            {"id": "W-L1", "line": "L1", "bus": "W", "station": "WEST"},
            {"id": "E-L1", "line": "L1", "bus": "E", "station": "EAST SIDE",
             "ct_polarity": "reversed"},
        ],
    }
    if z2 is not None:
        d["source"][0]["z2_ohm"] = z2
    if transformer is not None:
        # the E source moves behind a transformer to a 66 kV bus
        d["bus"].append({"id": "LV", "kv": 66.0})
        d["source"][1] = {"bus": "LV", "z1_ohm": [0.3, 3.0], "z0_ohm": [0.4, 4.5],
                          "angle_deg": angle_deg}
        d["transformer"] = [{"id": "T1", "hv_bus": "E", "lv_bus": "LV", "mva": 200.0,
                             "z_percent": 12.0, "z0_percent": 10.0, "x_r": 25.0,
                             **transformer}]
    if mutual:
        d["line"].append({"id": "L2", "from": "E", "to": "W", "length_km": 80.0,
                          "z1_ohm_per_km": [0.03, 0.36], "z0_ohm_per_km": [0.26, 1.12],
                          "mutual": {"line": "L1", "z0m_ohm_per_km": [0.2, 0.6]}})
        d["terminal"] += [{"id": "W-L2", "line": "L2", "bus": "W"},
                          {"id": "E-L2", "line": "L2", "bus": "E"}]
    return model_from_dict(d)


def _fft_phasors(record, roles, t_end_s, n_cycles=2):
    """Complex RMS phasors (cosine reference at t = 0) over whole cycles ending at ``t_end_s``.

    The independent estimate: numpy.fft of exactly ``n_cycles`` cycles, bin
    ``n_cycles`` (numpy.fft documentation: ``A[k] = sum a[m] exp(-2j pi m k / n)``).
    """
    f = record.frequency_hz
    spc = int(round(record.sample_rate_hz / f))
    n = n_cycles * spc
    j1 = int(np.searchsorted(record.time, t_end_s - 1e-9))
    j0 = j1 - n
    assert j0 >= 0
    out = []
    for role in roles:
        x = record.analog_by_name(role).values[j0:j1]
        big = np.fft.fft(x)[n_cycles]
        out.append(big * math.sqrt(2.0) / n * np.exp(-2j * math.pi * f * record.time[j0]))
    return np.array(out)


def _assert_phasors_close(got, ref, floor, what):
    for k, (g, r) in enumerate(zip(got, ref, strict=True)):
        if abs(r) < floor:
            assert abs(g - r) < 0.005 * floor, f"{what} phase {'ABC'[k]}: {g} vs {r}"
            continue
        rel = abs(abs(g) / abs(r) - 1.0)
        dang = abs(math.degrees(np.angle(g / r)))
        assert rel < 0.005, f"{what} phase {'ABC'[k]}: magnitude off by {rel:.4%}"
        assert dang < 0.5, f"{what} phase {'ABC'[k]}: angle off by {dang:.3f} deg"


FAST = {"samples_per_cycle": 32, "steps_per_cycle": 512}

CASES = [
    ("homogeneous AG 5 ohm", {}, dict(fraction=0.3, type="AG", r_fault_ohm=5.0)),
    ("homogeneous BC 2 ohm", {}, dict(fraction=0.65, type="BC", r_fault_ohm=2.0)),
    ("homogeneous CAG", {}, dict(fraction=0.5, type="CAG", r_fault_ohm=1.0, r_ground_ohm=3.0)),
    ("homogeneous ABC", {}, dict(fraction=0.8, type="ABC", r_fault_ohm=0.5)),
    ("homogeneous ABG bolted", {}, dict(fraction=0.45, type="ABG")),
    ("sectioned BG", {"sections": [
        {"length_km": 30.0, "z1_ohm_per_km": [0.03, 0.35], "z0_ohm_per_km": [0.25, 1.1]},
        {"length_km": 6.0, "z1_ohm_per_km": [0.05, 0.12], "z0_ohm_per_km": [0.3, 0.1]},
        {"length_km": 40.0, "z1_ohm_per_km": [0.04, 0.40], "z0_ohm_per_km": [0.30, 1.2]}]},
     dict(fraction=0.6, type="BG", r_fault_ohm=1.0)),
    ("pi sections AG", {"c_nf": (9.0, 6.0)}, dict(fraction=0.4, type="AG", r_fault_ohm=2.0)),
    ("transformer YNd11 AG", {"transformer": {"vector_group": "YNd11"}},
     dict(fraction=0.4, type="AG", r_fault_ohm=2.0)),
    ("transformer Dyn1 CAG", {"transformer": {"vector_group": "Dyn1"}},
     dict(fraction=0.7, type="CAG", r_fault_ohm=1.0, r_ground_ohm=2.0)),
    ("transformer YNyn6 with neutral impedance BG",
     {"transformer": {"vector_group": "YNyn6", "z_n_hv_ohm": [2.0, 10.0]}},
     dict(fraction=0.25, type="BG", r_fault_ohm=1.0)),
    ("mutual coupling, fault on L2", {"mutual": True},
     dict(line="L2", fraction=0.35, type="BG", r_fault_ohm=2.0)),
]


@pytest.mark.parametrize(("label", "model_kw", "fault"), CASES, ids=[c[0] for c in CASES])
def test_steady_state_phasors_agree_with_fault_solver(label, model_kw, fault):
    model = _model(**model_kw)
    fault = {"line": "L1", **fault}
    spec = SimulationSpec(inception_s=0.05, clear_after_s=None, duration_s=0.45, **FAST,
                          **fault)
    result = simulate(model, spec)
    ref = solve_fault(model, FaultSpec(fault["line"], fault["fraction"], fault["type"],
                                       fault.get("r_fault_ohm", 0.0),
                                       fault.get("r_ground_ohm", 0.0)))
    pre = prefault(model)
    for tid, rec in result.records.items():
        ts = ref.terminals[tid]
        # fault window: the last two cycles of the record, 0.38 s after inception
        v = _fft_phasors(rec, ROLES_V, rec.time[-1] + 0.5 / rec.sample_rate_hz)
        i = _fft_phasors(rec, ROLES_I, rec.time[-1] + 0.5 / rec.sample_rate_hz)
        _assert_phasors_close(v, ts.v_abc, 0.01 * np.abs(ts.v_abc).max(), f"{tid} V")
        _assert_phasors_close(i, ts.i_abc, 0.01 * np.abs(ts.i_abc).max(), f"{tid} I")
        # pre-fault: the two cycles before inception (load flow)
        v0 = _fft_phasors(rec, ROLES_V, 2.0 / 60.0 + 0.5 / rec.sample_rate_hz)
        i0 = _fft_phasors(rec, ROLES_I, 2.0 / 60.0 + 0.5 / rec.sample_rate_hz)
        _assert_phasors_close(v0, pre[tid][0], 1.0, f"{tid} V pre")
        _assert_phasors_close(i0, pre[tid][1], 1.0, f"{tid} I pre")


@settings(max_examples=12)
@given(fraction=st.one_of(st.sampled_from([0.0, 1.0]), st.floats(0.01, 0.99)),
       code=st.sampled_from(FAULT_TYPES), r_f=st.floats(0.0, 30.0),
       sectioned=st.booleans())
def test_steady_state_agreement_holds_anywhere_on_the_line(fraction, code, r_f, sectioned):
    model = _model(sections=CASES[5][1]["sections"] if sectioned else None)
    spec = SimulationSpec(line="L1", fraction=fraction, type=code, r_fault_ohm=r_f,
                          inception_s=0.05, clear_after_s=None, duration_s=0.45, **FAST)
    result = simulate(model, spec)
    ref = solve_fault(model, FaultSpec("L1", fraction, code, r_f))
    for tid, rec in result.records.items():
        ts = ref.terminals[tid]
        end = rec.time[-1] + 0.5 / rec.sample_rate_hz
        _assert_phasors_close(_fft_phasors(rec, ROLES_V, end), ts.v_abc,
                              0.01 * np.abs(ts.v_abc).max(), f"{tid} V")
        _assert_phasors_close(_fft_phasors(rec, ROLES_I, end), ts.i_abc,
                              0.01 * np.abs(ts.i_abc).max(), f"{tid} I")


def test_evolving_fault_settles_to_the_second_type():
    model = _model()
    spec = SimulationSpec(line="L1", fraction=0.55, type="AG", evolve_to="ABG",
                          evolve_after_s=0.03, r_fault_ohm=1.0, inception_s=0.05,
                          clear_after_s=None, duration_s=0.45, **FAST)
    result = simulate(model, spec)
    ref = solve_fault(model, FaultSpec("L1", 0.55, "ABG", 1.0))
    for tid, rec in result.records.items():
        i = _fft_phasors(rec, ROLES_I, rec.time[-1] + 0.5 / rec.sample_rate_hz)
        _assert_phasors_close(i, ref.terminals[tid].i_abc,
                              0.01 * np.abs(ref.terminals[tid].i_abc).max(), f"{tid} I")
    assert result.truth.evolve_to == "ABG"
    assert abs(result.truth.evolve_s - (result.truth.inception_s + 0.03)) < 1e-3


def test_rl_energisation_matches_closed_form():
    # Switching a sinusoidal EMF onto series R-L at t0 (textbook closed form,
    # common practice, no source): i(t) = E/|Z| [cos(w t + a - phi)
    #   - cos(w t0 + a - phi) exp(-(t - t0) R / L)],  phi = atan(w L / R).
    f, r, ll, e_pk, alpha = 50.0, 2.0, 0.03, 1000.0, 0.3
    w = 2 * math.pi * f
    cb = CircuitBuilder()
    a = cb.node("A")
    # EMF behind R-L from ground to node A (emf positive at the 'from' side:
    # the branch runs A -> ground, so -e drives current A -> ground as +e would
    # into a load), a switch from A to ground closing at t0
    cb.add_rl("load", (a,), (GROUND,), [[r]], [[ll]], emf_v=[-e_pk * np.exp(1j * alpha)])
    cb.add_r("sw", (a,), (GROUND,), [1e-6], closed=[False])
    cb.add_r("leak", (a,), (GROUND,), [1e9])
    circuit = cb.build(f)
    dt = 1.0 / (f * 2048)
    st = Stepper(circuit, dt, {}, element_current_index(circuit, "load"), 4096)
    st.run(300)
    st.switch({"sw": (True,)})
    st.run(4096)
    n0 = 300
    t = np.arange(n0, 4097) * dt
    t0 = n0 * dt
    zmag = math.hypot(r, w * ll)
    phi = math.atan2(w * ll, r)
    i_ref = e_pk / zmag * (np.cos(w * t + alpha - phi)
                           - math.cos(w * t0 + alpha - phi) * np.exp(-(t - t0) * r / ll))
    got = st.out[0, n0:]
    assert np.abs(got - i_ref).max() < 2e-3 * e_pk / zmag
    assert np.abs(st.out[0, :n0]).max() < 1e-6 * e_pk / zmag


def _simple_result(**kw):
    spec = dict(line="L1", fraction=0.4, type="BG", r_fault_ohm=3.0, inception_s=0.06,
                inception_angle_deg=30.0, relay_time_s=0.02, clear_after_s=0.07,
                duration_s=0.25, noise=0.002, seed=3, **FAST)
    spec.update(kw)
    return simulate(_model(), SimulationSpec(**spec))


def test_breakers_open_at_current_zeros_after_the_clearing_delay():
    result = _simple_result()
    truth = result.truth
    f = 60.0
    for tid, rec in result.records.items():
        opens = truth.pole_open_s[tid][0]
        t_cmd = truth.inception_s + 0.07
        for p, t_open in enumerate(opens):
            # opens at the first current zero after the command: within half a cycle
            assert t_cmd <= t_open <= t_cmd + 0.5 / f + 1e-3
            i = rec.analog_by_name(ROLES_I[p]).values
            after = rec.time > t_open + 2.0 / rec.sample_rate_hz
            # with noise 0.002 of 5 A secondary (times 240): no current after opening
            assert np.abs(i[after]).max() < 6 * 0.002 * 1200.0
        trip = rec.status_by_name("TRIP").values
        t_trip = rec.time[np.flatnonzero(trip)[0]]
        assert abs(t_trip - (truth.inception_s + 0.02)) <= 1.0 / rec.sample_rate_hz
        for p in range(3):
            bkr = rec.status_by_name(f"52A-{'ABC'[p]}").values
            t_change = rec.time[np.flatnonzero(bkr == 0)[0]]
            assert abs(t_change - opens[p]) <= 1.0 / rec.sample_rate_hz


@pytest.mark.parametrize("delay", [-0.015, 0.03])
def test_sequential_clearing_the_to_end_trips_and_opens_later(delay):
    # remote_delay_s moves the to-end's trip output and open command; each pole still
    # opens at its first current zero after the command (common practice, no source),
    # which an offset current early in the fault can hold back by more than half a cycle
    result = _simple_result(remote_delay_s=delay)
    truth = result.truth
    model = _model()
    line = model.line("L1")
    f = 60.0
    for tid, rec in result.records.items():
        t = model.terminal(tid)
        if t.line != "L1":
            continue
        d = delay if t.bus == line.to_bus else 0.0
        t_cmd = truth.inception_s + 0.07 + d
        for t_open in truth.pole_open_s[tid][0]:
            assert t_cmd <= t_open <= t_cmd + 2.0 / f, tid
        t_trip = rec.time[np.flatnonzero(rec.status_by_name("TRIP").values)[0]]
        assert abs(t_trip - (truth.inception_s + 0.02 + d)) <= 1.0 / rec.sample_rate_hz
    assert truth.clear_s == pytest.approx(max(max(v[0]) for v in truth.pole_open_s.values()))
    with pytest.raises(ValueError, match="remote_delay_s"):
        _simple_result(remote_delay_s=-0.05)


def test_no_numerical_oscillation_on_the_opened_line():
    # An isolated R-L line (no capacitance, no source) holds no voltage once
    # the last pole has opened (circuit theory).  The trapezoidal rule alone
    # leaves a sustained oscillation at half the step rate on such nodes
    # (Marti and Lin 1989); the backward-Euler half steps after each switching
    # must suppress it.
    result = simulate(_model(), SimulationSpec(
        line="L1", fraction=0.4, type="BC", r_fault_ohm=1.0, inception_s=0.05,
        clear_after_s=0.07, duration_s=0.25, samples_per_cycle=64, line_model="rl"))
    for rec in result.records.values():
        late = rec.time > result.truth.clear_s + 0.002
        v = np.vstack([rec.analog_by_name(r).values for r in ROLES_V])
        assert np.abs(v[:, late]).max() < 1e-3 * 230e3 / math.sqrt(3.0)


def test_bus_side_vts_keep_the_bus_voltage_after_opening():
    # after clearing, a bus-side VT measures the source behind the bus: in the
    # steady state the open-circuit EMF (circuit theory: no current through
    # the source impedance), here 1.02 pu at W
    result = _simple_result(vt_side="bus", noise=0.0, duration_s=0.45)
    rec = result.records["W-L1"]
    v = _fft_phasors(rec, ROLES_V, rec.time[-1] + 0.5 / rec.sample_rate_hz)
    e_pu = 1.02 * 230e3 / math.sqrt(3.0)
    np.testing.assert_allclose(np.abs(v), e_pu, rtol=0.005)


def test_anti_alias_filter_response_at_the_fundamental():
    from scipy.signal import butter, sosfreqz

    plain = _simple_result(noise=0.0, clear_after_s=None)
    filt = _simple_result(noise=0.0, clear_after_s=None, anti_alias_hz=600.0)
    fs = 60.0 * 512
    # reference: the response of the same Butterworth design, scipy.signal.sosfreqz
    _, h = sosfreqz(butter(2, 600.0, fs=fs, output="sos"), worN=[60.0], fs=fs)
    for tid in plain.records:
        a = _fft_phasors(plain.records[tid], ROLES_I + ROLES_V, 0.05)
        b = _fft_phasors(filt.records[tid], ROLES_I + ROLES_V, 0.05)
        np.testing.assert_allclose(b / a, h[0], rtol=2e-4)


def test_recorder_converter_quantises_the_secondary_values(tmp_path):
    from eventlab.network.simulate import adc_full_scale

    result = _simple_result(adc_bits=12, noise=0.0)
    write_simulation(result, tmp_path, data_format="FLOAT32", revision=2013)
    back = read_record(tmp_path / "WEST.cfg", values="secondary")
    for ch in back.analog[:6]:
        _, step = adc_full_scale(115.0 if ch.unit == "V" else 5.0, ch.unit, 12)
        codes = ch.values / step
        # FLOAT32 holds the converter's codes times the step (float32 rounding)
        assert np.abs(codes - np.rint(codes)).max() < 1e-3
        assert np.abs(codes).max() <= 2047


def test_point_on_wave_of_the_local_phase_a_voltage():
    for angle in (0.0, 90.0, 250.0):
        result = _simple_result(inception_angle_deg=angle, noise=0.0)
        rec = result.records["W-L1"]
        v_a = _fft_phasors(rec, ("VA",), 0.05)[0]
        # v_a(t) = sqrt(2)|V| cos(w t + arg V) = sqrt(2)|V| sin(w t + arg V + 90 deg)
        got = math.degrees(2 * math.pi * 60.0 * result.truth.inception_s + np.angle(v_a)) + 90.0
        step_deg = 360.0 / result.truth.steps_per_cycle
        assert abs((got - angle + 180.0) % 360.0 - 180.0) <= step_deg / 2 + 0.05
        assert result.truth.inception_s >= 0.06


def test_reclose_onto_permanent_fault_trips_again():
    result = _simple_result(reclose_after_s=0.1, duration_s=0.45, inception_angle_deg=None)
    truth = result.truth
    assert truth.reclose_s is not None
    assert len(truth.trip_s["W-L1"]) == 2
    rec = result.records["W-L1"]
    ib = rec.analog_by_name("IB").values
    dead = (rec.time > truth.clear_s + 0.01) & (rec.time < truth.reclose_s - 0.001)
    assert np.abs(ib[dead]).max() < 0.02 * np.abs(ib).max()
    again = (rec.time > truth.reclose_s + 0.01) & (rec.time < truth.trip_s["W-L1"][1])
    assert np.abs(ib[again]).max() > 0.5 * np.abs(ib).max()


def test_leader_recloses_alone_onto_a_permanent_fault():
    # reclose_ends="from": only the line's from end (W) recloses, trips again; the other
    # end's breaker stays open (its status and its current) and its TRIP stays down
    result = _simple_result(reclose_after_s=0.1, duration_s=0.45, inception_angle_deg=None,
                            reclose_ends="from")
    truth = result.truth
    far = [k for k in result.records if k != "W-L1"][0]
    assert len(truth.trip_s["W-L1"]) == 2 and len(truth.trip_s[far]) == 1
    assert len(truth.pole_open_s["W-L1"]) == 2 and len(truth.pole_open_s[far]) == 1
    rec = result.records[far]
    after = rec.time > truth.reclose_s + 0.005
    assert not rec.status_by_name("52A-A").values[after].any()
    assert np.abs(rec.analog_by_name("IB").values[after]).max() < 0.02 * np.abs(
        rec.analog_by_name("IB").values).max()
    near = result.records["W-L1"]
    assert near.status_by_name("52A-A").values[(near.time > truth.reclose_s + 0.002)
                                               & (near.time < truth.reclose_s + 0.02)].all()
    with pytest.raises(ValueError, match="reclose_ends"):
        _simple_result(reclose_after_s=0.1, reclose_ends="middle")


def test_single_pole_trip_and_reclose():
    # temporary A-G fault: pole A opens at both ends, B and C stay closed and
    # keep carrying load; after the dead time pole A recloses and the line is
    # healthy again
    result = _simple_result(type="AG", single_pole=True, reclose_after_s=0.2,
                            permanent=False, duration_s=0.45, noise=0.0,
                            inception_angle_deg=None)
    truth = result.truth
    rec = result.records["W-L1"]
    assert truth.pole_open_s["W-L1"][0][0] is not None
    assert truth.pole_open_s["W-L1"][0][1:] == (None, None)
    assert rec.status_by_name("52A-B").values.all() and rec.status_by_name("52A-C").values.all()
    dead = (rec.time > truth.clear_s + 0.01) & (rec.time < truth.reclose_s - 0.001)
    assert np.abs(rec.analog_by_name("IA").values[dead]).max() < 5.0
    assert np.abs(rec.analog_by_name("IB").values[dead]).max() > 100.0
    after = _fft_phasors(rec, ROLES_I, rec.time[-1] + 0.5 / rec.sample_rate_hz)
    pre = prefault(_model())["W-L1"][1]
    _assert_phasors_close(after, pre, 1.0, "W-L1 I after reclose")
    # permanent: the trip after reclose opens all three poles
    perm = _simple_result(type="AG", single_pole=True, reclose_after_s=0.2, permanent=True,
                          duration_s=0.45, noise=0.0)
    second = perm.truth.pole_open_s["W-L1"][1]
    assert all(t is not None for t in second)


def test_no_fault_load_step_record():
    from eventlab.network.simulate import LoadStep

    result = simulate(_model(), SimulationSpec(
        line="L1", fraction=0.0, type="none", load_step=LoadStep("E", 100.0, 30.0, 0.1),
        duration_s=0.25, **FAST))
    assert result.truth.type == "none" and result.truth.inception_s is None
    rec = result.records["W-L1"]
    assert not rec.status_by_name("TRIP").values.any()
    assert rec.status_by_name("52A-A").values.all()
    before = np.abs(_fft_phasors(rec, ROLES_I, 0.095))
    after = np.abs(_fft_phasors(rec, ROLES_I, 0.25))
    assert np.all(after > before * 1.1)


def test_no_fault_line_opening_record():
    result = simulate(_model(), SimulationSpec(line="L1", fraction=0.0, type="none",
                                               open_line_s=0.1, duration_s=0.25, **FAST))
    for tid, rec in result.records.items():
        assert not rec.status_by_name("TRIP").values.any()
        opens = result.truth.pole_open_s[tid][0]
        assert all(0.1 <= t <= 0.1 + 0.5 / 60.0 + 1e-3 for t in opens)
        late = rec.time > max(opens) + 0.002
        for p, role in enumerate(ROLES_I):
            i = rec.analog_by_name(role).values
            assert np.abs(i[late]).max() < 1.0
            assert np.abs(i[rec.time < 0.09]).max() > 100.0
            assert not rec.status_by_name(f"52A-{'ABC'[p]}").values[late].any()
    assert result.truth.clear_s is None and result.truth.distance_from_km == {}


def test_off_nominal_source_frequency():
    # frequency = number of periods over their duration (definition), from the
    # rising zero crossings of phase A, linearly interpolated
    result = simulate(_model(), SimulationSpec(line="L1", fraction=0.0, type="none",
                                               frequency_hz=59.5, duration_s=0.5, **FAST))
    rec = result.records["W-L1"]
    v = rec.analog_by_name("VA").values
    k = np.flatnonzero((v[:-1] < 0) & (v[1:] >= 0))
    t_cross = rec.time[k] - v[k] * (rec.time[k + 1] - rec.time[k]) / (v[k + 1] - v[k])
    f_meas = (t_cross.size - 1) / (t_cross[-1] - t_cross[0])
    assert f_meas == pytest.approx(59.5, abs=1e-3)
    assert rec.frequency_hz == 60.0 and rec.sample_rate_hz == pytest.approx(60.0 * 32)
    assert result.truth.source_frequency_hz == 59.5


def test_ct_saturation_clips_the_secondary_current():
    kw = dict(fraction=0.05, type="AG", r_fault_ohm=0.2, inception_angle_deg=0.0,
              clear_after_s=None, noise=0.0, ct_ratio=(600.0, 5.0), duration_s=0.2)
    ideal = _simple_result(**kw)
    sat = _simple_result(ct_saturation=CtSaturation(knee_voltage_v=60.0, burden_ohm=2.0),
                         ct_saturation_at=("W-L1",), **kw)
    t_inc = ideal.truth.inception_s
    a_i = ideal.records["W-L1"].analog_by_name("IA").values
    a_s = sat.records["W-L1"].analog_by_name("IA").values
    t = ideal.records["W-L1"].time
    # the first quarter cycle after inception is reproduced, before the core saturates
    early = (t > t_inc) & (t < t_inc + 0.25 / 60.0)
    assert np.allclose(a_s[early], a_i[early], rtol=0.03, atol=30.0)
    # later the saturated CT gives less (area of the first offset loop)
    first = (t > t_inc) & (t < t_inc + 2.0 / 60.0)
    assert np.abs(a_s[first]).sum() < 0.8 * np.abs(a_i[first]).sum()
    # the other terminal is unaffected
    np.testing.assert_array_equal(sat.records["E-L1"].analog_by_name("IA").values,
                                  ideal.records["E-L1"].analog_by_name("IA").values)


@pytest.mark.parametrize(("data_format", "revision", "single_file"),
                         [("BINARY", 1999, False), ("ASCII", 1999, False),
                          ("FLOAT32", 2013, False), ("BINARY", 2013, True)])
def test_records_pass_through_writer_reader_and_comtrade(tmp_path, data_format, revision,
                                                         single_file):
    result = _simple_result()
    paths = write_simulation(result, tmp_path, data_format=data_format, revision=revision,
                             single_file=single_file)
    names = sorted(p.name for p in paths)
    ext = [".cff"] if single_file else [".cfg", ".dat"]
    assert names == sorted([f"EAST_SIDE{e}" for e in ext] + [f"WEST{e}" for e in ext]
                           + ["truth.json"])
    for rec in result.records.values():
        stem = tmp_path / rec.station.replace(" ", "_")
        path = stem.with_suffix(".cff" if single_file else ".cfg")
        back = read_record(path)
        back_sec = read_record(path, values="secondary")
        # the reference reader (PyPI comtrade) gives a*x+b as stored: secondary values
        ref = comtrade.Comtrade()
        if single_file:
            ref.load(str(path))
        else:
            ref.load(str(path), str(stem.with_suffix(".dat")))
        assert ref.analog_count == len(rec.analog) and ref.status_count == len(rec.status)
        np.testing.assert_allclose(np.asarray(ref.time), rec.time, atol=1e-6)
        for k, ch in enumerate(rec.analog):
            b = back.analog_by_name(ch.name)
            assert b.ps == "S" and (b.primary, b.secondary) == (ch.primary, ch.secondary)
            step = b.a * ch.ratio if data_format != "FLOAT32" else 1e-6 * np.abs(ch.values).max()
            assert np.abs(b.values - ch.values).max() <= 0.5 * step * (1 + 1e-9) + 1e-9
            np.testing.assert_allclose(back_sec.analog_by_name(ch.name).values * ch.ratio,
                                       b.values, rtol=1e-9, atol=1e-9 * step)
            # ... which it holds as float32: allow its rounding (2**-24 relative) on top
            theirs = np.asarray(ref.analog[k], dtype=float) * ch.ratio
            f32 = 2.0**-23 * np.abs(ch.values).max()
            assert np.abs(theirs - ch.values).max() <= 0.5 * step * (1 + 1e-9) + f32
        for k, ch in enumerate(rec.status):
            np.testing.assert_array_equal(back.status_by_name(ch.name).values, ch.values)
            np.testing.assert_array_equal(np.asarray(ref.status[k]).astype(np.uint8), ch.values)


def test_truth_file_matches_the_spec(tmp_path):
    result = _simple_result(inception_angle_deg=None)
    write_simulation(result, tmp_path)
    truth = json.loads((tmp_path / "truth.json").read_text())
    assert truth["type"] == "BG" and truth["line"] == "L1"
    assert truth["fraction"] == 0.4 and truth["distance_km"] == pytest.approx(32.0)
    assert truth["r_fault_ohm"] == 3.0 and truth["r_ground_ohm"] == 0.0
    assert truth["inception_s"] == pytest.approx(0.06, abs=1.0 / (60 * 512))
    assert truth["trip_s"]["W-L1"][0] == pytest.approx(truth["inception_s"] + 0.02,
                                                       abs=1.0 / (60 * 512))
    assert truth["clear_s"] == max(truth["pole_open_s"]["W-L1"][0]
                                   + truth["pole_open_s"]["E-L1"][0])
    assert truth["stations"] == {"W-L1": "WEST", "E-L1": "EAST SIDE"}
    assert truth["distance_from_km"] == {"W-L1": pytest.approx(32.0),
                                         "E-L1": pytest.approx(48.0)}


def test_model_features_the_simulator_cannot_represent():
    with pytest.raises(ModelError, match="z2 != z1"):
        simulate(_model(z2=[1.0, 12.0]), SimulationSpec(line="L1", fraction=0.5, type="AG"))
    with pytest.raises(ModelError, match="unknown line"):
        simulate(_model(), SimulationSpec(line="L9", fraction=0.5, type="AG"))
    with pytest.raises(ModelError, match="unknown terminal"):
        simulate(_model(), SimulationSpec(line="L1", fraction=0.5, type="AG",
                                          ct_saturation=CtSaturation(),
                                          ct_saturation_at=("NOPE",)))
    with pytest.raises(ValueError, match="fraction"):
        SimulationSpec(line="L1", fraction=1.5, type="AG")
    with pytest.raises(ValueError, match="unknown fault type"):
        SimulationSpec(line="L1", fraction=0.5, type="XG")
