"""Solver vs power-grid-model's asymmetric short-circuit calculation.

Reference: power-grid-model (PyPI ``power-grid-model``, 1.12, IEC 60909
method), with ``short_circuit_voltage_scaling="minimum"`` so that the voltage
factor is c = 1.0 above 1 kV (IEC 60909-0 table 1) and sources at 1.0 pu: the
same classical calculation as ours.  Conventions measured here: its
``two_phase`` fault resistance is the total between the phases (ours too); its
``two_phase_to_ground`` ``r_f`` sits between the joined phases and ground (our
``r_ground_ohm`` with ``r_fault_ohm = 0``); its source ``z01_ratio`` is Z0/Z1
(a real factor, so Z0 has the angle of Z1).

Agreement required: 0.1 % in magnitude and 0.1 degree for the fault current
and each side's contribution (issue 4).
"""

import math
import re

import numpy as np
import pytest
from power_grid_model import (
    ComponentType,
    DatasetType,
    FaultPhase,
    FaultType,
    PowerGridModel,
    ShortCircuitVoltageScaling,
    initialize_array,
)
from power_grid_model.enum import WindingType

from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import model_from_dict

U_HV, U_LV = 230e3, 33e3
F_HZ = 60.0
# sources: |Z1| [ohm], X/R via z1, Z0/Z1 real factor
Z1_W, K0_W = 1.2 + 14.0j, 1.5
Z1_E, K0_E = 3.0 + 30.0j, 1.6
Z1_S, K0_S = 0.05 + 1.0j, 1.0
LEN_KM = 80.0
ZL1_KM, ZL0_KM = 0.03 + 0.35j, 0.25 + 1.1j
# transformer E(230 kV) - S(33 kV): 150 MVA, uk 12 %, X/R 30
T_MVA, T_UK, T_XR = 150.0, 0.12, 30.0

PGM_TYPE = {
    "AG": (FaultType.single_phase_to_ground, FaultPhase.a),
    "BG": (FaultType.single_phase_to_ground, FaultPhase.b),
    "CG": (FaultType.single_phase_to_ground, FaultPhase.c),
    "AB": (FaultType.two_phase, FaultPhase.ab),
    "BC": (FaultType.two_phase, FaultPhase.bc),
    "CA": (FaultType.two_phase, FaultPhase.ac),
    "ABG": (FaultType.two_phase_to_ground, FaultPhase.ab),
    "BCG": (FaultType.two_phase_to_ground, FaultPhase.bc),
    "CAG": (FaultType.two_phase_to_ground, FaultPhase.ac),
    "ABC": (FaultType.three_phase, FaultPhase.abc),
}
PGM_WINDING = {"YN": WindingType.wye_n, "Y": WindingType.wye, "D": WindingType.delta}


def _pair(z):
    return [z.real, z.imag]


def _eventlab_model(vector_group):
    d = {
        "system": {"name": "pgm", "frequency_hz": F_HZ, "base_mva": 100.0},
        "bus": [{"id": "W", "kv": 230.0}, {"id": "E", "kv": 230.0}, {"id": "S", "kv": 33.0}],
        "source": [
            {"bus": "W", "z1_ohm": _pair(Z1_W), "z0_ohm": _pair(Z1_W * K0_W)},
            {"bus": "E", "z1_ohm": _pair(Z1_E), "z0_ohm": _pair(Z1_E * K0_E)},
            {"bus": "S", "z1_ohm": _pair(Z1_S), "z0_ohm": _pair(Z1_S * K0_S)},
        ],
        "line": [{"id": "L1", "from": "W", "to": "E", "length_km": LEN_KM,
                  "z1_ohm_per_km": _pair(ZL1_KM), "z0_ohm_per_km": _pair(ZL0_KM)}],
        "transformer": [{"id": "T1", "hv_bus": "E", "lv_bus": "S", "mva": T_MVA,
                         "z_percent": 100 * T_UK, "x_r": T_XR, "vector_group": vector_group}],
        "terminal": [{"id": "W-L1", "line": "L1", "bus": "W", "station": "W"},
                     {"id": "E-L1", "line": "L1", "bus": "E", "station": "E"}],
    }
    if vector_group.startswith("YN") and vector_group[2:4] != "yn":
        d["transformer"][0]["z_n_ohm"] = [5.0, 0.0]
    return model_from_dict(d)


def _pgm(vector_group, m, code, r_f, fault_bus=None):
    """power-grid-model network: nodes W=1, E=2, S=3, fault point F=4 on L1."""
    g = re.match(r"^(YN|Y|D)(yn|y|d)(\d+)$", vector_group)
    hw, lw, k = g.group(1), g.group(2).upper(), int(g.group(3))
    node = initialize_array(DatasetType.input, ComponentType.node, 4)
    node["id"] = [1, 2, 3, 4]
    node["u_rated"] = [U_HV, U_HV, U_LV, U_HV]
    line = initialize_array(DatasetType.input, ComponentType.line, 2)
    line["id"] = [10, 11]
    line["from_node"] = [1, 4]
    line["to_node"] = [4, 2]
    line["from_status"] = line["to_status"] = 1
    for i, length in enumerate((LEN_KM * m, LEN_KM * (1 - m))):
        line["r1"][i], line["x1"][i] = ZL1_KM.real * length, ZL1_KM.imag * length
        line["r0"][i], line["x0"][i] = ZL0_KM.real * length, ZL0_KM.imag * length
    line["c1"] = line["c0"] = line["tan1"] = line["tan0"] = 0.0
    line["i_n"] = 1e3
    src = initialize_array(DatasetType.input, ComponentType.source, 3)
    src["id"] = [20, 21, 22]
    src["node"] = [1, 2, 3]
    src["status"] = 1
    src["u_ref"] = 1.0
    src["u_ref_angle"] = [0.0, 0.0, -k * math.pi / 6]
    zs = [(Z1_W, K0_W, U_HV), (Z1_E, K0_E, U_HV), (Z1_S, K0_S, U_LV)]
    src["sk"] = [u * u / abs(z) for z, _, u in zs]
    src["rx_ratio"] = [z.real / z.imag for z, _, _ in zs]
    src["z01_ratio"] = [kk for _, kk, _ in zs]
    tr = initialize_array(DatasetType.input, ComponentType.transformer, 1)
    tr["id"] = [40]
    tr["from_node"], tr["to_node"] = [2], [3]
    tr["from_status"] = tr["to_status"] = 1
    tr["u1"], tr["u2"], tr["sn"], tr["uk"] = U_HV, U_LV, T_MVA * 1e6, T_UK
    # copper loss from R = Z / sqrt(1 + (X/R)^2): pk = R_pu * S
    tr["pk"] = T_UK / math.sqrt(1 + T_XR**2) * T_MVA * 1e6
    tr["i0"] = tr["p0"] = 0.0
    tr["winding_from"], tr["winding_to"], tr["clock"] = PGM_WINDING[hw], PGM_WINDING[lw], k
    tr["tap_side"], tr["tap_pos"], tr["tap_min"], tr["tap_max"], tr["tap_nom"] = 0, 0, 0, 0, 0
    tr["tap_size"] = 0.0
    tr["r_grounding_from"] = 5.0 if (hw == "YN" and lw != "YN") else 0.0
    tr["x_grounding_from"] = tr["r_grounding_to"] = tr["x_grounding_to"] = 0.0
    f = initialize_array(DatasetType.input, ComponentType.fault, 1)
    ft, fp = PGM_TYPE[code]
    f["id"] = [30]
    f["status"] = 1
    f["fault_type"], f["fault_phase"] = ft, fp
    f["fault_object"] = [4 if fault_bus is None else fault_bus]
    f["r_f"], f["x_f"] = r_f, 0.0
    model = PowerGridModel({"node": node, "line": line, "source": src, "transformer": tr,
                            "fault": f}, system_frequency=F_HZ)
    return model.calculate_short_circuit(
        short_circuit_voltage_scaling=ShortCircuitVoltageScaling.minimum)


def _c(mag, ang):
    return mag * np.exp(1j * ang)


def _assert_phasors(ours, ref, what):
    ours, ref = np.asarray(ours), np.asarray(ref)
    scale = np.max(np.abs(ref))
    for k in range(3):
        if abs(ref[k]) < 1e-6 * scale:  # a phase with no current: compare absolutely
            assert abs(ours[k]) < 1e-6 * scale, what
            continue
        assert abs(abs(ours[k]) / abs(ref[k]) - 1) < 1e-3, (what, k, ours[k], ref[k])
        assert abs(np.degrees(np.angle(ours[k] / ref[k]))) < 0.1, (what, k, ours[k], ref[k])


CASES = [(code, vg) for code in PGM_TYPE for vg in ("YNd1",)] + [
    ("AG", "Dyn11"), ("BCG", "YNyn0"), ("CA", "Yd5"), ("ABG", "Dyn5")]


@pytest.mark.parametrize("code, vector_group", CASES)
@pytest.mark.parametrize("m, r_ohm", [(0.3, 0.0), (0.65, 4.0)])
def test_line_fault_matches_power_grid_model(code, vector_group, m, r_ohm):
    out = _pgm(vector_group, m, code, r_ohm)
    if code in ("ABG", "BCG", "CAG"):
        spec = FaultSpec("L1", m, code, 0.0, r_ohm)  # pgm: r_f from the joined phases to ground
    else:
        spec = FaultSpec("L1", m, code, r_ohm)
    r = solve_fault(_eventlab_model(vector_group), spec)
    _assert_phasors(r.fault.i_abc, _c(out["fault"]["i_f"][0], out["fault"]["i_f_angle"][0]),
                    "fault")
    ln = out["line"]
    _assert_phasors(r.terminals["W-L1"].i_abc, _c(ln["i_from"][0], ln["i_from_angle"][0]), "W")
    _assert_phasors(r.terminals["E-L1"].i_abc, _c(ln["i_to"][1], ln["i_to_angle"][1]), "E")
    # the transformer seen from its LV side (phase shift and zero-sequence blocking)
    tr = out["transformer"]
    lv = next(b for b in r.branches if b.element == "T1" and b.bus == "S")
    _assert_phasors(lv.i_abc, _c(tr["i_to"][0], tr["i_to_angle"][0]), "T1 LV")
    hv = next(b for b in r.branches if b.element == "T1" and b.bus == "E")
    _assert_phasors(hv.i_abc, _c(tr["i_from"][0], tr["i_from_angle"][0]), "T1 HV")
    # every bus voltage
    nd = out["node"]
    for i, bus in enumerate(("W", "E", "S")):
        ref_v = _c(nd["u"][i], nd["u_angle"][i])
        ours = r.buses[bus].v_abc
        assert np.max(np.abs(ours - ref_v)) < 1e-3 * np.max(np.abs(ref_v)), bus


@pytest.mark.parametrize("code", ["AG", "BC", "BCG", "ABC"])
@pytest.mark.parametrize("vector_group", ["YNd1", "Dyn11"])
def test_fault_on_lv_bus_seen_through_transformer(code, vector_group):
    out = _pgm(vector_group, 0.5, code, 0.0, fault_bus=3)
    r = solve_fault(_eventlab_model(vector_group), FaultSpec.at_bus("S", code))
    _assert_phasors(r.fault.i_abc, _c(out["fault"]["i_f"][0], out["fault"]["i_f_angle"][0]),
                    "fault")
    tr = out["transformer"]
    hv = next(b for b in r.branches if b.element == "T1" and b.bus == "E")
    _assert_phasors(hv.i_abc, _c(tr["i_from"][0], tr["i_from_angle"][0]), "T1 HV")
    ln = out["line"]
    _assert_phasors(r.terminals["W-L1"].i_abc, _c(ln["i_from"][0], ln["i_from_angle"][0]), "W")


def test_prefault_load_flow_matches_power_grid_model():
    # power-grid-model power flow: its sources are EMFs u_ref at u_ref_angle behind their
    # short-circuit impedance, so with no loads it is the same linear network as ours
    from power_grid_model import CalculationMethod

    from eventlab.network.faults import prefault

    node = initialize_array(DatasetType.input, ComponentType.node, 2)
    node["id"], node["u_rated"] = [1, 2], U_HV
    line = initialize_array(DatasetType.input, ComponentType.line, 1)
    line["id"], line["from_node"], line["to_node"] = [10], [1], [2]
    line["from_status"] = line["to_status"] = 1
    line["r1"], line["x1"] = ZL1_KM.real * LEN_KM, ZL1_KM.imag * LEN_KM
    line["r0"], line["x0"] = ZL0_KM.real * LEN_KM, ZL0_KM.imag * LEN_KM
    line["c1"] = line["c0"] = line["tan1"] = line["tan0"] = 0.0
    line["i_n"] = 1e3
    src = initialize_array(DatasetType.input, ComponentType.source, 2)
    src["id"], src["node"], src["status"] = [20, 21], [1, 2], 1
    src["u_ref"], src["u_ref_angle"] = [1.03, 0.98], [0.0, math.radians(-12.0)]
    src["sk"] = [U_HV**2 / abs(z) for z in (Z1_W, Z1_E)]
    src["rx_ratio"] = [z.real / z.imag for z in (Z1_W, Z1_E)]
    src["z01_ratio"] = [K0_W, K0_E]
    out = PowerGridModel({"node": node, "line": line, "source": src},
                         system_frequency=F_HZ).calculate_power_flow(
        symmetric=True, calculation_method=CalculationMethod.linear)
    v_ref = out["node"]["u"][0] / math.sqrt(3) * np.exp(1j * out["node"]["u_angle"][0])
    s_ref = out["line"]["p_from"][0] + 1j * out["line"]["q_from"][0]
    i_ref = np.conj(s_ref / (3 * v_ref))  # phase A current from the three-phase power
    d = {
        "system": {"name": "pf", "frequency_hz": F_HZ, "base_mva": 100.0},
        "bus": [{"id": "W", "kv": 230.0}, {"id": "E", "kv": 230.0}],
        "source": [{"bus": "W", "z1_ohm": _pair(Z1_W), "z0_ohm": _pair(Z1_W * K0_W),
                    "emf_pu": 1.03},
                   {"bus": "E", "z1_ohm": _pair(Z1_E), "z0_ohm": _pair(Z1_E * K0_E),
                    "emf_pu": 0.98, "angle_deg": -12.0}],
        "line": [{"id": "L1", "from": "W", "to": "E", "length_km": LEN_KM,
                  "z1_ohm_per_km": _pair(ZL1_KM), "z0_ohm_per_km": _pair(ZL0_KM)}],
        "terminal": [{"id": "W-L1", "line": "L1", "bus": "W"}],
    }
    v, i = prefault(model_from_dict(d))["W-L1"]
    assert abs(v[0] / v_ref - 1) < 1e-9
    assert abs(i[0] / i_ref - 1) < 1e-9
