"""Writer and reader as a pair (property-based), checked against the comtrade package.

Any record eventlab writes reads back through eventlab and through the
``comtrade`` package (the independent reference) with status values equal
and analog values within half a quantization step ``a / 2`` (integer
formats) or float32 rounding (FLOAT32); missing samples stay missing.
"""

from __future__ import annotations

import tempfile
from datetime import datetime
from pathlib import Path

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from eventlab.records import make_record, read_record, write_record

from .comtrade_cases import assert_matches_reference, load_reference

FORMATS = [(1999, "ASCII", False), (1999, "BINARY", False), (2013, "BINARY32", False),
           (2013, "FLOAT32", False), (2013, "ASCII", True), (2013, "BINARY", True)]

finite = st.floats(min_value=-1e7, max_value=1e7, allow_nan=False, width=64)
sample = st.one_of(finite, finite, finite, st.just(float("nan")))


@st.composite
def records(draw):
    n = draw(st.integers(1, 40))
    na = draw(st.integers(0, 3))
    ns = draw(st.integers(0 if na else 1, 18))
    analog = [(f"CH{k}", draw(st.sampled_from(["A", "B", "C", "N", ""])),
               draw(st.sampled_from(["V", "A", "kV"])),
               np.array(draw(st.lists(sample, min_size=n, max_size=n))), "L1")
              for k in range(na)]
    status = [(f"S{k}", np.array(draw(st.lists(st.integers(0, 1), min_size=n, max_size=n))))
              for k in range(ns)]
    rate = draw(st.sampled_from([600.0, 960.0, 4000.0, 7680.0]))
    start = datetime(2026, 5, 17, 3, 4, 5, draw(st.integers(0, 999999)))
    return make_record("ORRINSBY", rate, analog, status, frequency_hz=50.0, start=start)


@settings(max_examples=40)
@given(rec=records(), case=st.sampled_from(FORMATS))
def test_write_then_read_within_one_quantization_step(rec, case):
    revision, fmt, single = case
    with tempfile.TemporaryDirectory() as d:
        paths = write_record(rec, Path(d) / "rt", revision=revision, data_format=fmt,
                             single_file=single)
        got = read_record(paths[0])
        ref = load_reference(paths[0])
    assert_matches_reference(got, ref)
    assert got.start == rec.start
    np.testing.assert_allclose(got.time, rec.time, rtol=0, atol=1e-12)
    for g, orig in zip(got.analog, rec.analog, strict=True):
        v = orig.values
        ok = np.isfinite(v)
        np.testing.assert_array_equal(np.isnan(g.values), ~ok)
        if fmt == "FLOAT32":
            # float32: half an ulp of each value, or of the smallest normal step
            # below the channel scale a (IEEE 754 binary32: 24-bit significand)
            tol = np.abs(v[ok]) * 2.0**-24 + g.a * 2.0**-126
        else:
            tol = g.a / 2 * (1 + 1e-9) + 1e-9 * np.abs(v[ok])
        assert np.all(np.abs(g.values[ok] - v[ok]) <= tol)
    for g, orig in zip(got.status, rec.status, strict=True):
        np.testing.assert_array_equal(g.values, orig.values)


@settings(max_examples=20)
@given(rec=records())
def test_scale_uses_the_integer_range(rec):
    # integer formats: the finite extremes map to +-32767 (BINARY), within one count
    with tempfile.TemporaryDirectory() as d:
        paths = write_record(rec, Path(d) / "sc", revision=1999, data_format="BINARY")
        got = read_record(paths[0])
    for g, orig in zip(got.analog, rec.analog, strict=True):
        v = orig.values[np.isfinite(orig.values)]
        if v.size and v.max() > v.min():
            x_hi = (v.max() - g.b) / g.a
            x_lo = (v.min() - g.b) / g.a
            assert 32766 <= x_hi <= 32767 and -32767 <= x_lo <= -32766
