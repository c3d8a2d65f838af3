"""``eventlab simulate`` on the command line: files written, exit codes, one-line errors."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from eventlab.cli import main
from eventlab.records import read_record

ROOT = Path(__file__).resolve().parents[2]
MODEL = ROOT / "models" / "orrin_isle_110kv.toml"


def test_simulate_writes_records_and_truth(tmp_path, capsys):
    out = tmp_path / "ev"
    rc = main(["simulate", "--model", str(MODEL), "--line", "OR-HF1", "--at", "0.37",
               "--type", "BG", "--rf", "3", "--inception-angle", "45", "--rate", "32",
               "--duration", "0.25", "--format", "ascii", "-o", str(out)])
    assert rc == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["HESKARD_FEN.cfg", "HESKARD_FEN.dat", "ORRINSBY.cfg", "ORRINSBY.dat",
                     "truth.json"]
    truth = json.loads((out / "truth.json").read_text())
    assert truth["type"] == "BG" and truth["fraction"] == 0.37 and truth["r_fault_ohm"] == 3.0
    rec = read_record(out / "ORRINSBY.cfg")
    assert rec.frequency_hz == 50.0 and rec.data_format == "ASCII"
    assert rec.sample_rate_hz == pytest.approx(50.0 * 32)
    assert "BG on OR-HF1" in capsys.readouterr().out


def test_simulate_float32_is_written_as_revision_2013(tmp_path):
    rc = main(["simulate", "--model", str(MODEL), "--line", "OR-HF1", "--at", "0.5",
               "--type", "abc", "--rate", "32", "--duration", "0.2", "--format", "float32",
               "--cff", "-o", str(tmp_path)])
    assert rc == 0
    rec = read_record(tmp_path / "ORRINSBY.cff")
    assert rec.revision == 2013 and rec.data_format == "FLOAT32"


@pytest.mark.parametrize("bad", [
    ["--at", "1.5", "--type", "AG"],
    ["--at", "0.5", "--type", "XG"],
    ["--at", "0.5", "--type", "AG", "--line", "NOPE"],
    ["--at", "0.5", "--type", "AG", "--format", "float32", "--revision", "1999"],
])
def test_bad_options_give_exit_2_and_one_line(tmp_path, capsys, bad):
    args = ["simulate", "--model", str(MODEL), "--line", "OR-HF1", "-o", str(tmp_path / "x")]
    rc = main(args + bad)
    assert rc == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("eventlab simulate: error:") and "\n" not in err
    assert not (tmp_path / "x").exists()


def test_missing_model_file_exit_2(tmp_path, capsys):
    rc = main(["simulate", "--model", str(tmp_path / "none.toml"), "--line", "L1", "--at",
               "0.5", "--type", "AG", "-o", str(tmp_path / "x")])
    assert rc == 2
    assert "no such file" in capsys.readouterr().err


def test_simulate_sequential_clearing(tmp_path):
    # --remote-delay: the to-end (HESKARD FEN) opens 20 ms after the from-end (ORRINSBY)
    rc = main(["simulate", "--model", str(MODEL), "--line", "OR-HF1", "--at", "0.5",
               "--type", "AG", "--rate", "32", "--duration", "0.3", "--remote-delay", "0.02",
               "-o", str(tmp_path)])
    assert rc == 0
    truth = json.loads((tmp_path / "truth.json").read_text())
    near = min(truth["pole_open_s"]["ORRINSBY-OR-HF1"][0])
    far = min(truth["pole_open_s"]["HESKARD_FEN-OR-HF1"][0])
    assert far - near > 0.01
    assert main(["simulate", "--model", str(MODEL), "--line", "OR-HF1", "--at", "0.5",
                 "--type", "AG", "--remote-delay", "-1", "-o", str(tmp_path / "x")]) == 2


def test_simulate_with_cvts_on_a_50_hz_system(tmp_path):
    # --cvt: the voltages come through the CVT model (tuned to the model's 50 Hz); the
    # truth says so, and the record's pre-fault voltage is the ideal one's (the
    # steady-state gain is divided out) while the fault's first cycle is not
    common = ["simulate", "--model", str(MODEL), "--line", "OR-HF1", "--at", "0.2",
              "--type", "AG", "--inception-angle", "90", "--rate", "32", "--duration", "0.25",
              "--format", "float32", "--revision", "2013"]
    assert main(common + ["--cvt", "active", "-o", str(tmp_path / "cvt")]) == 0
    assert main(common + ["-o", str(tmp_path / "ideal")]) == 0
    truth = json.loads((tmp_path / "cvt" / "truth.json").read_text())
    assert truth["cvt"] == "active"
    assert json.loads((tmp_path / "ideal" / "truth.json").read_text())["cvt"] is None
    va = [next(c for c in read_record(tmp_path / d / "ORRINSBY.cfg").analog
               if c.name == "VA").values for d in ("cvt", "ideal")]
    n0 = int(round(truth["inception_s"] * 50.0 * 32))
    peak = float(abs(va[1][:n0]).max())
    assert float(abs(va[0][:n0] - va[1][:n0]).max()) < 2e-3 * peak
    assert float(abs(va[0][n0:n0 + 32] - va[1][n0:n0 + 32]).max()) > 5e-3 * peak
