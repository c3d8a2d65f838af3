"""The stage of a fault fed from one end alone (the other end opened first).

References: the fault solver (eventlab.network.faults, itself checked against
pandapower and power-grid-model in tests/network) on a network where the line's
far end has nothing behind it, which is that stage exactly; the closed-form
input admittance of an open-ended line; and the time-domain simulator opening
the far breaker first (an independent computation of the waveforms).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from eventlab.analysis import analyze
from eventlab.errors import SignalError
from eventlab.faulttypes import FAULT_TYPES
from eventlab.locate import locate_event
from eventlab.locate.inputs import from_fault_interval
from eventlab.locate.model_link import line_from, phasors_from_solution
from eventlab.locate.radial import open_line_admittance, radial_stage
from eventlab.locate.single_ended import reactance
from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import load_model, with_source
from eventlab.network.simulate import SimulationSpec, simulate

from .locate_models import radial_model

LENGTH_KM = 180.0
NORTHMARCH = Path(__file__).resolve().parents[2] / "models" / "northmarch_230kv.toml"


@pytest.mark.parametrize("sections", [False, True])
@pytest.mark.parametrize("code", FAULT_TYPES)
@pytest.mark.parametrize("fraction,rf", [(0.2137, 0.0), (0.6311, 25.0), (0.9533, 50.0)])
def test_exact_on_the_solver_with_the_far_end_open(code, fraction, rf, sections):
    # fed from one end, the fault current is this end's current less the open line's
    # charging: exact whatever Rf, with the capacitance the simple reactance method
    # neglects (it errs here by up to 7 km on the 180 km line)
    model = radial_model(sections=sections)
    rg = 3.0 if len(code) == 3 else 0.0
    res = solve_fault(model, FaultSpec("L1", fraction, code, rf, rg))
    end = phasors_from_solution(res, model, "VM-L1")
    end = replace(end, v_remote_open=end.v_fault, i_remote_open=end.i_fault)
    est = radial_stage(end, line_from(model, "L1", model.terminal("VM-L1")))
    assert est.distance_km == pytest.approx(fraction * LENGTH_KM, abs=1e-6)
    assert est.fault_resistance_ohm == pytest.approx(rf, abs=1e-6)


def test_capacitance_matters_here():
    # the test above would pass for the reactance method too if the charging were
    # negligible: it is not, on this line
    model = radial_model()
    res = solve_fault(model, FaultSpec("L1", 0.9533, "AG", 50.0))
    end = phasors_from_solution(res, model, "VM-L1")
    err = reactance(end, line_from(model, "L1", model.terminal("VM-L1"))).distance_km \
        - 0.9533 * LENGTH_KM
    assert abs(err) > 1.0


def test_open_line_admittance_is_the_hyperbolic_closed_form():
    # input admittance of a line open at its far end: Y = tanh(gamma l) / Zc with
    # gamma = sqrt(z y), Zc = sqrt(z / y) (the long-line equations, e.g. Grainger &
    # Stevenson, Power System Analysis, 1994, ch. 6, from memory)
    model = radial_model()
    line = line_from(model, "L1", model.terminal("VM-L1"))
    w = 2 * np.pi * 60.0
    sec = line.sections[0]
    for length in (0.0, 40.0, 130.0):
        y = open_line_admittance(line, length, w)
        for k, (z, c) in enumerate(((sec.z0_ohm_per_km, sec.c0_nf_per_km),
                                    (sec.z1_ohm_per_km, sec.c1_nf_per_km),
                                    (sec.z1_ohm_per_km, sec.c1_nf_per_km))):
            ysh = 1j * w * c * 1e-9
            expect = np.tanh(np.sqrt(z * ysh) * length) / np.sqrt(z / ysh)
            assert y[k] == pytest.approx(expect, rel=1e-9, abs=1e-15)


def test_no_stage_is_a_clear_error():
    model = radial_model()
    res = solve_fault(model, FaultSpec("L1", 0.5, "AG"))
    end = phasors_from_solution(res, model, "VM-L1")
    with pytest.raises(SignalError, match="other end open"):
        radial_stage(end, line_from(model, "L1", model.terminal("VM-L1")))


def _sequential(code, fraction, rf, remote_delay_s, truth):
    spec = SimulationSpec(line="VM-CR1", fraction=fraction, type=code, r_fault_ohm=rf,
                          inception_s=0.1, relay_time_s=0.1, clear_after_s=0.15,
                          duration_s=0.35, samples_per_cycle=64, noise=0.001, seed=3,
                          remote_delay_s=remote_delay_s)
    sim = simulate(truth, spec)
    recs = [sim.records[t.id] for t in truth.terminals_of_line("VM-CR1")]
    an = analyze(recs)
    return recs, an


@pytest.fixture(scope="module")
def weak_remote():
    # the far source 4x weaker than the model file: the single-ended methods' hard case
    return with_source(load_model(NORTHMARCH), "CARDON_REACH", z_scale=4.0)


@pytest.mark.parametrize("code,fraction,rf", [("AG", 0.93, 40.0), ("BC", 0.7, 2.0),
                                              ("CAG", 0.4, 5.0)])
def test_simulated_sequential_clearing(weak_remote, code, fraction, rf):
    # the far end opens 80 ms before this one (a zone-2 clearing at VELLMOOR)
    recs, an = _sequential(code, fraction, rf, -0.08, weak_remote)
    local, remote = an.terminals[0], an.terminals[1]
    stage = local.timeline.intervals[0].remote_open
    assert stage is not None
    # the change is seen from the local end within a cycle after the far end's first
    # pole opened (the far record's own pole times, same clock)
    first_far = min(s for s in remote.timeline.pole_open_s if s is not None)
    assert first_far - 0.002 <= stage.change_s <= first_far + 1 / 60
    assert stage.window.end_s < min(s for s in local.timeline.pole_open_s if s is not None)
    assert remote.timeline.intervals[0].remote_open is None    # it opened first itself
    end = from_fault_interval(local.timeline.intervals[0], station=recs[0].station,
                              frequency_hz=recs[0].frequency_hz, record_start=recs[0].start,
                              time0_s=float(recs[0].time[0]), samples_per_cycle=64)
    rep = locate_event(weak_remote, [end], line="VM-CR1")
    length = weak_remote.line("VM-CR1").length_km
    est = next(m for m in rep.methods if m.method == "radial_stage")
    assert abs(est.distance_km - fraction * length) < 0.001 * length
    assert est.fault_resistance_ohm == pytest.approx(rf, abs=0.02 * rf + 0.1)
    # the model fit takes the stage too, with its own fault resistance
    assert rep.fit.r_fault_open_ohm == pytest.approx(rf, abs=0.02 * rf + 0.1)
    assert any("other end opened first" in a for a in rep.fit.assumptions)
    assert abs(rep.distance_km - fraction * length) < 0.002 * length
    # the simple reactance method on the two-end fault window is far off in the hard case
    react = next(m for m in rep.methods if m.method == "reactance")
    if code == "AG":
        assert abs(react.distance_km - fraction * length) > 0.05 * length


def test_no_stage_when_both_ends_clear_together(weak_remote):
    _, an = _sequential("AG", 0.6, 10.0, 0.0, weak_remote)
    assert all(t.timeline.intervals[0].remote_open is None for t in an.terminals)


def test_the_other_end_record_gives_it_when_this_end_opened_first(weak_remote):
    recs, an = _sequential("AG", 0.8, 20.0, +0.08, weak_remote)
    ends = [from_fault_interval(t.timeline.intervals[0], station=recs[t.record].station,
                                frequency_hz=60.0, record_start=recs[t.record].start,
                                time0_s=float(recs[t.record].time[0]), samples_per_cycle=64)
            for t in an.terminals]
    assert ends[0].i_remote_open is None and ends[1].i_remote_open is not None
    rep = locate_event(weak_remote, ends, line="VM-CR1")
    length = weak_remote.line("VM-CR1").length_km
    est = next(m for m in rep.methods if m.method == "radial_stage")
    assert est.terminal == "VELLMOOR-VM-CR1" and est.extra["measured_from"] == \
        "CARDON_REACH-VM-CR1"
    assert abs(est.distance_km - 0.8 * length) < 0.001 * length


def test_fit_with_the_stage_and_z0_off_keeps_the_truth_in_its_interval(weak_remote):
    # the model's line Z0 written 5 % high: one end still cannot tell Z0 from the
    # distance (the stage reads the same loop impedance), so Z0 is fitted with its
    # tolerance as the prior and the interval must still hold the truth
    import dataclasses

    recs, an = _sequential("AG", 0.93, 40.0, -0.08, weak_remote)
    end = from_fault_interval(an.terminals[0].timeline.intervals[0], station=recs[0].station,
                              frequency_hz=60.0, record_start=recs[0].start,
                              time0_s=float(recs[0].time[0]), samples_per_cycle=64)
    off = dataclasses.replace(weak_remote, lines=tuple(
        dataclasses.replace(ln, sections=tuple(dataclasses.replace(
            s, z0_ohm_per_km=s.z0_ohm_per_km * 1.05) for s in ln.sections))
        if ln.id == "VM-CR1" else ln for ln in weak_remote.lines))
    rep = locate_event(off, [end], line="VM-CR1")
    d_true = 0.93 * weak_remote.line("VM-CR1").length_km
    assert rep.interval_km[0] <= d_true <= rep.interval_km[1]
    assert "line Z0" not in rep.uncertainty_km        # fitted, not held


def test_far_poles_opening_one_by_one_is_not_an_evolving_fault(weak_remote):
    # a B-C fault while the far breaker's poles open at their own current zeros
    # briefly looks like B-C-G from this end; then it is B-C again, fed from this
    # end alone: one fault interval with that stage, not an evolution B-C -> B-C-G -> B-C
    spec = SimulationSpec(line="VM-CR1", fraction=0.547, type="BC", r_fault_ohm=0.1,
                          inception_s=0.1, inception_angle_deg=200.0, relay_time_s=0.337,
                          clear_after_s=0.37, remote_delay_s=0.019 - 0.337, duration_s=0.58,
                          samples_per_cycle=48, noise=0.002, seed=5,
                          anti_alias_hz=0.3 * 48 * 60.0)
    sim = simulate(weak_remote, spec)
    rec = sim.records["VELLMOOR-VM-CR1"]
    tl = analyze([rec]).terminals[0].timeline
    assert [iv.type for iv in tl.intervals] == ["BC"]
    assert any("poles opening one by one" in f for f in tl.flags)
    stage = tl.intervals[0].remote_open
    assert stage is not None and stage.window.start_s > max(
        sim.truth.pole_open_s["CARDON_REACH-VM-CR1"][0])
    end = from_fault_interval(tl.intervals[0], station=rec.station, frequency_hz=60.0,
                              record_start=rec.start, time0_s=float(rec.time[0]),
                              samples_per_cycle=48)
    est = radial_stage(end, line_from(weak_remote, "VM-CR1",
                                      weak_remote.terminal("VELLMOOR-VM-CR1")))
    assert abs(est.distance_km - 0.547 * 96.4) < 0.001 * 96.4


@pytest.mark.parametrize("code,fraction,rf", [("AG", 0.8, 20.0), ("BC", 0.7, 2.0),
                                              ("CG", 0.3, 30.0)])
def test_far_end_opening_within_the_fault_window(code, fraction, rf):
    # the far end trips at once and opens 20 ms after inception (inside this end's
    # first fault window), this end in zone 2: methods on the fault window read up to
    # 20 % of the line off here, the stage fed from this end alone does not.  A B-C
    # fault is seen as B-C-G while the far poles open: still one B-C fault.
    truth = with_source(load_model(NORTHMARCH), "CARDON_REACH", z_scale=2.0)
    spec = SimulationSpec(line="VM-CR1", fraction=fraction, type=code, r_fault_ohm=rf,
                          inception_s=0.1, relay_time_s=0.3, clear_after_s=0.32,
                          remote_delay_s=-0.3, duration_s=0.55, samples_per_cycle=64,
                          noise=0.001, seed=3)
    sim = simulate(truth, spec)
    recs = [sim.records[t.id] for t in truth.terminals_of_line("VM-CR1")]
    an = analyze(recs)
    iv = an.terminals[0].timeline.intervals
    assert [x.type for x in iv] == [code] and iv[0].remote_open is not None
    ends = [from_fault_interval(t.timeline.intervals[0], station=recs[t.record].station,
                                frequency_hz=60.0, record_start=recs[t.record].start,
                                time0_s=float(recs[t.record].time[0]), samples_per_cycle=64)
            for t in an.terminals]
    assert ends[0].window_holds_remote_opening
    length = truth.line("VM-CR1").length_km
    for use in (ends[:1], ends):
        rep = locate_event(truth, use, line="VM-CR1")
        assert rep.best.method == "radial_stage"
        assert abs(rep.distance_km - fraction * length) < 0.001 * length
        assert rep.interval_km[0] <= fraction * length <= rep.interval_km[1]
        assert any("opened within the fault window" in n for n in rep.notes)
        assert "does not judge the model" in rep.comparison.verdicts[0]


def test_a_window_cut_before_the_change_is_not_mixed():
    # 50 Hz island line: ORRINSBY opens 70 ms after inception, HESKARD FEN 200 ms
    # later.  HESKARD FEN's fault window ends an eighth of a cycle before the change,
    # so it is clean: the two-ended fit stays the answer, the stage is listed
    model = load_model(Path(__file__).resolve().parents[2] / "models" / "orrin_isle_110kv.toml")
    spec = SimulationSpec(line="OR-HF1", fraction=0.6, type="BC", r_fault_ohm=2.0,
                          inception_s=0.1, relay_time_s=0.03, clear_after_s=0.07,
                          remote_delay_s=0.2, duration_s=0.5, samples_per_cycle=64,
                          noise=0.001, seed=3, anti_alias_hz=0.3 * 64 * 50.0)
    sim = simulate(model, spec)
    recs = [sim.records[t.id] for t in model.terminals_of_line("OR-HF1")]
    an = analyze(recs)
    ends = [from_fault_interval(t.timeline.intervals[0], station=recs[t.record].station,
                                frequency_hz=50.0, record_start=recs[t.record].start,
                                time0_s=float(recs[t.record].time[0]), samples_per_cycle=64)
            for t in an.terminals]
    assert ends[1].i_remote_open is not None and not ends[1].window_holds_remote_opening
    rep = locate_event(model, ends, line="OR-HF1")
    length = model.line("OR-HF1").length_km
    assert rep.best.method == "model_fit"
    assert abs(rep.distance_km - 0.6 * length) < 0.005 * length
    radial = next(m for m in rep.methods if m.method == "radial_stage")
    assert abs(radial.distance_km - 0.6 * length) < 0.001 * length


def test_three_phase_stage_needs_the_other_record():
    # a three-phase fault cannot show the far end's opening from one end; the far
    # record's first pole opening (same clock) confirms it.  Far end open 25 ms after
    # inception, inside VELLMOOR's fault window: with both records the stage locates
    truth = with_source(load_model(NORTHMARCH), "CARDON_REACH", z_scale=2.0)
    spec = SimulationSpec(line="VM-CR1", fraction=0.436, type="ABC", r_fault_ohm=4.4,
                          inception_s=0.1, relay_time_s=0.283, clear_after_s=0.283 + 0.025,
                          remote_delay_s=-0.283, duration_s=0.6, samples_per_cycle=32,
                          noise=0.001, seed=9, anti_alias_hz=0.3 * 32 * 60.0)
    sim = simulate(truth, spec)
    recs = [sim.records[t.id] for t in truth.terminals_of_line("VM-CR1")]
    stage = analyze(recs[:1]).terminals[0].timeline.intervals[0].remote_open
    assert stage is not None and not stage.confirmed
    length = truth.line("VM-CR1").length_km
    both = analyze(recs, model=truth, line="VM-CR1")
    assert both.location.best.method == "radial_stage"
    assert abs(both.location.distance_km - 0.436 * length) < 0.001 * length
    assert any("first pole opening" in w for w in both.warnings)
    alone = analyze(recs[:1], model=truth, line="VM-CR1")
    assert alone.location.best.method != "radial_stage"
    assert any("inside its fault window" in w for w in alone.warnings)
