"""Robustness sweep of eventlab.analysis.analyze on spoilt two-ended records.

Made with eventlab 0.1.0.  Random events of ``bench_location_random.py`` (the
made-up line VM-CR1, sources off the model file by random factors), each
record pair spoilt the ways instrument transformers and recorders spoil them:
a CT set reversed, one phase reversed, two phases swapped, a CT ratio off by
0.5-2, a VT ratio off by 0.85-1.15, a clock shifted, the record cut short
after inception, IB missing (two CTs and the residual), line-to-line voltages
only, the records given in the other order.  Each case is classed OK (within
1 % of the line, or refused or left out with a warning), CONFIDENT-WRONG (off
by more than 2 % with the truth outside the interval), CRASH (an exception),
or OTHER.

Run from the repository root::

    python benchmarks/bench_spoilt_records.py --seeds $(seq 21 40) --per-seed 5
Each event (draw(np.random.default_rng(seed), base), draw index k = k-th call
on that rng) is simulated once and analysed under all 11 spoilings.  The
spoiling parameters come from np.random.default_rng([seed, k, spoil_no]).
Writes results.jsonl and prints a summary.
"""
import argparse
import dataclasses
import json
import sys
import time
import traceback
from collections import Counter, defaultdict
from datetime import timedelta
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
import numpy as np
from bench_location_random import draw

from eventlab.analysis import analyze
from eventlab.network.model import load_model
from eventlab.network.simulate import simulate
from eventlab.records.model import RateSegment, frozen_array

LINE = 'VM-CR1'
SPOILS = ['none', 'ct_negated', 'phase_negated', 'swap_IB_IC', 'ct_ratio', 'vt_ratio',
          'time_shift', 'cut', 'no_IB', 'line_to_line', 'records_swapped']
CUR = ('IA', 'IB', 'IC', 'IN')
VOL = ('VA', 'VB', 'VC')


def _ch(ch, values, **kw):
    return dataclasses.replace(ch, values=frozen_array(values, np.float64), **kw)


def scale(rec, names, f):
    return dataclasses.replace(rec, analog=tuple(
        _ch(c, c.values * f) if c.name in names else c for c in rec.analog))


def renumber(chs):
    return tuple(dataclasses.replace(c, index=i + 1) for i, c in enumerate(chs))


def factor_outside(rng, lo, hi, ilo, ihi):
    while True:
        f = float(rng.uniform(lo, hi))
        if not (ilo <= f <= ihi):
            return f


def spoil(name, recs, rng, inception_s, f_hz):
    """Returns (records, which record index spoilt or None, params dict)."""
    recs = list(recs)
    if name == 'none':
        return recs, None, {}
    if name == 'records_swapped':
        return recs[::-1], None, {}
    k = int(rng.integers(2))
    r = recs[k]
    p = {}
    if name == 'ct_negated':
        r = scale(r, CUR, -1.0)
    elif name == 'phase_negated':
        ph = ('IA', 'IB', 'IC')[int(rng.integers(3))]
        p['phase'] = ph
        r = scale(r, (ph,), -1.0)
    elif name == 'swap_IB_IC':
        ib, ic = r.analog_by_name('IB'), r.analog_by_name('IC')
        r = dataclasses.replace(r, analog=tuple(
            _ch(c, ic.values) if c.name == 'IB' else _ch(c, ib.values) if c.name == 'IC' else c
            for c in r.analog))
    elif name == 'ct_ratio':
        f = factor_outside(rng, 0.5, 2.0, 0.9, 1.1)
        p['factor'] = round(f, 4)
        r = scale(r, CUR, f)
    elif name == 'vt_ratio':
        f = factor_outside(rng, 0.85, 1.15, 0.97, 1.03)
        p['factor'] = round(f, 4)
        r = scale(r, VOL, f)
    elif name == 'time_shift':
        ms = float(rng.uniform(1, 80)) * (1 if rng.integers(2) else -1)
        ms = round(ms, 3)
        p['shift_ms'] = ms
        r = dataclasses.replace(r, start=r.start + timedelta(milliseconds=ms))
    elif name == 'cut':
        cyc = round(float(rng.uniform(0.5, 3.0)), 3)
        p['cycles_after_inception'] = cyc
        t_end = inception_s + cyc / f_hz
        n = int(np.searchsorted(r.time, t_end, side='right'))
        p['n_samples'] = n
        samp = r.rates[0].samp_hz
        r = dataclasses.replace(
            r, time=frozen_array(r.time[:n], np.float64),
            analog=tuple(_ch(c, c.values[:n]) for c in r.analog),
            status=tuple(dataclasses.replace(s, values=frozen_array(s.values[:n], s.values.dtype))
                         for s in r.status),
            rates=(RateSegment(samp, n),))
    elif name == 'no_IB':
        r = dataclasses.replace(r, analog=renumber(c for c in r.analog if c.name != 'IB'))
    elif name == 'line_to_line':
        v = {c.name: c for c in r.analog}
        ll = {'VA': ('VAB', v['VA'].values - v['VB'].values),
              'VB': ('VBC', v['VB'].values - v['VC'].values),
              'VC': ('VCA', v['VC'].values - v['VA'].values)}
        r = dataclasses.replace(r, analog=tuple(
            _ch(c, ll[c.name][1], name=ll[c.name][0], phase='') if c.name in ll else c
            for c in r.analog))
    else:
        raise ValueError(name)
    recs[k] = r
    return recs, k, p


def classify(row, length):
    if row['exception']:
        return 'CRASH'
    if row['located']:
        e = row['err_pct']
        if e <= 1.0:
            return 'OK'
        if e > 2.0 and not row['in_interval']:
            return 'CONFIDENT-WRONG'
        return 'OTHER'
    # not located
    if row['spoil'] == 'none':
        return 'OTHER'          # refusing an unspoilt event is not a correct refusal
    return 'OK' if row['loc_warning'] else 'OTHER'


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument('--seeds', type=int, nargs='+', default=[11, 12, 13])
    ap.add_argument('--per-seed', type=int, default=5)
    ap.add_argument('--out', default=None, help='write one JSON line per case here')
    a = ap.parse_args()
    base = load_model(Path(__file__).resolve().parent.parent / 'models' / 'northmarch_230kv.toml')
    length = base.line(LINE).length_km
    f_hz = base.system.frequency_hz
    tids = [t.id for t in base.terminals_of_line(LINE)]
    rows = []
    t0 = time.perf_counter()
    import contextlib
    import io
    with (open(a.out, 'w') if a.out else contextlib.nullcontext(io.StringIO())) as fo:
        for seed in a.seeds:
            rng = np.random.default_rng(seed)
            for k in range(a.per_seed):
                truth_m, spec = draw(rng, base)
                res = simulate(truth_m, spec)
                tr = res.truth
                recs0 = [res.records[t] for t in tids]
                for j, sp in enumerate(SPOILS):
                    srng = np.random.default_rng([seed, k, j])
                    recs, which, params = spoil(sp, recs0, srng, tr.inception_s, f_hz)
                    first_tid = tids[::-1][0] if sp == 'records_swapped' else tids[0]
                    d_true = tr.distance_from_km[first_tid]
                    row = dict(seed=seed, draw=k, spoil=sp, spoilt_record=which, params=params,
                               type=tr.type, fraction=round(spec.fraction, 4),
                               rf=round(spec.r_fault_ohm, 2), rg=round(spec.r_ground_ohm, 2),
                               spc=spec.samples_per_cycle, inception_s=tr.inception_s,
                               d_true_km=d_true, exception=None, located=False)
                    try:
                        an = analyze(recs, model=base)
                    except Exception as exc:  # a traceback is a bug
                        row['exception'] = f'{type(exc).__name__}: {exc}'
                        row['traceback'] = traceback.format_exc()
                    else:
                        row['fault_type'] = an.fault_type
                        row['warnings'] = list(an.warnings)
                        row['loc_warning'] = next((w for w in an.warnings
                                                   if w.startswith('location:')), None)
                        loc = an.location
                        if loc is not None:
                            row['located'] = True
                            row['distance_km'] = loc.distance_km
                            row['interval_km'] = list(loc.interval_km)
                            row['method'] = loc.best.method
                            row['ref_terminal'] = loc.reference_terminal
                            row['err_pct'] = 100 * abs(loc.distance_km - d_true) / length
                            lo, hi = loc.interval_km
                            row['in_interval'] = bool(lo - 1e-9 <= d_true <= hi + 1e-9)
                    row['cls'] = classify(row, length)
                    rows.append(row)
                    fo.write(json.dumps(row) + '\n')
                    fo.flush()
                print(f'seed {seed} draw {k} {tr.type} f={spec.fraction:.3f} spc={spec.samples_per_cycle}: '
                      + ' '.join(f"{r['spoil']}={r['cls']}" for r in rows[-len(SPOILS):]),
                      f'[{time.perf_counter() - t0:.0f} s]', flush=True)
    cnt = defaultdict(Counter)
    for r in rows:
        cnt[r['spoil']][r['cls']] += 1
    classes = ['OK', 'CONFIDENT-WRONG', 'CRASH', 'OTHER']
    print('| spoiling | ' + ' | '.join(classes) + ' |')
    for sp in SPOILS:
        print(f'| {sp} | ' + ' | '.join(str(cnt[sp][c]) for c in classes) + ' |')
    print(f'{len(rows)} cases, {time.perf_counter() - t0:.0f} s')


if __name__ == '__main__':
    main()
