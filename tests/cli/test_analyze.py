"""`eventlab analyze` end to end: COMTRADE written, read back, text and JSON out."""

from __future__ import annotations

import importlib.util
import json
import sys
from pathlib import Path

import comtrade
import numpy as np
import pytest

from eventlab.cli import main
from eventlab.records import write_record
from eventlab.records.build import make_record

_spec = importlib.util.spec_from_file_location(
    "faultwaves_for_cli", Path(__file__).parents[1] / "signals" / "faultwaves.py")
fw = importlib.util.module_from_spec(_spec)
sys.modules[_spec.name] = fw
_spec.loader.exec_module(fw)

NAMES = ("VA", "VB", "VC", "IA", "IB", "IC")


def _write(tmp_path, e, station="VELLMOOR", data_format="BINARY"):
    x = np.vstack([e["v_abc"], e["i_abc"]])
    analog = [{"name": nm, "phase": nm[-1], "unit": "V" if nm[0] == "V" else "A",
               "values": row} for nm, row in zip(NAMES, x, strict=True)]
    status = [{"name": "TRIP", "values": e["trip"]}, {"name": "52A", "values": e["breaker"],
                                                      "normal": 1}]
    rec = make_record(station, e["fs_hz"], analog, status, frequency_hz=e["f0_hz"])
    paths = write_record(rec, tmp_path / station.replace(" ", "_"), data_format=data_format)
    return next(p for p in paths if p.suffix == ".cfg")


def test_json_contract_and_text(tmp_path, capsys):
    e = fw.fault_event("CAG", 0.0507, noise=0.001, seed=3)
    cfg = _write(tmp_path, e)
    out = tmp_path / "a.json"
    assert main(["analyze", str(cfg), "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "CAG" in text and "Inception" in text and "Currents [A primary]" in text
    d = json.loads(out.read_text())
    # the contract keys of the issue
    assert d["fault"]["type"] == "CAG"
    assert abs(d["timeline"]["inception_s"] - e["truth"]["inception_s"]) <= 0.5e-3
    assert d["timeline"]["clearing_s"] is not None
    assert d["timeline"]["duration_ms"] > 0
    for key in ("prefault", "fault"):
        for nm in NAMES:
            mag, deg = d["phasors"][key][nm]
            assert mag > 0 and -180 <= deg <= 180
    for key in ("sequence", "records", "terminals", "location", "comparison"):
        assert key in d


def test_phasors_against_comtrade_reader(tmp_path, capsys):
    # reference: the comtrade package reads the same file; numpy.fft bin 1 of its samples
    e = fw.fault_event("AB", 0.0507)
    cfg = _write(tmp_path, e)
    assert main(["analyze", str(cfg), "--json", "-"]) == 0
    d = json.loads(capsys.readouterr().out)
    ref = comtrade.load(str(cfg))
    n = e["samples_per_cycle"]
    w = d["timeline"]["intervals"][0]["windows"]["prefault"]
    k = w["end_index"]
    s = k - n + 1
    for j, nm in enumerate(NAMES):
        x = np.asarray(ref.analog[j], dtype=float)
        ph = np.sqrt(2) / n * np.fft.fft(x[s:k + 1])[1] * np.exp(-2j * np.pi * s / n)
        mag, deg = d["phasors"]["prefault"][nm]
        assert mag == pytest.approx(abs(ph), rel=1e-6)
        assert deg == pytest.approx(np.degrees(np.angle(ph)), abs=1e-4)


def test_two_ends_and_model_option_accepted(tmp_path, capsys):
    e1 = fw.fault_event("BC", 0.0507)
    e2 = fw.fault_event("BC", 0.0507, system=fw.System(load_angle_deg=-8.0))
    c1 = _write(tmp_path, e1, "VELLMOOR")
    c2 = _write(tmp_path, e2, "CARDON REACH")
    assert main(["analyze", str(c1), str(c2), "--line", "VM-CR1", "--json", "-"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert [r["station"] for r in d["records"]] == ["VELLMOOR", "CARDON REACH"]
    assert d["fault"]["type"] == "BC"


def test_no_fault_json_nulls(tmp_path, capsys):
    e = fw.fault_event("AG", 0.0507)
    n = e["samples_per_cycle"]
    x = np.vstack([e["v_abc"], e["i_abc"]])
    reps = x.shape[1] // n
    steady = np.tile(x[:, :n], reps)
    ee = dict(e, v_abc=steady[:3], i_abc=steady[3:], trip=np.zeros(reps * n),
              breaker=np.ones(reps * n))
    cfg = _write(tmp_path, ee)
    assert main(["analyze", str(cfg), "--json", "-"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["fault"]["type"] == "none"
    assert d["timeline"]["inception_s"] is None
    assert d["timeline"]["clearing_s"] is None
    assert d["timeline"]["duration_ms"] is None


def test_errors_are_one_line_exit_2(tmp_path, capsys):
    assert main(["analyze", str(tmp_path / "missing.cfg")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    # a record without a line terminal
    e = fw.fault_event("AG", 0.0507)
    rec = make_record("X", e["fs_hz"], [{"name": "FOO", "phase": "", "unit": "A",
                                          "values": e["i_abc"][0]}], frequency_hz=60.0)
    cfg = next(p for p in write_record(rec, tmp_path / "X") if p.suffix == ".cfg")
    assert main(["analyze", str(cfg)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "analyze: error" in err


def test_location_keys_with_model_on_sample_event(capsys, tmp_path):
    # JSON contract of the location step (issue: fault location), on the bundled
    # two-ended sample; truth.json is the simulator's record of its own inputs.
    root = Path(__file__).parents[2]
    ev = root / "sample_events" / "vm_cr1_bg"
    out = tmp_path / "a.json"
    assert main(["analyze", str(ev / "VELLMOOR.cfg"), str(ev / "CARDON_REACH.cfg"),
                 "--model", str(root / "models" / "northmarch_230kv.toml"),
                 "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "CAUTION" in text and "energized" in text
    d = json.loads(out.read_text())
    loc = d["location"]
    for key in ("distance_km", "fraction", "fault_resistance_ohm", "interval_km", "method",
                "structures", "methods"):
        assert key in loc, key
    assert len(loc["interval_km"]) == 2
    assert all({"method", "distance_km"} <= set(m) for m in loc["methods"])
    truth = json.loads((ev / "truth.json").read_text())
    assert abs(loc["distance_km"] - truth["distance_from_km"]["VELLMOOR-VM-CR1"]) < 1.0
    assert d["comparison"] and all(
        len(c["measured"]) == 2 and len(c["computed"]) == 2 for c in d["comparison"])


def test_sequential_clearing_sample_text_and_json(capsys, tmp_path):
    # the bundled sequential-clearing event (CARDON REACH in zone 1, VELLMOOR in
    # zone 2): the text names the stage fed from one end, the JSON carries it and the
    # radial_stage method, located from VELLMOOR's record alone
    root = Path(__file__).parents[2]
    ev = root / "sample_events" / "vm_cr1_sequential"
    out = tmp_path / "s.json"
    assert main(["analyze", str(ev / "VELLMOOR.cfg"), "--model",
                 str(root / "models" / "northmarch_230kv.toml"), "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "Other end  : opened first" in text and "radial_stage" in text
    d = json.loads(out.read_text())
    stage = d["timeline"]["intervals"][0]["remote_open"]
    assert stage["confirmed"] and not stage["in_fault_window"]
    truth = json.loads((ev / "truth.json").read_text())
    assert stage["change_s"] == pytest.approx(
        min(truth["pole_open_s"]["CARDON_REACH-VM-CR1"][0]), abs=1 / 60)
    radial = next(m for m in d["location"]["methods"] if m["method"] == "radial_stage")
    assert abs(radial["distance_km"] - truth["distance_km"]) < 0.2
    assert d["location"]["model_fit"]["fault_resistance_open_ohm"] == pytest.approx(
        truth["r_fault_ohm"], abs=0.5)


def test_terminal_option_pairs_record_and_rejects_unknown_id(capsys):
    root = Path(__file__).parents[2]
    ev = root / "sample_events" / "vm_cr1_bg"
    model = str(root / "models" / "northmarch_230kv.toml")
    assert main(["analyze", str(ev / "VELLMOOR.cfg"), "--model", model,
                 "--terminal", "VELLMOOR-VM-CR1", "--json", "-"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["location"]["reference_terminal"] == "VELLMOOR-VM-CR1"
    assert main(["analyze", str(ev / "VELLMOOR.cfg"), "--model", model,
                 "--terminal", "NO-SUCH"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "NO-SUCH" in err[0]
