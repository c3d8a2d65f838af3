"""``eventlab analyze``: the signal chain of one event, as text and JSON.

Example::

    eventlab analyze sample_events/vm_cr1_bg/VELLMOOR.cfg --json out.json

prints the timeline, fault type, currents and voltages per phase (primary
units) and sequence quantities of every line terminal in the record(s); with
``--model FILE`` it also locates the fault on the model's line (one or two
ends) and sets the measured phasors against those the model computes;
``--json FILE`` (``-`` for standard output) writes the Analysis JSON
described in the README.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from eventlab.analysis import Analysis, AnalysisOptions, TerminalAnalysis, analyze
from eventlab.errors import ModelError
from eventlab.records import read_record
from eventlab.units import polar_deg

HELP = ("analyse event records: timeline, fault type, phasors; with --model also the "
        "fault location and the measured-versus-computed match")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("record", metavar="RECORD", help="COMTRADE record (.cfg, .cff, .zip)")
    parser.add_argument("remote", metavar="REMOTE", nargs="?", default=None,
                        help="record of the line's other end (optional)")
    parser.add_argument("--model", metavar="FILE", default=None,
                        help="network model (TOML); used by fault location")
    parser.add_argument("--line", metavar="ID", default=None, help="line id in the model")
    parser.add_argument("--terminal", metavar="ID", action="append", default=None,
                        help="model terminal id of RECORD (repeat for REMOTE); default: "
                             "the terminal at the record's station")
    parser.add_argument("--json", metavar="FILE", default=None,
                        help="write the analysis as JSON to FILE ('-' for standard output)")


def run(args: argparse.Namespace) -> int:
    paths = [args.record] + ([args.remote] if args.remote else [])
    records = [read_record(p) for p in paths]
    model = None
    if args.model:
        from eventlab.network.model import load_model

        model = load_model(args.model)
    terms = args.terminal or []
    if terms and model is None:
        raise ModelError("--terminal needs --model")
    if len(terms) > len(records):
        raise ModelError(f"--terminal given {len(terms)} times for {len(records)} record(s)")
    options = AnalysisOptions(terminals=dict(enumerate(terms)))
    result = analyze(records, model=model, line=args.line, options=options)
    doc = result.to_dict()
    text = json.dumps(_clean(doc), indent=2, allow_nan=False)
    if args.json == "-":
        sys.stdout.write(text + "\n")
        return 0
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            fh.write(text + "\n")
    sys.stdout.write(format_report(result))
    return 0


def _clean(x):
    """NaN/inf -> None so that the JSON is strict."""
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: _clean(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_clean(v) for v in x]
    return x


# ------------------------------------------------------------------ text report
def _ms(s: float | None) -> str:
    return "  --  " if s is None else f"{1e3 * s:8.2f} ms"


def _num(x: float | None, fmt: str = ".1f", unit: str = "") -> str:
    return "--" if x is None or not math.isfinite(x) else f"{x:{fmt}}{unit}"


def _ph(z, scale: float = 1.0, fmt: str = "10.1f") -> str:
    if z is None or not math.isfinite(abs(complex(z))):
        return f"{'--':>10} {'':>7}"
    m, d = polar_deg(z)
    return f"{m / scale:{fmt}} {d:+7.1f}d"


def _terminal_text(t: TerminalAnalysis, f0: float) -> list[str]:
    out = []
    tl = t.timeline
    name = t.label or "(single terminal)"
    out.append(f"  Terminal {name}: " + " ".join(f"{k}={v}" for k, v in t.channels.items()))
    c = t.classification
    if tl.fault_type == "none" or c is None:
        out.append("    Fault type : none")
        for fl in tl.flags:
            out.append(f"    note       : {fl}")
        return out
    out.append(f"    Fault type : {tl.fault_type}   confidence {c.confidence:.2f}  "
               f"({c.basis}; {c.reason})")
    out.append(f"    Inception  : {_ms(tl.inception_s)}    Trip: {_ms(tl.trip_s)}    "
               f"Clearing: {_ms(tl.clearing_s)}")
    out.append(f"    Duration   : {_num(tl.duration_ms, '.2f', ' ms')} = "
               f"{_num(tl.duration_cycles, '.2f', ' cycles')}    relay time "
               f"{_num(tl.relay_time_ms, '.1f', ' ms')}    breaker time "
               f"{_num(tl.breaker_time_ms, '.1f', ' ms')}")
    out.append("    Poles open : " + "   ".join(
        f"{p} {_ms(s).strip()}" for p, s in zip("ABC", tl.pole_open_s, strict=True)))
    if len(tl.intervals) > 1 or tl.intervals[0].kind != "fault":
        for iv in tl.intervals:
            out.append(f"    Interval   : {iv.kind:<8} {iv.type:<4} {_ms(iv.start_s)} .. "
                       f"{_ms(iv.end_s)}")
    for e in tl.edges:
        arrow = "rises" if e.state else "falls"
        out.append(f"    Status     : {e.channel} ({e.role}) {arrow} at {_ms(e.time_s).strip()}")
    iv = tl.intervals[0]
    if iv.prefault is not None:
        out.append(f"    Windows    : pre-fault {_ms(iv.prefault.start_s).strip()} .. "
                   f"{_ms(iv.prefault.end_s).strip()}; fault {_ms(iv.fault.start_s).strip()} "
                   f".. {_ms(iv.fault.end_s).strip()}" + (" (flagged)" if iv.fault.flagged
                                                          else ""))
    ro = tl.intervals[-1].remote_open
    if ro is not None and ro.confirmed:
        out.append(f"    Other end  : opened first, currents changed at {_ms(ro.change_s).strip()}; "
                   f"fed from this end alone over {_ms(ro.window.start_s).strip()} .. "
                   f"{_ms(ro.window.end_s).strip()} (unfaulted phases "
                   f"{100 * ro.healthy_ratio:.1f} % of the faulted)")
    elif ro is not None:
        out.append(f"    Change     : currents changed at {_ms(ro.change_s).strip()}, before this "
                   f"end's poles opened (the other end opening, or the fault changing: a "
                   f"three-phase fault does not say which)")
    out.append("    Currents [A primary]      pre-fault             fault window      peak")
    roles = dict(t.channels)
    for p in "ABC":
        nm = roles.get(f"I{p}")
        pk = t.peak_a["ABC".index(p)] if t.peak_a else None
        out.append(f"      I{p} {nm:<14.14} {_ph(t.prefault.get(nm))}   "
                   f"{_ph(t.fault.get(nm))}   {_num(pk, '10.1f')}")
    out.append("    Voltages [kV primary]     pre-fault             fault window")
    for p in "ABC":
        nm = roles.get(f"V{p}")
        out.append(f"      V{p} {nm:<14.14} {_ph(t.prefault.get(nm), 1e3, '10.3f')}   "
                   f"{_ph(t.fault.get(nm), 1e3, '10.3f')}")
    if t.i012_fault is not None:
        out.append("    Sequence                   pre-fault             fault window")
        for k in range(3):
            ip = None if t.i012_prefault is None else t.i012_prefault[k]
            out.append(f"      I{k} [A]            {_ph(ip)}   {_ph(t.i012_fault[k])}")
        for k in range(3):
            vp = None if t.v012_prefault is None else t.v012_prefault[k]
            out.append(f"      V{k} [kV]           {_ph(vp, 1e3, '10.3f')}   "
                       f"{_ph(t.v012_fault[k], 1e3, '10.3f')}")
    for fl in tl.flags:
        out.append(f"    note       : {fl}")
    return out


def _location_text(doc: dict) -> list[str]:
    """Location and measured-versus-computed lines from ``LocationReport.to_dict()``."""
    loc, comp = doc["location"], doc["comparison"]
    st = loc.get("structures") or {}
    lo, hi = loc["interval_km"]
    out = ["", f"Fault location on line {loc['line']} ({loc['length_km']:.1f} km), "
           f"method {loc['method']}:"]
    rf = loc.get("fault_resistance_ohm")
    out.append(f"  {loc['distance_km']:.2f} km ({loc['distance_mi']:.2f} mi) from "
               f"{loc['reference_terminal']}, fraction {loc['fraction']:.4f}"
               + ("" if rf is None else f", fault resistance {rf:.2f} ohm"))
    out.append(f"  interval {lo:.2f} .. {hi:.2f} km")
    for term, km in (st.get("distance_from_km") or {}).items():
        mi = (st.get("distance_from_mi") or {}).get(term)
        out.append(f"  from {term}: {km:.2f} km" + ("" if mi is None else f" ({mi:.2f} mi)"))
    if st.get("nearest"):
        out.append(f"  nearest structure {st['nearest']}; structures {st.get('first')} .. "
                   f"{st.get('last')} cover the interval ({st.get('count')} structures)")
    out.append("  Methods:")
    for m in loc["methods"]:
        r = m.get("fault_resistance_ohm")
        out.append(f"    {m['method']:<18} {m['distance_km']:8.2f} km"
                   + ("" if r is None else f"   Rf {r:7.2f} ohm"))
    if comp:
        out.append("  Measured vs computed (fitted fault):")
        out.append("    terminal              qty    measured            computed        "
                   "ratio   angle diff")
        for c in comp:
            (mm, md), (cm, cd) = c["measured"], c["computed"]
            unit_scale = 1e3 if c["quantity"].startswith("V") else 1.0
            u = "kV" if unit_scale == 1e3 else "A "
            out.append(f"    {c['terminal']:<21.21} {c['quantity']:<4} {mm / unit_scale:10.2f}"
                       f" {u} {md:+7.1f}d {cm / unit_scale:10.2f} {u} {cd:+7.1f}d "
                       f"{_num(c['ratio'], '6.3f')} {_num(c['angle_diff_deg'], '+7.2f', 'd')}")
    for v in loc.get("verdict", []):
        out.append(f"  Verdict: {v}")
    bolted = loc.get("bolted_fault_currents") or {}
    if bolted.get("fault_a"):
        out.append(f"  Bolted {bolted['fault_type']} fault at this point, fault current per "
                   f"phase [A]:")
        rows = [("model as written", bolted)]
        for key, val in (bolted.get("iec60909") or {}).items():
            rows.append((f"IEC 60909 {key.replace('_', ' ')} = {val['c']:g}", val))
        for label, val in rows:
            out.append(f"    {label:<24} " + "  ".join(f"{x:9.0f}" for x in val["fault_a"]))
    for n in loc.get("notes", []):
        out.append(f"  note: {n}")
    out.append(f"  CAUTION: {loc['caution']}")
    return out


def format_report(result: Analysis) -> str:
    """The human-readable summary printed by ``eventlab analyze``."""
    lines = []
    for r in result.records:
        lines.append(f"Record {r.index}: {r.station} / {r.device}  ({r.source or 'in memory'})")
        f_txt = "--" if r.frequency_hz is None else f"{r.frequency_hz:.3f} Hz"
        lines.append(f"  C37.111-{r.revision} {r.data_format}, {r.n_analog} analog + "
                     f"{r.n_status} status channels, {r.n_samples} samples at "
                     f"{r.sample_rate_hz:g} Hz ({r.samples_per_cycle}/cycle), "
                     f"{1e3 * r.duration_s:.1f} ms")
        lines.append(f"  start {r.start or '--'}   trigger {r.trigger or '--'}   nominal "
                     f"{r.nominal_frequency_hz:g} Hz, measured {f_txt}"
                     + ("  (phasors with frequency tracking)" if r.tracked else ""))
        for t in result.terminals:
            if t.record == r.index:
                lines.extend(_terminal_text(t, r.nominal_frequency_hz))
        lines.append("")
    head = "none" if result.primary is None else result.fault_type
    lines.append(f"Event fault type: {head}")
    if result.location is not None:
        lines.extend(_location_text(result.location.to_dict()))
    for w in result.warnings:
        lines.append(f"warning: {w}")
    return "\n".join(lines) + "\n"
