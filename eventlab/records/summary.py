"""What ``eventlab inspect`` shows about a record, as a plain dict (pure)."""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime

import numpy as np

from eventlab.records.model import Record
from eventlab.records.roles import channel_roles


def iso_time(stamp: datetime | None, ns: int = 0) -> str | None:
    """ISO 8601 text of a record date/time, with nanoseconds when the record has them."""
    if stamp is None:
        return None
    text = stamp.isoformat(timespec="microseconds")
    return text + f"{ns:03d}" if ns else text


def _finite_or_none(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


def summarize(record: Record, channel_map: Mapping[str, str] | None = None) -> dict:
    """Summary of ``record`` for display and JSON.

    Keys: ``station, device, revision, data_format, frequency_hz, rates``
    ([[samp_hz, endsamp], ...]), ``n_samples, duration_s, start, trigger``
    (ISO 8601), ``time_quality`` (the 2013 time quality code, clause 6.13),
    ``time_code, local_code, tmq_code, leapsec, values,
    analog`` ([{index, name, phase, circuit, unit, role, ratio, ps, min,
    max}], min/max of the values [unit] in the record's kind) and ``status``
    ([{index, name, normal, role, changes}], changes = number of 0/1
    transitions).  Roles come from :func:`~eventlab.records.roles.map_terminals`
    where it works, else "".
    """
    a_roles, s_roles = channel_roles(record, channel_map)
    analog = []
    for ch, role in zip(record.analog, a_roles, strict=True):
        v = np.asarray(ch.values)
        finite = v[np.isfinite(v)]
        analog.append({
            "index": ch.index, "name": ch.name, "phase": ch.phase, "circuit": ch.circuit,
            "unit": ch.unit, "role": role, "ratio": float(ch.ratio), "ps": ch.ps,
            "min": _finite_or_none(finite.min()) if finite.size else None,
            "max": _finite_or_none(finite.max()) if finite.size else None})
    status = []
    for ch, role in zip(record.status, s_roles, strict=True):
        v = np.asarray(ch.values)
        status.append({"index": ch.index, "name": ch.name, "normal": int(ch.normal),
                       "role": role,
                       "changes": int(np.count_nonzero(np.diff(v.astype(np.int8))))
                       if v.size else 0})
    return {
        "station": record.station, "device": record.device, "revision": record.revision,
        "data_format": record.data_format, "frequency_hz": float(record.frequency_hz),
        "rates": [[float(r.samp_hz), int(r.endsamp)] for r in record.rates],
        "n_samples": record.n_samples, "duration_s": float(record.duration_s),
        "start": iso_time(record.start, record.start_ns),
        "trigger": iso_time(record.trigger, record.trigger_ns),
        "time_quality": record.tmq_code, "time_code": record.time_code,
        "local_code": record.local_code, "tmq_code": record.tmq_code,
        "leapsec": record.leapsec, "values": record.values,
        "analog": analog, "status": status,
    }


def format_summary(s: dict) -> str:
    """Human-readable text of :func:`summarize`'s dict (for the terminal)."""
    def num(x):
        return "-" if x is None else f"{x:.6g}"

    lines = [
        f"station      {s['station']}",
        f"device       {s['device']}",
        f"revision     {s['revision']}   format {s['data_format']}   "
        f"line frequency {num(s['frequency_hz'])} Hz",
        "rates        " + ("; ".join(
            (f"{num(r)} Hz to sample {e}" if r > 0 else f"time stamps to sample {e}")
            for r, e in s["rates"]) or "-"),
        f"samples      {s['n_samples']}   duration {s['duration_s']:.6f} s",
        f"start        {s['start'] or '-'}",
        f"trigger      {s['trigger'] or '-'}",
    ]
    if s["time_code"] or s["local_code"] or s["tmq_code"]:
        lines.append(f"time code    {s['time_code'] or '-'}   local code {s['local_code'] or '-'}"
                     f"   time quality {s['tmq_code'] or '-'}   leap second {s['leapsec']}")
    lines.append(f"values       {s['values']}")
    lines.append("")
    head = ("#", "name", "ph", "circuit", "role", "unit", "ratio", "PS", "min", "max")
    rows = [head] + [(str(c["index"]), c["name"], c["phase"], c["circuit"], c["role"] or "-",
                      c["unit"], num(c["ratio"]), c["ps"], num(c["min"]), num(c["max"]))
                     for c in s["analog"]]
    lines.append(f"analog channels: {len(s['analog'])}")
    lines += _table(rows) if s["analog"] else []
    lines.append("")
    lines.append(f"status channels: {len(s['status'])}")
    rows = [("#", "name", "normal", "role", "changes")] + [
        (str(c["index"]), c["name"], str(c["normal"]), c["role"] or "-", str(c["changes"]))
        for c in s["status"]]
    lines += _table(rows) if s["status"] else []
    return "\n".join(lines)


def _table(rows) -> list[str]:
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    return ["  " + "  ".join(cell.ljust(w) for cell, w in zip(r, widths, strict=True)).rstrip()
            for r in rows]
