"""Single-ended methods on phasors from the fault solver (eventlab.network.faults).

The solver is checked against pandapower (IEC 60909) and power-grid-model in
tests/network; here its phasors are the input with a known answer.
"""

from __future__ import annotations

import pytest
from locate_models import two_source_model

from eventlab.faulttypes import FAULT_TYPES
from eventlab.locate.model_link import (
    distribution_angle,
    line_from,
    phasors_from_solution,
    source_impedances,
)
from eventlab.locate.single_ended import eriksson, modified_takagi, reactance, takagi
from eventlab.network.faults import FaultSpec, solve_fault

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
