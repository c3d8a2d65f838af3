"""Shared helpers for the record-layer tests: hand-written files and the reference reader.

The reference is the ``comtrade`` package from PyPI (``comtrade.load`` with
``use_numpy_arrays=True``; ``use_double_precision=True`` so that its values
are float64 like eventlab's and can be compared for equality).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import comtrade
import numpy as np


def write_case(folder: Path, stem: str, cfg_text: str, dat: bytes | str) -> Path:
    """Write ``stem.cfg`` and ``stem.dat`` into ``folder``; return the .cfg path."""
    cfg = folder / f"{stem}.cfg"
    cfg.write_bytes(cfg_text.encode("utf-8") if isinstance(cfg_text, str) else cfg_text)
    (folder / f"{stem}.dat").write_bytes(dat.encode("ascii") if isinstance(dat, str) else dat)
    return cfg


def load_reference(path) -> comtrade.Comtrade:
    """The independent reference: the ``comtrade`` package, float64 numpy arrays."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # its own notices (nanoseconds, revision)
        return comtrade.load(str(path), use_numpy_arrays=True, use_double_precision=True)


def assert_matches_reference(record, ref) -> None:
    """Every value and field the reference reads equals eventlab's.

    Where the record's analog values are in the kind its channels' PS flag
    names (the reference never converts), they must be identical; the time
    axis equals the reference's minus its first sample (eventlab counts from
    the first sample).
    """
    assert record.station == ref.station_name
    assert record.device == ref.rec_dev_id
    assert str(record.revision) == ref.rev_year
    assert record.frequency_hz == ref.frequency
    assert record.data_format == ref.ft.upper()
    assert len(record.analog) == ref.analog_count
    assert len(record.status) == ref.status_count
    assert record.n_samples == ref.total_samples
    if record.n_samples:
        np.testing.assert_array_equal(record.time, ref.time - ref.time[0])
    for ch, spec, values in zip(record.analog, ref.cfg.analog_channels, ref.analog, strict=True):
        assert (ch.name, ch.phase, ch.circuit, ch.unit) == (spec.name, spec.ph, spec.ccbm,
                                                            spec.uu)
        assert (ch.a, ch.b, ch.skew_s) == (spec.a, spec.b, spec.skew * 1e-6)
        assert (ch.min, ch.max) == (spec.cmin, spec.cmax)
        assert (ch.primary, ch.secondary, ch.ps) == (spec.primary, spec.secondary, spec.pors)
        want = "P" if record.values == "primary" else "S"
        if ch.ps == want:
            np.testing.assert_array_equal(ch.values, values)
    for ch, spec, values in zip(record.status, ref.cfg.status_channels, ref.status, strict=True):
        assert (ch.name, ch.phase, ch.circuit, ch.normal) == (spec.name, spec.ph, spec.ccbm,
                                                              spec.y)
        np.testing.assert_array_equal(ch.values, values)
    if record.start is not None:
        assert record.start == ref.start_timestamp
        assert record.trigger == ref.trigger_timestamp


def line_to_line_record(rec, keep=("VAB", "VBC", "VCA")):
    """``rec`` with its VA VB VC channels turned into the line-to-line VAB VBC VCA.

    Only the names in ``keep`` are kept (a recorder with two of them).
    """
    import dataclasses

    by = {c.name: c for c in rec.analog}
    pairs = {"VA": ("VAB", "VB"), "VB": ("VBC", "VC"), "VC": ("VCA", "VA")}
    out = []
    for c in rec.analog:
        if c.name in pairs:
            name, other = pairs[c.name]
            if name in keep:
                out.append(dataclasses.replace(c, name=name, phase="",
                                               values=c.values - by[other].values))
        else:
            out.append(c)
    return dataclasses.replace(rec, analog=tuple(out))


def record_between(rec, t_start_s: float | None = None, t_end_s: float | None = None):
    """``rec`` cut to record times ``[t_start_s, t_end_s)`` (its start time moved along).

    A recorder triggered later (a record that begins in the reclose dead time) or one
    that stopped early.
    """
    import dataclasses
    from datetime import timedelta

    from eventlab.records.model import RateSegment

    k0 = 0 if t_start_s is None else int(np.searchsorted(rec.time, t_start_s))
    k1 = rec.time.size if t_end_s is None else int(np.searchsorted(rec.time, t_end_s))
    start = rec.start
    if k0 and start is not None:
        start = start + timedelta(seconds=float(rec.time[k0]))
    return dataclasses.replace(
        rec, time=rec.time[k0:k1] - rec.time[k0], start=start,
        rates=(RateSegment(rec.rates[0].samp_hz, k1 - k0),),
        analog=tuple(dataclasses.replace(c, values=c.values[k0:k1]) for c in rec.analog),
        status=tuple(dataclasses.replace(c, values=c.values[k0:k1]) for c in rec.status))
