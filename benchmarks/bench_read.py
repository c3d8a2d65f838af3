"""Speed of eventlab's COMTRADE reader against the ``comtrade`` package (PyPI).

Generates a record of 96 analog and 64 status channels, 38,400 samples at
7,680 Hz (the size named in the record-layer issue), writes it with
eventlab's writer as ASCII and BINARY (C37.111-1999) into
``benchmarks/_data/`` (git-ignored), then in the same run times, best of 3:

* baseline: ``comtrade.load(cfg, dat, use_numpy_arrays=True)``;
* eventlab: ``eventlab.records.read_record(cfg, values=<the file's kind>)``;

checks that every analog and status value is identical (against the
package's double-precision load, and its default float32 load after rounding
eventlab's float64 values to float32), and prints the times and the ratio
baseline / eventlab.  Targets from the issue: >= 5x on ASCII, >= 3x on BINARY.

Run: ``python benchmarks/bench_read.py [--samples N]``.
"""

from __future__ import annotations

import argparse
import warnings
from pathlib import Path

import comtrade
import numpy as np
from _timing import best_of  # benchmarks/_timing.py

from eventlab.records import make_record, read_record, write_record

N_ANALOG, N_STATUS, RATE_HZ = 96, 64, 7680.0


def make_big_record(n_samples: int, seed: int = 0):
    rng = np.random.default_rng(seed)
    t = np.arange(n_samples) / RATE_HZ
    analog = []
    for k in range(N_ANALOG):
        is_v = k % 8 < 4
        amp = 190e3 if is_v else 2e3
        phase = "ABCN"[k % 4]
        w = amp * np.sin(2 * np.pi * 60.0 * t - 2 * np.pi / 3 * (k % 3))
        w += rng.normal(scale=amp * 0.01, size=n_samples)
        analog.append((f"L{k // 8 + 1:02d} {'V' if is_v else 'I'}{phase}", phase,
                       "V" if is_v else "A", w, f"L{k // 8 + 1:02d}"))
    status = [(f"S{k + 1:02d}", (rng.random(n_samples) < 0.01).astype(np.uint8))
              for k in range(N_STATUS)]
    return make_record("VELLMOOR", RATE_HZ, analog, status, frequency_hz=60.0)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=38400)
    args = ap.parse_args(argv)
    out = Path(__file__).resolve().parent / "_data"
    out.mkdir(exist_ok=True)
    rec = make_big_record(args.samples)
    ok = True
    for fmt, target in (("ASCII", 5.0), ("BINARY", 3.0)):
        paths = write_record(rec, out / f"bench_{fmt.lower()}", revision=1999, data_format=fmt)
        cfg, dat = str(paths[0]), str(paths[1])
        size_mb = Path(dat).stat().st_size / 1e6
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t_ref, _ = best_of(lambda c=cfg, d=dat: comtrade.load(c, d, use_numpy_arrays=True))
            ref32 = comtrade.load(cfg, dat, use_numpy_arrays=True)
            ref64 = comtrade.load(cfg, dat, use_numpy_arrays=True, use_double_precision=True)
        t_own, _ = best_of(lambda c=cfg: read_record(c, values="primary"))
        own = read_record(cfg, values="primary")
        same = all(np.array_equal(ch.values, ref64.analog[k], equal_nan=True)
                   and np.array_equal(ch.values.astype(np.float32), ref32.analog[k],
                                      equal_nan=True)
                   for k, ch in enumerate(own.analog))
        same &= all(np.array_equal(ch.values, ref64.status[k]) for k, ch in enumerate(own.status))
        same &= np.array_equal(own.time, ref64.time - ref64.time[0])
        ratio = t_ref / t_own
        ok &= same and ratio >= target
        print(f"{fmt:6s} {size_mb:6.1f} MB  comtrade.load {t_ref:7.3f} s  eventlab "
              f"{t_own:7.3f} s  ratio {ratio:5.1f}x (target {target:.0f}x)  "
              f"identical values: {same}")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
