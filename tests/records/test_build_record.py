"""make_record and select: records from arrays, windows and channel choices."""

from __future__ import annotations

from datetime import datetime

import numpy as np
import pytest

from eventlab.records import RateSegment, make_record, read_record, select, write_record

from .comtrade_cases import load_reference


def test_make_record_fields_and_immutability():
    v = np.arange(10.0)
    rec = make_record("VELLMOOR", 2000.0, [("VA", "A", "V", v, "CR1")], [("TRIP", v > 4)],
                      start=datetime(2026, 1, 2, 3, 4, 5), trigger_s=0.002)
    assert rec.n_samples == 10 and rec.sample_rate_hz == 2000.0
    np.testing.assert_array_equal(rec.time, np.arange(10) / 2000.0)
    assert rec.trigger == datetime(2026, 1, 2, 3, 4, 5, 2000)
    assert rec.analog_by_name("va").circuit == "CR1"
    np.testing.assert_array_equal(rec.status_by_name("TRIP").values, (v > 4).astype(np.uint8))
    with pytest.raises(ValueError):
        rec.analog[0].values[0] = 1.0            # read-only
    v[0] = 99.0
    assert rec.analog[0].values[0] == 0.0        # copied
    with pytest.raises(ValueError, match="expected 10"):
        make_record("X", np.arange(10) / 1e3, [("VA", "A", "V", np.zeros(9))])


def test_select_window_and_channels_round_trip(tmp_path):
    n = 300
    rec = make_record("VELLMOOR", 1000.0,
                      [("VA", "A", "V", np.sin(np.arange(n) / 5)), ("IA", "A", "A", np.arange(n) * 1.0)],
                      [("TRIP", np.arange(n) > 150)], start=datetime(2026, 1, 1, 0, 0, 0))
    cut = select(rec, start_s=0.1, end_s=0.2, analog=["IA"])
    assert [c.name for c in cut.analog] == ["IA"] and cut.n_samples == 101
    np.testing.assert_array_equal(cut.analog[0].values, np.arange(100, 201) * 1.0)
    assert cut.start == datetime(2026, 1, 1, 0, 0, 0, 100000)
    assert cut.rates == (RateSegment(1000.0, 101),)
    paths = write_record(cut, tmp_path / "cut", revision=1999, data_format="ASCII")
    back = read_record(paths[0])
    ref = load_reference(paths[0])
    np.testing.assert_allclose(back.analog[0].values, ref.analog[0])
    np.testing.assert_allclose(back.analog[0].values, cut.analog[0].values, atol=back.analog[0].a)
    assert back.start == cut.start


def test_argument_checks(tmp_path):
    rec = make_record("X", 1000.0, [("VA", "A", "V", np.zeros(4))])
    with pytest.raises(ValueError, match="primary"):
        read_record(tmp_path / "x.cfg", values="both")
    with pytest.raises(ValueError, match="needs revision 2013"):
        write_record(rec, tmp_path / "x", revision=1999, data_format="FLOAT32")
    with pytest.raises(ValueError, match="needs revision 2013"):
        write_record(rec, tmp_path / "x", revision=1999, single_file=True)
    with pytest.raises(ValueError, match="data_format"):
        write_record(rec, tmp_path / "x", data_format="BINARY16")
    bad = make_record("X", 1000.0, [("VA, VB", "A", "V", np.zeros(4))])
    with pytest.raises(ValueError, match="comma"):
        write_record(bad, tmp_path / "x")
    # an existing folder: the stem is the station name
    paths = write_record(make_record("CARDON REACH", 1000.0, [("VA", "A", "V", np.zeros(4))]),
                         tmp_path)
    assert [p.name for p in paths] == ["CARDON_REACH.cfg", "CARDON_REACH.dat"]
