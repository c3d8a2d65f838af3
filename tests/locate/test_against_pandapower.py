"""Locators on phasors computed by pandapower's IEC 60909 short-circuit (outside the project).

A 230 kV, 100 km line fed from both ends is split at the fault point into two
line elements; pandapower (IEC 60909-0 method, ``case="max"``) gives the
three-phase fault's current and voltage at both line ends, in magnitude and
angle, for a fault resistance of 5 ohm.  IEC 60909 has no pre-fault load
(equivalent voltage source at the fault), so the pre-fault currents are zero
and the pre-fault voltages are ``c U_n / sqrt(3)`` at angle 0.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandapower as pp
import pandapower.shortcircuit as sc
import pytest

from eventlab.locate.inputs import TerminalPhasors
from eventlab.locate.line import homogeneous_line
from eventlab.locate.single_ended import eriksson, takagi
from eventlab.locate.two_ended import two_ended_synchronised, two_ended_unsynchronised

UN_KV = 230.0
# IEC 60909-0:2016 table 1: voltage factor c_max = 1.10 above 1 kV (from memory)
C_MAX = 1.10
R1, X1 = 0.03, 0.38        # ohm/km
FAULT_KM, LENGTH_KM, RF = 37.0, 100.0, 5.0
SK = (5000.0, 2000.0)      # MVA at the two ends
RX = 0.1


def _grid_z(sk_mva):
    # IEC 60909-0:2016 eq. (5): Z_Q = c U_nQ^2 / S''_kQ, with R/X given (from memory)
    z = C_MAX * UN_KV ** 2 / sk_mva
    x = z / math.sqrt(1 + RX ** 2)
    return complex(RX * x, x)


@pytest.fixture(scope="module")
def pandapower_result():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        net = pp.create_empty_network(sn_mva=100.0, f_hz=60.0)
        b1, bf, b2 = (pp.create_bus(net, UN_KV) for _ in range(3))
        for b, s in ((b1, SK[0]), (b2, SK[1])):
            pp.create_ext_grid(net, b, s_sc_max_mva=s, rx_max=RX, x0x_max=1.2, r0x0_max=0.1)
        for a, b, km in ((b1, bf, FAULT_KM), (bf, b2, LENGTH_KM - FAULT_KM)):
            pp.create_line_from_parameters(net, a, b, km, r_ohm_per_km=R1, x_ohm_per_km=X1,
                                           c_nf_per_km=0.0, max_i_ka=2.0, r0_ohm_per_km=0.26,
                                           x0_ohm_per_km=1.15, c0_nf_per_km=0.0)
        sc.calc_sc(net, fault="3ph", case="max", bus=bf, branch_results=True,
                   r_fault_ohm=RF)
    return net.res_line_sc


def _end(station, vm_pu, va_deg, i_ka, i_deg):
    a = np.exp(2j * np.pi / 3)
    rot = np.array([1, a * a, a])
    v_base = UN_KV * 1e3 / math.sqrt(3)
    v = vm_pu * v_base * np.exp(1j * math.radians(va_deg)) * rot
    i = i_ka * 1e3 * np.exp(1j * math.radians(i_deg)) * rot
    v_pre = C_MAX * v_base * rot
    return TerminalPhasors(None, station, v_pre, np.zeros(3), v, i, 60.0, "ABC")


@pytest.fixture(scope="module")
def ends(pandapower_result):
    r = pandapower_result
    local = _end("VELLMOOR", r.vm_from_pu[0], r.va_from_degree[0], r.ikss_from_ka[0],
                 r.ikss_from_degree[0])
    # current of the second element at its "to" end flows from the remote bus into the line
    remote = _end("CARDON REACH", r.vm_to_pu[1], r.va_to_degree[1], r.ikss_to_ka[1],
                  r.ikss_to_degree[1])
    return local, remote


LINE = homogeneous_line("L1", LENGTH_KM, complex(R1, X1), complex(0.26, 1.15))


def test_two_ended_on_pandapower_phasors(ends):
    local, remote = ends
    s = two_ended_synchronised(local, remote, LINE, aligned=True)
    u = two_ended_unsynchronised(local, remote.rotated(0.4), LINE)
    for est in (s, u):
        assert est.distance_km == pytest.approx(FAULT_KM, abs=1e-3 * LENGTH_KM)
        assert est.fault_resistance_ohm == pytest.approx(RF, rel=1e-3)


def test_eriksson_on_pandapower_phasors(ends):
    local, _ = ends
    est = eriksson(local, LINE, (_grid_z(SK[0]), _grid_z(SK[0])),
                   (_grid_z(SK[1]), _grid_z(SK[1])))
    assert est.distance_km == pytest.approx(FAULT_KM, abs=1e-3 * LENGTH_KM)
    assert est.fault_resistance_ohm == pytest.approx(RF, rel=1e-2)


def test_takagi_bias_on_pandapower_phasors(ends):
    # sources R/X 0.1, line R/X 0.079: nearly homogeneous, so Takagi is close
    # (within 0.5 % of the line) but not exact
    local, _ = ends
    est = takagi(local, LINE)
    assert abs(est.distance_km - FAULT_KM) < 0.005 * LENGTH_KM
