"""The in-memory event record: what a COMTRADE file holds, in SI units.

Field names follow IEEE C37.111-2013 clause 6 (the configuration file) where
the standard names a field (``ph``, ``ccbm``, ``uu``, ``a``, ``b``, ``skew``,
``primary``, ``secondary``, ``PS``, ``y``, ``samp``, ``endsamp``, ``timemult``,
``time_code``, ``local_code``, ``tmq_code``, ``leapsec``).

A :class:`Record` is immutable: its dataclasses are frozen and its arrays are
read-only views.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Literal

import numpy as np

ValueKind = Literal["primary", "secondary"]
DataFormat = Literal["ASCII", "BINARY", "BINARY32", "FLOAT32"]


def frozen_array(values, dtype) -> np.ndarray:
    """Return ``values`` as a read-only numpy array of ``dtype``."""
    arr = np.array(values, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class AnalogChannel:
    """One analog channel (C37.111-2013 clause 6.4).

    ``values`` are float64 in the kind the record was read as (``Record.values``):
    primary or secondary units, missing samples as NaN.
    """

    index: int                 # An, 1-based
    name: str                  # ch_id
    phase: str                 # ph
    circuit: str               # ccbm
    unit: str                  # uu
    a: float                   # multiplier
    b: float                   # offset adder
    skew_s: float              # skew [s]
    min: float                 # min (raw integer range)
    max: float                 # max
    primary: float             # primary ratio factor
    secondary: float           # secondary ratio factor
    ps: str                    # 'P' or 'S': which side a*x+b gives
    values: np.ndarray = field(repr=False, compare=False)

    @property
    def ratio(self) -> float:
        """Instrument transformer ratio primary/secondary (1.0 when unknown)."""
        if self.secondary == 0.0 or not np.isfinite(self.secondary):
            return 1.0
        return self.primary / self.secondary


@dataclass(frozen=True)
class StatusChannel:
    """One status (digital) channel (C37.111-2013 clause 6.5)."""

    index: int                 # Dn, 1-based
    name: str                  # ch_id
    phase: str                 # ph
    circuit: str               # ccbm
    normal: int                # y: normal state 0 or 1
    values: np.ndarray = field(repr=False, compare=False)  # uint8, 0/1


@dataclass(frozen=True)
class RateSegment:
    """One sample-rate segment (clause 6.7): ``samp`` [Hz] up to sample ``endsamp``."""

    samp_hz: float
    endsamp: int


@dataclass(frozen=True)
class Record:
    """An event record read from COMTRADE, or made to be written as one.

    ``time`` is float64 seconds from the first sample (C37.111 data-file time
    stamps times ``timemult``, or the sample-rate segments).  ``start`` and
    ``trigger`` are the first-sample and trigger date/times of clause 6.10;
    datetimes keep microseconds, and the sub-microsecond part of a nanosecond
    time stamp is kept in ``start_ns`` / ``trigger_ns`` (0..999).
    """

    station: str               # station_name
    device: str                # rec_dev_id
    revision: int              # rev_year: 1991, 1999 or 2013
    data_format: str           # ft
    frequency_hz: float        # lf
    rates: tuple[RateSegment, ...]
    start: datetime | None
    trigger: datetime | None
    time: np.ndarray = field(repr=False, compare=False)
    analog: tuple[AnalogChannel, ...] = ()
    status: tuple[StatusChannel, ...] = ()
    values: str = "primary"    # which kind the analog values are in
    timemult: float = 1.0
    time_code: str = ""        # 2013: time code, e.g. "+5h30" or "-4"
    local_code: str = ""       # 2013: local code
    tmq_code: str = ""         # 2013: time quality code (hex digit)
    leapsec: int = 0           # 2013: leap second indicator 0..3
    start_ns: int = 0
    trigger_ns: int = 0
    header_text: str | None = None   # .hdr content, as text
    info_text: str | None = None     # .inf content, as text
    source: str | None = None        # where the record was read from

    # ---- look-up ------------------------------------------------------
    def analog_by_name(self, name: str) -> AnalogChannel:
        """The analog channel called ``name`` (exact, then case-insensitive)."""
        return _by_name(self.analog, name, "analog")

    def status_by_name(self, name: str) -> StatusChannel:
        """The status channel called ``name`` (exact, then case-insensitive)."""
        return _by_name(self.status, name, "status")

    @property
    def n_samples(self) -> int:
        return int(self.time.shape[0])

    @property
    def utc_offset(self) -> timedelta | None:
        """The ``time_code`` as an offset of the time stamps from UTC, or None.

        C37.111-2013 clause 6.12 (from memory): ``time_code`` is the time stamps'
        offset from UTC in hours (and minutes), ``-5h30`` for stamps 5 h 30 min
        behind UTC, as an ISO 8601 offset; so UTC is the stamp minus the offset.  None when
        the record has none (revisions 1991 and 1999, an empty field, ``x``).
        """
        return time_code_offset(self.time_code)

    @property
    def duration_s(self) -> float:
        return float(self.time[-1] - self.time[0]) if self.n_samples else 0.0

    @property
    def sample_rate_hz(self) -> float:
        """The highest declared sample rate, or one estimated from ``time``."""
        rates = [r.samp_hz for r in self.rates if r.samp_hz > 0]
        if rates:
            return float(max(rates))
        if self.n_samples > 1:
            dt = uniform_step(self.time)
            if dt is None:
                dt = float(np.median(np.diff(self.time)))
            if dt > 0:
                return float(1.0 / dt)
        return 0.0


def time_code_offset(code: str) -> timedelta | None:
    """``-5h30`` -> -5.5 h, ``+1`` -> 1 h, ``0`` -> 0; None for ``""``, ``x`` or another text."""
    m = re.fullmatch(r"\s*([+-]?)(\d{1,2})(?:[hH](\d{1,2}))?\s*", code or "")
    if m is None:
        return None
    sign = -1 if m.group(1) == "-" else 1
    return sign * timedelta(hours=int(m.group(2)), minutes=int(m.group(3) or 0))


def uniform_step(time_s) -> float | None:
    """The sample step [s] of evenly spaced times, or None when they are not.

    Evenly spaced: every step within 1 % of the median one.  The step is then
    the span over the steps, so times stamped to a coarse unit (260 and 261 us
    for 3840 Hz) give the rate, which the median step would not.
    """
    t = np.asarray(time_s, dtype=float)
    if t.size < 2:
        return None
    d = np.diff(t)
    dt = float(np.median(d))
    if not (dt > 0 and np.max(np.abs(d - dt)) <= 0.01 * dt):
        return None
    return float(t[-1] - t[0]) / (t.size - 1)


def _by_name(channels, name: str, kind: str):
    for ch in channels:
        if ch.name == name:
            return ch
    low = name.strip().casefold()
    for ch in channels:
        if ch.name.strip().casefold() == low:
            return ch
    from eventlab.errors import ChannelMapError

    names = ", ".join(ch.name for ch in channels) or "none"
    raise ChannelMapError(f"no {kind} channel named {name!r}; the record has: {names}")
