"""``eventlab simulate``: time-domain simulation of a line fault, written as COMTRADE.

Example::

    eventlab simulate --model models/northmarch_230kv.toml --line VM-CR1 --at 0.37 \\
        --type BG --rf 3 -o out/bg_test

writes ``<STATION>.cfg``/``.dat`` for every terminal of the model and
``truth.json`` (fault type, distance, resistance, inception and clearing).
"""

from __future__ import annotations

import argparse

from eventlab.errors import ModelError

HELP = "simulate a line fault in the time domain and write COMTRADE records"

_FORMATS = {"ascii": "ASCII", "binary": "BINARY", "binary32": "BINARY32", "float32": "FLOAT32"}


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--model", required=True, metavar="FILE", help="network model (TOML)")
    parser.add_argument("--line", required=True, help="id of the line that faults")
    parser.add_argument("--at", required=True, type=float, metavar="FRACTION",
                        help="fault position from the line's 'from' bus, 0..1 of its length")
    parser.add_argument("--type", required=True, metavar="CODE",
                        help="fault type AG BG CG AB BC CA ABG BCG CAG ABC, or none")
    parser.add_argument("--rf", type=float, default=0.0, metavar="OHM",
                        help="fault resistance [ohm] (default 0)")
    parser.add_argument("--rg", type=float, default=0.0, metavar="OHM",
                        help="ground resistance [ohm] for ABG/BCG/CAG/ABC (default 0)")
    parser.add_argument("--inception", type=float, default=0.1, metavar="S",
                        help="fault inception from the first sample [s] (default 0.1)")
    parser.add_argument("--inception-angle", type=float, default=None, metavar="DEG",
                        help="point on wave of the local phase-A voltage [deg], 0 = rising "
                             "zero crossing")
    parser.add_argument("--relay-time", type=float, default=0.025, metavar="S",
                        help="inception to trip output [s] (default 0.025)")
    parser.add_argument("--clear-after", type=float, default=0.075, metavar="S",
                        help="inception to breaker open command complete [s]; poles open at "
                             "the next current zero (default 0.075; 0 = not cleared)")
    parser.add_argument("--remote-delay", type=float, default=0.0, metavar="S",
                        help="sequential clearing: the line's to-end trips and opens this "
                             "much later [s] (negative: earlier; default 0)")
    parser.add_argument("--duration", type=float, default=0.4, metavar="S",
                        help="record length [s] (default 0.4)")
    parser.add_argument("--evolve-to", default=None, metavar="CODE",
                        help="fault type the fault evolves into")
    parser.add_argument("--evolve-after", type=float, default=0.03, metavar="S",
                        help="inception to the evolution [s] (default 0.03)")
    parser.add_argument("--reclose-after", type=float, default=None, metavar="S",
                        help="dead time before both ends reclose [s]")
    parser.add_argument("--reclose-ends", choices=("both", "from", "to"), default="both",
                        help="with --reclose-after: both ends reclose together (default), "
                             "or only the line's from or to end (the leader; the follower "
                             "stays open)")
    parser.add_argument("--temporary", action="store_true",
                        help="the fault is gone at reclose (default: permanent)")
    parser.add_argument("--single-pole", action="store_true",
                        help="open (and reclose) only the faulted pole of a single-phase "
                             "fault")
    parser.add_argument("--frequency", type=float, default=None, metavar="HZ",
                        help="source frequency [Hz] when off nominal (default: the model's)")
    parser.add_argument("--noise", type=float, default=0.0, metavar="REL",
                        help="noise std relative to rated secondary values (default 0)")
    parser.add_argument("--seed", type=int, default=0, help="noise seed (default 0)")
    parser.add_argument("--ct-saturation", type=float, default=None, metavar="KNEE_V",
                        help="saturating CTs with this knee-point voltage [V] at every terminal")
    parser.add_argument("--ct-burden", type=float, default=4.0, metavar="OHM",
                        help="CT secondary loop resistance with --ct-saturation [ohm] "
                             "(default 4)")
    parser.add_argument("--cvt", choices=("active", "passive"), default=None,
                        help="capacitor voltage transformers with this ferroresonance "
                             "suppression circuit instead of ideal VTs (their transient "
                             "after a voltage collapse; default: ideal VTs)")
    parser.add_argument("--line-model", choices=("rl", "pi"), default=None,
                        help="series R-L, or pi sections with the line capacitance (default: "
                             "pi when the model gives capacitance)")
    parser.add_argument("--vt-side", choices=("line", "bus"), default="line",
                        help="VTs on the line side of the breaker or on the bus (default line)")
    parser.add_argument("--anti-alias", type=float, default=None, metavar="HZ",
                        help="corner of a 2nd-order Butterworth anti-aliasing filter [Hz] "
                             "(default none)")
    parser.add_argument("--adc-bits", type=int, default=None, metavar="BITS",
                        help="quantise as a recorder converter of BITS bits would (default: "
                             "only the file format quantises)")
    parser.add_argument("--rate", type=int, default=64, metavar="SAMPLES_PER_CYCLE",
                        help="recorder samples per cycle (default 64)")
    parser.add_argument("--format", choices=tuple(_FORMATS), default="binary",
                        help="COMTRADE data format (default binary)")
    parser.add_argument("--revision", type=int, choices=(1999, 2013), default=None,
                        help="C37.111 revision (default 1999; 2013 for binary32/float32)")
    parser.add_argument("--cff", action="store_true",
                        help="write one 2013 .cff file per terminal")
    parser.add_argument("-o", "--output", required=True, metavar="DIR",
                        help="folder for the records and truth.json")


def run(args: argparse.Namespace) -> int:
    from eventlab.network.emt_ct import CtSaturation
    from eventlab.network.emt_cvt import Cvt
    from eventlab.network.model import load_model
    from eventlab.network.simulate import SimulationSpec, simulate, write_simulation

    model = load_model(args.model)
    fmt = _FORMATS[args.format]
    revision = args.revision or (2013 if fmt in ("BINARY32", "FLOAT32") or args.cff else 1999)
    if revision != 2013 and (fmt in ("BINARY32", "FLOAT32") or args.cff):
        raise ModelError(f"simulate: --format {args.format}{' and --cff' if args.cff else ''} "
                         f"need --revision 2013")
    try:
        ct = None
        if args.ct_saturation is not None:
            ct = CtSaturation(knee_voltage_v=args.ct_saturation, burden_ohm=args.ct_burden)
        spec = SimulationSpec(
            line=args.line, fraction=args.at, type=args.type, r_fault_ohm=args.rf,
            r_ground_ohm=args.rg, inception_s=args.inception,
            inception_angle_deg=args.inception_angle, relay_time_s=args.relay_time,
            clear_after_s=args.clear_after if args.clear_after > 0 else None,
            duration_s=args.duration, samples_per_cycle=args.rate, noise=args.noise,
            seed=args.seed, ct_saturation=ct, evolve_to=args.evolve_to,
            evolve_after_s=args.evolve_after, reclose_after_s=args.reclose_after,
            reclose_ends=args.reclose_ends,
            permanent=not args.temporary, single_pole=args.single_pole,
            frequency_hz=args.frequency, vt_side=args.vt_side,
            anti_alias_hz=args.anti_alias, adc_bits=args.adc_bits,
            line_model=args.line_model, remote_delay_s=args.remote_delay,
            cvt=None if args.cvt is None else Cvt(fsc=args.cvt))
    except ValueError as exc:
        raise ModelError(f"simulate: {exc}") from None
    result = simulate(model, spec)
    paths = write_simulation(result, args.output, data_format=fmt, revision=revision,
                             single_file=args.cff)
    t = result.truth
    if t.type == "none":
        print(f"simulated: no fault on {t.line}")
    else:
        clear = f"cleared at {t.clear_s:.4f} s" if t.clear_s is not None else "not cleared"
        print(f"simulated: {t.type} on {t.line} at {t.distance_km:.2f} km "
              f"(fraction {t.fraction:.4f}), Rf {t.r_fault_ohm:g} ohm, inception "
              f"{t.inception_s:.4f} s, {clear}")
    for p in paths:
        print(p)
    return 0
