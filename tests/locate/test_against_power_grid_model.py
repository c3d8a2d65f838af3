"""Locators on phasors computed by power-grid-model (outside the project), every fault type.

The network of ``tests/network/test_vs_power_grid_model.py`` (sources at W
and E, an 80 km 230 kV line W-E, a 230/33 kV YNd1 transformer at E with a
source behind it) is faulted at a point of the line by power-grid-model's
asymmetric short-circuit calculation (IEC 60909 method, voltage factor 1.0,
so no pre-fault load: pre-fault voltages ``U_n / sqrt(3)`` at angle 0 and no
current).  Its voltages of buses W and E and currents of the two line ends
are the measured phasors; the truth is the fault point given to it.

The model-matched fit and the two-ended methods use the whole network; the
single-ended loop methods are checked where their assumption holds (a bolted
fault: no resistive term in the loop).
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import numpy as np
import pytest

from eventlab.locate import locate_event
from eventlab.locate.inputs import TerminalPhasors
from eventlab.locate.model_link import line_from
from eventlab.locate.two_ended import two_ended_synchronised

_path = Path(__file__).parents[1] / "network" / "test_vs_power_grid_model.py"
_spec = importlib.util.spec_from_file_location("pgm_network_for_locate", _path)
pgmnet = importlib.util.module_from_spec(_spec)
sys.modules[_spec.name] = pgmnet
_spec.loader.exec_module(pgmnet)

V_PRE = pgmnet.U_HV / np.sqrt(3) * np.exp(-2j * np.pi / 3 * np.arange(3))


def _ends(code, m, r_ohm):
    out = pgmnet._pgm("YNd1", m, code, r_ohm)
    nd, ln = out["node"], out["line"]
    ends = []
    for terminal, station, node, line_row, side in (("W-L1", "W", 0, 0, "from"),
                                                     ("E-L1", "E", 1, 1, "to")):
        v = pgmnet._c(nd["u"][node], nd["u_angle"][node])
        i = pgmnet._c(ln[f"i_{side}"][line_row], ln[f"i_{side}_angle"][line_row])
        ends.append(TerminalPhasors(terminal, station, V_PRE, np.zeros(3), v, i,
                                    pgmnet.F_HZ, code))
    return ends


@pytest.mark.parametrize("code", list(pgmnet.PGM_TYPE))
@pytest.mark.parametrize("m, r_ohm", [(0.3, 0.0), (0.65, 4.0), (0.85, 12.0)])
def test_locators_on_power_grid_model_phasors(code, m, r_ohm):
    model = pgmnet._eventlab_model("YNd1")
    length = pgmnet.LEN_KM
    d_true = m * length
    ends = _ends(code, m, r_ohm)
    two = locate_event(model, ends, line="L1")
    one = locate_event(model, ends[:1], line="L1")
    # power-grid-model's phasors agree with our solver to about 1e-8 (tests/network),
    # so the fits and the two-ended methods are held to 0.01 % of the line
    tol = 1e-4 * length
    by = {e.method: e for e in two.methods}
    for name in ("two_ended_unsync", "model_fit"):
        assert by[name].distance_km == pytest.approx(d_true, abs=tol), name
    # the phasors share power-grid-model's one angle reference: synchronised
    sync = two_ended_synchronised(ends[0], ends[1], line_from(model, "L1",
                                                               model.terminal("W-L1")),
                                  aligned=True)
    assert sync.distance_km == pytest.approx(d_true, abs=tol)
    assert one.best.method == "model_fit"
    assert one.distance_km == pytest.approx(d_true, abs=tol)
    # power-grid-model's r_f of a two-phase-to-ground fault sits between the joined
    # phases and ground (our Rg); of the other types it is our Rf
    if code in ("ABG", "BCG", "CAG"):
        assert one.fit.r_ground_ohm == pytest.approx(r_ohm, abs=0.01)
        assert one.fit.r_fault_ohm == pytest.approx(0.0, abs=0.01)
    else:
        assert one.best.fault_resistance_ohm == pytest.approx(r_ohm, abs=0.01)
    assert one.interval_km[0] <= d_true <= one.interval_km[1]
    if r_ohm == 0.0:
        singles = {e.method: e for e in one.methods}
        for name in ("reactance", "takagi", "modified_takagi"):
            assert singles[name].distance_km == pytest.approx(d_true, abs=tol), name
