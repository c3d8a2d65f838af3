"""Solver vs pandapower's IEC 60909 short-circuit module.

Reference: pandapower (PyPI ``pandapower``, 3.x; ``pandapower.shortcircuit``).
Set-up that makes it a classical calculation (measured): ``case="min"`` on a
network of 1 kV or more (voltage factor c_min = 1.0, IEC 60909-0 table 1), the
``_min`` source fields filled, every line's ``endtemp_degree`` at 20 (no
conductor-temperature correction of R).  Known limits, so not used: no
two-phase-to-ground type; per-side contributions of single-phase-to-ground
faults leave out the zero-sequence path.  Its phase-to-phase fault puts the
fault impedance in each phase, i.e. 2 Zf between the phases (our Rf is the total).
Faults along the line use an auxiliary bus that splits it.

Agreement required: 0.1 % in magnitude (pandapower gives magnitudes only).
"""

import pandapower as pp
import pandapower.shortcircuit as sc
import pytest

from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import model_from_dict

LEN_KM = 80.0
ZL1_KM, ZL0_KM = 0.03 + 0.35j, 0.25 + 1.1j
# as models/example_230kv.toml (the model)
SOURCES = {"WEST": (1.2 + 14.0j, 2.0 + 22.0j), "EAST": (3.0 + 30.0j, 4.5 + 45.0j)}
PP_FAULT = {"ABC": "3ph", "BC": "2ph", "AG": "1ph"}


def _pair(z):
    return [z.real, z.imag]


@pytest.fixture(scope="module")
def model():
    return model_from_dict({
        "system": {"name": "pp", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "WEST", "kv": 230.0}, {"id": "EAST", "kv": 230.0}],
        "source": [{"bus": b, "z1_ohm": _pair(z1), "z0_ohm": _pair(z0)}
                   for b, (z1, z0) in SOURCES.items()],
        "line": [{"id": "L1", "from": "WEST", "to": "EAST", "length_km": LEN_KM,
                  "z1_ohm_per_km": _pair(ZL1_KM), "z0_ohm_per_km": _pair(ZL0_KM)}],
        "terminal": [{"id": "W", "line": "L1", "bus": "WEST"},
                     {"id": "E", "line": "L1", "bus": "EAST"}],
    })


def _pp_net(m):
    """WEST=0, EAST=1, auxiliary fault bus F=2 at fraction m; lines 0 (WEST-F), 1 (F-EAST)."""
    net = pp.create_empty_network(sn_mva=100.0, f_hz=60.0)
    buses = [pp.create_bus(net, 230.0, name=n) for n in ("WEST", "EAST", "F")]
    for b, (z1, z0) in zip(buses[:2], SOURCES.values(), strict=True):
        kw = {"s_sc_%s_mva": 230.0**2 / abs(z1), "rx_%s": z1.real / z1.imag,
              "x0x_%s": z0.imag / z1.imag, "r0x0_%s": z0.real / z0.imag}
        pp.create_ext_grid(net, b, **{k % c: v for k, v in kw.items() for c in ("min", "max")})
    for a, b, length in ((buses[0], buses[2], LEN_KM * m), (buses[2], buses[1], LEN_KM * (1 - m))):
        pp.create_line_from_parameters(
            net, a, b, length, r_ohm_per_km=ZL1_KM.real, x_ohm_per_km=ZL1_KM.imag,
            c_nf_per_km=0.0, max_i_ka=2.0, r0_ohm_per_km=ZL0_KM.real,
            x0_ohm_per_km=ZL0_KM.imag, c0_nf_per_km=0.0, endtemp_degree=20.0)
    return net


def _rel(a, b):
    return abs(a / b - 1.0)


@pytest.mark.parametrize("code", ["ABC", "BC", "AG"])
@pytest.mark.parametrize("m", [0.15, 0.5, 0.9])
@pytest.mark.parametrize("r_ohm", [0.0, 6.0])
def test_fault_along_line(model, code, m, r_ohm):
    net = _pp_net(m)
    branch = code != "AG"  # see module docstring: 1ph branch results are not used
    pp_r = r_ohm / 2 if code == "BC" else r_ohm  # pandapower: Zf in each phase
    sc.calc_sc(net, bus=2, fault=PP_FAULT[code], case="min", r_fault_ohm=pp_r,
               branch_results=branch)
    ours = solve_fault(model, FaultSpec("L1", m, code, r_ohm))
    ph = 0 if code == "AG" else 1
    ikss_a = net.res_bus_sc.ikss_ka.at[2] * 1e3
    assert _rel(abs(ours.fault.i_abc[ph]), ikss_a) < 1e-3
    if branch:
        assert _rel(abs(ours.terminals["W"].i_abc[ph]), net.res_line_sc.ikss_ka.at[0] * 1e3) < 1e-3
        assert _rel(abs(ours.terminals["E"].i_abc[ph]), net.res_line_sc.ikss_ka.at[1] * 1e3) < 1e-3


@pytest.mark.parametrize("code", ["ABC", "BC", "AG"])
@pytest.mark.parametrize("bus, pp_bus", [("WEST", 0), ("EAST", 1)])
def test_bus_fault(model, code, bus, pp_bus):
    net = _pp_net(0.5)
    sc.calc_sc(net, bus=pp_bus, fault=PP_FAULT[code], case="min", r_fault_ohm=1.5)
    ours = solve_fault(model, FaultSpec.at_bus(bus, code, 3.0 if code == "BC" else 1.5))
    ph = 0 if code == "AG" else 1
    assert _rel(abs(ours.fault.i_abc[ph]), net.res_bus_sc.ikss_ka.at[pp_bus] * 1e3) < 1e-3

