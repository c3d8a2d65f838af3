"""Textbook worked examples and per-unit conversions."""

import math

import numpy as np
import pytest

from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import model_from_dict
from eventlab.network.perunit import (
    amps_to_pu,
    i_base_a,
    ohm_to_pu,
    pu_to_amps,
    pu_to_ohm,
    pu_to_volts,
    v_base_v,
    voltage_zones,
    volts_to_pu,
    z_base_ohm,
)


def _generator_model():
    # Grainger & Stevenson, Power System Analysis (McGraw-Hill 1994), Example 12.1 (from
    # memory): a 20 MVA 13.8 kV generator, X''d = 0.25, X2 = 0.35, X0 = 0.10 per unit,
    # neutral solidly grounded, unloaded at rated voltage; single line-to-ground fault at
    # its terminals.
    zb = 13.8**2 / 20.0
    return model_from_dict({
        "system": {"name": "G&S 12.1", "frequency_hz": 60.0, "base_mva": 20.0},
        "bus": [{"id": "G", "kv": 13.8}],
        "source": [{"bus": "G", "z1_ohm": [0.0, 0.25 * zb], "z2_ohm": [0.0, 0.35 * zb],
                    "z0_ohm": [0.0, 0.10 * zb]}],
    })


def test_grainger_stevenson_example_12_1_single_line_to_ground():
    r = solve_fault(_generator_model(), FaultSpec.at_bus("G", "AG"))
    # Example 12.1 (from memory): I_a1 = I_a2 = I_a0 = -j1.4286 pu, I_a = -j4.2857 pu,
    # base current 837 A, so |I_a| = 3586 A
    np.testing.assert_allclose(r.fault.i_012_pu, [-1.4286j] * 3, atol=1e-4)
    assert r.fault.i_abc[0] / i_base_a(13.8, 20.0) == pytest.approx(-4.2857j, abs=1e-4)
    assert abs(r.fault.i_abc[0]) == pytest.approx(3586.0, rel=5e-4)
    # Example 12.1 (from memory): V_a1 = 0.643, V_a2 = -0.500, V_a0 = -0.143 pu and the
    # line-to-line voltage V_bc = 1.9795 at 270 deg pu (of the line-to-neutral base)
    np.testing.assert_allclose(r.fault.v_012_pu, [-0.1429, 0.6429, -0.5], atol=1e-4)
    v = r.fault.v_abc / v_base_v(13.8)
    assert abs(v[0]) < 1e-12
    v_bc = v[1] - v[2]
    assert abs(v_bc) == pytest.approx(1.9795, abs=1e-4)
    assert math.degrees(np.angle(v_bc)) % 360 == pytest.approx(270.0, abs=0.01)


def test_grainger_stevenson_example_12_1_other_types():
    # Same generator, classical closed forms (Grainger & Stevenson 1994, sec. 12.2-12.4,
    # common practice): line-to-line I_b = -j sqrt(3) / (j(X1 + X2)) = -sqrt(3)/0.6 pu;
    # double line-to-ground I_a1 = 1 / j(X1 + X2 || X0); three-phase 1 / jX1 = -j4 pu.
    m = _generator_model()
    ib = i_base_a(13.8, 20.0)
    r = solve_fault(m, FaultSpec.at_bus("G", "BC"))
    assert abs(r.fault.i_abc[1]) / ib == pytest.approx(math.sqrt(3) / 0.6, rel=1e-12)
    r = solve_fault(m, FaultSpec.at_bus("G", "BCG"))
    x_par = 0.35 * 0.10 / 0.45
    assert r.fault.i_012_pu[1] == pytest.approx(1 / (1j * (0.25 + x_par)), rel=1e-12)
    r = solve_fault(m, FaultSpec.at_bus("G", "ABC"))
    assert r.fault.i_abc[0] / ib == pytest.approx(-4j, rel=1e-12)


@pytest.mark.parametrize("kv, mva", [(230.0, 100.0), (13.8, 20.0), (0.4, 1.0)])
def test_per_unit_round_trip_and_bases(kv, mva):
    # Z_base = kV^2/MVA, I_base = MVA/(sqrt(3) kV), V_base = kV/sqrt(3) (common practice)
    assert z_base_ohm(kv, mva) == pytest.approx(kv * kv / mva)
    assert i_base_a(kv, mva) * v_base_v(kv) * 3 == pytest.approx(mva * 1e6)
    z = 3.0 + 40.0j
    assert pu_to_ohm(ohm_to_pu(z, kv, mva), kv, mva) == pytest.approx(z)
    assert pu_to_amps(amps_to_pu(1234.5, kv, mva), kv, mva) == pytest.approx(1234.5)
    assert volts_to_pu(pu_to_volts(0.97 + 0.1j, kv), kv) == pytest.approx(0.97 + 0.1j)


def _zones_model():
    return model_from_dict({
        "system": {"name": "z", "frequency_hz": 50.0, "base_mva": 100.0},
        "bus": [{"id": "H", "kv": 132.0}, {"id": "H2", "kv": 132.0}, {"id": "L", "kv": 33.0},
                {"id": "LL", "kv": 11.0}],
        "source": [{"bus": "H", "z1_ohm": [1.0, 10.0], "z0_ohm": [1.0, 10.0]}],
        "line": [{"id": "X", "from": "H", "to": "H2", "length_km": 5.0,
                  "z1_ohm_per_km": [0.1, 0.4], "z0_ohm_per_km": [0.3, 1.2]}],
        "transformer": [
            {"id": "T1", "hv_bus": "H2", "lv_bus": "L", "mva": 60.0, "z_percent": 10.0,
             "x_r": 20.0, "vector_group": "YNd11"},
            {"id": "T2", "hv_bus": "L", "lv_bus": "LL", "mva": 10.0, "z_percent": 6.0,
             "x_r": 8.0, "vector_group": "Dyn1"}],
    })


def test_voltage_zones_through_transformers():
    m = _zones_model()
    z = voltage_zones(m)
    assert z["H"].index == z["H2"].index != z["L"].index != z["LL"].index
    # IEC 60076-1 clock notation: LV lags HV by k x 30 deg (YNd11: leads by 30 deg)
    assert math.degrees(z["L"].angle_rad) == pytest.approx(30.0)
    assert math.degrees(z["LL"].angle_rad) == pytest.approx(0.0)
    # with default source angles no load flows through the shifts
    r = solve_fault(m, FaultSpec.at_bus("LL", "ABC"))
    for b in r.branches:
        assert np.max(np.abs(b.i_abc_pre)) < 1e-9, b.element
    pre = r.buses["LL"].v_abc_pre / v_base_v(11.0)
    assert pre[0] == pytest.approx(1.0 + 0j, abs=1e-12)


def test_ground_fault_on_ungrounded_system():
    # bus L (33 kV) sits between the delta windings of T1 and T2: no zero-sequence path.
    # A phase-to-ground fault there draws no current and shifts the neutral fully: the
    # healthy phases rise to line-to-line voltage (common practice, no source).
    m = _zones_model()
    r = solve_fault(m, FaultSpec.at_bus("L", "AG"))
    # the solver's documented 1e-9 pu leakage per node lets a few microamperes through
    assert np.max(np.abs(r.fault.i_abc)) < 1e-3
    v = np.abs(r.fault.v_abc) / v_base_v(33.0)
    np.testing.assert_allclose(v, [0.0, math.sqrt(3), math.sqrt(3)], atol=1e-6)


def test_identical_coupled_parallel_lines_equal_one_line_of_half_impedance():
    # Two identical parallel lines with zero-sequence mutual impedance Z0m between the same
    # buses act, seen from those buses, as one line with Z1/2 and (Z0 + Z0m)/2 (Anderson,
    # Analysis of Faulted Power Systems, 1973, on mutually coupled lines; from memory)
    z1, z0, z0m = [0.04, 0.4], [0.25, 1.2], [0.2, 0.7]
    common = {
        "system": {"name": "dc", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "P", "kv": 230.0}, {"id": "Q", "kv": 230.0}],
        "source": [{"bus": "P", "z1_ohm": [1.0, 12.0], "z0_ohm": [1.5, 18.0]},
                   {"bus": "Q", "z1_ohm": [2.0, 20.0], "z0_ohm": [3.0, 33.0]}],
    }
    pair = model_from_dict({**common, "line": [
        {"id": "C1", "from": "P", "to": "Q", "length_km": 60.0, "z1_ohm_per_km": z1,
         "z0_ohm_per_km": z0, "mutual": {"line": "C2", "z0m_ohm_per_km": z0m}},
        {"id": "C2", "from": "Q", "to": "P", "length_km": 60.0, "z1_ohm_per_km": z1,
         "z0_ohm_per_km": z0}]})
    half = model_from_dict({**common, "line": [
        {"id": "C", "from": "P", "to": "Q", "length_km": 60.0,
         "z1_ohm_per_km": [z1[0] / 2, z1[1] / 2],
         "z0_ohm_per_km": [(z0[0] + z0m[0]) / 2, (z0[1] + z0m[1]) / 2]}]})
    for code in ("AG", "BCG"):
        a = solve_fault(pair, FaultSpec.at_bus("Q", code, 2.0))
        b = solve_fault(half, FaultSpec.at_bus("Q", code, 2.0))
        np.testing.assert_allclose(a.fault.i_abc, b.fault.i_abc, rtol=1e-12, atol=1e-9)
        c1 = next(x for x in a.branches if x.element == "C1" and x.bus == "P").i_abc
        c2 = next(x for x in a.branches if x.element == "C2" and x.bus == "P").i_abc
        c = next(x for x in b.branches if x.element == "C" and x.bus == "P").i_abc
        np.testing.assert_allclose(c1, c2, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(c1 + c2, c, rtol=1e-12, atol=1e-9)
