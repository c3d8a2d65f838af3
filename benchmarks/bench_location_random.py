"""Location accuracy on random simulated events, located with the model file as written.

Made with eventlab 0.1.0.  Where ``bench_location_accuracy.py`` walks a
fixed grid, this draws each event at random (seeded): any fault type, any
position from 3 % to 97 % of the made-up line VM-CR1, fault resistance up to
40 ohm (5 ohm for phase faults), Rg up to 5 ohm, 16 to 256 samples per cycle
including rates that are not a power of two (20, 24, 48, 96), any point on
wave, relay and breaker times, the far end clearing up to 20 ms before or
after the near one, 0.2 % noise, the recorder's anti-aliasing filter.  The
network the records come from differs from the model file the locator is
given: the remote source impedance between 0.5 and 4 times the file's, its
angle within +/- 20 deg (load either way), the local source impedance
between 0.6 and 2 times.  The line is as written (its Z0 error is what
``bench_location_accuracy.py`` perturbs).

With ``--sequential`` the far end clears first instead, in zone 1 (15-40
ms), and VELLMOOR in zone 2 (100-350 ms), so the VELLMOOR record holds the
stage fed from that end alone; the ``radial_stage`` method's error is printed
too.

Run from the repository root::

    python benchmarks/bench_location_random.py            # 200 events
    python benchmarks/bench_location_random.py --n 40 --seed 3
    python benchmarks/bench_location_random.py --n 60 --sequential
    python benchmarks/bench_location_random.py --n 60 --sequential --far-fast

Printed: the error of the answer eventlab stands behind
(``location.distance_km``) with one record and with both, in % of the line,
the share of events whose truth lies in the interval, and the simple
reactance method on the same phasors as the baseline.
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_location_accuracy import AA_FRACTION, LINE, ends_of  # noqa: E402

from eventlab.faulttypes import FAULT_TYPES, involves_ground  # noqa: E402
from eventlab.network.model import load_model, with_source  # noqa: E402
from eventlab.network.simulate import SimulationSpec, simulate  # noqa: E402

RATES = (16, 20, 24, 32, 48, 64, 96, 128, 256)


def draw(rng, base, sequential: bool = False, far_fast: bool = False):
    """One random event: (truth model, SimulationSpec).

    The draws for ``sequential`` come after all the others, so the events
    without it stay those of earlier runs with the same seed.
    """
    code = FAULT_TYPES[rng.integers(len(FAULT_TYPES))]
    two_phase_ground = len(code) == 3 and code != "ABC"
    relay = float(rng.uniform(0.015, 0.04))
    truth = with_source(base, "CARDON_REACH", z_scale=float(np.exp(rng.uniform(-0.7, 1.4))),
                        angle_deg=float(rng.uniform(-20.0, 20.0)))
    truth = with_source(truth, "VELLMOOR", z_scale=float(np.exp(rng.uniform(-0.5, 0.7))))
    spc = int(rng.choice(RATES))
    f_hz = base.system.frequency_hz
    spec = SimulationSpec(
        line=LINE, fraction=float(rng.uniform(0.03, 0.97)), type=code,
        r_fault_ohm=float(rng.uniform(0, 40) if involves_ground(code) else rng.uniform(0, 5)),
        r_ground_ohm=float(rng.uniform(0, 5)) if two_phase_ground else 0.0,
        inception_s=0.1, inception_angle_deg=float(rng.uniform(0, 360)), relay_time_s=relay,
        clear_after_s=float(rng.uniform(0.04, 0.09)), duration_s=0.3, samples_per_cycle=spc,
        noise=0.002, seed=int(rng.integers(1 << 16)), anti_alias_hz=AA_FRACTION * spc * f_hz,
        remote_delay_s=max(float(rng.uniform(-0.02, 0.02)), 0.002 - relay))
    if sequential:
        # the far end trips in zone 1 (the relay time drawn above), VELLMOOR in zone 2
        zone2 = float(rng.uniform(0.10, 0.35))
        breaker = float(rng.uniform(0.025, 0.05))
        spec = dataclasses.replace(spec, relay_time_s=zone2, clear_after_s=zone2 + breaker,
                                   remote_delay_s=relay - zone2,
                                   duration_s=spec.inception_s + zone2 + breaker + 0.1)
        if far_fast:
            # the far end trips at once and opens 18-30 ms after inception, inside
            # VELLMOOR's first fault window (this end's breaker time kept)
            far_open = float(rng.uniform(0.018, 0.030))
            spec = dataclasses.replace(spec, clear_after_s=zone2 + far_open,
                                       remote_delay_s=-zone2)
    return truth, spec


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=200, help="number of events (default 200)")
    ap.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    ap.add_argument("--sequential", action="store_true",
                    help="the far end clears first (zone 1), VELLMOOR in zone 2")
    ap.add_argument("--far-fast", action="store_true",
                    help="with --sequential: the far end opens 18-30 ms after inception")
    args = ap.parse_args(argv)
    base = load_model(ROOT / "models" / "northmarch_230kv.toml")
    length = base.line(LINE).length_km
    rng = np.random.default_rng(args.seed)
    err: dict[str, list[float]] = {"single": [], "two": [], "reactance": [],
                                   "radial_stage": []}
    cover: dict[str, list[bool]] = {"single": [], "two": []}
    worst: dict[str, tuple] = {}
    not_located: list[tuple] = []
    t0 = time.perf_counter()
    for _ in range(args.n):
        truth, spec = draw(rng, base, args.sequential, args.far_fast)
        _, locate = ends_of(simulate(truth, spec).records, truth)
        d = spec.fraction * length
        for kind in ("single", "two"):
            rep = locate(base, kind == "two")
            if rep is None:
                not_located.append((kind, spec.type, round(spec.fraction, 3)))
                continue
            e = 100.0 * abs(rep.distance_km - d) / length
            err[kind].append(e)
            lo, hi = rep.interval_km
            cover[kind].append(lo - 1e-9 <= d <= hi + 1e-9)
            if e > worst.get(kind, (-1.0,))[0]:
                worst[kind] = (e, rep.best.method, spec.type, round(spec.fraction, 3),
                               round(spec.r_fault_ohm, 1), spec.samples_per_cycle)
            if kind == "single":
                for name in ("reactance", "radial_stage"):
                    r = next((m for m in rep.methods if m.method == name), None)
                    if r is not None:
                        err[name].append(100.0 * abs(r.distance_km - d) / length)
    print(f"# Location on {args.n} random events (seed {args.seed}), line {LINE} {length} km, "
          f"model file as written (sources off by random factors)"
          + (", far end clearing first (zone 1), VELLMOOR in zone 2" if args.sequential
             else "") + ", "
          f"{time.perf_counter() - t0:.0f} s")
    print()
    print("| answer | max error [% of line] | 95th percentile [%] | mean [%] | truth in interval |")
    print("| --- | --- | --- | --- | --- |")
    for kind, label in (("single", "single-ended answer"), ("two", "two-ended answer"),
                        ("reactance", "reactance (baseline)"),
                        ("radial_stage", "radial_stage (stage with the far end open)")):
        e = np.array(err[kind])
        if not e.size:
            continue
        label += f" ({e.size} of {args.n})" if e.size < args.n else ""
        cv = f"{100 * np.mean(cover[kind]):.1f} %" if kind in cover else "-"
        print(f"| {label} | {e.max():.2f} | {np.percentile(e, 95):.2f} | {e.mean():.2f} | {cv} |")
    print()
    if not_located:
        print(f"NOT LOCATED: {len(not_located)} (kind, type, fraction): {not_located[:5]}")
    for kind, w in worst.items():
        print(f"worst {kind}-ended: {w[0]:.2f} % ({w[1]}) for {w[2]} at {w[3]} of the line, "
              f"Rf {w[4]} ohm, {w[5]} samples per cycle")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
