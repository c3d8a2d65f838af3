"""Generate the demo records in sample_events/ and the structure lists in models/.

Made with eventlab 0.1.0 (``eventlab.network.simulate``, the time-domain
engine of ``eventlab.network.emt``), numpy and the eventlab COMTRADE writer.
Everything is deterministic: fixed seeds, fixed record start times.  Run from
the repository root::

    python sample_events/make_samples.py              # records only
    python sample_events/make_samples.py --structures # also rewrite the CSVs

The scenario is made up: Northmarch Grid Cooperative (230 kV line VM-CR1,
132 kV line CR-PF1) and the 50 Hz island utility Orrin Isle Power (110 kV
line OR-HF1).  sample_events/README.md describes each event and its truth.
"""

from __future__ import annotations

import argparse
import csv
import math
import shutil
import sys
from dataclasses import dataclass, replace
from datetime import datetime
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from eventlab.network.emt_ct import CtSaturation  # noqa: E402
from eventlab.network.model import load_model  # noqa: E402
from eventlab.network.simulate import (  # noqa: E402
    LoadStep,
    SimulationSpec,
    simulate,
    write_simulation,
)

MODELS = ROOT / "models"
OUT = ROOT / "sample_events"


@dataclass(frozen=True)
class Event:
    folder: str
    model: str
    spec: SimulationSpec
    data_format: str = "BINARY"
    revision: int = 1999
    single_file: bool = False
    notes: str = ""


def _start(day: int, hh: int, mm: int, ss: int, us: int) -> datetime:
    return datetime(2025, 3, day, hh, mm, ss, us)


def events() -> list[Event]:
    """The demo events (each a folder of records and truth.json)."""
    m230 = "northmarch_230kv.toml"
    return [
        Event("vm_cr1_bg", m230, SimulationSpec(
            line="VM-CR1", fraction=0.42, type="BG", r_fault_ohm=2.5, inception_s=0.1,
            inception_angle_deg=35.0, relay_time_s=0.024, clear_after_s=0.072,
            duration_s=0.35, noise=0.001, seed=11, start=_start(14, 2, 17, 5, 120000)),
            notes="two-ended pair: B-phase to ground, 2.5 ohm, 40.5 km from VELLMOOR"),
        Event("vm_cr1_ag_hr", m230, SimulationSpec(
            line="VM-CR1", fraction=0.76, type="AG", r_fault_ohm=40.0, inception_s=0.1,
            inception_angle_deg=90.0, relay_time_s=0.045, clear_after_s=0.095,
            duration_s=0.4, noise=0.001, seed=12, start=_start(15, 11, 42, 31, 480000)),
            notes="high-resistance (40 ohm) A-phase to ground near CARDON REACH, strong "
                  "remote infeed and 150 MW load flow"),
        Event("vm_cr1_bc", m230, SimulationSpec(
            line="VM-CR1", fraction=0.30, type="BC", r_fault_ohm=1.0, inception_s=0.08,
            relay_time_s=0.022, clear_after_s=0.070, duration_s=0.3, samples_per_cycle=32,
            noise=0.001, seed=13, start=_start(16, 6, 3, 12, 5000)),
            data_format="ASCII", notes="phase-to-phase B-C, ASCII data file"),
        Event("vm_cr1_cag", m230, SimulationSpec(
            line="VM-CR1", fraction=0.55, type="CAG", r_fault_ohm=0.5, r_ground_ohm=5.0,
            inception_s=0.1, relay_time_s=0.023, clear_after_s=0.071, duration_s=0.35,
            noise=0.001, seed=14, start=_start(17, 19, 55, 0, 700000)),
            revision=2013, single_file=True,
            notes="two-phase to ground C-A, as one 2013 .cff file per terminal"),
        Event("vm_cr1_abc", m230, SimulationSpec(
            line="VM-CR1", fraction=0.20, type="ABC", r_fault_ohm=0.5, inception_s=0.1,
            relay_time_s=0.020, clear_after_s=0.068, duration_s=0.35, noise=0.001, seed=15,
            start=_start(18, 8, 9, 44, 250000)),
            data_format="FLOAT32", revision=2013,
            notes="three-phase fault, FLOAT32 data (revision 2013)"),
        Event("vm_cr1_evolving", m230, SimulationSpec(
            line="VM-CR1", fraction=0.60, type="AG", r_fault_ohm=1.0, evolve_to="ABG",
            evolve_after_s=0.030, inception_s=0.1, inception_angle_deg=60.0,
            relay_time_s=0.025, clear_after_s=0.075, duration_s=0.35, noise=0.001, seed=16,
            start=_start(19, 14, 30, 2, 900000)),
            notes="evolving fault: A-G becomes A-B-G 30 ms later"),
        Event("vm_cr1_reclose", m230, SimulationSpec(
            line="VM-CR1", fraction=0.35, type="BG", r_fault_ohm=0.8, inception_s=0.08,
            relay_time_s=0.022, clear_after_s=0.070, reclose_after_s=0.40, permanent=True,
            duration_s=0.85, samples_per_cycle=32, noise=0.001, seed=17,
            start=_start(20, 3, 12, 50, 10000)),
            notes="reclose onto a permanent B-G fault after a 0.40 s dead time; trips again"),
        Event("vm_cr1_single_pole", m230, SimulationSpec(
            line="VM-CR1", fraction=0.66, type="CG", r_fault_ohm=1.2, inception_s=0.08,
            relay_time_s=0.022, clear_after_s=0.070, single_pole=True, reclose_after_s=0.45,
            permanent=False, duration_s=0.8, samples_per_cycle=32, noise=0.001, seed=22,
            start=_start(25, 4, 51, 9, 440000)),
            notes="temporary C-G: pole C opens at both ends, recloses after 0.45 s, "
                  "the line stays in service"),
        Event("vm_cr1_load_step", m230, SimulationSpec(
            line="VM-CR1", fraction=0.0, type="none", inception_s=0.1,
            load_step=LoadStep(bus="CARDON_REACH", p_mw=120.0, q_mvar=40.0, at_s=0.12),
            duration_s=0.35, noise=0.001, seed=18, start=_start(21, 17, 0, 0, 0)),
            notes="no fault: a 120 MW / 40 Mvar load is switched in at CARDON REACH"),
        Event("vm_cr1_ct_saturation", m230, SimulationSpec(
            line="VM-CR1", fraction=0.06, type="AG", r_fault_ohm=0.3, inception_s=0.1,
            inception_angle_deg=0.0, relay_time_s=0.020, clear_after_s=0.085,
            duration_s=0.35, ct_ratio=(600.0, 5.0),
            ct_saturation=CtSaturation(knee_voltage_v=200.0, burden_ohm=2.5,
                                       magnetising_current_a=0.05),
            ct_saturation_at=("VELLMOOR-VM-CR1",), noise=0.001, seed=19,
            start=_start(22, 9, 48, 13, 330000)),
            notes="close-in A-G at VELLMOOR with full offset; the VELLMOOR CT (600/5) saturates"),
        Event("vm_cr1_sequential", m230, SimulationSpec(
            line="VM-CR1", fraction=0.88, type="AG", r_fault_ohm=15.0, inception_s=0.1,
            inception_angle_deg=70.0, relay_time_s=0.350, clear_after_s=0.400,
            remote_delay_s=-0.328, duration_s=0.62, noise=0.001, seed=23,
            start=_start(26, 16, 7, 38, 820000)),
            notes="sequential clearing: A-G 15 ohm near CARDON REACH, which trips in zone 1 "
                  "(22 ms); VELLMOOR trips in zone 2 (350 ms) and feeds the fault alone "
                  "in between"),
        Event("or_hf1_ag", "orrin_isle_110kv.toml", SimulationSpec(
            line="OR-HF1", fraction=0.48, type="AG", r_fault_ohm=4.0, inception_s=0.1,
            relay_time_s=0.030, clear_after_s=0.090, duration_s=0.4, noise=0.001, seed=20,
            start=_start(23, 21, 4, 7, 600000)),
            notes="50 Hz island system: A-G 4 ohm, 15.0 km from ORRINSBY"),
        Event("cr_pf1_bg", "northmarch_132kv.toml", SimulationSpec(
            line="CR-PF1", fraction=0.74, type="BG", r_fault_ohm=1.5, inception_s=0.1,
            relay_time_s=0.026, clear_after_s=0.076, duration_s=0.35, noise=0.001, seed=21,
            start=_start(24, 12, 20, 45, 80000)),
            notes="non-homogeneous 132 kV line (overhead-cable-overhead): B-G 1.5 ohm in "
                  "the overhead stretch beyond the cable, 31.0 km from CARDON REACH"),
    ]


# ----------------------------------------------------------------------------- structures

def _route(path: Path, rng, segments, start_ll, end_ll) -> None:
    """Write a made-up structure list.

    ``segments``: list of (length_km, kind, prefix); kind "tower" (every
    0.35-0.45 km) or "cable" (joint bays every 0.8-1.0 km).
    """
    total = sum(s[0] for s in segments)
    rows = [("GANTRY-START", 0.0)]
    pos = 0.0
    counters: dict[str, int] = {}
    for length, kind, prefix in segments:
        end = pos + length
        lo, hi = (0.35, 0.45) if kind == "tower" else (0.8, 1.0)
        d = pos
        first = pos > 0.0
        while True:
            if not first:
                d += rng.uniform(lo, hi)
            if d > end - lo / 2:
                break
            first = False
            counters[prefix] = counters.get(prefix, 0) + 1
            rows.append((f"{prefix}{counters[prefix]:03d}", d))
        pos = end
    rows.append(("GANTRY-END", total))
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["structure", "distance_km", "latitude", "longitude"])
        for sid, d in rows:
            t = d / total
            lat = start_ll[0] + (end_ll[0] - start_ll[0]) * t + 0.01 * math.sin(3.1 * t)
            lon = start_ll[1] + (end_ll[1] - start_ll[1]) * t + 0.015 * math.sin(5.3 * t)
            w.writerow([sid, f"{d:.3f}", f"{lat:.6f}", f"{lon:.6f}"])


def write_structure_lists() -> None:
    """The made-up structure lists of the three demo lines (fixed seeds)."""
    _route(MODELS / "northmarch_vm_cr1_structures.csv", np.random.default_rng(230),
           [(96.4, "tower", "VC")], (51.2130, -101.8870), (51.6410, -100.7050))
    _route(MODELS / "northmarch_cr_pf1_structures.csv", np.random.default_rng(132),
           [(21.5, "tower", "CP"), (5.8, "cable", "JB"), (14.6, "tower", "CP")],
           (51.6440, -100.7020), (51.9120, -100.3110))
    _route(MODELS / "orrin_or_hf1_structures.csv", np.random.default_rng(110),
           [(31.2, "tower", "OH")], (-47.3310, 171.2050), (-47.1560, 171.5230))


#: recorder anti-aliasing filter: second-order Butterworth with its corner at this
#: fraction of the sampling rate (common practice, no source; the same as in
#: benchmarks/bench_location_accuracy.py)
ANTI_ALIAS_FRACTION = 0.3


def recorder_spec(ev: Event, model) -> SimulationSpec:
    """The event's simulation with the recorder's anti-aliasing filter (every recorder has one)."""
    spec = ev.spec
    if spec.anti_alias_hz is None:
        f_hz = spec.frequency_hz or model.system.frequency_hz
        spec = replace(spec, anti_alias_hz=ANTI_ALIAS_FRACTION * spec.samples_per_cycle * f_hz)
    return spec


# ----------------------------------------------------------------------------- main

def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--structures", action="store_true",
                    help="also rewrite the structure lists in models/")
    ap.add_argument("only", nargs="*", help="event folders to make (default: all)")
    args = ap.parse_args(argv)
    if args.structures:
        write_structure_lists()
    for ev in events():
        if args.only and ev.folder not in args.only:
            continue
        model = load_model(MODELS / ev.model)
        result = simulate(model, recorder_spec(ev, model))
        result = replace(result, truth=replace(result.truth, notes=ev.notes))
        out = OUT / ev.folder
        if out.exists():
            shutil.rmtree(out)
        paths = write_simulation(result, out, data_format=ev.data_format,
                                 revision=ev.revision, single_file=ev.single_file)
        size = sum(p.stat().st_size for p in paths)
        print(f"{ev.folder:24s} {len(paths)} files {size / 1024:7.1f} KiB  {ev.notes}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
