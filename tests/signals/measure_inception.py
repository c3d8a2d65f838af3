"""Print inception errors and classification over noise, angles, rates and fault resistance.

Run from the repository root: ``python -m tests.signals.measure_inception [--quick]``.  Not collected by
pytest (no ``test_`` prefix); the tests in ``test_robustness.py`` check a
subset.  Noise: Gaussian, standard deviation = level x rated peak (voltage
``sqrt(2) V_ln``, current ``sqrt(2) 1000 A``), seeded.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from eventlab.faulttypes import FAULT_TYPES

from .faultwaves import System, fault_event
from .inception_cases import inception_instants, timeline_of


def main(quick: bool = False, t0: float = 0.05):
    s = System()
    incs = inception_instants(s, t0)
    seeds = range(3 if quick else 5)
    rows = []
    for noise in (0.0, 0.005, 0.01, 0.02):
        for n in ((64,) if quick else (16, 32, 64, 128, 256)):
            for rf in (0.0, 20.0, 60.0, 100.0):
                errs, wrong, cnt = [], [], 0
                for ftype in FAULT_TYPES:
                    for name, ti in incs.items():
                        for seed in (seeds if noise > 0 else (0,)):
                            e = fault_event(ftype, ti, noise=noise, seed=seed,
                                            samples_per_cycle=n, r_fault_ohm=rf,
                                            duration_s=0.3 + (ti - 0.05))
                            tl = timeline_of(e)
                            cnt += 1
                            if tl.inception_s is None:
                                errs.append(np.inf)
                            else:
                                errs.append(abs(tl.inception_s - ti))
                            if tl.fault_type != ftype:
                                wrong.append((ftype, name, seed, tl.fault_type))
                errs = np.array(errs) * 1e3
                rows.append((noise, n, rf, cnt, np.max(errs), np.percentile(errs, 95),
                             len(wrong)))
                print(f"noise {100 * noise:4.1f} %  N {n:3d}  Rf {rf:4.0f} ohm  cases {cnt:4d}  "
                      f"max {np.max(errs):7.3f} ms  p95 {np.percentile(errs, 95):6.3f} ms  "
                      f"<=0.5 ms {100 * np.mean(errs <= 0.5):5.1f} %  "
                      f"dt {1e3 / (n * 60):.3f} ms  wrong type {len(wrong)} "
                      f"{wrong[:4]}", flush=True)
    return rows


if __name__ == "__main__":
    t0 = time.perf_counter()
    # --late: inception after six cycles of pre-fault data instead of three
    main("--quick" in sys.argv, 0.1 if "--late" in sys.argv else 0.05)
    print(f"{time.perf_counter() - t0:.1f} s")
