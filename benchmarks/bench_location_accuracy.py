"""Accuracy of the fault locators on time-domain simulated records with known truth.

Made with eventlab 0.1.0: records from :func:`eventlab.network.simulate.simulate`
(the made-up Northmarch 230 kV line VM-CR1, 96.4 km, with line capacitance),
phasors from the signal chain (:func:`eventlab.analysis.analyze`), location by
the analysis's location step (:func:`eventlab.analysis.locate_analysis`, what
``eventlab analyze --model`` gives).

Case grid: every fault type; remote infeed strong (model as written) and weak
(remote source impedance x 4); pre-fault load exported and imported at
VELLMOOR; fault resistance 0 to 50 ohm for ground faults (0 to 5 ohm for
phase faults); 16 to 256 samples per cycle; fault positions 10 % to 90 %;
several points on wave; 0.1 % noise; the recorder's anti-aliasing filter
(cut-off 0.3 x the sampling rate).  The sampling rate and the fault position
step together through the grid (16 samples per cycle always at 10 %, ... 256
always at 90 %), so a worst case at 256 samples per cycle is also a fault
near the far end; read the two together.  Each case is located twice: with the true model and
with a perturbed model (remote source 30 % weaker, local source 15 % stronger,
line Z0 5 % higher than the truth).

Run from the repository root::

    python benchmarks/bench_location_accuracy.py --quick   # < 2 minutes
    python benchmarks/bench_location_accuracy.py           # full grid

Each case is also located, single-ended, on the fault solver's exact
phasors for the same fault ("on solver phasors"): with the true model that
is zero by construction, with the perturbed model it is the floor a model
error sets for one end whatever the signal processing (for a single-phase
fault the line's Z0 cannot be told from the distance at one end).  The
single-ended answer is also broken down by fault kind.

Speed: the time per call of the whole location step
(:func:`eventlab.analysis.locate_analysis`: the checks on each end, then
:func:`locate_event`) is printed as a ratio against the simple reactance
method on the same phasors (baseline), both measured in this run.
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

from eventlab.analysis import analyze, locate_analysis  # noqa: E402
from eventlab.faulttypes import FAULT_TYPES, involves_ground  # noqa: E402
from eventlab.locate import locate_event  # noqa: E402
from eventlab.locate.inputs import from_fault_interval  # noqa: E402
from eventlab.locate.model_link import line_from, pair_ends, phasors_from_solution  # noqa: E402
from eventlab.locate.single_ended import reactance  # noqa: E402
from eventlab.network.emt_cvt import Cvt  # noqa: E402
from eventlab.network.faults import FaultSpec, solve_fault  # noqa: E402
from eventlab.network.model import load_model, with_source  # noqa: E402
from eventlab.network.simulate import SimulationSpec, simulate  # noqa: E402

LINE = "VM-CR1"
LOCAL, REMOTE = "VELLMOOR", "CARDON_REACH"
#: recorder anti-aliasing cut-off as a fraction of the sampling rate
#: (2nd-order Butterworth in the simulator; common practice, no source)
AA_FRACTION = 0.3


def perturbed(model):
    """Remote source 30 % weaker, local 15 % stronger, line Z0 5 % higher."""
    m = with_source(model, REMOTE, z_scale=1 / 0.70)
    m = with_source(m, LOCAL, z_scale=1 / 1.15)
    lines = tuple(dataclasses.replace(ln, sections=tuple(dataclasses.replace(
        s, z0_ohm_per_km=s.z0_ohm_per_km * 1.05) for s in ln.sections)) if ln.id == LINE else ln
        for ln in m.lines)
    return dataclasses.replace(m, lines=lines)


def grid(quick: bool):
    spcs = (16, 32, 64, 128, 256)
    fractions = (0.1, 0.3, 0.5, 0.7, 0.9)
    angles = (0.0, 45.0, 90.0)
    k = 0
    for code in FAULT_TYPES:
        rfs = (0.0, 10.0, 25.0, 50.0) if involves_ground(code) else (0.0, 5.0)
        for infeed in ("strong", "weak"):
            for load in ("export", "import"):
                chosen_rf = [rfs[k % len(rfs)]] if quick else list(rfs)
                for rf in chosen_rf:
                    chosen_spc = [spcs[k % len(spcs)]] if quick else list(spcs)
                    for spc in chosen_spc:
                        yield dict(code=code, infeed=infeed, load=load, rf=rf, spc=spc,
                                   fraction=fractions[k % len(fractions)],
                                   angle=angles[k % len(angles)])
                        k += 1


def case_model(base, infeed, load):
    m = base
    if infeed == "weak":
        m = with_source(m, REMOTE, z_scale=4.0)
    if load == "import":
        m = with_source(m, REMOTE, angle_deg=+12.0)
    return m


def ends_of(records, model):
    """Each end's phasors, and the location ``eventlab analyze`` gives.

    Returns ``(ends, locate)``: the ends as the analysis hands them to the
    locators (each record alone), and ``locate(model, both)``, the location
    from the first record alone (``both`` False) or from both, by the
    analysis's own location step (:func:`eventlab.analysis.locate_analysis`:
    the checks on each end, the pairing, a three-phase fault's stage confirmed
    from the other record), on the signal chain run once.
    """
    recs = [records[t.id] for t in model.terminals_of_line(LINE)]
    an = analyze(recs)
    out = []
    for t in an.terminals:
        rec = recs[t.record]
        out.append(from_fault_interval(
            t.timeline.intervals[0], station=rec.station, frequency_hz=rec.frequency_hz,
            record_start=rec.start, time0_s=float(rec.time[0]),
            samples_per_cycle=an.records[t.record].samples_per_cycle))

    def locate(m, both: bool):
        return locate_analysis(an, recs, m, LINE, use=None if both else (0,))[0]

    return out, locate


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="a subset of the grid (< 2 minutes)")
    ap.add_argument("--remote-delay", type=float, default=0.0, metavar="S",
                    help="sequential clearing: CARDON REACH trips and opens this much later "
                         "than VELLMOOR [s] (negative: earlier; default 0, as in the README)")
    ap.add_argument("--cvt", choices=("active", "passive"), default=None,
                    help="capacitor voltage transformers (eventlab.network.emt_cvt, demo "
                         "parameters) with this suppression circuit instead of ideal VTs")
    args = ap.parse_args(argv)
    base = load_model(ROOT / "models" / "northmarch_230kv.toml")
    length = base.line(LINE).length_km
    f_hz = base.system.frequency_hz
    errs: dict[tuple[str, str], list[float]] = {}
    cover: dict[tuple[str, str], list[bool]] = {}
    worst: dict[tuple[str, str], tuple] = {}
    width: dict[tuple[str, str], list[float]] = {}
    not_located: dict[tuple[str, str], list[dict]] = {}
    t_locate = t_react = 0.0
    n_calls = 0
    cases = list(grid(args.quick))
    t_start = time.perf_counter()
    for c in cases:
        truth_model = case_model(base, c["infeed"], c["load"])
        spec = SimulationSpec(line=LINE, fraction=c["fraction"], type=c["code"],
                              r_fault_ohm=c["rf"], inception_s=0.1,
                              inception_angle_deg=c["angle"], relay_time_s=0.03,
                              clear_after_s=0.08, duration_s=0.25,
                              samples_per_cycle=c["spc"], noise=0.001, seed=7,
                              anti_alias_hz=AA_FRACTION * c["spc"] * f_hz,
                              remote_delay_s=args.remote_delay,
                              cvt=None if args.cvt is None else Cvt(fsc=args.cvt))
        sim = simulate(truth_model, spec)
        d_true = c["fraction"] * length
        ends, locate = ends_of(sim.records, truth_model)
        res = solve_fault(truth_model, FaultSpec(LINE, c["fraction"], c["code"], c["rf"]))
        t_local = truth_model.terminals_of_line(LINE)[0]
        exact = dataclasses.replace(phasors_from_solution(res, truth_model, t_local.id),
                                    terminal_id=None, station=ends[0].station)
        code = c["code"]
        group = ("three-phase" if code == "ABC" else
                 "two-phase-to-ground" if len(code) == 3 else
                 "single-phase-to-ground" if code.endswith("G") else "phase-to-phase")
        for label, model in (("true", truth_model), ("perturbed", perturbed(truth_model))):
            rep = locate_event(model, [exact], line=LINE)
            err = 100 * abs(rep.distance_km - d_true) / length
            errs.setdefault((label, "single-ended answer on solver phasors"), []).append(err)
            for kind in ("single", "two"):
                t0 = time.perf_counter()
                rep = locate(model, kind == "two")
                t_locate += time.perf_counter() - t0
                n_calls += 1
                key = (label, f"{kind}-ended answer")
                if rep is None:
                    not_located.setdefault(key, []).append(c)
                    continue
                pairing = pair_ends(model, ends[:1], LINE)
                ld = line_from(model, LINE, pairing.terminals[0])
                t0 = time.perf_counter()
                reactance(pairing.ends[0], ld)
                t_react += time.perf_counter() - t0
                err = 100 * abs(rep.distance_km - d_true) / length
                errs.setdefault(key, []).append(err)
                if kind == "single":
                    errs.setdefault((label, f"single-ended, {group}"), []).append(err)
                if err > worst.get(key, (-1.0,))[0]:
                    worst[key] = (err, rep.best.method, c)
                lo, hi = rep.interval_km
                cover.setdefault(key, []).append(lo - 1e-9 <= d_true <= hi + 1e-9)
                width.setdefault(key, []).append(100 * (hi - lo) / length)
                for m in rep.methods:
                    if kind == "two" and m.method not in ("two_ended_sync", "two_ended_unsync",
                                                          "model_fit"):
                        continue
                    name = m.method + (" (2 ends)" if kind == "two" and m.method == "model_fit"
                                       else "")
                    err = 100 * abs(m.distance_km - d_true) / length
                    errs.setdefault((label, name), []).append(err)
                    if err > worst.get((label, name), (-1.0,))[0]:
                        worst[(label, name)] = (err, m.method, c)
    elapsed = time.perf_counter() - t_start
    mode = "quick" if args.quick else "full"
    seq = (f", CARDON REACH clearing {1e3 * args.remote_delay:+.0f} ms after VELLMOOR"
           if args.remote_delay else "") + (f", CVTs ({args.cvt} suppression circuit)"
                                            if args.cvt else "")
    print(f"# Location accuracy, {len(cases)} simulated cases ({mode} grid), line {LINE} "
          f"{length} km, anti-aliasing at {AA_FRACTION:g} fs{seq}, {elapsed:.0f} s")
    for label in ("true", "perturbed"):
        print()
        print(f"model: {label}" + (" (remote source 30 % weaker, local 15 % stronger, line Z0 "
                                   "+5 %)" if label == "perturbed" else ""))
        print()
        print("| method | max error [% of line] | 95th percentile [%] | mean error [%] | "
              "truth in interval | mean interval width [%] |")
        print("| --- | --- | --- | --- | --- | --- |")
        order = ["single-ended answer", "single-ended answer on solver phasors",
                 "single-ended, single-phase-to-ground", "single-ended, two-phase-to-ground",
                 "single-ended, phase-to-phase", "single-ended, three-phase",
                 "two-ended answer", "reactance", "takagi",
                 "modified_takagi", "eriksson", "model_fit", "two_ended_sync",
                 "two_ended_unsync", "model_fit (2 ends)"]
        for name in order:
            e = errs.get((label, name))
            if not e:
                continue
            cv = cover.get((label, name))
            cov = f"{100 * np.mean(cv):.1f} %" if cv else "-"
            wd = width.get((label, name))
            wdt = f"{np.mean(wd):.1f}" if wd else "-"
            print(f"| {name} | {max(e):.2f} | {np.percentile(e, 95):.2f} | {np.mean(e):.2f} | "
                  f"{cov} | {wdt} |")
    print()
    for (label, name), (err, method, c) in sorted(worst.items()):
        print(f"worst {name}, {label} model: {err:.2f} % ({method}) in case {c}")
    for (label, name), cs in sorted(not_located.items()):
        print(f"NOT LOCATED: {len(cs)} cases of the {name}, {label} model, e.g. {cs[0]}")
    print()
    print(f"speed: the location step (locate_analysis: checks, all methods, fit, interval, "
          f"comparison) takes "
          f"{t_locate / max(t_react, 1e-12):.0f} x the time of the simple reactance method "
          f"(baseline, same phasors, same run); {1e3 * t_locate / n_calls:.0f} ms per call")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
