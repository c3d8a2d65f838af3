"""Single-ended methods on phasors from the fault solver (eventlab.network.faults).

The solver is checked against pandapower (IEC 60909) and power-grid-model in
tests/network; here its phasors are the input with a known answer.
"""

from __future__ import annotations

import pytest

from eventlab.faulttypes import FAULT_TYPES
from eventlab.locate.model_link import (
    distribution_angle,
    line_from,
    phasors_from_solution,
    source_impedances,
)
from eventlab.locate.single_ended import eriksson, modified_takagi, reactance, takagi
from eventlab.network.faults import FaultSpec, solve_fault

from .locate_models import two_source_model

LENGTH_KM = 100.0
TOL_KM = 1e-6 * LENGTH_KM


def _case(model, fraction, code, rf=0.0, rg=0.0):
    res = solve_fault(model, FaultSpec("L1", fraction, code, rf, rg))
    t0 = model.terminal("VM-L1")
    return phasors_from_solution(res, model, "VM-L1"), line_from(model, "L1", t0), t0


def _all(model, end, line, t0, fraction):
    z_s = source_impedances(model, "VELLMOOR")
    z_r = source_impedances(model, "CARDON_REACH")
    angle = distribution_angle(model, "L1", t0, fraction, end.fault_type)
    return [reactance(end, line), takagi(end, line), modified_takagi(end, line, angle),
            eriksson(end, line, z_s, z_r)]


@pytest.mark.parametrize("code", FAULT_TYPES)
@pytest.mark.parametrize("sections", [False, True])
def test_bolted_faults_exact_for_every_method(code, sections):
    # a bolted fault: every method's assumption holds (no fault-resistance term)
    model = two_source_model(load_angle_deg=12.0, sections=sections)
    end, line, t0 = _case(model, 0.37, code)
    for est in _all(model, end, line, t0, 0.37):
        assert est.distance_km == pytest.approx(37.0, abs=TOL_KM), est.method


@pytest.mark.parametrize("code", ["AG", "CA", "BCG", "ABC"])
@pytest.mark.parametrize("load_deg", [-15.0, 0.0, 15.0])
def test_takagi_exact_in_homogeneous_network_with_resistance(code, load_deg):
    # Takagi et al. 1982: exact when the current distribution factor is real,
    # i.e. all impedances of the network with one angle, with load and Rf
    model = two_source_model(load_angle_deg=load_deg, homogeneous=True)
    end, line, _ = _case(model, 0.64, code, rf=20.0, rg=5.0 if code == "BCG" else 0.0)
    assert takagi(end, line).distance_km == pytest.approx(64.0, abs=TOL_KM)


@pytest.mark.parametrize("code", FAULT_TYPES)
@pytest.mark.parametrize("sections", [False, True])
def test_modified_takagi_and_eriksson_exact_with_resistance_and_load(code, sections):
    # the model's distribution angle (modified Takagi) and the two-source
    # distribution factor (Eriksson et al. 1985) are exact for a two-source line
    model = two_source_model(load_angle_deg=-10.0, sections=sections)
    rg = 4.0 if code in ("ABG", "BCG", "CAG") else 0.0
    end, line, t0 = _case(model, 0.81, code, rf=15.0, rg=rg)
    mt = modified_takagi(end, line, distribution_angle(model, "L1", t0, 0.81, code))
    er = eriksson(end, line, source_impedances(model, "VELLMOOR"),
                  source_impedances(model, "CARDON_REACH"))
    assert mt.distance_km == pytest.approx(81.0, abs=TOL_KM)
    assert er.distance_km == pytest.approx(81.0, abs=TOL_KM)
    assert er.fault_resistance_ohm == pytest.approx(15.0, abs=1e-6)


@pytest.mark.parametrize("code", ["AG", "BC", "ABC"])
def test_reactance_effect_direction(code):
    # Reactance effect of fault resistance under load in a homogeneous network:
    # at the sending (exporting) end the fault reads closer, at the receiving
    # end farther (K. Zimmerman, D. Costello, "Impedance-based fault location
    # experience", 2005, from memory; common practice)
    export = two_source_model(load_angle_deg=20.0, homogeneous=True)
    imp = two_source_model(load_angle_deg=-20.0, homogeneous=True)
    e1, l1, _ = _case(export, 0.5, code, rf=10.0)
    e2, l2, _ = _case(imp, 0.5, code, rf=10.0)
    assert reactance(e1, l1).distance_km < 50.0 - 0.1
    assert reactance(e2, l2).distance_km > 50.0 + 0.1


def test_reactance_exact_with_resistance_without_remote_infeed_or_load():
    # radial feed (remote source very weak, no load): local current = fault current
    model = two_source_model(remote_z_scale=1e6, homogeneous=True)
    end, line, _ = _case(model, 0.55, "AG", rf=30.0)
    assert reactance(end, line).distance_km == pytest.approx(55.0, abs=1e-3)


def test_takagi_needs_prefault_difference():
    from dataclasses import replace

    from eventlab.errors import SignalError
    model = two_source_model()
    end, line, _ = _case(model, 0.5, "AG")
    with pytest.raises(SignalError, match="superimposed"):
        takagi(replace(end, i_pre=end.i_fault), line)


@pytest.mark.parametrize("load_deg", [-20.0, 20.0])
def test_reactance_error_equals_textbook_apparent_impedance(load_deg):
    # Apparent impedance of a ground loop with fault resistance and remote
    # infeed: Z_app = V_a / I_comp = m Z1 + R_f I_f / I_comp, so the reactance
    # method reads d = m L + Im(R_f I_f / I_comp) / x1 (J. L. Blackburn,
    # T. J. Domin, "Protective Relaying: Principles and Applications", distance
    # protection chapter, from memory; common practice)
    from eventlab.locate.loops import compensated_current, residual_compensation, select_loop
    model = two_source_model(load_angle_deg=load_deg)
    rf = 12.0
    res = solve_fault(model, FaultSpec("L1", 0.6, "AG", rf))
    end, line, _ = _case(model, 0.6, "AG", rf=rf)
    z1_km = model.line("L1").sections[0].z1_ohm_per_km
    k0 = residual_compensation(line.z1_ohm, line.z0_ohm)
    i_comp = compensated_current(end.i_fault, select_loop("AG"), k0)
    expected = 60.0 + (rf * res.fault.i_abc[0] / i_comp).imag / z1_km.imag
    assert reactance(end, line).distance_km == pytest.approx(expected, abs=1e-6)


def _coupled_pair(homogeneous: bool):
    """Two coupled 230 kV circuits VM-CR1/VM-CR2 between two sources (made-up data)."""
    from eventlab.network.model import model_from_dict

    if homogeneous:       # every impedance at atan(0.4/0.035)
        zl1, zl0, zm = [0.035, 0.40], [0.10, 1.1428571428571428], [0.0525, 0.6]
        zs1, zs0, zr1, zr0 = [0.7, 8.0], [1.05, 12.0], [1.4, 16.0], [2.1, 24.0]
    else:
        zl1, zl0, zm = [0.030, 0.38], [0.26, 1.15], [0.20, 0.62]
        zs1, zs0, zr1, zr0 = [0.9, 9.5], [1.6, 14.0], [2.5, 22.0], [3.5, 30.0]
    data = {
        "system": {"name": "coupled pair", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "VELLMOOR", "kv": 230.0}, {"id": "CARDON_REACH", "kv": 230.0}],
        "source": [
            {"bus": "VELLMOOR", "z1_ohm": zs1, "z0_ohm": zs0, "emf_pu": 1.02, "angle_deg": 8.0},
            {"bus": "CARDON_REACH", "z1_ohm": zr1, "z0_ohm": zr0, "emf_pu": 1.0},
        ],
        "line": [
            {"id": "L1", "from": "VELLMOOR", "to": "CARDON_REACH", "length_km": LENGTH_KM,
             "z1_ohm_per_km": zl1, "z0_ohm_per_km": zl0,
             "mutual": {"line": "L2", "z0m_ohm_per_km": zm}},
            {"id": "L2", "from": "CARDON_REACH", "to": "VELLMOOR", "length_km": LENGTH_KM,
             "z1_ohm_per_km": zl1, "z0_ohm_per_km": zl0},
        ],
        "terminal": [
            {"id": "VM-L1", "line": "L1", "bus": "VELLMOOR", "station": "VELLMOOR"},
            {"id": "VM-L2", "line": "L2", "bus": "VELLMOOR", "station": "VELLMOOR"},
            {"id": "CR-L1", "line": "L1", "bus": "CARDON_REACH", "station": "CARDON REACH"},
        ],
    }
    return model_from_dict(data, source_name="<coupled pair>")


@pytest.mark.parametrize("fraction", [0.2, 0.5, 0.85])
@pytest.mark.parametrize("code", ["AG", "BG", "CG"])
def test_mutual_coupling_compensated_with_the_parallel_residual(code, fraction):
    # The drop of a ground loop on a coupled line is Z1 (Ip - I0) + Z0 I0 + Z0m I0,par
    # (zero-sequence mutual coupling, e.g. P. M. Anderson, Analysis of Faulted Power
    # Systems, 1973, on mutually coupled lines, from memory).  Reference: the fault
    # solver's coupled-pair network, itself checked against an independent a-b-c nodal
    # solution in tests/network/test_phase_domain.py.  Bolted, so every method's own
    # assumption about the fault current holds.
    model = _coupled_pair(homogeneous=False)
    res = solve_fault(model, FaultSpec("L1", fraction, code))
    t0 = model.terminal("VM-L1")
    line = line_from(model, "L1", t0)
    assert line.z0m_ohm_per_km != 0 and line.parallel_line == "L2"
    with_par = phasors_from_solution(res, model, "VM-L1", parallel_terminal_id="VM-L2")
    without = phasors_from_solution(res, model, "VM-L1")
    d_true = fraction * LENGTH_KM
    for e in _all(model, with_par, line, t0, fraction):
        assert e.distance_km == pytest.approx(d_true, abs=TOL_KM), e.method
        assert any("compensated" in n for n in e.notes)
    # not compensated: the parallel circuit's zero-sequence current makes the loop
    # read off: -0.17 %, +0.91 % and +8.9 % of the line at 20, 50 and 85 % here
    plain = reactance(without, line)
    assert abs(plain.distance_km - d_true) > 0.001 * LENGTH_KM
    assert any("not compensated" in n for n in plain.notes)


@pytest.mark.parametrize("rf", [5.0, 30.0])
def test_takagi_with_mutual_coupling_exact_in_homogeneous_network(rf):
    # Takagi et al. 1982: exact with fault resistance when the distribution factor is
    # real, here with the coupled circuit's drop compensated as well
    model = _coupled_pair(homogeneous=True)
    res = solve_fault(model, FaultSpec("L1", 0.6, "BG", rf))
    t0 = model.terminal("VM-L1")
    end = phasors_from_solution(res, model, "VM-L1", parallel_terminal_id="VM-L2")
    got = takagi(end, line_from(model, "L1", t0))
    assert got.distance_km == pytest.approx(60.0, abs=TOL_KM)
    angle = distribution_angle(model, "L1", t0, 0.6, "BG")
    got = modified_takagi(end, line_from(model, "L1", t0), angle)
    assert got.distance_km == pytest.approx(60.0, abs=TOL_KM)


def _meshed():
    # the faulted line L1 with an uncoupled parallel circuit L2 and a second path through
    # a third bus M (lines L3, L4), the remote grid behind a YNyn transformer: no
    # two-source system, so the published Eriksson formula does not hold here
    from eventlab.network.model import model_from_dict
    return model_from_dict({
        "system": {"name": "mesh", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "VELLMOOR", "kv": 230.0}, {"id": "CARDON_REACH", "kv": 230.0},
                {"id": "M", "kv": 230.0}, {"id": "G", "kv": 400.0}],
        "source": [
            {"bus": "VELLMOOR", "z1_ohm": [0.9, 9.5], "z0_ohm": [1.6, 14.0], "emf_pu": 1.02,
             "angle_deg": 8.0},
            {"bus": "G", "z1_ohm": [2.0, 30.0], "z0_ohm": [3.0, 40.0], "emf_pu": 1.0},
        ],
        "line": [
            {"id": "L1", "from": "VELLMOOR", "to": "CARDON_REACH", "length_km": LENGTH_KM,
             "z1_ohm_per_km": [0.030, 0.38], "z0_ohm_per_km": [0.26, 1.15]},
            {"id": "L2", "from": "VELLMOOR", "to": "CARDON_REACH", "length_km": LENGTH_KM,
             "z1_ohm_per_km": [0.032, 0.40], "z0_ohm_per_km": [0.27, 1.2]},
            {"id": "L3", "from": "VELLMOOR", "to": "M", "length_km": 60.0,
             "z1_ohm_per_km": [0.04, 0.42], "z0_ohm_per_km": [0.3, 1.3]},
            {"id": "L4", "from": "M", "to": "CARDON_REACH", "length_km": 70.0,
             "z1_ohm_per_km": [0.04, 0.42], "z0_ohm_per_km": [0.3, 1.3]},
        ],
        "transformer": [{"id": "T1", "hv_bus": "G", "lv_bus": "CARDON_REACH", "mva": 500.0,
                         "z_percent": 12.0, "x_r": 40.0, "vector_group": "YNyn0"}],
        "terminal": [{"id": "VM-L1", "line": "L1", "bus": "VELLMOOR", "station": "VELLMOOR"},
                     {"id": "CR-L1", "line": "L1", "bus": "CARDON_REACH"}],
    }, source_name="<mesh>")


@pytest.mark.parametrize("code", ["AG", "BC", "CAG", "ABC"])
@pytest.mark.parametrize("fraction", [0.15, 0.6, 0.9])
def test_eriksson_with_the_network_two_port_exact_in_a_mesh(code, fraction):
    # reference: the fault solver's own phasors (solver checked against an a-b-c
    # nodal solution in tests/network/test_phase_domain.py); with the rest of the
    # network as its impedance matrix at the two buses the distribution factor is
    # exact, so is the distance, with 12 ohm of fault resistance and load
    from eventlab.locate.model_link import external_two_port
    from eventlab.locate.single_ended import distribution_factors_network
    model = _meshed()
    end, line, _ = _case(model, fraction, code, rf=12.0, rg=3.0 if code == "CAG" else 0.0)
    ext = external_two_port(model, "L1", "VELLMOOR")
    got = eriksson(end, line, external=ext)
    assert got.distance_km == pytest.approx(fraction * LENGTH_KM, abs=TOL_KM)
    assert got.fault_resistance_ohm == pytest.approx(12.0, abs=1e-6)
    # the factor is the solver's: superimposed positive-sequence current at the
    # local end over the fault's positive-sequence current (bolted fault)
    import numpy as np

    from eventlab.symmetrical import abc_to_012
    res = solve_fault(model, FaultSpec("L1", fraction, "ABC"))
    st = res.terminals["VM-L1"]
    d_solver = (abc_to_012(st.i_abc - st.i_abc_pre)[1] / abc_to_012(res.fault.i_abc)[1])
    d1, _ = distribution_factors_network(line, fraction * LENGTH_KM, *ext)
    assert abs(d1 - d_solver) < 1e-9 * abs(d_solver)
    assert np.isfinite(d1)
    # the published two-source form cannot even be set up: there is no source at
    # CARDON_REACH (the grid is behind T1)
    from eventlab.errors import ModelError
    with pytest.raises(ModelError, match="no source at bus"):
        source_impedances(model, "CARDON_REACH")


def test_network_two_port_reduces_to_the_two_source_factor():
    from eventlab.locate.model_link import external_two_port
    from eventlab.locate.single_ended import distribution_factors, distribution_factors_network
    model = two_source_model(load_angle_deg=0.0)
    line = line_from(model, "L1", model.terminal("VM-L1"))
    ext = external_two_port(model, "L1", "VELLMOOR")
    zs, zr = source_impedances(model, "VELLMOOR"), source_impedances(model, "CARDON_REACH")
    for d in (0.0, 20.0, 77.0, 100.0):
        a = distribution_factors_network(line, d, *ext)
        b = distribution_factors(line, d, zs, zr)
        assert a == pytest.approx(b, rel=1e-9)


def test_eriksson_on_a_coupled_parallel_circuit():
    # coupled pair: phase loops see no zero sequence, so the two-port is exact; a
    # ground loop keeps an error from the zero-sequence coupling the two-port cannot
    # hold (measured: -0.23 % of the line at 85 % with the source impedances alone,
    # -0.135 % with the two-port), which the model's own distribution removes
    from eventlab.locate.model_link import external_two_port
    model = _coupled_pair(homogeneous=False)
    t0 = model.terminal("VM-L1")
    line = line_from(model, "L1", t0)
    ext = external_two_port(model, "L1", "VELLMOOR")
    zs, zr = source_impedances(model, "VELLMOOR"), source_impedances(model, "CARDON_REACH")
    for code in ("AB", "ABC", "BCG"):
        res = solve_fault(model, FaultSpec("L1", 0.85, code, 5.0))
        end = phasors_from_solution(res, model, "VM-L1", parallel_terminal_id="VM-L2")
        assert eriksson(end, line, external=ext).distance_km == pytest.approx(85.0, abs=TOL_KM)
        assert abs(eriksson(end, line, zs, zr).distance_km - 85.0) > 0.01
    res = solve_fault(model, FaultSpec("L1", 0.85, "AG", 20.0))
    end = phasors_from_solution(res, model, "VM-L1", parallel_terminal_id="VM-L2")
    e_net = abs(eriksson(end, line, external=ext).distance_km - 85.0)
    e_two = abs(eriksson(end, line, zs, zr).distance_km - 85.0)
    assert e_net < 0.7 * e_two
    # the model's own distribution along the line (sampled, splined) holds the
    # coupling too: exact, and what locate_event uses on a coupled line
    from eventlab.locate import locate_event
    from eventlab.locate.model_link import sampled_distribution
    for code, frac in (("AG", 0.85), ("CAG", 0.33), ("BG", 0.05)):
        res = solve_fault(model, FaultSpec("L1", frac, code, 20.0, 3.0 if code == "CAG" else 0.0))
        end = phasors_from_solution(res, model, "VM-L1", parallel_terminal_id="VM-L2")
        got = eriksson(end, line, distribution=sampled_distribution(model, "L1", t0))
        assert got.distance_km == pytest.approx(frac * LENGTH_KM, abs=TOL_KM)
        assert got.fault_resistance_ohm == pytest.approx(20.0, abs=1e-6)
        rep = locate_event(model, [end], line="L1")
        er = next(m for m in rep.methods if m.method == "eriksson")
        assert er.distance_km == pytest.approx(frac * LENGTH_KM, abs=TOL_KM)
