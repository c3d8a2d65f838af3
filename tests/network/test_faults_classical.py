"""Solver vs the classical series/parallel sequence interconnections on the two-source line.

The closed forms (Fortescue components, Thevenin impedances of the two
source+line branches in parallel) are the textbook ones, e.g. Grainger &
Stevenson, Power System Analysis (1994), ch. 12 (from memory); common practice.
"""

from pathlib import Path

import numpy as np
import pytest

from eventlab.network.faults import FaultSpec, prefault, solve_fault
from eventlab.network.model import load_model

EXAMPLE = Path(__file__).resolve().parents[2] / "models" / "example_230kv.toml"
E = 230e3 / np.sqrt(3)
A = np.exp(2j * np.pi / 3)


def _par(a, b):
    return a * b / (a + b)


def _thevenin(m):
    # source and line data as written in models/example_230kv.toml (the model)
    zs1, zs0, zr1, zr0 = 1.2 + 14j, 2 + 22j, 3 + 30j, 4.5 + 45j
    zl1, zl0 = 80 * (0.03 + 0.35j), 80 * (0.25 + 1.1j)
    z1 = _par(zs1 + m * zl1, zr1 + (1 - m) * zl1)
    z0 = _par(zs0 + m * zl0, zr0 + (1 - m) * zl0)
    k1 = (zr1 + (1 - m) * zl1) / (zs1 + zl1 + zr1)  # share of the fault current from WEST
    k0 = (zr0 + (1 - m) * zl0) / (zs0 + zl0 + zr0)
    return z1, z0, k1, k0


@pytest.fixture(scope="module")
def model():
    return load_model(EXAMPLE)


@pytest.mark.parametrize("m", [0.0, 0.25, 0.4, 1.0])
@pytest.mark.parametrize("rf", [0.0, 7.5])
def test_single_phase_to_ground(model, m, rf):
    z1, z0, k1, k0 = _thevenin(m)
    i1 = E / (2 * z1 + z0 + 3 * rf)
    r = solve_fault(model, FaultSpec("L1", m, "AG", rf))
    np.testing.assert_allclose(r.fault.i_abc, [3 * i1, 0, 0], atol=1e-9 * abs(i1))
    np.testing.assert_allclose(r.fault.i_012, [i1, i1, i1], rtol=1e-12)
    # WEST terminal: the share of each sequence current (no load: EMFs equal)
    i_w = np.array([k0 * i1, k1 * i1, k1 * i1])
    np.testing.assert_allclose(r.terminals["WEST-L1"].i_012, i_w, rtol=1e-10)
    assert abs(r.fault.v_abc[0] - rf * r.fault.i_abc[0]) < 1e-9 * E


@pytest.mark.parametrize("rf", [0.0, 4.0])
def test_phase_to_phase_and_three_phase(model, rf):
    z1, _, _, _ = _thevenin(0.4)
    i1 = E / (2 * z1 + rf)
    r = solve_fault(model, FaultSpec("L1", 0.4, "BC", rf))
    np.testing.assert_allclose(r.fault.i_012, [0, i1, -i1], atol=1e-9 * abs(i1))
    i3 = E / (z1 + rf)
    r = solve_fault(model, FaultSpec("L1", 0.4, "ABC", rf))
    np.testing.assert_allclose(r.fault.i_abc, i3 * np.array([1, A**2, A]), rtol=1e-12)


@pytest.mark.parametrize("rf, rg", [(0.0, 0.0), (2.0, 5.0)])
def test_two_phase_to_ground(model, rf, rg):
    z1, z0, _, _ = _thevenin(0.4)
    za, zb = z1 + rf, z0 + rf + 3 * rg
    i1 = E / (za + _par(za, zb))
    i2 = -i1 * zb / (za + zb)
    i0 = -i1 * za / (za + zb)
    r = solve_fault(model, FaultSpec("L1", 0.4, "BCG", rf, rg))
    np.testing.assert_allclose(r.fault.i_012, [i0, i1, i2], rtol=1e-10)


def test_prefault_no_load_when_emfs_equal(model):
    v, i = prefault(model)["WEST-L1"]
    np.testing.assert_allclose(v, E * np.array([1, A**2, A]), rtol=1e-12)
    assert np.max(np.abs(i)) < 1e-9


@pytest.mark.parametrize("code", ["AG", "BG", "CG", "AB", "BC", "CA", "ABG", "BCG", "CAG", "ABC"])
@pytest.mark.parametrize("rf, rg", [(0.0, 0.0), (0.013, 0.021)])
def test_classical_interconnection_agrees_with_general_solution(code, rf, rg):
    from eventlab.network.faults import classical_fault_currents_012, fault_currents_pu
    from eventlab.symmetrical import abc_to_012

    if rg and code not in ("ABG", "BCG", "CAG", "ABC"):
        rg = 0.0
    rng = np.random.default_rng(7)
    z = rng.uniform(0.01, 0.1, 3) + 1j * rng.uniform(0.1, 0.6, 3)
    v = 1.03 * np.exp(0.2j)
    general = abc_to_012(fault_currents_pu(code, z, np.array([0, v, 0]), rf, rg))
    np.testing.assert_allclose(classical_fault_currents_012(code, z, v, rf, rg), general,
                               atol=1e-12)
