"""Speed of the whole signal chain against ``comtrade.load`` on the same file.

Generates a fault-recorder file of 16 line terminals (VA VB VC IA IB IC
each, 96 analog channels; terminal L07 has a BG fault at 2.5 s cleared after
about five cycles, the others carry load) and 64 status channels (a trip and
three breaker contacts per terminal), 38,400 samples at 7,680 Hz (5 s of
60 Hz, 128 samples a cycle), written with eventlab's writer as C37.111-1999
BINARY into ``benchmarks/_data/`` (git-ignored).  Then, in the same run,
best of 3:

* baseline: ``comtrade.load(cfg, dat)`` (the PyPI package, its defaults);
* eventlab: ``read_record`` + ``analyze`` (phasors of every analog channel,
  timeline and classification of each of the 16 terminals) + the JSON text.

Prints both times and the ratio chain / baseline (goal: <= 1), and checks
that the chain found the one fault, its type and its inception.

Run: ``python benchmarks/bench_signal_chain.py``.
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import comtrade
import numpy as np
from _timing import best_of  # benchmarks/_timing.py

from eventlab.analysis import analyze
from eventlab.records import make_record, read_record, write_record

RATE_HZ, F0_HZ, N_SAMPLES, N_TERMINALS = 7680.0, 60.0, 38_400, 16
FAULTED, INCEPTION_S, CLEAR_S = 6, 2.5, 2.5 + 5 / 60


def make_recorder_file(seed: int = 0):
    """The 16-terminal record (numpy only: load flow phasors plus one BG fault)."""
    rng = np.random.default_rng(seed)
    t = np.arange(N_SAMPLES) / RATE_HZ
    w = 2 * np.pi * F0_HZ
    shifts = np.array([0.0, -2 * np.pi / 3, 2 * np.pi / 3])
    v_pk, analog, status = 230e3 / np.sqrt(3) * np.sqrt(2), [], []
    for j in range(N_TERMINALS):
        lab = f"L{j + 1:02d}"
        i_pk = rng.uniform(200, 600) * np.sqrt(2)
        phi = rng.uniform(-0.5, 0.5)
        v = v_pk * np.cos(w * t[None, :] + shifts[:, None])
        i = i_pk * np.cos(w * t[None, :] + shifts[:, None] - phi)
        trip = np.zeros(N_SAMPLES)
        bkr = np.ones((3, N_SAMPLES))
        if j == FAULTED:
            k0 = int(INCEPTION_S * RATE_HZ)
            tt = t[k0:] - t[k0]
            tau = 0.03
            i_f = 4000 * np.sqrt(2)
            ang = w * t[k0] + shifts[1] - 1.4
            # phase B: fault current with the offset that keeps it continuous
            i[1, k0:] = (i_f * np.cos(w * t[k0:] + shifts[1] - 1.4)
                         + (i[1, k0] - i_f * np.cos(ang)) * np.exp(-tt / tau))
            v[1, k0:] *= 0.55
            kc = int(CLEAR_S * RATE_HZ)
            # poles open at their next current zero
            for p in range(3):
                x = i[p, kc:]
                z = np.nonzero(np.signbit(x[1:]) != np.signbit(x[:-1]))[0]
                ko = kc + int(z[0]) + 1
                i[p, ko:] = 0.0
                bkr[p, ko:] = 0
            v[1, kc:] = v_pk * np.cos(w * t[kc:] + shifts[1])
            trip[k0 + int(0.02 * RATE_HZ):kc + int(0.03 * RATE_HZ)] = 1
        v = v + rng.normal(scale=0.001 * v_pk, size=v.shape)
        i = i + rng.normal(scale=0.002 * i_pk, size=i.shape)
        for p, ph in enumerate("ABC"):
            analog.append((f"{lab} V{ph}", ph, "V", v[p], lab))
        for p, ph in enumerate("ABC"):
            analog.append((f"{lab} I{ph}", ph, "A", i[p], lab))
        status.append((f"{lab} TRIP", trip, lab))
        for p, ph in enumerate("ABC"):
            status.append((f"{lab} 52A-{ph}", bkr[p], lab))
    return make_record("PELLINGFORD", RATE_HZ, analog, status, frequency_hz=F0_HZ,
                       device="DFR-1")


def chain(cfg: Path) -> tuple[str, object]:
    rec = read_record(cfg)
    a = analyze(rec)
    return json.dumps(a.to_dict()), a


def main() -> int:
    out = Path(__file__).parent / "_data"
    out.mkdir(exist_ok=True)
    paths = write_record(make_recorder_file(), out / "signal_chain_16_terminals",
                         revision=1999, data_format="BINARY")
    cfg = next(p for p in paths if p.suffix == ".cfg")
    dat = next(p for p in paths if p.suffix == ".dat")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t_base, _ = best_of(lambda: comtrade.load(str(cfg), str(dat)))
    t_chain, (text, a) = best_of(lambda: chain(cfg))
    t_read, _ = best_of(lambda: read_record(cfg))
    faulted = [(t.label, t.fault_type, t.timeline.inception_s) for t in a.terminals
               if t.fault_type != "none"]
    print(f"file: {cfg.name} ({dat.stat().st_size / 1e6:.1f} MB BINARY, 96 analog + 64 status, "
          f"{N_SAMPLES} samples at {RATE_HZ:g} Hz)")
    print(f"baseline comtrade.load            : {t_base * 1e3:8.1f} ms")
    print(f"eventlab read+phasors+timeline+JSON: {t_chain * 1e3:8.1f} ms "
          f"(of which read_record {t_read * 1e3:.1f} ms)")
    print(f"ratio chain / comtrade.load       : {t_chain / t_base:8.3f}  (goal <= 1)")
    print(f"terminals analysed: {len(a.terminals)}; faults found: {faulted}; "
          f"JSON {len(text) / 1e3:.0f} kB")
    ok = (len(a.terminals) == N_TERMINALS and len(faulted) == 1 and faulted[0][0] == "L07"
          and faulted[0][1] == "BG" and abs(faulted[0][2] - INCEPTION_S) < 0.5e-3)
    print("check: " + ("the one BG fault on L07 found at its inception" if ok else "FAILED"))
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
