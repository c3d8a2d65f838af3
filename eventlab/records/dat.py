"""Decode and encode COMTRADE data (.dat) with numpy.

Layout (IEEE C37.111-2013 clause 7 and 8): each sample is one row holding the
sample number ``n``, the time stamp, the analog data values and the status
values.  ASCII rows are comma separated text; binary rows are little-endian
``uint32 n``, ``uint32 timestamp``, the analog values as ``int16`` (BINARY),
``int32`` (BINARY32) or IEEE-754 ``float32`` (FLOAT32), then the status
channels packed 16 to a ``uint16`` word, channel 1 in the least significant
bit.

Missing data become NaN:

* BINARY ``0x8000`` (-32768), BINARY32 ``0x80000000`` (C37.111-2013 clause 8.3,
  from memory); in a 1991 binary file ``0xFFFF`` (-1), as the ``comtrade``
  package reads it (from memory, unverified against the 1991 text);
* FLOAT32: any NaN pattern, which includes the ``0xFFFFFFFF`` the 2013
  revision prescribes (clause 8.4, from memory);
* ASCII: an empty field, and ``99999`` in 1999 and 2013 files (C37.111-1999
  clause 7.4.2 reserves 99999 for missing data, from memory);
* time stamp ``0xFFFFFFFF`` (binary) or empty (ASCII): missing, NaN here.

The functions are pure (bytes in, arrays out) and never allocate more than
the bytes given can hold: a declared sample count is checked against the
buffer length first.
"""

from __future__ import annotations

import io
import re
import warnings
from dataclasses import dataclass

import numpy as np

from eventlab.errors import RecordFormatError
from eventlab.records.cfg import CfgInfo

TIMESTAMP_MISSING = 0xFFFFFFFF
_ANALOG_DTYPE = {"BINARY": np.dtype("<i2"), "BINARY32": np.dtype("<i4"),
                 "FLOAT32": np.dtype("<f4")}
INT_MAX = {"ASCII": 32767, "BINARY": 32767, "BINARY32": 2147483647}
_CONTROL_BYTES = re.compile(rb"[\x00-\x08\x0b\x0c\x0e-\x19\x1b-\x1f\x7f]")


@dataclass(frozen=True)
class DatData:
    """Decoded rows: raw values before the ``a*x+b`` conversion."""

    sample_numbers: np.ndarray   # int64 (n,)
    timestamps: np.ndarray       # float64 (n,), NaN where missing
    raw: np.ndarray              # (n, n_analog) numbers as stored (int or float, maybe a view)
    status: np.ndarray           # uint8 (n_status, n)
    missing_code: float | None = None   # raw value that marks missing data, or None


def missing_code(data_format: str, revision: int) -> float | None:
    """The integer that marks a missing analog value, or None (FLOAT32)."""
    if data_format == "BINARY":
        return -1.0 if revision == 1991 else -32768.0
    if data_format == "BINARY32":
        return -2147483648.0
    if data_format == "ASCII":
        return None if revision == 1991 else 99999.0
    return None


def row_dtype(n_analog: int, n_status: int, data_format: str) -> np.dtype:
    """Structured numpy dtype of one binary row (clause 8)."""
    fields = [("n", "<u4"), ("t", "<u4")]
    if n_analog:
        fields.append(("a", _ANALOG_DTYPE[data_format], (n_analog,)))
    n_words = (n_status + 15) // 16
    if n_words:
        fields.append(("s", "<u2", (n_words,)))
    return np.dtype(fields)


def decode(buf: bytes, info: CfgInfo, path: str | None = None) -> DatData:
    """Decode a whole .dat buffer according to ``info`` (ASCII or binary)."""
    if info.data_format == "ASCII":
        return decode_ascii(buf, info, path)
    return decode_binary(buf, info, path)


def _check_sample_numbers(n: np.ndarray, path: str | None) -> None:
    if n.size > 1:
        bad = np.flatnonzero(np.diff(n) <= 0)
        if bad.size:
            k = int(bad[0]) + 1
            raise RecordFormatError(
                f"sample number {int(n[k])} follows {int(n[k - 1])}; expected increasing "
                f"sample numbers", path=path, line=k + 1, field="n")


def decode_binary(buf: bytes, info: CfgInfo, path: str | None = None) -> DatData:
    """Decode BINARY, BINARY32 or FLOAT32 rows (clause 8) with one ``np.frombuffer``."""
    dtype = row_dtype(info.n_analog, info.n_status, info.data_format)
    n_decl = info.n_samples
    size = dtype.itemsize
    have = len(buf) // size
    if have < n_decl:
        raise RecordFormatError(
            f"declared {n_decl} samples of {size} bytes ({n_decl * size} bytes) but the "
            f"file holds {len(buf)} bytes ({have} whole samples)", path=path,
            line=have + 1, field="endsamp")
    if have > n_decl:
        raise RecordFormatError(
            f"the file holds {have} samples of {size} bytes but endsamp declares {n_decl}",
            path=path, line=n_decl + 1, field="endsamp")
    rows = np.frombuffer(buf, dtype=dtype, count=n_decl)
    n = rows["n"].astype(np.int64)
    _check_sample_numbers(n, path)
    ts_raw = rows["t"]
    ts = ts_raw.astype(np.float64)
    ts[ts_raw == TIMESTAMP_MISSING] = np.nan
    if info.n_analog:
        raw = rows["a"]
    else:
        raw = np.empty((n_decl, 0))
    if info.n_status:
        words = np.ascontiguousarray(rows["s"].T)       # (n_words, n)
        status = np.empty((info.n_status, n_decl), dtype=np.uint8)
        for k in range(info.n_status):                  # bit k % 16 of word k // 16
            np.bitwise_and(np.right_shift(words[k // 16], k % 16), 1, out=status[k],
                           casting="unsafe")
    else:
        status = np.empty((0, n_decl), dtype=np.uint8)
    return DatData(n, ts, raw, status, missing_code(info.data_format, info.revision))


_NOT_NUMERIC = re.compile(rb"[^0-9eE+\-.,\s]")


def _ascii_table_fast(buf: bytes, n_cols: int, n_rows: int,
                      n_analog: int = 0) -> np.ndarray | None:
    """Parse a well-formed ASCII table with numpy's C parser, or None if it is not."""
    if n_rows == 0 or not buf.strip():
        return None
    for dtype in (np.int64, np.float64):  # integers parse several times faster
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error")   # any doubt: the exact parser decides
                table = np.loadtxt(io.BytesIO(buf), delimiter=",", dtype=dtype, ndmin=2,
                                   comments=None, encoding="latin-1")
        except (ValueError, IndexError, OverflowError, Warning):
            continue
        if table.shape != (n_rows, n_cols):
            return None
        if dtype is np.float64 and not np.isfinite(table).all():
            return None
        return table
    # empty fields (missing data): numeric text only, blanks filled with NaN; the
    # sample number and status columns must still be whole, else the exact parser
    if _NOT_NUMERIC.search(buf) is not None:
        return None
    filled = buf.rstrip()
    for a, b in ((b",,", b",nan,"), (b",,", b",nan,"), (b",\r", b",nan\r"), (b",\n", b",nan\n")):
        filled = filled.replace(a, b)
    if filled.endswith(b","):
        filled += b"nan"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            table = np.loadtxt(io.BytesIO(filled), delimiter=",", dtype=np.float64, ndmin=2,
                               comments=None, encoding="latin-1")
    except (ValueError, IndexError, OverflowError, Warning):
        return None
    if table.shape != (n_rows, n_cols) or not np.isfinite(table[:, 0]).all():
        return None
    if n_cols > 2 + n_analog and not np.isfinite(table[:, 2 + n_analog:]).all():
        return None
    if np.isinf(table).any():
        return None
    return table


def decode_ascii(buf: bytes, info: CfgInfo, path: str | None = None) -> DatData:
    """Decode ASCII rows (clause 7).

    The fast path hands the whole buffer to ``numpy.loadtxt``; a file it does
    not take (missing fields, a bad value, the wrong number of rows) goes
    through a line-by-line parser that accepts empty fields as missing data
    and otherwise names the first bad line and field.
    """
    buf = buf.replace(b"\x1a", b"")
    na, ns, n_decl = info.n_analog, info.n_status, info.n_samples
    n_cols = 2 + na + ns
    table = _ascii_table_fast(buf, n_cols, n_decl, na)
    if table is None:
        table = _ascii_table_slow(buf, info, path)
    n_col = table[:, 0]
    if not np.all(n_col == np.rint(n_col)):
        k = int(np.flatnonzero(n_col != np.rint(n_col))[0])
        raise RecordFormatError(f"expected an integer sample number, found {n_col[k]!r}",
                                path=path, line=k + 1, field="n")
    n = n_col.astype(np.int64)
    _check_sample_numbers(n, path)
    ts = table[:, 1].astype(np.float64)
    raw = table[:, 2:2 + na]
    st = table[:, 2 + na:]
    if ns:
        bad = ~((st == 0.0) | (st == 1.0))
        if bad.any():
            r, c = (int(x[0]) for x in np.nonzero(bad))
            raise RecordFormatError(
                f"status value {st[r, c]!r} of channel {info.status[c].name!r}; expected 0 "
                f"or 1", path=path, line=r + 1, field=f"D{c + 1}")
    status = np.ascontiguousarray(st.T.astype(np.uint8))
    return DatData(n, ts, raw, status, missing_code("ASCII", info.revision))


def _ascii_table_slow(buf: bytes, info: CfgInfo, path: str | None) -> np.ndarray:
    m = _CONTROL_BYTES.search(buf)
    if m is not None:
        line = buf.count(b"\n", 0, m.start()) + 1
        raise RecordFormatError(
            f"binary data (byte 0x{m.group()[0]:02x}) in an ASCII data file", path=path,
            line=line)
    na, ns, n_decl = info.n_analog, info.n_status, info.n_samples
    n_cols = 2 + na + ns
    lines = re.split(rb"\r\n|\r|\n", buf)
    while lines and not lines[-1].strip():
        lines.pop()
    if len(lines) < n_decl:
        raise RecordFormatError(
            f"declared {n_decl} samples (endsamp) but the file holds {len(lines)} lines",
            path=path, line=len(lines) + 1, field="endsamp")
    if len(lines) > n_decl:
        raise RecordFormatError(
            f"the file holds {len(lines)} lines but endsamp declares {n_decl} samples",
            path=path, line=n_decl + 1, field="endsamp")
    names = (["n", "timestamp"] + [f"A{i + 1} ({c.name})" for i, c in enumerate(info.analog)]
             + [f"D{i + 1} ({c.name})" for i, c in enumerate(info.status)])
    table = np.empty((n_decl, n_cols), dtype=np.float64)
    for r, line in enumerate(lines):
        cells = line.strip().split(b",")
        if len(cells) == n_cols + 1 and not cells[-1].strip():
            cells.pop()   # a trailing comma after the last field, as some recorders write
        if len(cells) != n_cols:
            raise RecordFormatError(f"expected {n_cols} comma-separated fields "
                                    f"(n, timestamp, {na} analog, {ns} status), found "
                                    f"{len(cells)}", path=path, line=r + 1)
        row = table[r]
        for c, cell in enumerate(cells):
            cell = cell.strip()
            if not cell and c == 1 or (not cell and 2 <= c < 2 + na):
                row[c] = np.nan
                continue
            try:
                v = float(cell)
            except ValueError:
                raise RecordFormatError(f"expected a number, found {cell.decode('latin-1')!r}",
                                        path=path, line=r + 1, field=names[c]) from None
            if not np.isfinite(v):
                raise RecordFormatError(f"expected a finite number, found "
                                        f"{cell.decode('latin-1')!r}", path=path, line=r + 1,
                                        field=names[c])
            row[c] = v
    return table


# ---------------------------------------------------------------------- writing
def encode_binary(sample_numbers: np.ndarray, timestamps: np.ndarray, raw: np.ndarray,
                  status: np.ndarray, data_format: str) -> bytes:
    """Pack rows for BINARY/BINARY32/FLOAT32 (clause 8).

    ``raw`` (n_analog, n) must already hold the file's integers (or float32
    values), with the missing-data code in place; ``status`` is (n_status, n)
    of 0/1.
    """
    na, n = raw.shape
    ns = status.shape[0]
    dtype = row_dtype(na, ns, data_format)
    rows = np.zeros(n, dtype=dtype)
    rows["n"] = sample_numbers
    rows["t"] = timestamps
    if na:
        if data_format == "FLOAT32":
            f = raw.T.astype("<f4")
            bits = f.view("<u4")
            bits[np.isnan(f)] = 0xFFFFFFFF   # missing-data pattern, clause 8.4 (from memory)
            rows["a"] = f
        else:
            rows["a"] = raw.T
    if ns:
        n_words = (ns + 15) // 16
        bits = np.zeros((n, 16 * n_words), dtype=np.uint8)
        bits[:, :ns] = status.T
        packed = np.packbits(bits, axis=1, bitorder="little")
        rows["s"] = packed.view("<u2").reshape(n, n_words)
    return rows.tobytes()


def encode_ascii(sample_numbers: np.ndarray, timestamps: np.ndarray, raw: np.ndarray,
                 status: np.ndarray) -> bytes:
    """ASCII rows (clause 7) of integers, CRLF line ends."""
    n = sample_numbers.shape[0]
    table = np.empty((n, 2 + raw.shape[0] + status.shape[0]), dtype=np.int64)
    table[:, 0] = sample_numbers
    table[:, 1] = timestamps
    table[:, 2:2 + raw.shape[0]] = raw.T
    table[:, 2 + raw.shape[0]:] = status.T
    if n == 0:
        return b""
    text = "\r\n".join(",".join(map(str, row)) for row in table.tolist())
    return (text + "\r\n").encode("ascii")
