"""The fault window's length: one steady state, not ringing, decides where it ends.

References: the time-domain simulation's known fault position, and the
numpy-made signals' construction (where their state changes).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from eventlab.analysis import analyze, locate_analysis
from eventlab.network.model import load_model
from eventlab.network.simulate import SimulationSpec, simulate
from eventlab.signals.timeline import _steady_length
from eventlab.signals.windows import Window

ROOT = Path(__file__).resolve().parents[2]

F0 = 60.0
N = 20                      # samples per cycle, a relay's low rate
FS = N * F0


def _currents(ringing: float, step_at_cycle: float | None = None):
    """Three phase currents over 4 cycles: 1000 A, plus a slowly decaying ringing at
    7.3 times the fundamental (what a line's travelling waves leave in a record
    taken without an anti-aliasing filter), optionally with the phase-A fault
    current dropping to 60 % at ``step_at_cycle`` (the other end opening)."""
    k = np.arange(4 * N)
    t = k / FS
    x = np.empty((3, k.size))
    for p in range(3):
        ang = 2 * np.pi * F0 * t - p * 2 * np.pi / 3 + 0.4
        amp = np.full(k.size, 1000.0)
        if step_at_cycle is not None and p == 0:
            amp[k >= step_at_cycle * N] = 600.0
        x[p] = np.sqrt(2) * amp * np.cos(ang)
        x[p] += ringing * np.sqrt(2) * 1000.0 * np.exp(-t / 0.03) * np.cos(
            2 * np.pi * 7.3 * F0 * t + 1.1 * p)
    return x


def _window():
    return Window(start_index=0, end_index=3 * N - 1, start_s=0.0, end_s=(3 * N - 1) / FS)


def test_aliased_ringing_keeps_the_steady_window_and_the_location():
    # simulated A-G fault at 90 % of VM-CR1 at the voltage peak, recorded at 20
    # samples a cycle without an anti-aliasing filter: the line's ringing aliases
    # into the first cycle of the fault.  Before the one-state test that first cycle
    # seemed to depart, VELLMOOR's window was cut to one cycle and the two-ended
    # answer was 3.6 % of the line off (truth: the simulation's fault position)
    model = load_model(ROOT / "models" / "northmarch_230kv.toml")
    line = "VM-CR1"
    sim = simulate(model, SimulationSpec(
        line=line, fraction=0.9, type="AG", r_fault_ohm=0.0, inception_s=0.1,
        inception_angle_deg=90.0, relay_time_s=0.03, clear_after_s=0.08, duration_s=0.25,
        samples_per_cycle=20, noise=0.0, seed=3))
    recs = [sim.records[t.id] for t in model.terminals_of_line(line)]
    an = analyze(recs)
    for t in an.terminals:
        w = t.timeline.intervals[0].fault
        assert w.end_index - w.start_index + 1 >= 2.5 * 20
    rep = locate_analysis(an, recs, model, line)[0]
    length = model.line(line).length_km
    assert abs(rep.distance_km - 0.9 * length) <= 0.005 * length


def test_a_change_of_state_still_ends_the_window():
    x = _currents(ringing=0.0, step_at_cycle=1.6)
    length, _, dep = _steady_length(x, _window(), N, FS, None)
    assert dep is not None and length < 1.6 * N


def test_a_change_of_state_under_ringing_still_ends_the_window():
    x = _currents(ringing=0.05, step_at_cycle=1.6)
    length, _, dep = _steady_length(x, _window(), N, FS, None)
    assert dep is not None and length < 1.6 * N
