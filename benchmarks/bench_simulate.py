"""Speed of the time-domain simulator's step against a per-step nodal solve.

Made with eventlab 0.1.0.  Between switching events the simulator
(:mod:`eventlab.network.emt`) advances the circuit with one matrix-vector
product per step (the companion network collapsed into ``x_n = M x_{n-1} +
Re(w e^{j w t_n})``).  The baseline is the textbook form of the same method
(Dommel 1969): every step, update the history sources, form the nodal
right-hand side and solve ``Y v = i`` with the LU factors of ``Y`` computed
once (``scipy.linalg.lu_factor`` / ``lu_solve``).  Both run the same circuit
(the made-up Northmarch 230 kV line VM-CR1 with its pi sections and a fault
switched in) from the same steady state for the same number of steps; the
script checks that the waveforms agree and prints the time per step of each
and the ratio baseline / eventlab, and the time of a whole ``simulate()``
call for the quick-start record.

Run: ``python benchmarks/bench_simulate.py [--cycles 20]``.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
import scipy.linalg

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from eventlab.network.emt import (  # noqa: E402
    Stepper,
    _incidence,
    companion,
    element_current_index,
    emf_vector,
)
from eventlab.network.model import load_model  # noqa: E402
from eventlab.network.simulate import SimulationSpec, _build, simulate  # noqa: E402


def baseline(circuit, dt, closed, x0, n_steps, watch):
    """Per-step nodal solve with pre-factorised Y (the reference implementation)."""
    a = _incidence(circuit)
    g, p, q = companion(circuit, dt, closed, "trapezoidal")
    lu = scipy.linalg.lu_factor(a @ g @ a.T)
    e_hat = emf_vector(circuit)
    om = 2 * np.pi * circuit.frequency_hz
    nb = g.shape[0]
    vb, ib = x0[:nb].copy(), x0[nb:].copy()
    out = np.empty((watch.size, n_steps))
    for n in range(1, n_steps + 1):
        e = np.real(e_hat * np.exp(1j * om * n * dt))
        h = p @ vb + q @ ib
        v = scipy.linalg.lu_solve(lu, a @ (g @ e - h))
        vb = a.T @ v - e
        ib = g @ vb + h
        out[:, n - 1] = np.concatenate([vb, ib])[watch]
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cycles", type=int, default=20, help="cycles to run (default 20)")
    args = ap.parse_args(argv)
    model = load_model(ROOT / "models" / "northmarch_230kv.toml")
    spec = SimulationSpec(line="VM-CR1", fraction=0.42, type="BG", r_fault_ohm=2.5)
    lay = _build(model, spec, "pi")
    circuit = lay.circuit
    f = model.system.frequency_hz
    dt = 1.0 / (f * 1024)
    n = args.cycles * 1024
    watch = element_current_index(circuit, lay.breakers["VM-CR1@VELLMOOR"])
    # the fault (B to ground through its resistor) switched in from the start
    closed = {lay.fault_groups[0]: (True,), lay.fault_ground[0]: (True,)}

    st = Stepper(circuit, dt, closed, watch, n)
    x0 = st.x.copy()
    t0 = time.perf_counter()
    st.run(n)
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    ref = baseline(circuit, dt, closed, x0, n, watch)
    t_base = time.perf_counter() - t0
    diff = np.abs(st.out[:, 1:] - ref).max() / np.abs(ref).max()

    t0 = time.perf_counter()
    simulate(model, SimulationSpec(line="VM-CR1", fraction=0.42, type="BG", r_fault_ohm=2.5,
                                   duration_s=0.35))
    t_sim = time.perf_counter() - t0

    print(f"# EMT step, Northmarch VM-CR1 circuit: {circuit.n_nodes} nodes, "
          f"{circuit.n_elements} elements, {n} steps ({args.cycles} cycles at 1024/cycle)")
    print(f"baseline (per-step LU solve, scipy): {1e6 * t_base / n:8.2f} us/step")
    print(f"eventlab (collapsed recurrence)    : {1e6 * t_ours / n:8.2f} us/step")
    print(f"ratio baseline / eventlab          : {t_base / t_ours:8.2f}")
    print(f"largest waveform difference        : {diff:.2e} of the peak")
    print(f"whole simulate() of the quick-start record (0.35 s, two terminals): {t_sim:.3f} s")
    return 0 if diff < 1e-6 else 1


if __name__ == "__main__":
    sys.exit(main())
