"""Write a :class:`Record` as COMTRADE (IEEE C37.111-1999 or -2013).

Scaling
-------
For the integer formats each analog channel gets ``b = (max + min) / 2`` and
``a = (max - min) / (2 * imax)`` over its finite values, so that the data
span ``-imax .. +imax`` with ``imax`` = 32767 (ASCII, BINARY) or
2147483647 (BINARY32); the codes -32768 / -2147483648 stay free for missing
data (clause 8).  Round trip error is at most ``a / 2`` per sample, i.e.
half a quantization step.  FLOAT32 stores ``v / a`` with ``a`` the power of
two that brings the largest magnitude into 0.5..1 (b = 0), so only float32
rounding remains (relative error <= 2**-24).  ASCII uses the 16-bit range so that any C37.111 reader can hold the
integers; missing data are written as 99999 (1999 clause 7.4.2, from
memory).

The record's values kind (``Record.values``) gives the channels' ``PS``
flag; ``primary`` and ``secondary`` ratio factors are written as they are.

Time
----
A record whose ``rates`` cover all its samples with fixed rates is written
with those segments (``nrates >= 1``); otherwise ``nrates = 0`` and the time
stamps carry the time (clause 6.7).  Time stamps count the time base (1 us,
or 1 ns when the record keeps nanoseconds) times ``timemult``, the smallest
power of ten that keeps the last stamp below ``0xFFFFFFFF``.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Literal

import numpy as np

from eventlab.records import dat as _dat
from eventlab.records.cfg import AnalogSpec, CfgInfo, StatusSpec, format_cfg
from eventlab.records.model import Record

Revision = Literal[1999, 2013]
WriteFormat = Literal["ASCII", "BINARY", "BINARY32", "FLOAT32"]
_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")


def _scale(values: np.ndarray, imax: int) -> tuple[float, float]:
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return 1.0, 0.0
    lo, hi = float(finite.min()), float(finite.max())
    b = (hi + lo) / 2.0
    half = (hi - lo) / 2.0
    if not half > 0.0:
        return 1.0, b
    a = half / imax
    # guard against rounding pushing (hi - b) / a just above imax
    if (hi - b) / a > imax or (b - lo) / a > imax:
        a = math.nextafter(a, math.inf)
    return a, b


def _quantize(values: np.ndarray, a: float, b: float, imax: int, missing: int) -> np.ndarray:
    x = np.rint((values - b) / a)
    x = np.clip(x, -imax, imax)
    x[~np.isfinite(values)] = missing
    return x.astype(np.int64)


def _sanitize(text: str, what: str) -> str:
    if "," in text or "\n" in text or "\r" in text:
        raise ValueError(f"{what} {text!r} holds a comma or line break, which C37.111 "
                         f"text fields cannot carry")
    return text


def _rates_for(record: Record) -> tuple[int, tuple[tuple[float, int], ...]]:
    n = record.n_samples
    rates = record.rates
    if (rates and all(r.samp_hz > 0 for r in rates) and rates[-1].endsamp == n
            and all(rates[k].endsamp < rates[k + 1].endsamp for k in range(len(rates) - 1))):
        return len(rates), tuple((float(r.samp_hz), int(r.endsamp)) for r in rates)
    return 0, ((0.0, n),)


def build_cfg_and_rows(record: Record, *, revision: int = 2013, data_format: str = "BINARY"):
    """The :class:`CfgInfo` and the raw rows that represent ``record`` in a file.

    Returns ``(info, sample_numbers, timestamps, raw, status)`` with integer
    (or float32) raw values as they go into the .dat.
    """
    if revision not in (1999, 2013):
        raise ValueError(f"revision must be 1999 or 2013, not {revision!r}")
    if data_format not in _FORMATS:
        raise ValueError(f"data_format must be one of {', '.join(_FORMATS)}, not "
                         f"{data_format!r}")
    if revision == 1999 and data_format in ("BINARY32", "FLOAT32"):
        raise ValueError(f"{data_format} needs revision 2013 (C37.111-1999 has ASCII and "
                         f"BINARY only)")
    n = record.n_samples
    ps = "P" if record.values == "primary" else "S"
    analog_specs, raws = [], []
    for k, ch in enumerate(record.analog):
        v = np.asarray(ch.values, dtype=np.float64)
        if v.shape != (n,):
            raise ValueError(f"analog channel {ch.name!r} has {v.shape} values, the time "
                             f"axis {n}")
        if data_format == "FLOAT32":
            # a power of two that brings the largest magnitude to 0.5..1: scaling is
            # exact, only the float32 rounding of each value remains
            finite = v[np.isfinite(v)]
            peak = float(np.abs(finite).max()) if finite.size else 0.0
            a, b = (2.0 ** math.ceil(math.log2(peak)) if peak > 0 else 1.0), 0.0
            raw = (v / a).astype(np.float32).astype(np.float64)
            finite = raw[np.isfinite(raw)]
            cmin = float(finite.min()) if finite.size else 0.0
            cmax = float(finite.max()) if finite.size else 0.0
        else:
            imax = _dat.INT_MAX[data_format]
            a, b = _scale(v, imax)
            if data_format == "ASCII":
                missing = 99999
            else:
                missing = int(_dat.missing_code(data_format, revision))
            raw = _quantize(v, a, b, imax, missing)
            cmin, cmax = -imax, imax
        raws.append(raw)
        analog_specs.append(AnalogSpec(
            index=k + 1, name=_sanitize(ch.name, "channel name"),
            phase=_sanitize(ch.phase, "phase"), circuit=_sanitize(ch.circuit, "circuit"),
            unit=_sanitize(ch.unit, "unit"), a=a, b=b, skew_us=ch.skew_s * 1e6,
            min=cmin, max=cmax, primary=ch.primary, secondary=ch.secondary, ps=ps, line=0))
    status_specs, sts = [], []
    for k, ch in enumerate(record.status):
        s = np.asarray(ch.values)
        if s.shape != (n,):
            raise ValueError(f"status channel {ch.name!r} has {s.shape} values, the time "
                             f"axis {n}")
        sts.append((s != 0).astype(np.uint8))
        status_specs.append(StatusSpec(k + 1, _sanitize(ch.name, "channel name"),
                                       _sanitize(ch.phase, "phase"),
                                       _sanitize(ch.circuit, "circuit"), int(ch.normal), 0))
    nrates, rates = _rates_for(record)
    ns_stamps = bool(record.start_ns or record.trigger_ns)
    time_base = 1e-9 if ns_stamps else 1e-6
    t = np.asarray(record.time, dtype=np.float64)
    t_end = float(t[-1]) if n else 0.0
    timemult = 1.0
    while t_end / (time_base * timemult) >= 0xFFFFFFFE:
        timemult *= 10.0
    stamps = np.rint(t / (time_base * timemult)).astype(np.int64) if n else np.zeros(0, int)
    info = CfgInfo(
        station=_sanitize(record.station, "station"), device=_sanitize(record.device, "device"),
        revision=revision, n_total=len(analog_specs) + len(status_specs),
        n_analog=len(analog_specs), n_status=len(status_specs), analog=tuple(analog_specs),
        status=tuple(status_specs), frequency_hz=float(record.frequency_hz), nrates=nrates,
        rates=rates, start=record.start, start_ns=record.start_ns, trigger=record.trigger,
        trigger_ns=record.trigger_ns, time_base_s=time_base, data_format=data_format,
        timemult=timemult, time_code=record.time_code, local_code=record.local_code,
        tmq_code=record.tmq_code, leapsec=record.leapsec)
    raw = np.array(raws).reshape(len(raws), n)
    status = np.array(sts, dtype=np.uint8).reshape(len(sts), n)
    sample_numbers = np.arange(1, n + 1, dtype=np.int64)
    return info, sample_numbers, stamps, raw, status


def _stem_for(record: Record, target) -> Path:
    p = Path(target)
    if p.is_dir():
        name = "".join(c if c.isalnum() or c in "-_" else "_" for c in record.station.strip())
        return p / (name or "record")
    if p.suffix.lower() in (".cfg", ".cff", ".dat"):
        p = p.with_suffix("")
    p.parent.mkdir(parents=True, exist_ok=True)
    return p


def write_record(record: Record, path_stem_or_dir, *, revision: int = 2013,
                 data_format: str = "BINARY", single_file: bool = False) -> list[Path]:
    """Write ``record`` as COMTRADE and return the paths written.

    Parameters
    ----------
    record : Record
        What to write (its ``values`` kind gives the ``PS`` flags).
    path_stem_or_dir : str or os.PathLike
        A stem (``out/VELLMOOR`` gives ``out/VELLMOOR.cfg`` and ``.dat``), a
        path ending in .cfg/.cff/.dat (the extension is replaced), or an
        existing folder (the stem is then the station name).
    revision : {1999, 2013}
    data_format : {"ASCII", "BINARY", "BINARY32", "FLOAT32"}
        BINARY32 and FLOAT32 need revision 2013.
    single_file : bool
        Write one .cff (C37.111-2013 clause 9) instead of .cfg + .dat (+ .hdr, .inf).

    Returns
    -------
    list of pathlib.Path
    """
    if single_file and revision != 2013:
        raise ValueError("a single-file .cff needs revision 2013")
    info, n, ts, raw, status = build_cfg_and_rows(record, revision=revision,
                                                  data_format=data_format)
    cfg_text = format_cfg(info).encode("utf-8")
    if data_format == "ASCII":
        dat_bytes = _dat.encode_ascii(n, ts, raw, status)
    else:
        dat_bytes = _dat.encode_binary(n, ts, raw, status, data_format)
    stem = _stem_for(record, path_stem_or_dir)
    written = []
    if single_file:
        out = bytearray()
        out += b"--- file type: CFG ---\r\n" + cfg_text
        if record.info_text is not None:
            out += b"--- file type: INF ---\r\n" + _text_block(record.info_text)
        if record.header_text is not None:
            out += b"--- file type: HDR ---\r\n" + _text_block(record.header_text)
        if data_format == "ASCII":
            out += b"--- file type: DAT ASCII ---\r\n" + dat_bytes
        else:
            out += f"--- file type: DAT {data_format}: {len(dat_bytes)} ---\r\n".encode()
            out += dat_bytes
        p = stem.with_name(stem.name + ".cff")
        p.write_bytes(bytes(out))
        return [p]
    p = stem.with_name(stem.name + ".cfg")
    p.write_bytes(cfg_text)
    written.append(p)
    p = stem.with_name(stem.name + ".dat")
    p.write_bytes(dat_bytes)
    written.append(p)
    if record.header_text is not None:
        p = stem.with_name(stem.name + ".hdr")
        p.write_bytes(record.header_text.encode("utf-8"))
        written.append(p)
    if record.info_text is not None:
        p = stem.with_name(stem.name + ".inf")
        p.write_bytes(record.info_text.encode("utf-8"))
        written.append(p)
    return written


def _text_block(text: str) -> bytes:
    b = text.encode("utf-8")
    return b if b.endswith(b"\n") else b + b"\r\n"
