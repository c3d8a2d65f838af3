"""Physics invariants of every solve (common practice, no source), property-based.

Kirchhoff's current law at every bus, the fault type's boundary conditions at
the fault, 3 I0 = IA + IB + IC, and the faulted line's current balance.
"""

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from eventlab.faulttypes import FAULT_TYPES, faulted_phases
from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import model_from_dict
from eventlab.symmetrical import abc_to_012

from .test_phase_domain import DATA  # tests/network is on pytest's pythonpath (pyproject.toml)

MODEL = model_from_dict(DATA, source_name="invariants")

specs = st.builds(
    lambda line, m, code, rf, rg: FaultSpec(
        line, m, code, rf, rg if code in ("ABG", "BCG", "CAG", "ABC") else 0.0),
    st.sampled_from(["LA", "LB", "LS", "LM"]),
    st.floats(0.0, 1.0),
    st.sampled_from(FAULT_TYPES),
    st.floats(0.0, 50.0),
    st.floats(0.0, 50.0),
)


def _bus_balance(r, bus):
    into_branches = sum(b.i_abc for b in r.branches if b.bus == bus and b.kind != "source")
    from_sources = sum((b.i_abc for b in r.branches if b.bus == bus and b.kind == "source"),
                       np.zeros(3, complex))
    return into_branches, from_sources


@given(specs)
def test_kirchhoff_and_boundary_conditions(spec):
    r = solve_fault(MODEL, spec)
    f = r.fault
    scale = np.max(np.abs(f.i_abc)) + 1.0
    # 3 I0 = IA + IB + IC and the round trip of the sequence values
    assert abs(3 * f.i_012[0] - f.i_abc.sum()) < 1e-9 * scale
    np.testing.assert_allclose(abc_to_012(f.i_abc), f.i_012, atol=1e-9 * scale)
    # KCL at every bus; a fault exactly at a line end (m = 0 or 1) sits inside that
    # line's CT, so the bus itself still balances
    for bus in r.buses:
        into, src = _bus_balance(r, bus)
        np.testing.assert_allclose(into, src, atol=1e-7 * scale, err_msg=bus)
    # boundary conditions of the type
    ph = faulted_phases(spec.type)
    v, i = f.v_abc, f.i_abc
    vs = np.max(np.abs(f.v_pre_abc))
    for k in range(3):
        if k not in ph:
            assert abs(i[k]) < 1e-9 * scale
    rf, rg = spec.r_fault_ohm, spec.r_ground_ohm
    if len(ph) == 1:
        assert abs(v[ph[0]] - rf * i[ph[0]]) < 1e-9 * vs
    elif len(ph) == 2 and not spec.type.endswith("G"):
        p, q = ph
        assert abs(i[p] + i[q]) < 1e-9 * scale
        assert abs(v[p] - v[q] - rf * i[p]) < 1e-9 * vs
    elif len(ph) == 2:
        for p in ph:
            assert abs(v[p] - rf * i[p] - rg * i.sum()) < 1e-9 * vs
    else:
        star = v - rf * i
        assert np.ptp(star.real) < 1e-9 * vs and np.ptp(star.imag) < 1e-9 * vs


@given(specs.filter(lambda s: s.line == "LM"))
def test_faulted_line_without_capacitance_balances(spec):
    # LM has no shunt capacitance: what enters at its two ends leaves into the fault
    r = solve_fault(MODEL, spec)
    ends = [b.i_abc for b in r.branches if b.element == "LM"]
    assert len(ends) == 2
    scale = np.max(np.abs(r.fault.i_abc)) + 1.0
    np.testing.assert_allclose(ends[0] + ends[1], r.fault.i_abc, atol=1e-7 * scale)
