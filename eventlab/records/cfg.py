"""Parse COMTRADE configuration text (.cfg) into a frozen :class:`CfgInfo`.

The layout is that of IEEE C37.111-2013 clause 6 (the 1999 revision has the
same lines up to ``timemult``; the 1991 revision has no ``rev_year``, no
``primary``/``secondary``/``PS`` and no ``timemult``).  Every problem raises
one :class:`~eventlab.errors.RecordFormatError` naming the file, the 1-based
line and the field (C37.111 spelling), and what was expected.

This module is pure: text in, dataclass out.  :func:`format_cfg` is the
inverse used by the writer.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from datetime import datetime, timedelta

from eventlab.errors import RecordFormatError

REVISIONS = (1991, 1999, 2013)
DATA_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")

#: Largest |a| or |b| accepted: beyond this a file is treated as corrupt
#: (common practice, no source: 1e15 times a 32-bit integer is far beyond any
#: primary quantity a recorder measures).
MAX_FACTOR = 1e15
#: Highest sample rate accepted [Hz] (common practice, no source; recorders
#: sample at up to a few MHz).
MAX_SAMPLE_RATE_HZ = 1e9
#: Highest nominal line frequency accepted [Hz] (common practice, no source).
MAX_LINE_FREQUENCY_HZ = 1000.0
#: Most sample-rate segments accepted (C37.111-2013 clause 6.7 puts no limit;
#: 999 keeps a corrupt count from driving the parser).
MAX_NRATES = 999

_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x19\x1b-\x1f\x7f]")
_DATE = re.compile(r"^(\d{1,2})/(\d{1,2})/(\d{2,4})$")
_TIME = re.compile(r"^(\d{1,2}):(\d{1,2}):(\d{1,2})(?:\.(\d{1,9}))?$")
_TIME_CODE = re.compile(r"^[+-]?\d{1,2}(?:h\d{1,2})?$", re.IGNORECASE)


@dataclass(frozen=True)
class AnalogSpec:
    """One analog channel line (C37.111-2013 clause 6.4)."""

    index: int
    name: str
    phase: str
    circuit: str
    unit: str
    a: float
    b: float
    skew_us: float
    min: float
    max: float
    primary: float
    secondary: float
    ps: str
    line: int


@dataclass(frozen=True)
class StatusSpec:
    """One status channel line (C37.111-2013 clause 6.5)."""

    index: int
    name: str
    phase: str
    circuit: str
    normal: int
    line: int


@dataclass(frozen=True)
class CfgInfo:
    """Everything a .cfg declares, with C37.111 field names."""

    station: str
    device: str
    revision: int
    n_total: int
    n_analog: int
    n_status: int
    analog: tuple[AnalogSpec, ...]
    status: tuple[StatusSpec, ...]
    frequency_hz: float
    nrates: int
    rates: tuple[tuple[float, int], ...]   # (samp [Hz], endsamp) as declared
    start: datetime | None
    start_ns: int
    trigger: datetime | None
    trigger_ns: int
    time_base_s: float                      # 1e-6, or 1e-9 with ns time stamps
    data_format: str
    timemult: float
    time_code: str = ""
    local_code: str = ""
    tmq_code: str = ""
    leapsec: int = 0
    path: str | None = None

    @property
    def n_samples(self) -> int:
        """Declared number of samples: the last ``endsamp`` (clause 6.7)."""
        return self.rates[-1][1] if self.rates else 0


def decode_text(raw: bytes, path: str | None, what: str = "configuration") -> str:
    """Decode COMTRADE text: UTF-8 (2013 clause 5.1), else Latin-1.

    Text that is not UTF-8 but decodes as Latin-1 (common in station and
    channel names written by older recorders) is accepted.  Control
    characters other than tab, CR, LF and the DOS end-of-file mark 0x1A mean
    binary data where text belongs and raise :class:`RecordFormatError`.
    """
    text = decode_free_text(raw)
    m = _CONTROL.search(text)
    if m is not None:
        line = text.count("\n", 0, m.start()) + 1
        raise RecordFormatError(
            f"binary data (byte 0x{ord(m.group()):02x}) where {what} text was expected",
            path=path, line=line)
    return text


def decode_free_text(raw: bytes) -> str:
    """Decode free text (.hdr, .inf, or a .cfg before its checks): UTF-8, else Latin-1.

    A UTF-8 byte-order mark and DOS end-of-file marks (0x1A) are dropped.
    """
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    return text.replace("\x1a", "")


_COUNT_HINT = (" (a line of the other kind of channel: do the ##A and ##D counts on "
               "line 2 match the channel lines?)")


class _Lines:
    """A cursor over the lines of a .cfg with error helpers."""

    def __init__(self, text: str, path: str | None):
        # CR LF, LF, or CR alone (as some older recorders end lines)
        self.lines = re.split(r"\r\n|\r|\n", text)
        while self.lines and not self.lines[-1].strip():
            self.lines.pop()
        self.path = path
        self.pos = 0

    def next(self, field: str, optional: bool = False) -> tuple[int, str | None]:
        if self.pos >= len(self.lines):
            if optional:
                return self.pos + 1, None
            raise RecordFormatError(f"file ends before the line holding {field}",
                                    path=self.path, line=self.pos + 1, field=field)
        self.pos += 1
        return self.pos, self.lines[self.pos - 1]

    def error(self, line: int, field: str, message: str) -> RecordFormatError:
        return RecordFormatError(message, path=self.path, line=line, field=field)


def _fields(line: str) -> list[str]:
    return [f.strip() for f in line.split(",")]


def _int(cur: _Lines, line: int, field: str, text: str, lo: int | None = None,
         hi: int | None = None) -> int:
    try:
        value = int(text)
    except ValueError:
        raise cur.error(line, field, f"expected an integer, found {text!r}") from None
    if lo is not None and value < lo:
        raise cur.error(line, field, f"expected an integer >= {lo}, found {value}")
    if hi is not None and value > hi:
        raise cur.error(line, field, f"expected an integer <= {hi}, found {value}")
    return value


def _float(cur: _Lines, line: int, field: str, text: str, default: float | None = None,
           max_abs: float | None = None) -> float:
    if text == "" and default is not None:
        return default
    try:
        value = float(text)
    except ValueError:
        raise cur.error(line, field, f"expected a number, found {text!r}") from None
    if not math.isfinite(value):
        raise cur.error(line, field, f"expected a finite number, found {text!r}")
    if max_abs is not None and abs(value) > max_abs:
        raise cur.error(line, field, f"expected a magnitude <= {max_abs:g}, found {text!r}")
    return value


def _count(cur: _Lines, line: int, field: str, text: str, suffix: str) -> int:
    t = text.strip()
    if not t or t[-1].upper() != suffix:
        raise cur.error(line, field, f"expected a count followed by {suffix!r} "
                                     f"(e.g. 6{suffix}), found {text!r}")
    return _int(cur, line, field, t[:-1].strip(), lo=0)


def parse_timestamp(text: str, revision: int, cur: _Lines, line: int,
                    field: str) -> tuple[datetime | None, int, bool]:
    """Parse ``dd/mm/yyyy,hh:mm:ss.ssssss`` (clause 6.10; 1991: ``mm/dd/yy``).

    Returns ``(datetime or None, sub-microsecond ns 0..999, has_ns)``.  A blank
    stamp or an all-zero date gives ``None``.  A second of 60 (a leap second,
    clause 6.12) is carried into the next minute.
    """
    parts = _fields(text)
    if len(parts) != 2:
        if not text.strip():
            return None, 0, False
        raise cur.error(line, field, f"expected 'dd/mm/yyyy,hh:mm:ss.ssssss', found {text!r}")
    date_s, time_s = parts
    if not date_s and not time_s:
        return None, 0, False
    md = _DATE.match(date_s)
    mt = _TIME.match(time_s)
    if md is None or mt is None:
        want = "mm/dd/yy" if revision == 1991 else "dd/mm/yyyy"
        raise cur.error(line, field, f"expected '{want},hh:mm:ss.ssssss', found {text!r}")
    p, q, year = (int(g) for g in md.groups())
    day, month = (q, p) if revision == 1991 else (p, q)
    frac = mt.group(4) or ""
    has_ns = len(frac) > 6
    ns_total = int(frac.ljust(9, "0")) if frac else 0
    if day == 0 and month == 0 and year == 0:
        return None, 0, has_ns
    if len(md.group(3)) == 2:  # two-digit year (1991 files)
        year += 1900 if year >= 70 else 2000
    hour, minute, sec = (int(g) for g in mt.groups()[:3])
    leap = sec == 60
    try:
        stamp = datetime(year, month, day, hour, minute, 59 if leap else sec,
                         ns_total // 1000)
    except ValueError as exc:
        raise cur.error(line, field, f"invalid date/time {text!r} ({exc})") from None
    if leap:
        stamp += timedelta(seconds=1)
    return stamp, ns_total % 1000, has_ns


def parse_cfg(text: str, path: str | None = None) -> CfgInfo:
    """Parse the text of a .cfg file (C37.111-2013 clause 6).

    Parameters
    ----------
    text : str
        Decoded configuration text (see :func:`decode_text`).
    path : str, optional
        Named in error messages.

    Returns
    -------
    CfgInfo

    Raises
    ------
    RecordFormatError
        For the first problem found, naming line and field.
    """
    cur = _Lines(text, path)
    if not cur.lines:
        raise RecordFormatError("empty configuration file; expected "
                                "'station_name,rec_dev_id,rev_year'", path=path, line=1)
    # line 1: station_name,rec_dev_id,rev_year (clause 6.2)
    ln, s = cur.next("station_name")
    f = _fields(s)
    if len(f) == 2:
        revision = 1991
    elif len(f) == 3:
        revision = _int(cur, ln, "rev_year", f[2]) if f[2] else -1
        if revision not in REVISIONS:
            raise cur.error(ln, "rev_year", f"expected 1991, 1999 or 2013, found {f[2]!r}")
    else:
        raise cur.error(ln, "station_name", f"expected 'station_name,rec_dev_id,rev_year' "
                                            f"(3 fields), found {len(f)} fields")
    station, device = f[0], f[1]

    # line 2: TT,##A,##D (clause 6.3)
    ln, s = cur.next("TT")
    f = _fields(s)
    if len(f) != 3:
        raise cur.error(ln, "TT", f"expected 'TT,##A,##D' (3 fields), found {s!r}")
    n_total = _int(cur, ln, "TT", f[0], lo=0)
    n_analog = _count(cur, ln, "##A", f[1], "A")
    n_status = _count(cur, ln, "##D", f[2], "D")
    if n_total != n_analog + n_status:
        raise cur.error(ln, "TT", f"total {n_total} is not analog {n_analog} + "
                                  f"status {n_status}")

    # analog channel lines (clause 6.4)
    analog = []
    for i in range(n_analog):
        ln, s = cur.next(f"An (analog channel {i + 1} of {n_analog})")
        f = _fields(s)
        if len(f) < 10 or (revision != 1991 and len(f) < 13):
            want = 10 if revision == 1991 else 13
            raise cur.error(ln, "An", f"analog channel {i + 1} of {n_analog}: expected "
                                      f"{want} fields, found {len(f)}" + _COUNT_HINT * (
                                          len(f) in (3, 5)))
        idx = _int(cur, ln, "An", f[0], lo=1)
        a = _float(cur, ln, "a", f[5], max_abs=MAX_FACTOR)
        b = _float(cur, ln, "b", f[6], default=0.0, max_abs=MAX_FACTOR)
        skew = _float(cur, ln, "skew", f[7], default=0.0, max_abs=1e9)
        cmin = _float(cur, ln, "min", f[8], default=-32767.0)
        cmax = _float(cur, ln, "max", f[9], default=32767.0)
        if len(f) >= 13:
            primary = _float(cur, ln, "primary", f[10], default=0.0)
            secondary = _float(cur, ln, "secondary", f[11], default=0.0)
            ps = f[12].upper()
            if ps == "" and revision == 1991:
                ps = "P"
            if ps not in ("P", "S"):
                raise cur.error(ln, "PS", f"expected 'P' or 'S', found {f[12]!r}")
            if primary == 0.0 and secondary == 0.0:
                primary = secondary = 1.0  # ratio not given: 1:1
            if primary <= 0.0 or secondary <= 0.0:
                raise cur.error(ln, "primary" if primary <= 0.0 else "secondary",
                                f"expected positive primary and secondary ratio factors, "
                                f"found {f[10]!r} and {f[11]!r}")
        else:  # 1991: no ratios, values as recorded, treated as primary
            primary = secondary = 1.0
            ps = "P"
        analog.append(AnalogSpec(idx, f[1], f[2], f[3], f[4], a, b, skew, cmin, cmax,
                                 primary, secondary, ps, ln))

    # status channel lines (clause 6.5)
    status = []
    for i in range(n_status):
        ln, s = cur.next(f"Dn (status channel {i + 1} of {n_status})")
        f = _fields(s)
        if revision == 1991 and len(f) == 3:  # 1991: Dn,ch_id,y (from memory)
            f = [f[0], f[1], "", "", f[2]]
        if len(f) < 5 or len(f) >= 10:
            raise cur.error(ln, "Dn", f"status channel {i + 1} of {n_status}: expected 5 "
                                      f"fields, found {len(f)}" + _COUNT_HINT * (len(f) >= 10))
        idx = _int(cur, ln, "Dn", f[0], lo=1)
        y = _int(cur, ln, "y", f[4], lo=0, hi=1) if f[4] else 0
        status.append(StatusSpec(idx, f[1], f[2], f[3], y, ln))

    # lf (clause 6.6)
    ln, s = cur.next("lf")
    lf = _float(cur, ln, "lf", s.strip(), default=0.0)
    if not 0.0 <= lf <= MAX_LINE_FREQUENCY_HZ:
        raise cur.error(ln, "lf", f"expected a line frequency 0..{MAX_LINE_FREQUENCY_HZ:g} Hz, "
                                  f"found {s.strip()!r}")

    # nrates and samp,endsamp (clause 6.7)
    ln, s = cur.next("nrates")
    nrates = _int(cur, ln, "nrates", s.strip(), lo=0, hi=MAX_NRATES)
    rates = []
    last_end = 0
    for k in range(max(nrates, 1)):
        ln, s = cur.next("samp")
        f = _fields(s)
        if len(f) != 2:
            raise cur.error(ln, "samp", f"expected 'samp,endsamp', found {s!r}")
        samp = _float(cur, ln, "samp", f[0])
        if nrates == 0:
            if samp != 0.0:
                raise cur.error(ln, "samp", f"expected samp 0 with nrates 0, found {f[0]!r}")
        elif not 0.0 < samp <= MAX_SAMPLE_RATE_HZ:
            raise cur.error(ln, "samp", f"expected a sample rate > 0 and <= "
                                        f"{MAX_SAMPLE_RATE_HZ:g} Hz, found {f[0]!r}")
        endsamp = _int(cur, ln, "endsamp", f[1], lo=0)
        if endsamp <= last_end and not (endsamp == 0 and k == 0):
            raise cur.error(ln, "endsamp", f"expected endsamp > {last_end}, found {endsamp}")
        last_end = endsamp
        rates.append((samp, endsamp))

    # start and trigger date/time (clause 6.10)
    ln, s = cur.next("start date/time")
    start, start_ns, ns1 = parse_timestamp(s, revision, cur, ln, "start date/time")
    ln, s = cur.next("trigger date/time")
    trigger, trigger_ns, ns2 = parse_timestamp(s, revision, cur, ln, "trigger date/time")

    # ft (clause 6.11)
    ln, s = cur.next("ft")
    ft = s.strip().upper()
    if ft not in DATA_FORMATS:
        raise cur.error(ln, "ft", f"expected ASCII, BINARY, BINARY32 or FLOAT32, found "
                                  f"{s.strip()!r}")
    if revision != 2013 and ft in ("BINARY32", "FLOAT32"):
        raise cur.error(ln, "ft", f"{ft} needs rev_year 2013, the file declares {revision}")

    timemult = 1.0
    if revision != 1991:
        ln, s = cur.next("timemult", optional=True)
        if s is not None and s.strip():
            timemult = _float(cur, ln, "timemult", s.strip())
            if not 0.0 < timemult <= 1e9:
                raise cur.error(ln, "timemult", f"expected a positive multiplier, found "
                                                f"{s.strip()!r}")

    time_code = local_code = tmq_code = ""
    leapsec = 0
    if revision == 2013:  # clauses 6.12 and 6.13
        ln, s = cur.next("time_code", optional=True)
        if s is not None and s.strip():
            f = _fields(s)
            if len(f) != 2:
                raise cur.error(ln, "time_code", f"expected 'time_code,local_code', found {s!r}")
            for name, val in zip(("time_code", "local_code"), f, strict=True):
                if val and val.lower() != "x" and not _TIME_CODE.match(val):
                    raise cur.error(ln, name, f"expected an offset like -5 or +5h30, "
                                              f"found {val!r}")
            time_code, local_code = f
        ln, s = cur.next("tmq_code", optional=True)
        if s is not None and s.strip():
            f = _fields(s)
            if len(f) != 2:
                raise cur.error(ln, "tmq_code", f"expected 'tmq_code,leapsec', found {s!r}")
            if f[0] and not re.fullmatch(r"[0-9A-Fa-f]", f[0]):
                raise cur.error(ln, "tmq_code", f"expected one hexadecimal digit, found {f[0]!r}")
            tmq_code = f[0].upper()
            leapsec = _int(cur, ln, "leapsec", f[1], lo=0, hi=3) if f[1] else 0

    return CfgInfo(
        station=station, device=device, revision=revision, n_total=n_total,
        n_analog=n_analog, n_status=n_status, analog=tuple(analog), status=tuple(status),
        frequency_hz=lf, nrates=nrates, rates=tuple(rates), start=start, start_ns=start_ns,
        trigger=trigger, trigger_ns=trigger_ns, time_base_s=1e-9 if (ns1 or ns2) else 1e-6,
        data_format=ft, timemult=timemult, time_code=time_code, local_code=local_code,
        tmq_code=tmq_code, leapsec=leapsec, path=path)


def _num(x: float) -> str:
    """Shortest text that reads back as the same float."""
    if float(x).is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(float(x))


def format_timestamp(stamp: datetime | None, ns: int, revision: int, nanoseconds: bool) -> str:
    """Inverse of :func:`parse_timestamp` (clause 6.10)."""
    if stamp is None:
        return "01/01/1970,00:00:00.000000"   # C37.111 needs a stamp; epoch as placeholder
    date = (f"{stamp.month:02d}/{stamp.day:02d}/{stamp.year:04d}" if revision == 1991
            else f"{stamp.day:02d}/{stamp.month:02d}/{stamp.year:04d}")
    frac = f"{stamp.microsecond:06d}" + (f"{ns:03d}" if nanoseconds else "")
    return f"{date},{stamp.hour:02d}:{stamp.minute:02d}:{stamp.second:02d}.{frac}"


def format_cfg(info: CfgInfo) -> str:
    """Write ``info`` as .cfg text (the inverse of :func:`parse_cfg`), CRLF line ends."""
    rev = info.revision
    lines = [f"{info.station},{info.device}" + ("" if rev == 1991 else f",{rev}"),
             f"{info.n_analog + info.n_status},{info.n_analog}A,{info.n_status}D"]
    for ch in info.analog:
        parts = [str(ch.index), ch.name, ch.phase, ch.circuit, ch.unit, repr(float(ch.a)),
                 repr(float(ch.b)), _num(ch.skew_us), _num(ch.min), _num(ch.max)]
        if rev != 1991:
            parts += [_num(ch.primary), _num(ch.secondary), ch.ps]
        lines.append(",".join(parts))
    for ch in info.status:
        if rev == 1991:
            lines.append(f"{ch.index},{ch.name},{ch.normal}")
        else:
            lines.append(f"{ch.index},{ch.name},{ch.phase},{ch.circuit},{ch.normal}")
    lines.append(_num(info.frequency_hz))
    lines.append(str(info.nrates))
    for samp, endsamp in info.rates:
        lines.append(f"{_num(samp)},{endsamp}")
    ns = info.time_base_s < 1e-6
    lines.append(format_timestamp(info.start, info.start_ns, rev, ns))
    lines.append(format_timestamp(info.trigger, info.trigger_ns, rev, ns))
    lines.append(info.data_format)
    if rev != 1991:
        lines.append(_num(info.timemult))
    if rev == 2013:
        lines.append(f"{info.time_code or '0'},{info.local_code or '0'}")
        lines.append(f"{info.tmq_code or '0'},{info.leapsec}")
    return "\r\n".join(lines) + "\r\n"
