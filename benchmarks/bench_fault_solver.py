"""Speed of one shunt-fault solve against power-grid-model's short-circuit calculation.

The location fit calls :func:`eventlab.network.faults.solve_fault` hundreds of
times, each at a new fault position.  This script times, best of 5 runs of
N solves each, on the issue's two-source 230 kV line (models/example_230kv.toml):

* baseline: power-grid-model 1.12 (PyPI ``power-grid-model``, C++ core),
  building the same network with the fault point as an auxiliary node and
  calling ``calculate_short_circuit`` once per position (model construction
  included, because each position is a new network for it too);
* eventlab: ``solve_fault`` at the same positions on a fresh model variant
  each time (``dataclasses.replace``, as a fit that also scales a source does),
  and on one model (cached pre-fault pieces).

It checks that the fault currents agree within 0.1 % and prints the times per
solve and the ratio baseline / eventlab.  Goal from the issue: about 1 ms or
less per solve.

Run: ``python benchmarks/bench_fault_solver.py [--n 300]``.
"""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

import numpy as np
from _timing import best_of  # benchmarks/_timing.py
from power_grid_model import (
    ComponentType,
    DatasetType,
    FaultPhase,
    FaultType,
    PowerGridModel,
    ShortCircuitVoltageScaling,
    initialize_array,
)

from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import load_model

MODEL = Path(__file__).resolve().parents[1] / "models" / "example_230kv.toml"


def pgm_solve(model, m: float) -> complex:
    u = model.bus("WEST").kv * 1e3
    ln = model.line("L1")
    node = initialize_array(DatasetType.input, ComponentType.node, 3)
    node["id"] = [1, 2, 3]
    node["u_rated"] = u
    line = initialize_array(DatasetType.input, ComponentType.line, 2)
    line["id"] = [10, 11]
    line["from_node"], line["to_node"] = [1, 3], [3, 2]
    line["from_status"] = line["to_status"] = 1
    z1, z0 = ln.z1_ohm, ln.z0_ohm
    for i, share in enumerate((m, 1 - m)):
        line["r1"][i], line["x1"][i] = z1.real * share, z1.imag * share
        line["r0"][i], line["x0"][i] = z0.real * share, z0.imag * share
    line["c1"] = line["c0"] = line["tan1"] = line["tan0"] = 0.0
    line["i_n"] = 1e3
    src = initialize_array(DatasetType.input, ComponentType.source, 2)
    src["id"], src["node"], src["status"] = [20, 21], [1, 2], 1
    src["u_ref"], src["u_ref_angle"] = 1.0, 0.0
    zs = [s.z1_ohm for s in model.sources]
    src["sk"] = [u * u / abs(z) for z in zs]
    src["rx_ratio"] = [z.real / z.imag for z in zs]
    # power-grid-model takes a real Z0/Z1 factor; use |Z0|/|Z1| (the check below uses AG
    # against our model with that same source Z0)
    src["z01_ratio"] = [abs(s.z0_ohm) / abs(s.z1_ohm) for s in model.sources]
    f = initialize_array(DatasetType.input, ComponentType.fault, 1)
    f["id"], f["status"], f["fault_object"] = [30], 1, [3]
    f["fault_type"], f["fault_phase"] = FaultType.single_phase_to_ground, FaultPhase.a
    f["r_f"], f["x_f"] = 0.0, 0.0
    out = PowerGridModel({"node": node, "line": line, "source": src, "fault": f},
                         system_frequency=model.system.frequency_hz).calculate_short_circuit(
        short_circuit_voltage_scaling=ShortCircuitVoltageScaling.minimum)
    return out["fault"]["i_f"][0, 0] * np.exp(1j * out["fault"]["i_f_angle"][0, 0])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=300, help="solves per run")
    n = ap.parse_args().n
    model = load_model(MODEL)
    # the same source Z0 angle as Z1, so that power-grid-model's real z01_ratio fits
    srcs = tuple(dataclasses.replace(s, z0_ohm=s.z1_ohm * abs(s.z0_ohm) / abs(s.z1_ohm))
                 for s in model.sources)
    model = dataclasses.replace(model, sources=srcs)
    ms = np.linspace(0.01, 0.99, n)

    for m in (0.2, 0.7):
        ours = solve_fault(model, FaultSpec("L1", m, "AG")).fault.i_abc[0]
        ref = pgm_solve(model, m)
        assert abs(ours / ref - 1) < 1e-3, (m, ours, ref)

    t_pgm, _ = best_of(lambda: [pgm_solve(model, m) for m in ms], repeat=5)
    t_fresh, _ = best_of(lambda: [solve_fault(dataclasses.replace(model), FaultSpec("L1", m, "AG"))
                               for m in ms], repeat=5)
    t_warm, _ = best_of(lambda: [solve_fault(model, FaultSpec("L1", m, "AG")) for m in ms],
                        repeat=5)
    print(f"{n} solves at different positions on {MODEL.name}")
    print(f"  power-grid-model calculate_short_circuit : {t_pgm / n * 1e3:8.3f} ms per solve")
    print(f"  eventlab solve_fault, fresh model        : {t_fresh / n * 1e3:8.3f} ms per solve "
          f"(ratio baseline/eventlab {t_pgm / t_fresh:5.2f})")
    print(f"  eventlab solve_fault, same model         : {t_warm / n * 1e3:8.3f} ms per solve "
          f"(ratio baseline/eventlab {t_pgm / t_warm:5.2f})")


if __name__ == "__main__":
    main()
