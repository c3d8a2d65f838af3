"""``eventlab fault``: expected currents and voltages for a fault on the model.

Example::

    eventlab fault --model models/example_230kv.toml --line L1 --at 0.4 --type BCG --rf 2 --rg 5
    eventlab fault --model models/example_230kv.toml --line L1 --at 0.4 --type AG --json -
    eventlab fault --model models/example_230kv.toml --bus EAST --type ABC --show-work

The JSON (``--json FILE``, ``-`` for stdout) holds ``terminals`` (a list of
``{id, line, bus, currents, voltages, currents_prefault, voltages_prefault,
sequence}``, each phase name to ``[magnitude, angle in degrees]`` in primary A
or V line-to-ground), ``fault`` (``location``, ``currents``, ``voltages``,
``sequence`` with I0 I1 I2 V0 V1 V2, ``thevenin_ohm``), ``buses`` and
``branches``.  With ``--json -`` the human table is not printed and
``--show-work`` goes to stderr.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path
from typing import Any

from eventlab.errors import ModelError
from eventlab.network.faults import FaultResult, FaultSpec, solve_fault
from eventlab.network.model import NetworkModel, load_model
from eventlab.network.showwork import show_work
from eventlab.units import polar_deg

HELP = "expected currents and voltages at every terminal for a fault on a network model"

PHASES = ("A", "B", "C")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--model", required=True, metavar="FILE",
                        help="network model (TOML)")
    parser.add_argument("--line", metavar="ID",
                        help="faulted line (may be left out when the model has one line)")
    parser.add_argument("--at", type=float, metavar="FRACTION",
                        help="fault position along the line from its 'from' bus, 0..1")
    parser.add_argument("--bus", metavar="ID", help="fault at this bus instead of on a line")
    parser.add_argument("--type", required=True, metavar="CODE",
                        help="fault type: AG BG CG AB BC CA ABG BCG CAG ABC")
    parser.add_argument("--rf", type=float, default=0.0, metavar="OHM",
                        help="fault resistance Rf [ohm] (phase-to-phase: total between phases)")
    parser.add_argument("--rg", type=float, default=0.0, metavar="OHM",
                        help="ground resistance Rg [ohm] for ABG/BCG/CAG and ABC")
    parser.add_argument("--json", metavar="FILE",
                        help="write the result as JSON to FILE ('-' for stdout)")
    parser.add_argument("--show-work", action="store_true",
                        help="print the calculation step by step, for checking by hand")


def spec_from_args(model: NetworkModel, args: argparse.Namespace) -> FaultSpec:
    """Turn the command's options into a :class:`FaultSpec` (errors as ModelError)."""
    if args.bus is not None:
        if args.line is not None or args.at is not None:
            raise ModelError("give either --bus or --line/--at, not both")
        return FaultSpec.at_bus(args.bus, args.type, args.rf, args.rg)
    line = args.line
    if line is None:
        if len(model.lines) != 1:
            raise ModelError(f"{model.source_name}: --line is needed: the model has "
                             f"{len(model.lines)} lines ({', '.join(x.id for x in model.lines)})")
        line = model.lines[0].id
    model.line(line)
    if args.at is None:
        raise ModelError("--at FRACTION is needed for a fault on a line (0 = the 'from' bus, "
                         "1 = the 'to' bus)")
    return FaultSpec(line, args.at, args.type, args.rf, args.rg)


def _phases(x) -> dict[str, list[float]]:
    return {p: polar_deg(x[k]) for k, p in enumerate(PHASES)}


def _seq(i_012=None, v_012=None) -> dict[str, list[float]]:
    out = {}
    if i_012 is not None:
        out.update({f"I{k}": polar_deg(i_012[k]) for k in range(3)})
    if v_012 is not None:
        out.update({f"V{k}": polar_deg(v_012[k]) for k in range(3)})
    return out


def result_to_dict(model: NetworkModel, result: FaultResult) -> dict[str, Any]:
    """The JSON document of ``eventlab fault`` (angles in degrees, primary A / V line-to-ground)."""
    spec = result.spec
    f = result.fault
    if spec.line is not None:
        ln = model.line(spec.line)
        location = {"line": ln.id, "fraction": spec.fraction,
                    "distance_km": spec.fraction * ln.length_km, "from_bus": ln.from_bus,
                    "bus": None}
    else:
        location = {"line": None, "fraction": None, "distance_km": None, "from_bus": None,
                    "bus": spec.bus}
    return {
        "model": model.system.name,
        "frequency_hz": model.system.frequency_hz,
        "type": spec.type,
        "r_fault_ohm": spec.r_fault_ohm,
        "r_ground_ohm": spec.r_ground_ohm,
        "terminals": [
            {"id": t.id, "line": t.line, "bus": t.bus,
             "currents": _phases(t.i_abc), "voltages": _phases(t.v_abc),
             "currents_prefault": _phases(t.i_abc_pre), "voltages_prefault": _phases(t.v_abc_pre),
             "sequence": _seq(t.i_012, t.v_012)}
            for t in result.terminals.values()],
        "fault": {
            "location": location, "kv": f.kv,
            "currents": _phases(f.i_abc), "voltages": _phases(f.v_abc),
            "sequence": _seq(f.i_012, f.v_012),
            "thevenin_ohm": {f"Z{k}": [f.z_thevenin_ohm[k].real, f.z_thevenin_ohm[k].imag]
                             for k in range(3)},
        },
        "buses": [{"id": b.id, "kv": b.kv, "voltages": _phases(b.v_abc),
                   "voltages_prefault": _phases(b.v_abc_pre)} for b in result.buses.values()],
        "branches": [{"element": b.element, "kind": b.kind, "bus": b.bus,
                      "currents": _phases(b.i_abc), "sequence": _seq(b.i_012)}
                     for b in result.branches],
    }


def _fmt(z: complex, scale: float = 1.0, digits: int = 1) -> str:
    mag, ang = polar_deg(z)
    if mag < 1e-6:  # [A] or [V]: no current or voltage; its angle is noise
        mag, ang = 0.0, 0.0
    return f"{mag / scale:>10.{digits}f} {ang:>8.2f}"


def table_lines(model: NetworkModel, result: FaultResult) -> list[str]:
    """Compact human table of a fault result."""
    spec = result.spec
    f = result.fault
    out = []
    if spec.line is not None:
        ln = model.line(spec.line)
        where = (f"line {ln.id} at {spec.fraction:.4g} ({spec.fraction * ln.length_km:.3f} km "
                 f"from {ln.from_bus})")
    else:
        where = f"bus {spec.bus}"
    rg = f", Rg {spec.r_ground_ohm:g} ohm" if spec.r_ground_ohm else ""
    out.append(f"{model.system.name} ({model.system.frequency_hz:g} Hz): {spec.type} fault on "
               f"{where}, Rf {spec.r_fault_ohm:g} ohm{rg}")
    out.append("")
    head = f"  {'':6}{'I [A]':>10} {'deg':>8}   {'V [kV]':>10} {'deg':>8}"
    out.append(f"At the fault ({f.kv:g} kV, V line-to-ground)")
    out.append(head)
    for k, p in enumerate(PHASES):
        out.append(f"  {p:6}{_fmt(f.i_abc[k])}   {_fmt(f.v_abc[k], 1e3, 3)}")
    for k in range(3):
        out.append(f"  {'I' + str(k) + '/V' + str(k):6}{_fmt(f.i_012[k])}   "
                   f"{_fmt(f.v_012[k], 1e3, 3)}")
    for t in result.terminals.values():
        out.append("")
        out.append(f"Terminal {t.id} (line {t.line} at {t.bus})    pre-fault")
        out.append(head + f"   {'I [A]':>10} {'deg':>8}")
        for k, p in enumerate(PHASES):
            out.append(f"  {p:6}{_fmt(t.i_abc[k])}   {_fmt(t.v_abc[k], 1e3, 3)}   "
                       f"{_fmt(t.i_abc_pre[k])}")
    trafo = [b for b in result.branches if b.kind == "transformer"]
    if trafo:
        out.append("")
        out.append("Transformers (current from the bus into the winding; vector-group shift "
                   "and zero-sequence blocking included)")
        out.append(f"  {'':18}" + "".join(f"{'I' + p + ' [A]':>10} {'deg':>8}" for p in PHASES))
        for b in trafo:
            vg = next(t.vector_group for t in model.transformers if t.id == b.element)
            label = f"{b.element} {vg} {b.bus}"
            out.append(f"  {label:18}" + "".join(_fmt(b.i_abc[k]) for k in range(3)))
    return out


def run(args: argparse.Namespace) -> int:
    model = load_model(args.model)
    for name in ("at", "rf", "rg"):
        v = getattr(args, name)
        if v is not None and not math.isfinite(v):
            raise ModelError(f"--{name}: expected a finite number, got {v}")
    spec = spec_from_args(model, args)
    result = solve_fault(model, spec)
    json_to_stdout = args.json == "-"
    if args.show_work:
        stream = sys.stderr if json_to_stdout else sys.stdout
        print("\n".join(show_work(model, result)), file=stream)
        if not json_to_stdout:
            print(file=stream)
    if not json_to_stdout:
        print("\n".join(table_lines(model, result)))
    if args.json is not None:
        text = json.dumps(result_to_dict(model, result), indent=2)
        if json_to_stdout:
            print(text)
        else:
            Path(args.json).write_text(text + "\n", encoding="utf-8")
    return 0
