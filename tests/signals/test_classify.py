"""Classification of steady fault phasors made from the sequence-network connections."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from eventlab.faulttypes import FAULT_TYPES, NO_FAULT
from eventlab.signals.classify import classify_fault

from .faultwaves import System, steady_phasors


@pytest.mark.parametrize("ftype", FAULT_TYPES)
@pytest.mark.parametrize("fraction", [0.05, 0.5, 0.95])
@pytest.mark.parametrize("r_fault_ohm", [0.0, 10.0])
def test_every_type_from_sequence_networks(ftype, fraction, r_fault_ohm):
    s = System()
    v_pre, i_pre = steady_phasors(s, fraction, None)
    v_f, i_f = steady_phasors(s, fraction, ftype, r_fault_ohm)
    c = classify_fault(i_pre, i_f, v_pre, v_f)
    assert c.type == ftype, c.reason
    assert 0.5 <= c.confidence <= 1.0
    assert c.basis == "currents"
    # also from currents alone
    assert classify_fault(i_pre, i_f).type == ftype


@pytest.mark.parametrize("ftype", FAULT_TYPES)
def test_weak_infeed_uses_voltages(ftype):
    # local source nearly absent (large impedance): local superimposed currents are tiny
    s = System(zs=(4000 + 40000j, 2000 + 20000j), load_angle_deg=2.0)
    v_pre, i_pre = steady_phasors(s, 0.5, None)
    v_f, i_f = steady_phasors(s, 0.5, ftype)
    c = classify_fault(i_pre, i_f, v_pre, v_f, min_current_a=50.0)
    assert c.basis == "voltages"
    assert c.type == ftype, c.reason


def test_load_change_is_no_fault():
    s = System()
    v_pre, i_pre = steady_phasors(s, 0.5, None)
    s2 = System(load_angle_deg=20.0)
    v2, i2 = steady_phasors(s2, 0.5, None)
    c = classify_fault(i_pre, i2, v_pre, v2 * abs(v_pre[0]) / abs(v2[0]))
    assert c.type == NO_FAULT


def test_no_change_is_no_fault():
    i = np.array([100, 100 * np.exp(-2j * np.pi / 3), 100 * np.exp(2j * np.pi / 3)])
    assert classify_fault(i, i).type == NO_FAULT


def test_to_dict_is_plain():
    s = System()
    v_pre, i_pre = steady_phasors(s, 0.3, None)
    v_f, i_f = steady_phasors(s, 0.3, "BG")
    d = classify_fault(i_pre, i_f, v_pre, v_f).to_dict()
    assert d["type"] == "BG" and d["ground"] is True
    assert -180 <= d["evidence"]["angle_x2_x0_deg"] <= 180


_SOURCES = [((4 + 40j, 2 + 20j), (6 + 60j, 3 + 30j)), ((1 + 10j, 2 + 20j), (1 + 8j, 3 + 30j)),
            ((20 + 200j, 2 + 20j), (60 + 600j, 30 + 300j)), ((4 + 40j, 10 + 100j), (1 + 8j, 3 + 30j))]


@pytest.mark.parametrize("zs, zr", _SOURCES)
@pytest.mark.parametrize("r_fault_ohm", [0.0, 5.0])
def test_grid_of_systems_and_positions(zs, zr, r_fault_ohm):
    # strong/weak, low/high zero-sequence sources at both ends, fault anywhere on the line
    s = System(zs=zs, zr=zr)
    for ftype in FAULT_TYPES:
        for fraction in (0.02, 0.3, 0.7, 0.98):
            v_pre, i_pre = steady_phasors(s, fraction, None)
            v_f, i_f = steady_phasors(s, fraction, ftype, r_fault_ohm)
            c = classify_fault(i_pre, i_f, v_pre, v_f)
            assert c.type == ftype, (ftype, fraction, c.reason)


def test_resistance_to_ground_two_phase_fault():
    # 30 ohm to ground: arg(I2/I0) moves into the neighbouring single-phase sector; the
    # two-phase current pattern still gives the two-phase-to-ground fault
    s = System()
    for ftype in ("ABG", "BCG", "CAG"):
        v_pre, i_pre = steady_phasors(s, 0.09, None)
        v_f, i_f = steady_phasors(s, 0.09, ftype, 30.0)
        c = classify_fault(i_pre, i_f, v_pre, v_f)
        assert c.type == ftype
        assert abs(c.evidence["angle_x2_x0_deg"]) % 120 > 30   # off its sector centre


@given(ftype=st.sampled_from(FAULT_TYPES), fraction=st.floats(0.01, 0.99),
       zs1=st.floats(2, 80), zr1=st.floats(2, 80), zl1=st.floats(10, 120),
       k0s=st.floats(0.3, 3.0), k0r=st.floats(0.3, 3.0), k0l=st.floats(2.5, 3.5),
       x_r=st.floats(5, 20), load_deg=st.floats(-20, 20),
       r_fault_ohm=st.sampled_from([0.0, 1.0, 5.0]))
def test_property_random_two_source_systems(ftype, fraction, zs1, zr1, zl1, k0s, k0r, k0l,
                                            x_r, load_deg, r_fault_ohm):
    # any source strengths (Z0/Z1 0.3..3), line Z0/Z1 2.5..3.5, X/R 5..20, load +-20 deg
    def z(x):
        return x / x_r + 1j * x

    s = System(zs=(z(zs1 * k0s), z(zs1)), zl=(z(zl1 * k0l), z(zl1)), zr=(z(zr1 * k0r), z(zr1)),
               load_angle_deg=load_deg)
    v_pre, i_pre = steady_phasors(s, fraction, None)
    v_f, i_f = steady_phasors(s, fraction, ftype, r_fault_ohm)
    assert classify_fault(i_pre, i_f, v_pre, v_f).type == ftype
