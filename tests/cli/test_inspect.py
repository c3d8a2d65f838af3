"""`eventlab inspect RECORD [--json]` against the comtrade package's reading of the file."""

from __future__ import annotations

import json
import struct
import warnings
from datetime import datetime

import comtrade
import numpy as np
import pytest

from eventlab.cli import main
from eventlab.records import make_record, write_record

KEYS = {"station", "device", "revision", "data_format", "frequency_hz", "rates", "n_samples",
        "duration_s", "start", "trigger", "time_quality", "time_code", "local_code", "tmq_code", "leapsec",
        "values", "analog", "status"}


@pytest.fixture
def record_path(tmp_path):
    n = 200
    t = np.arange(n) / 4000.0
    analog = [(f"V{p}", p, "kV", 187 * np.sin(377 * t - k * 2.094), "VM-CR1")
              for k, p in enumerate("ABC")]
    analog += [(f"I{p}", p, "A", 900 * np.sin(377 * t - 0.4 - k * 2.094), "VM-CR1")
               for k, p in enumerate("ABC")]
    status = [("TRIP", (t > 0.02) & (t < 0.04)), ("52A", t < 0.035)]
    rec = make_record("VELLMOOR", 4000.0, analog, status,
                      start=datetime(2026, 4, 1, 6, 30, 0, 250000),
                      trigger=datetime(2026, 4, 1, 6, 30, 0, 270000))
    return write_record(rec, tmp_path / "VELLMOOR", revision=2013, data_format="BINARY")[0]


def test_inspect_json(record_path, capsys):
    assert main(["inspect", str(record_path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) == KEYS
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = comtrade.load(str(record_path), use_numpy_arrays=True, use_double_precision=True)
    # reference: the comtrade package's reading of the same file
    assert out["station"] == ref.station_name and out["revision"] == int(ref.rev_year)
    assert out["n_samples"] == ref.total_samples
    assert out["rates"] == [[float(r), int(e)] for r, e in ref.cfg.sample_rates]
    assert out["duration_s"] == pytest.approx(ref.time[-1] - ref.time[0])
    assert out["start"] == ref.start_timestamp.isoformat(timespec="microseconds")
    assert out["trigger"] == "2026-04-01T06:30:00.270000"
    # the writer's 2013 time quality line "0,0": clock locked (clause 6.13, from memory)
    assert (out["time_quality"], out["leapsec"]) == (ref.cfg._tmq_code, int(ref.cfg._leap_second))
    assert [c["role"] for c in out["analog"]] == ["VA", "VB", "VC", "IA", "IB", "IC"]
    for c, values in zip(out["analog"], ref.analog, strict=True):
        assert c["min"] == float(np.min(values)) and c["max"] == float(np.max(values))
        assert set(c) == {"index", "name", "phase", "circuit", "unit", "role", "ratio", "ps",
                          "min", "max"}
    assert [(s["name"], s["role"], s["changes"]) for s in out["status"]] == [
        ("TRIP", "TRIP", 2), ("52A", "BKR", 1)]


def test_inspect_table(record_path, capsys):
    assert main(["inspect", str(record_path)]) == 0
    text = capsys.readouterr().out
    assert "VELLMOOR" in text and "4000 Hz to sample 200" in text
    assert "2026-04-01T06:30:00.270000" in text and "VM-CR1" in text


def test_bad_records_exit_2_with_one_line(tmp_path, capsys):
    good = (tmp_path / "g.cfg")
    cfg = ("X,Y,2013\n1,1A,0D\n1,IA,A,,A,1,0,0,-32767,32767,1,1,P\n60\n1\n1000,3\n"
           "01/01/2026,00:00:00.000000\n01/01/2026,00:00:00.000000\nBINARY\n1\n0,0\n0,0\n")
    good.write_text(cfg)
    (tmp_path / "g.dat").write_bytes(struct.pack("<IIh", 1, 0, 5) * 2)   # 2 of 3 samples
    cases = [tmp_path / "g.cfg", tmp_path / "none.cfg", tmp_path]
    for path in cases:
        assert main(["inspect", str(path)]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "Traceback" not in err and err.startswith(
            "eventlab inspect: error: ")
    assert main(["inspect", str(tmp_path / "g.cfg")]) == 2
    assert "declared 3 samples" in capsys.readouterr().err
