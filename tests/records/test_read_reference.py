"""Every format and revision eventlab writes, read back and checked against the
``comtrade`` package (PyPI, the independent reference named in the issue)."""

from __future__ import annotations

from dataclasses import replace
from datetime import datetime

import numpy as np
import pytest

from eventlab.records import RateSegment, make_record, read_record, write_record

from .comtrade_cases import assert_matches_reference, load_reference

CASES = [(1999, "ASCII", False), (1999, "BINARY", False), (2013, "ASCII", False),
         (2013, "BINARY", False), (2013, "BINARY32", False), (2013, "FLOAT32", False),
         (2013, "ASCII", True), (2013, "BINARY", True), (2013, "BINARY32", True),
         (2013, "FLOAT32", True)]


def demo_record(n: int = 400, seed: int = 7, values: str = "primary"):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / 4000.0
    w = 2 * np.pi * 60.0 * t
    analog = []
    for k, ph in enumerate("ABC"):
        analog.append({"name": f"V{ph}", "phase": ph, "unit": "V", "circuit": "CR1",
                       "values": 187e3 * np.sin(w - 2 * np.pi * k / 3) + rng.normal(0, 50, n),
                       "primary": 230000.0, "secondary": 115.0})
    for k, ph in enumerate("ABC"):
        analog.append({"name": f"I{ph}", "phase": ph, "unit": "A", "circuit": "CR1",
                       "values": 1400 * np.sin(w - 0.3 - 2 * np.pi * k / 3),
                       "primary": 1200.0, "secondary": 5.0, "skew_s": 12.5e-6})
    iv = analog[3]["values"].copy()
    iv[[5, 77]] = np.nan  # missing samples
    analog[3]["values"] = iv
    status = [("TRIP CR1", (t > 0.05).astype(int), "CR1"), ("52A CR1", (t < 0.08).astype(int),
              "CR1")] + [(f"D{k}", rng.integers(0, 2, n)) for k in range(17)]
    return make_record("CARDON REACH", 4000.0, analog, status, frequency_hz=60.0,
                       start=datetime(2026, 3, 14, 9, 26, 53, 589793),
                       trigger=datetime(2026, 3, 14, 9, 26, 53, 639793), values=values)


@pytest.mark.parametrize(("revision", "fmt", "single"), CASES)
def test_written_record_reads_as_the_reference_reads_it(tmp_path, revision, fmt, single):
    rec = demo_record()
    paths = write_record(rec, tmp_path / "cr", revision=revision, data_format=fmt,
                         single_file=single)
    assert [p.suffix for p in paths] == ([".cff"] if single else [".cfg", ".dat"])
    got = read_record(paths[0])
    assert_matches_reference(got, load_reference(paths[0]))
    # reference reader: values within half a quantization step of what was written
    ref = load_reference(paths[0])
    for ch, orig, vals in zip(got.analog, rec.analog, ref.analog, strict=True):
        finite = np.isfinite(orig.values)
        np.testing.assert_array_equal(np.isnan(vals), ~finite)
        tol = ch.a / 2 if fmt != "FLOAT32" else np.abs(orig.values[finite]) * 2.0**-24
        assert np.all(np.abs(vals[finite] - orig.values[finite]) <= tol * (1 + 1e-9) + 1e-9)


@pytest.mark.parametrize(("revision", "fmt"), [(1999, "ASCII"), (2013, "BINARY32")])
def test_several_rate_segments_against_reference(tmp_path, revision, fmt):
    # rates 4000 Hz to sample 100, then 1000 Hz to 150 (clause 6.7)
    rec = demo_record(150)
    t = np.concatenate([np.arange(100) / 4000.0, 99 / 4000.0 + np.arange(1, 51) / 1000.0])
    t.setflags(write=False)
    rec = replace(rec, time=t, rates=(RateSegment(4000.0, 100), RateSegment(1000.0, 150)))
    paths = write_record(rec, tmp_path / "seg", revision=revision, data_format=fmt)
    got = read_record(paths[0])
    assert_matches_reference(got, load_reference(paths[0]))
    np.testing.assert_allclose(got.time, t, rtol=0, atol=1e-12)


def test_time_stamped_record_against_reference(tmp_path):
    # nrates = 0: the time comes from the time stamps (clause 6.7)
    t = np.cumsum(np.r_[0.0, np.full(30, 250e-6), np.full(20, 1e-3)])
    rec = make_record("PELLINGFORD", t, [("IA", "A", "A", np.sin(t * 377.0) * 100)],
                      [("TRIP", t > 0.01)])
    paths = write_record(rec, tmp_path / "ts", revision=2013, data_format="BINARY")
    assert b"\r\n0\r\n0,51\r\n" in paths[0].read_bytes()   # nrates 0, samp 0, endsamp 51
    got = read_record(paths[0])
    assert_matches_reference(got, load_reference(paths[0]))
    np.testing.assert_allclose(got.time, t, rtol=0, atol=0.5e-6)


def test_secondary_values_against_reference(tmp_path):
    rec = demo_record(values="secondary")
    paths = write_record(rec, tmp_path / "sec", revision=1999, data_format="BINARY")
    sec = read_record(paths[0], values="secondary")
    assert {ch.ps for ch in sec.analog} == {"S"}
    assert_matches_reference(sec, load_reference(paths[0]))
    prim = read_record(paths[0], values="primary")
    for p, s in zip(prim.analog, sec.analog, strict=True):
        # clause 6.4: primary = secondary * primary/secondary
        np.testing.assert_array_equal(p.values, s.values * (s.primary / s.secondary))
