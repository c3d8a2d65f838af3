"""Read a COMTRADE record (IEEE C37.111-1991/1999/2013) into a :class:`Record`.

:func:`read_record` resolves what it is given (a .cfg and its .dat, a 2013
single-file .cff, a path to the .dat or to the stem, a .zip holding one
record) and hands the bytes to :func:`record_from_bytes`, which is pure.

Values
------
Each analog value is ``a * x + b`` (C37.111-2013 clause 6.4), which gives
the side the channel's ``PS`` flag names.  ``values="primary"`` multiplies a
secondary channel by ``primary / secondary``; ``values="secondary"`` divides
a primary one by it.  Channel ``skew`` is kept on the channel as
``skew_s`` and never applied to the values or the time axis here (the
analysis interpolates skewed channels to the common instants).

Time
----
With ``nrates >= 1`` the time of sample number ``n`` in rate segment ``k``
is ``t = t(endsamp[k-1]) + (n - endsamp[k-1]) / samp[k]``, the first
segment starting at sample 1 and t = 0 (clause 6.7).  With ``nrates = 0``
the time is the data file's time stamp times the time base (1 us, or 1 ns
when the .cfg date/time stamps carry nanoseconds, clause 6.10) times
``timemult`` (clause 6.11).  ``Record.time`` is then counted from the first
sample.
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path, PurePosixPath, PureWindowsPath

import numpy as np

from eventlab.errors import RecordFormatError
from eventlab.records import dat as _dat
from eventlab.records.cfg import CfgInfo, decode_free_text, decode_text, parse_cfg
from eventlab.records.model import AnalogChannel, RateSegment, Record, StatusChannel

_CFF_HEADER = re.compile(
    rb"^[ \t]*---[ \t]*file[ \t]+type[ \t]*:[ \t]*(CFG|INF|HDR|DAT)"
    rb"(?:[ \t]+(ASCII|BINARY32|BINARY|FLOAT32))?(?:[ \t]*:[ \t]*(\d+))?[ \t]*---[ \t]*\r?$",
    re.IGNORECASE | re.MULTILINE)
_VALUE_KINDS = ("primary", "secondary")


def _check_values(values: str) -> str:
    if values not in _VALUE_KINDS:
        raise ValueError(f"values must be 'primary' or 'secondary', not {values!r}")
    return values


# ------------------------------------------------------------------ pure part
def time_axis(info: CfgInfo, data: _dat.DatData, path: str | None = None) -> np.ndarray:
    """Time of each sample [s] from the rate segments or the time stamps (clause 6.7)."""
    n = data.sample_numbers
    if n.size == 0:
        return np.zeros(0)
    if info.nrates == 0:
        ts = data.timestamps
        if np.isnan(ts).any():
            k = int(np.flatnonzero(np.isnan(ts))[0])
            raise RecordFormatError("time stamp missing; with nrates 0 every sample needs one",
                                    path=path, line=k + 1, field="timestamp")
        t = ts * info.time_base_s * info.timemult
        if n.size > 1 and np.any(np.diff(t) < 0):
            k = int(np.flatnonzero(np.diff(t) < 0)[0]) + 1
            raise RecordFormatError("time stamp decreases; expected non-decreasing time stamps",
                                    path=path, line=k + 1, field="timestamp")
    else:
        # a corrupt sample number would stretch the time axis (and any grid made on
        # it) without bound; a dropped sample or two is kept
        last = int(info.rates[-1][1])
        top = 2 * max(last, n.size)
        bad = np.flatnonzero((n < 0) | (n > top))
        if bad.size:
            k = int(bad[0])
            raise RecordFormatError(
                f"sample number {n[k]} outside 0..{top} (endsamp {last}, {n.size} samples); "
                f"expected the sample's number", path=path, line=k + 1, field="n")
        if n.size > 1 and np.any(np.diff(n) <= 0):
            k = int(np.flatnonzero(np.diff(n) <= 0)[0]) + 1
            raise RecordFormatError(f"sample number {n[k]} after {n[k - 1]}; expected "
                                    f"increasing sample numbers", path=path, line=k + 1,
                                    field="n")
        samp = [float(s) for s, _ in info.rates]
        ends = np.array([e for _, e in info.rates], dtype=np.int64)
        start_n, start_t = [], []
        sn, st = 1, 0.0
        for s, e in info.rates:  # same arithmetic order as the reference reader
            start_n.append(sn)
            start_t.append(st)
            st += (e - sn) / s
            sn = e
        seg = np.minimum(np.searchsorted(ends, n, side="left"), len(samp) - 1)
        t = (np.array(start_t)[seg]
             + (n - np.array(start_n, dtype=np.int64)[seg]) / np.array(samp)[seg])
    return t - t[0]


def record_from_bytes(cfg_bytes: bytes, dat_bytes: bytes, *, values: str = "primary",
                      hdr_bytes: bytes | None = None, inf_bytes: bytes | None = None,
                      source: str | None = None, cfg_name: str | None = None,
                      dat_name: str | None = None) -> Record:
    """Build a :class:`Record` from the bytes of a .cfg and its .dat.

    Parameters
    ----------
    cfg_bytes, dat_bytes : bytes
        File contents.
    values : {"primary", "secondary"}
        Which side of the instrument transformers the analog values give.
    hdr_bytes, inf_bytes : bytes, optional
        .hdr and .inf contents, kept as text.
    source, cfg_name, dat_name : str, optional
        Named in the record and in error messages.
    """
    _check_values(values)
    info = parse_cfg(decode_text(cfg_bytes, cfg_name), cfg_name)
    data = _dat.decode(dat_bytes, info, dat_name)
    return record_from_parts(info, data, values=values,
                             header_text=_text_or_none(hdr_bytes, source),
                             info_text=_text_or_none(inf_bytes, source), source=source,
                             dat_name=dat_name)


def _text_or_none(raw: bytes | None, path: str | None) -> str | None:
    return None if raw is None else decode_free_text(raw)


def record_from_parts(info: CfgInfo, data: _dat.DatData, *, values: str = "primary",
                      header_text: str | None = None, info_text: str | None = None,
                      source: str | None = None, dat_name: str | None = None) -> Record:
    """Apply ``a*x+b``, the P/S conversion and the time axis to decoded rows."""
    _check_values(values)
    time = time_axis(info, data, dat_name)
    time.setflags(write=False)
    want = "P" if values == "primary" else "S"
    na, n = len(info.analog), data.sample_numbers.shape[0]
    # clause 6.4: value = a*x + b.  Row-major (the order the file stores) in blocks
    # that stay in cache, with a and b tiled to the block so that every ufunc runs
    # one long contiguous loop; channel k is the column out[:, k].
    code = data.missing_code
    code_is_min = code is not None and data.raw.dtype.kind == "i" and data.raw.dtype.itemsize in (
        2, 4) and code == np.iinfo(data.raw.dtype).min
    out = np.empty((n, na), dtype=np.float64)
    block = max(1, 32768 // max(na, 1))
    a = np.tile(np.array([s.a for s in info.analog], dtype=np.float64), (min(block, n), 1))
    b = np.tile(np.array([s.b for s in info.analog], dtype=np.float64), (min(block, n), 1))
    for i in range(0, n, block):
        o = out[i:i + block]
        m = o.shape[0]
        np.copyto(o, data.raw[i:i + block])
        miss = None
        # the binary codes are the integer type's minimum: one min() finds any
        if code is not None and (not code_is_min or o.min() <= code):
            miss = o == code
        np.multiply(o, a[:m], out=o)
        np.add(o, b[:m], out=o)
        if miss is not None and miss.any():
            o[miss] = np.nan
    for k, spec in enumerate(info.analog):
        if spec.ps != want:  # primary = secondary * primary/secondary
            f = spec.primary / spec.secondary if want == "P" else spec.secondary / spec.primary
            np.multiply(out[:, k], f, out=out[:, k])
    out.setflags(write=False)
    analog = []
    for k, spec in enumerate(info.analog):
        analog.append(AnalogChannel(
            index=spec.index, name=spec.name, phase=spec.phase, circuit=spec.circuit,
            unit=spec.unit, a=spec.a, b=spec.b, skew_s=spec.skew_us * 1e-6, min=spec.min,
            max=spec.max, primary=spec.primary, secondary=spec.secondary, ps=spec.ps,
            values=out[:, k]))
    status = []
    for k, spec in enumerate(info.status):
        v = data.status[k]
        v.setflags(write=False)
        status.append(StatusChannel(index=spec.index, name=spec.name, phase=spec.phase,
                                    circuit=spec.circuit, normal=spec.normal, values=v))
    return Record(
        station=info.station, device=info.device, revision=info.revision,
        data_format=info.data_format, frequency_hz=info.frequency_hz,
        rates=tuple(RateSegment(float(s), int(e)) for s, e in info.rates),
        start=info.start, trigger=info.trigger, time=time, analog=tuple(analog),
        status=tuple(status), values=values, timemult=info.timemult,
        time_code=info.time_code, local_code=info.local_code, tmq_code=info.tmq_code,
        leapsec=info.leapsec, start_ns=info.start_ns, trigger_ns=info.trigger_ns,
        header_text=header_text, info_text=info_text, source=source)


def split_cff(buf: bytes, path: str | None = None) -> dict[str, bytes]:
    """Split a 2013 single-file record (.cff, C37.111-2013 clause 9) into its parts.

    Returns a dict with keys ``cfg``, ``dat`` and, when present, ``inf`` and
    ``hdr``.  A binary DAT section is taken by the byte count its header
    line gives (``--- file type: DAT BINARY: 12345 ---``), or to the end of
    the file without one.
    """
    parts: dict[str, bytes] = {}
    pos = 0
    m = _CFF_HEADER.search(buf, pos)
    if m is None or buf[:m.start()].strip():
        raise RecordFormatError("expected a '--- file type: CFG ---' line first in a .cff",
                                path=path, line=1)
    while m is not None:
        kind = m.group(1).decode().lower()
        fmt = (m.group(2) or b"").decode().upper()
        count = m.group(3)
        body_start = m.end()
        if buf[body_start:body_start + 1] == b"\n":
            body_start += 1
        line = buf.count(b"\n", 0, m.start()) + 1
        if kind in parts:
            raise RecordFormatError(f"a second {kind.upper()} section", path=path, line=line)
        if kind == "dat" and fmt not in ("", "ASCII"):
            if count is not None:
                n = int(count)
                if body_start + n > len(buf):
                    raise RecordFormatError(
                        f"DAT section declares {n} bytes but {len(buf) - body_start} follow",
                        path=path, line=line, field="DAT byte count")
                parts[kind] = buf[body_start:body_start + n]
                pos = body_start + n
            else:
                parts[kind] = buf[body_start:]
                pos = len(buf)
            parts["dat_format"] = fmt.encode()
            m = _CFF_HEADER.search(buf, pos) if pos < len(buf) else None
            continue
        nxt = _CFF_HEADER.search(buf, body_start)
        end = nxt.start() if nxt is not None else len(buf)
        parts[kind] = buf[body_start:end]
        if kind == "dat":
            parts["dat_format"] = (fmt or "ASCII").encode()
        m = nxt
    for need in ("cfg", "dat"):
        if need not in parts:
            raise RecordFormatError(f"no {need.upper()} section in the .cff", path=path)
    return parts


# ------------------------------------------------------------------ file part
_EXTS = (".cfg", ".dat", ".cff", ".hdr", ".inf", ".zip")


def _sibling(stem: Path, ext: str) -> Path | None:
    """``stem`` + ``ext`` with the extension in any case, or None."""
    for e in (ext, ext.upper(), ext.capitalize()):
        p = stem.with_name(stem.name + e)
        if p.is_file():
            return p
    parent = stem.parent if str(stem.parent) else Path(".")
    if parent.is_dir():
        want = (stem.name + ext).casefold()
        for p in sorted(parent.iterdir()):
            if p.name.casefold() == want and p.is_file():
                return p
    return None


def _read_bytes(p: Path) -> bytes:
    try:
        return p.read_bytes()
    except OSError as exc:
        raise RecordFormatError(f"cannot read the file ({exc.strerror})", path=str(p)) from None


def read_record(path, values: str = "primary") -> Record:
    """Read a COMTRADE record.

    Parameters
    ----------
    path : str or os.PathLike
        A .cfg (its .dat, .hdr and .inf are found beside it, any case of
        extension), a .dat, a .cff, a .zip holding one record, or the stem
        without extension.
    values : {"primary", "secondary"}
        Which side of the instrument transformers the analog values give
        (conversion by each channel's ``primary``, ``secondary`` and ``PS``,
        C37.111-2013 clause 6.4).

    Returns
    -------
    Record

    Raises
    ------
    RecordFormatError
        One line naming the file, line and field, and what was expected; also
        for missing or empty files.
    """
    _check_values(values)
    p = Path(path)
    ext = p.suffix.lower()
    if p.is_dir():
        raise RecordFormatError("is a folder; expected a .cfg, .cff, .dat or .zip file",
                                path=str(p))
    if ext == ".zip":
        return _read_zip(p, values)
    if ext == ".cff":
        p = p if p.is_file() else (_sibling(p.with_suffix(""), ".cff") or p)
        return _read_cff_bytes(_read_bytes(_existing(p)), str(p), values)
    stem = p.with_suffix("") if ext in _EXTS else p
    cfg = p if ext == ".cfg" and p.is_file() else _sibling(stem, ".cfg")
    if cfg is None:
        cff = _sibling(stem, ".cff")
        if cff is not None and ext not in (".dat",):
            return _read_cff_bytes(_read_bytes(cff), str(cff), values)
        raise RecordFormatError("no such record: expected a .cfg (or .cff) file here",
                                path=str(stem.with_name(stem.name + ".cfg")))
    _existing(cfg)
    dat = p if ext == ".dat" and p.is_file() else _sibling(stem, ".dat")
    if dat is None:
        raise RecordFormatError("no data file beside the configuration file; expected "
                                f"{stem.name}.dat", path=str(cfg))
    hdr = _sibling(stem, ".hdr")
    inf = _sibling(stem, ".inf")
    cfg_bytes = _read_bytes(cfg)
    if not cfg_bytes.strip():
        raise RecordFormatError("empty configuration file", path=str(cfg), line=1)
    return record_from_bytes(
        cfg_bytes, _read_bytes(dat), values=values,
        hdr_bytes=_read_bytes(hdr) if hdr else None,
        inf_bytes=_read_bytes(inf) if inf else None,
        source=str(cfg), cfg_name=str(cfg), dat_name=str(dat))


def _existing(p: Path) -> Path:
    if not p.is_file():
        raise RecordFormatError("no such file", path=str(p))
    return p


def _read_cff_bytes(buf: bytes, name: str, values: str) -> Record:
    if not buf.strip():
        raise RecordFormatError("empty file", path=name, line=1)
    parts = split_cff(buf, name)
    info = parse_cfg(decode_text(parts["cfg"], name), name)
    declared = parts["dat_format"].decode()
    if declared != info.data_format:
        raise RecordFormatError(f"DAT section is {declared} but the CFG section's ft is "
                                f"{info.data_format}", path=name, field="ft")
    data = _dat.decode(parts["dat"], info, name)
    return record_from_parts(info, data, values=values,
                             header_text=_text_or_none(parts.get("hdr"), name),
                             info_text=_text_or_none(parts.get("inf"), name),
                             source=name, dat_name=name)


def _unsafe_member(name: str) -> bool:
    for pure in (PurePosixPath(name), PureWindowsPath(name)):
        if pure.is_absolute() or pure.drive or pure.root or ".." in pure.parts:
            return True
    return False


def _read_zip(p: Path, values: str) -> Record:
    name = str(_existing(p))
    try:
        zf = zipfile.ZipFile(p)
    except (zipfile.BadZipFile, OSError) as exc:
        raise RecordFormatError(f"not a readable zip archive ({exc})", path=name) from None
    with zf:
        members = [i for i in zf.infolist() if not i.is_dir()]
        for i in members:
            if _unsafe_member(i.filename):
                raise RecordFormatError(f"member {i.filename!r} has an absolute or '..' path; "
                                        f"refused", path=name)
        by_name = {i.filename.casefold(): i for i in members}
        heads = [i for i in members if i.filename.lower().endswith((".cfg", ".cff"))]
        if len(heads) != 1:
            found = ", ".join(i.filename for i in heads) or "none"
            raise RecordFormatError(f"expected exactly one .cfg or .cff in the archive, "
                                    f"found {found}", path=name)
        head = heads[0]

        def member_bytes(info: zipfile.ZipInfo) -> bytes:
            try:
                with zf.open(info) as fh:
                    data = fh.read(info.file_size + 1)
            except (zipfile.BadZipFile, OSError, RuntimeError, EOFError) as exc:
                raise RecordFormatError(f"member {info.filename!r} cannot be read ({exc})",
                                        path=name) from None
            if len(data) > info.file_size:
                raise RecordFormatError(f"member {info.filename!r} is larger than declared",
                                        path=name)
            return data

        label = f"{name}!{head.filename}"
        if head.filename.lower().endswith(".cff"):
            return _read_cff_bytes(member_bytes(head), label, values)
        stem = head.filename[:-4]

        def sibling(ext: str) -> zipfile.ZipInfo | None:
            return by_name.get((stem + ext).casefold())

        dat = sibling(".dat")
        if dat is None:
            raise RecordFormatError(f"no {stem}.dat beside {head.filename} in the archive",
                                    path=name)
        hdr, inf = sibling(".hdr"), sibling(".inf")
        cfg_bytes = member_bytes(head)
        if not cfg_bytes.strip():
            raise RecordFormatError("empty configuration file", path=label, line=1)
        return record_from_bytes(
            cfg_bytes, member_bytes(dat), values=values,
            hdr_bytes=member_bytes(hdr) if hdr else None,
            inf_bytes=member_bytes(inf) if inf else None, source=label, cfg_name=label,
            dat_name=f"{name}!{dat.filename}")
