"""`eventlab fault`: options, JSON contract, --show-work, errors."""

import json
import re
from pathlib import Path

import numpy as np
import pytest

from eventlab.cli import main

EXAMPLE = str(Path(__file__).resolve().parents[2] / "models" / "example_230kv.toml")


def _run(capsys, *argv):
    rc = main(["fault", "--model", EXAMPLE, *argv])
    out = capsys.readouterr()
    return rc, out.out, out.err


def _c(pair):
    return pair[0] * np.exp(1j * np.radians(pair[1]))


def test_json_contract_and_values(capsys):
    rc, out, err = _run(capsys, "--line", "L1", "--at", "0.4", "--type", "AG", "--json", "-")
    assert rc == 0 and err == ""
    d = json.loads(out)
    assert [t["id"] for t in d["terminals"]] == ["WEST-L1"]
    t = d["terminals"][0]
    assert set(t["currents"]) == set(t["voltages"]) == {"A", "B", "C"}
    assert set(d["fault"]["sequence"]) >= {"I0", "I1", "I2"}
    # classical series connection I = 3E / (2 Z1 + Z0) with Z1, Z0 the two branches
    # (source + line part) in parallel; data of the model (common practice, no source)
    zs1, zs0, zr1, zr0 = 1.2 + 14j, 2 + 22j, 3 + 30j, 4.5 + 45j
    zl1, zl0 = 80 * (0.03 + 0.35j), 80 * (0.25 + 1.1j)
    z1 = 1 / (1 / (zs1 + 0.4 * zl1) + 1 / (zr1 + 0.6 * zl1))
    z0 = 1 / (1 / (zs0 + 0.4 * zl0) + 1 / (zr0 + 0.6 * zl0))
    i_f = 3 * 230e3 / np.sqrt(3) / (2 * z1 + z0)
    assert abs(_c(d["fault"]["currents"]["A"]) / i_f - 1) < 1e-9
    assert abs(_c(d["fault"]["sequence"]["I0"]) * 3 / i_f - 1) < 1e-9
    assert d["fault"]["currents"]["B"][0] < 1e-6 * abs(i_f)


def test_two_phase_to_ground_with_rg_and_table(capsys, tmp_path):
    path = tmp_path / "f.json"
    rc, out, _ = _run(capsys, "--line", "L1", "--at", "0.4", "--type", "BCG", "--rf", "2",
                      "--rg", "5", "--json", str(path))
    assert rc == 0
    assert "BCG fault on line L1" in out and "Terminal WEST-L1" in out
    d = json.loads(path.read_text())
    i = {p: _c(d["fault"]["currents"][p]) for p in "ABC"}
    i0 = _c(d["fault"]["sequence"]["I0"])
    assert abs(i["A"]) < 1e-6 and abs(i["B"] + i["C"] - 3 * i0) < 1e-6 * abs(i0)
    # ground path: V at the common point = Rg * (IB + IC); Vb - Rf Ib equals it (convention)
    vb = _c(d["fault"]["voltages"]["B"])
    assert abs(vb - 2.0 * i["B"] - 5.0 * (i["B"] + i["C"])) < 1e-6 * abs(vb)


def test_show_work_order(capsys):
    rc, out, _ = _run(capsys, "--at", "0.25", "--type", "CA", "--rf", "1", "--show-work")
    assert rc == 0
    heads = ["1. Bases", "2. Per-unit", "3. Pre-fault voltage and Thevenin",
             "4. Interconnection for CA", "5. Sequence currents", "6. Phase quantities",
             "7. Contributions"]
    pos = [out.index(h) for h in heads]
    assert pos == sorted(pos)
    assert "reference phase B, the healthy one" in out
    diff = float(out.split("general phase-domain solution: largest difference ")[1].split()[0])
    assert diff < 1e-12


def test_bus_fault(capsys):
    rc, out, _ = _run(capsys, "--bus", "EAST", "--type", "ABC", "--json", "-")
    d = json.loads(out)
    assert rc == 0 and d["fault"]["location"]["bus"] == "EAST"
    # I = E / Z1 with Z1 = Z_EAST || (Z_WEST + Z_line) (common practice, no source)
    z1 = 1 / (1 / (3 + 30j) + 1 / (1.2 + 14j + 80 * (0.03 + 0.35j)))
    assert abs(d["fault"]["currents"]["A"][0] / (230e3 / np.sqrt(3) / abs(z1)) - 1) < 1e-9


@pytest.mark.parametrize("argv, expect", [
    (["--line", "L9", "--at", "0.5", "--type", "AG"], "unknown line 'L9'"),
    (["--at", "1.5", "--type", "AG"], "fraction"),
    (["--at", "0.5", "--type", "XY"], "unknown fault type"),
    (["--at", "0.5", "--type", "AG", "--rf", "-1"], "r_fault_ohm"),
    (["--at", "0.5", "--type", "AB", "--rg", "3"], "r_ground_ohm"),
    (["--type", "AG"], "--at"),
])
def test_errors_are_one_line_exit_2(capsys, argv, expect):
    rc, out, err = _run(capsys, *argv)
    assert rc == 2 and out == ""
    assert err.count("\n") == 1 and expect in err


def test_show_work_hand_check_of_thevenin_impedances(capsys):
    rc, out, _ = _run(capsys, "--at", "0.4", "--type", "AG", "--show-work")
    assert rc == 0
    # the two branches in parallel, printed by hand, equal the matrix result (5 decimals)
    for name in ("Z1", "Z0"):
        hand = re.search(rf"^     {name} = .* = (.*) pu$", out, re.M).group(1)
        solved = re.search(rf"^   {name} = (.*) pu = .* ohm$", out, re.M).group(1)
        assert hand == solved


def test_transformer_table_and_delta_star_currents(capsys, tmp_path):
    (tmp_path / "t.toml").write_text(
        '[system]\nname = "t"\nfrequency_hz = 50.0\nbase_mva = 100.0\n'
        '[[bus]]\nid = "H"\nkv = 132.0\n[[bus]]\nid = "L"\nkv = 33.0\n'
        '[[source]]\nbus = "H"\nsc_mva = 3000.0\nx_r = 10.0\nx0_x1 = 1.2\n'
        '[[transformer]]\nid = "T1"\nhv_bus = "H"\nlv_bus = "L"\nmva = 60.0\n'
        'z_percent = 10.0\nx_r = 20.0\nvector_group = "Dyn11"\n')
    rc, out, _ = _run_model(capsys, str(tmp_path / "t.toml"), "--bus", "L", "--type", "AG",
                            "--json", str(tmp_path / "t.json"))
    assert rc == 0 and "T1 Dyn11 H" in out
    d = json.loads((tmp_path / "t.json").read_text())
    i_lv = d["fault"]["currents"]["A"][0]
    hv = next(b for b in d["branches"] if b["element"] == "T1" and b["bus"] == "H")
    mags = sorted(hv["currents"][p][0] for p in "ABC")
    # a phase-to-ground fault behind a delta-star transformer shows in two HV phases as
    # I_LV (U_LV / U_HV) / sqrt(3), opposite, and not in the third (common practice, no source)
    assert mags[0] < 1e-6 * i_lv
    np.testing.assert_allclose(mags[1:], i_lv * 33.0 / 132.0 / np.sqrt(3), rtol=1e-9)


def _run_model(capsys, model, *argv):
    rc = main(["fault", "--model", model, *argv])
    out = capsys.readouterr()
    return rc, out.out, out.err
