"""Distributed-parameter line pieces against the long-line equations.

References: the hyperbolic (long-line) solution of the telegrapher's
equations, ``V_s = cosh(g) V_r + Zc sinh(g) I_r``,
``I_s = sinh(g) / Zc V_r + cosh(g) I_r`` (any power-system text, e.g.
W. D. Stevenson, *Elements of Power System Analysis*, 4th ed., 1982, ch. 6,
from memory), evaluated here with ``cmath``; its worked long-line example;
and scipy's matrix exponential for coupled conductors.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest
import scipy.linalg

from eventlab.locate.line import LineData
from eventlab.locate.two_ended import to_fault
from eventlab.network.faults import FaultSpec, prefault, solve_fault
from eventlab.network.longline import equivalent_pi, equivalent_pi_matrix
from eventlab.network.model import LineSection, model_from_dict

W60 = 2 * math.pi * 60.0


@pytest.mark.parametrize("length_km", [1.0, 96.4, 300.0, 800.0])
def test_equivalent_pi_is_the_hyperbolic_solution(length_km):
    z = (0.045 + 0.485j) * length_km
    y = 1j * W60 * 9e-9 * length_km
    zs, yh = equivalent_pi(z, y)
    g = cmath.sqrt(z * y)
    zc = cmath.sqrt(z / y)
    assert zs == pytest.approx(zc * cmath.sinh(g), rel=1e-12)
    assert yh == pytest.approx(cmath.tanh(g / 2) / zc, rel=1e-12)


def test_without_capacitance_the_series_impedance_alone():
    zs, yh = equivalent_pi(np.array([3 + 40j, 0.5 + 2j]), np.zeros(2))
    np.testing.assert_array_equal(zs, [3 + 40j, 0.5 + 2j])
    np.testing.assert_array_equal(yh, [0, 0])


def test_nominal_pi_error_quoted_in_the_module():
    # longline's docstring: the nominal pi errs by about |Z Y| / 6 in the series branch
    # (the first term of sinh(g)/g = 1 + g^2/6 + ..., Taylor series), 0.26 % for the
    # 96 km demo line and 2.5 % at 300 km
    for km, quoted in ((96.4, 0.0026), (300.0, 0.025)):
        z, y = (0.045 + 0.485j) * km, 1j * W60 * 9e-9 * km
        err = abs(equivalent_pi(z, y)[0] / z - 1)
        assert err == pytest.approx(abs(z * y) / 6, rel=0.02)
        assert err == pytest.approx(quoted, rel=0.03)


def test_matrix_form_against_scipy_expm():
    # two coupled conductors: transfer matrix expm([[0, -Z], [-Y, 0]]) (telegrapher's
    # equations dV/dx = -z I, dI/dx = -y V) against the equivalent pi's ABCD
    z = np.array([[20 + 150j, 8 + 60j], [8 + 60j, 22 + 160j]])
    y = 1j * W60 * 1e-9 * 300 * np.array([[6.0, -0.8], [-0.8, 5.5]])
    zs, yh = equivalent_pi_matrix(z, y)
    t = scipy.linalg.expm(np.block([[np.zeros((2, 2)), -z], [-y, np.zeros((2, 2))]]))
    # from the sending end: V_r = T11 V_s + T12 I_s; the pi gives
    # V_r = (1 + Z' Y'/2) V_s - Z' I_s  (I_s into the piece)
    np.testing.assert_allclose(t[:2, :2], np.eye(2) + zs @ yh, rtol=0, atol=1e-12)
    np.testing.assert_allclose(t[:2, 2:], -zs, rtol=1e-12)


def test_stevenson_long_line_example():
    # Stevenson (4th ed., 1982), ch. 6 worked example (from memory): a 60 Hz line
    # 230 mi long, z = 0.8431 / 79.04 deg ohm/mi, y = 5.105e-6 / 90 deg S/mi; load
    # 125 MW at 215 kV, unity power factor.  The book finds Zc = 406.4 / -5.48 deg
    # ohm, gamma l = 0.4772 / 84.52 deg, V_S = 137.86 / 27.77 deg kV to neutral and
    # I_S = 332.3 / 26.33 deg A.
    mi = 1.609344
    z_km = cmath.rect(0.8431, math.radians(79.04)) / mi
    c_nf_km = 5.105e-6 / W60 / mi * 1e9
    length = 230 * mi
    zs, yh = equivalent_pi(z_km * length, 1j * W60 * c_nf_km * 1e-9 * length)
    v_r = 215e3 / math.sqrt(3)
    i_r = 125e6 / (math.sqrt(3) * 215e3)
    v_s = v_r + zs * (i_r + yh * v_r)
    i_s = i_r + yh * v_r + yh * v_s
    assert abs(v_s) == pytest.approx(137.86e3, rel=2e-4)
    assert math.degrees(cmath.phase(v_s)) == pytest.approx(27.77, abs=0.02)
    assert abs(i_s) == pytest.approx(332.3, rel=5e-4)
    assert math.degrees(cmath.phase(i_s)) == pytest.approx(26.33, abs=0.02)
    # the two-ended methods' propagation along the line gives back the receiving end
    line = LineData("X", (LineSection(length, z_km, z_km, c_nf_km, c_nf_km),))
    v_f, i_f = to_fault(line, length, np.array([0, v_s, 0]), np.array([0, i_s, 0]), W60)
    assert v_f[1] == pytest.approx(v_r, rel=1e-9)
    assert i_f[1] == pytest.approx(i_r, rel=1e-9)


def _radial(length_km):
    return model_from_dict({
        "system": {"name": "radial", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "S", "kv": 400.0}, {"id": "R", "kv": 400.0}],
        "source": [{"bus": "S", "z1_ohm": [1.0, 12.0], "z0_ohm": [1.5, 15.0]}],
        "line": [{"id": "L", "from": "S", "to": "R", "length_km": length_km,
                  "z1_ohm_per_km": [0.03, 0.33], "z0_ohm_per_km": [0.25, 1.0],
                  "c1_nf_per_km": 11.0, "c0_nf_per_km": 7.0}],
        "terminal": [{"id": "S-L", "line": "L", "bus": "S"}, {"id": "R-L", "line": "L", "bus": "R"}],
    })


@pytest.mark.parametrize("length_km", [100.0, 400.0])
def test_solver_open_line_ferranti_rise_and_far_end_fault(length_km):
    model = _radial(length_km)
    z, y = complex(0.03, 0.33) * length_km, 1j * W60 * 11e-9 * length_km
    g, zc = cmath.sqrt(z * y), cmath.sqrt(z / y)
    pre = prefault(model)
    v_s, i_s = pre["S-L"][0][0], pre["S-L"][1][0]
    v_r = pre["R-L"][0][0]
    # open far end: V_r = V_s / cosh(g), I_s = V_s tanh(g) / Zc
    assert v_r == pytest.approx(v_s / cmath.cosh(g), rel=1e-9)
    assert i_s == pytest.approx(v_s * cmath.tanh(g) / zc, rel=1e-9)
    if length_km == 400.0:
        assert abs(v_r) / abs(v_s) > 1.03          # the rise is there to be seen
    # bolted three-phase fault at the far end: I_s = V_s / (Zc tanh(g))
    res = solve_fault(model, FaultSpec("L", 1.0, "ABC", 0.0))
    st = res.terminals["S-L"]
    assert st.i_abc[0] == pytest.approx(st.v_abc[0] / (zc * cmath.tanh(g)), rel=1e-6)
