"""Build a :class:`Record` from arrays, and cut one down (window, channels).

For the simulator, tests and exports: no file is involved.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import replace
from datetime import datetime, timedelta

import numpy as np

from eventlab.records.model import AnalogChannel, RateSegment, Record, StatusChannel

_ANALOG_KEYS = ("name", "phase", "unit", "values", "circuit")
_STATUS_KEYS = ("name", "values", "circuit")


def _ro(values, dtype) -> np.ndarray:
    arr = np.array(values, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


def _as_dict(item, keys: tuple[str, ...], kind: str) -> dict:
    if isinstance(item, Mapping):
        return dict(item)
    if isinstance(item, (AnalogChannel, StatusChannel)):
        return {k: getattr(item, k) for k in item.__dataclass_fields__}
    item = tuple(item)
    if not len(keys) - 1 <= len(item) <= len(keys):
        raise TypeError(f"{kind} channel {item[:1]!r}: expected a tuple {keys} (last optional)")
    return dict(zip(keys, item, strict=False))


def make_record(station: str, time_or_rate, analog: Iterable = (), status: Iterable = (),
                *, frequency_hz: float = 60.0, device: str = "eventlab",
                start: datetime | None = None, trigger: datetime | None = None,
                trigger_s: float | None = None, values: str = "primary",
                header_text: str | None = None, info_text: str | None = None,
                source: str | None = None) -> Record:
    """Build a :class:`Record` from arrays.

    Parameters
    ----------
    station : str
        Station name (``station_name``).
    time_or_rate : float or array_like
        A sample rate [Hz] (one fixed-rate segment, time ``k / rate``), or the
        time of each sample [s] (counted from the first sample: the first
        value is subtracted; written later with ``nrates = 0``).
    analog : iterable
        Channels as tuples ``(name, phase, unit, values)`` or ``(name, phase,
        unit, values, circuit)``, or mappings with those keys and optionally
        ``primary``, ``secondary`` (ratio factors), ``skew_s`` [s].  Values in
        the units given (SI: "V", "A"), float64, NaN for missing.
    status : iterable
        Channels as ``(name, values)`` or ``(name, values, circuit)`` or
        mappings with those keys and optionally ``phase``, ``normal``.
    frequency_hz : float
        Nominal line frequency ``lf`` [Hz].
    start, trigger : datetime, optional
        First-sample and trigger date/time.  ``trigger_s`` [s] sets the
        trigger relative to ``start`` instead.
    values : {"primary", "secondary"}
        Which side the analog values are on.

    Returns
    -------
    Record
    """
    if values not in ("primary", "secondary"):
        raise ValueError(f"values must be 'primary' or 'secondary', not {values!r}")
    analog = [_as_dict(a, _ANALOG_KEYS, "analog") for a in analog]
    status = [_as_dict(s, _STATUS_KEYS, "status") for s in status]
    if np.ndim(time_or_rate) == 0:
        rate = float(time_or_rate)
        if not rate > 0 or not np.isfinite(rate):
            raise ValueError(f"sample rate must be a positive number [Hz], not {time_or_rate!r}")
        lengths = {len(np.asarray(c["values"])) for c in analog + status}
        if len(lengths) > 1:
            raise ValueError(f"channels have different lengths {sorted(lengths)}")
        n = lengths.pop() if lengths else 0
        time = np.arange(n) / rate
        rates = (RateSegment(rate, n),)
    else:
        time = np.asarray(time_or_rate, dtype=np.float64)
        if time.ndim != 1 or (time.size and not np.all(np.isfinite(time))):
            raise ValueError("time must be a 1-D array of finite seconds")
        if time.size > 1 and np.any(np.diff(time) <= 0):
            raise ValueError("time must increase")
        n = time.size
        time = time - time[0] if n else time
        rates = (RateSegment(0.0, n),)
    if start is None:
        start = datetime(2026, 1, 1)
    if trigger is None:
        trigger = start + timedelta(seconds=trigger_s) if trigger_s is not None else start
    ps = "P" if values == "primary" else "S"
    chans = []
    for k, c in enumerate(analog):
        v = _ro(c["values"], np.float64)
        if v.shape != (n,):
            raise ValueError(f"analog channel {c['name']!r} has {v.shape[0]} values, expected {n}")
        finite = v[np.isfinite(v)]
        chans.append(AnalogChannel(
            index=k + 1, name=str(c["name"]), phase=str(c.get("phase", "")),
            circuit=str(c.get("circuit", "") or ""), unit=str(c.get("unit", "")), a=1.0, b=0.0,
            skew_s=float(c.get("skew_s", 0.0)),
            min=float(finite.min()) if finite.size else 0.0,
            max=float(finite.max()) if finite.size else 0.0,
            primary=float(c.get("primary", 1.0)), secondary=float(c.get("secondary", 1.0)),
            ps=ps, values=v))
    schans = []
    for k, c in enumerate(status):
        v = _ro(np.asarray(c["values"]) != 0, np.uint8)
        if v.shape != (n,):
            raise ValueError(f"status channel {c['name']!r} has {v.shape[0]} values, expected {n}")
        schans.append(StatusChannel(index=k + 1, name=str(c["name"]),
                                    phase=str(c.get("phase", "")),
                                    circuit=str(c.get("circuit", "") or ""),
                                    normal=int(c.get("normal", 0)), values=v))
    time.setflags(write=False)
    return Record(station=station, device=device, revision=2013, data_format="BINARY",
                  frequency_hz=float(frequency_hz), rates=rates, start=start, trigger=trigger,
                  time=time, analog=tuple(chans), status=tuple(schans), values=values,
                  header_text=header_text, info_text=info_text, source=source)


def select(record: Record, *, start_s: float | None = None, end_s: float | None = None,
           analog: Sequence[str] | None = None, status: Sequence[str] | None = None) -> Record:
    """A copy of ``record`` cut to a time window and/or a choice of channels.

    Parameters
    ----------
    start_s, end_s : float, optional
        Keep samples with ``start_s <= time <= end_s`` [s, record time].  The
        new record's time counts from its first kept sample; ``start`` moves
        with it.
    analog, status : sequence of str, optional
        Channel names to keep, in that order (default: all).
    """
    t = record.time
    keep = np.ones(t.shape, dtype=bool)
    if start_s is not None:
        keep &= t >= start_s
    if end_s is not None:
        keep &= t <= end_s
    idx = np.flatnonzero(keep)
    if idx.size == 0:
        raise ValueError(f"no samples between {start_s} s and {end_s} s")
    i0, i1 = int(idx[0]), int(idx[-1]) + 1
    a_ch = record.analog if analog is None else tuple(record.analog_by_name(n) for n in analog)
    s_ch = record.status if status is None else tuple(record.status_by_name(n) for n in status)
    new_a = tuple(replace(c, index=k + 1, values=_ro(c.values[i0:i1], np.float64))
                  for k, c in enumerate(a_ch))
    new_s = tuple(replace(c, index=k + 1, values=_ro(c.values[i0:i1], np.uint8))
                  for k, c in enumerate(s_ch))
    time = _ro(t[i0:i1] - t[i0], np.float64)
    # rate segments: sample numbers k (1-based) -> kept window i0+1 .. i1
    rates = []
    for seg in record.rates:
        if seg.samp_hz <= 0:
            rates = [RateSegment(0.0, i1 - i0)]
            break
        end = min(seg.endsamp, i1) - i0
        if end >= 1 and (not rates or end > rates[-1].endsamp):
            rates.append(RateSegment(seg.samp_hz, end))
    if rates and rates[-1].endsamp != i1 - i0:
        rates = [RateSegment(0.0, i1 - i0)]
    start = record.start
    start_ns = record.start_ns
    if start is not None and i0:
        total_ns = start_ns + round(float(t[i0]) * 1e9)
        start = start + timedelta(microseconds=total_ns // 1000)
        start_ns = total_ns % 1000
    return replace(record, time=time, analog=new_a, status=new_s, rates=tuple(rates),
                   start=start, start_ns=start_ns)
