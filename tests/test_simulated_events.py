"""End to end on records from the time-domain simulator (an independent computation).

The simulator integrates the network's differential equations (trapezoidal
rule, eventlab.network.emt) and records what it did in a truth object; the
signal chain and the locators only see the COMTRADE-like record.  These
checks cover what the issue on the signal chain asks of inception timing
(within one sample on clean records, 0.5 ms on noisy ones), the fault type,
and the clearing time, on the minimal example model: its sources have equal
EMFs, so the pre-fault currents are only the line's charging currents (a
no-load line, where relative thresholds have little to go on).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from eventlab.analysis import analyze
from eventlab.network.model import load_model
from eventlab.network.simulate import SimulationSpec, simulate

MODEL = Path(__file__).parents[1] / "models" / "example_230kv.toml"


@pytest.fixture(scope="module")
def model():
    return load_model(MODEL)


CASES = [
    # (type, fraction, Rf [ohm], samples per cycle, inception angle [deg], noise)
    ("BG", 0.37, 3.0, 32, 30.0, 0.0),
    ("BG", 0.37, 3.0, 64, 30.0, 0.0),
    ("AG", 0.10, 0.0, 16, 0.0, 0.0),
    ("CA", 0.80, 1.0, 128, 90.0, 0.0),
    ("ABG", 0.50, 2.0, 64, 120.0, 0.0),
    ("ABC", 0.25, 0.5, 32, 45.0, 0.0),
    ("BG", 0.37, 3.0, 32, 30.0, 0.005),
    ("CG", 0.60, 10.0, 64, 90.0, 0.005),
    ("BC", 0.45, 1.0, 64, 0.0, 0.005),
]


@pytest.mark.parametrize("code,frac,rf,spc,angle,noise", CASES)
def test_inception_type_and_clearing_on_simulated_record(model, code, frac, rf, spc, angle,
                                                         noise):
    spec = SimulationSpec(line="L1", fraction=frac, type=code, r_fault_ohm=rf,
                          inception_angle_deg=angle, clear_after_s=0.08, duration_s=0.3,
                          samples_per_cycle=spc, noise=noise, seed=11)
    sim = simulate(model, spec)
    (tid, rec), = sim.records.items()
    truth = sim.truth
    tl = analyze([rec]).terminals[0].timeline
    dt = 1.0 / (spc * model.system.frequency_hz)
    assert tl.fault_type == code
    # one sample on clean records, 0.5 ms with noise (issue text)
    tol = dt if noise == 0.0 else max(0.5e-3, dt)
    assert abs(tl.inception_s - truth.inception_s) <= tol + 1e-9
    # clearing: the last pole of the faulted phases opens at a current zero; the
    # timeline sees the pole open within a few samples (common practice, no source)
    last_open = max(p for p in truth.pole_open_s[tid][0] if p is not None)
    assert tl.clearing_s is not None
    assert abs(tl.clearing_s - last_open) <= max(4 * dt, 1.0e-3)


@pytest.mark.parametrize("data_format", ["BINARY", "FLOAT32", "ASCII"])
def test_written_record_gives_the_same_timeline(model, tmp_path, data_format):
    # through the COMTRADE files (secondary values, quantised by the writer)
    from eventlab.network.simulate import write_simulation
    from eventlab.records import read_record

    spec = SimulationSpec(line="L1", fraction=0.37, type="BG", r_fault_ohm=3.0,
                          inception_angle_deg=30.0, clear_after_s=0.08, duration_s=0.3,
                          samples_per_cycle=32, seed=11)
    sim = simulate(model, spec)
    paths = write_simulation(sim, tmp_path, data_format=data_format,
                             revision=2013 if data_format == "FLOAT32" else 1999)
    cfg = next(p for p in paths if p.suffix == ".cfg")
    tl = analyze([read_record(cfg)]).terminals[0].timeline
    dt = 1.0 / (32 * model.system.frequency_hz)
    assert tl.fault_type == "BG"
    assert abs(tl.inception_s - sim.truth.inception_s) <= dt + 1e-9


@pytest.mark.parametrize("spc", [64, 256])
def test_fault_window_current_with_full_offset_matches_solver(spc):
    # A bolted BC fault at voltage zero (full offset) near the far end, line
    # capacitance modelled, recorder anti-aliasing at 0.3 fs: the fault-window
    # currents (offset removed by least squares with the decaying term) agree with
    # the steady-state currents of the phasor-domain solver (an independent
    # computation, itself checked against pandapower and power-grid-model) within
    # 0.3 %.  The mimic filter erred by 1.1 % here at 256 samples a cycle.

    from eventlab.network.faults import FaultSpec, solve_fault
    from eventlab.network.model import with_source

    root = Path(__file__).parents[1]
    m = with_source(load_model(root / "models" / "northmarch_230kv.toml"), "CARDON_REACH",
                    angle_deg=12.0)
    spec = SimulationSpec("VM-CR1", 0.9, "BC", 0.0, inception_s=0.1, inception_angle_deg=0.0,
                          relay_time_s=0.03, clear_after_s=0.08, duration_s=0.25,
                          samples_per_cycle=spc, noise=0.001, seed=7,
                          anti_alias_hz=0.3 * spc * m.system.frequency_hz)
    sim = simulate(m, spec)
    tid = next(t.id for t in m.terminals if t.station == "VELLMOOR")
    iv = analyze([sim.records[tid]]).terminals[0].timeline.intervals[0]
    ref = solve_fault(m, FaultSpec("VM-CR1", 0.9, "BC", 0.0)).terminals[tid].i_abc
    for p in (1, 2):   # the faulted phases B and C
        assert abs(abs(iv.i_fault[p]) / abs(ref[p]) - 1.0) < 3e-3


def test_two_rate_record_is_resampled_and_timed(model, tmp_path):
    # C37.111 allows several sample-rate segments (nrates > 1, clause 6.7): here
    # 7680 Hz up to 0.2 s, then every fourth sample (1920 Hz), written with the
    # record layer (time stamps, nrates = 0) and read back.  The analysis works on
    # the fastest rate, resampled, and times the fault as on the original record.
    import numpy as np

    from eventlab.records import read_record, write_record
    from eventlab.records.build import make_record

    spec = SimulationSpec(line="L1", fraction=0.37, type="CG", r_fault_ohm=2.0,
                          inception_angle_deg=60.0, clear_after_s=0.08, duration_s=0.3,
                          samples_per_cycle=128, seed=11)
    sim = simulate(model, spec)
    (rec,) = sim.records.values()
    t = rec.time
    keep = np.flatnonzero((t <= 0.2) | (np.arange(t.size) % 4 == 0))
    analog = [(c.name, c.phase, c.unit, c.values[keep], c.circuit) for c in rec.analog]
    status = [(c.name, c.values[keep], c.circuit) for c in rec.status]
    two = make_record(rec.station, t[keep], analog, status, frequency_hz=rec.frequency_hz)
    paths = write_record(two, tmp_path / "two_rate", data_format="BINARY")
    back = read_record(next(p for p in paths if p.suffix == ".cfg"))
    a = analyze([back])
    tl = a.terminals[0].timeline
    assert any("sample rate changes" in w for w in a.warnings)
    assert tl.fault_type == "CG"
    assert abs(tl.inception_s - sim.truth.inception_s) <= 1.0 / 7680 + 1e-9
