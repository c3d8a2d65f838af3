"""One contract for every locator: known distance and resistance in, estimate out.

Each locator states the conditions under which it is exact; on phasors from
the fault solver (eventlab.network.faults) with seeded noise of 0.1 % it must
come within its stated tolerance.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from eventlab.locate.model_fit import fit_fault
from eventlab.locate.model_link import (
    distribution_angle,
    line_from,
    phasors_from_solution,
    source_impedances,
)
from eventlab.locate.single_ended import eriksson, modified_takagi, reactance, takagi
from eventlab.locate.two_ended import two_ended_synchronised, two_ended_unsynchronised
from eventlab.network.faults import FaultSpec, solve_fault

from .locate_models import two_source_model


def _reactance(m, a, b, line):
    return reactance(a, line)


def _takagi(m, a, b, line):
    return takagi(a, line)


def _mtakagi(m, a, b, line):
    t = m.terminal("VM-L1")
    return modified_takagi(a, line, distribution_angle(m, "L1", t, takagi(a, line).fraction,
                                                       a.fault_type))


def _eriksson(m, a, b, line):
    return eriksson(a, line, source_impedances(m, "VELLMOOR"),
                    source_impedances(m, "CARDON_REACH"))


def _sync(m, a, b, line):
    return two_ended_synchronised(a, b, line, aligned=True)


def _unsync(m, a, b, line):
    return two_ended_unsynchronised(a, b.rotated(-0.8), line)


def _fit1(m, a, b, line):
    return fit_fault(m, "L1", [a], m.terminals[:1], start_fraction=takagi(a, line).fraction)


def _fit2(m, a, b, line):
    return fit_fault(m, "L1", [a, b], m.terminals, start_fraction=0.5)


# (locator, homogeneous network needed, tolerance [% of length], gives Rf)
LOCATORS = {
    "reactance": (_reactance, "no_rf", 0.5, False),
    "takagi": (_takagi, "homogeneous", 0.5, False),
    "modified_takagi": (_mtakagi, None, 0.5, False),
    "eriksson": (_eriksson, None, 0.5, True),
    "two_ended_sync": (_sync, None, 0.5, True),
    "two_ended_unsync": (_unsync, None, 0.5, True),
    "model_fit_1": (_fit1, None, 1.0, True),
    "model_fit_2": (_fit2, None, 0.5, True),
}


@pytest.mark.parametrize("name", sorted(LOCATORS))
@pytest.mark.parametrize("code, fraction, rf", [("AG", 0.15, 10.0), ("BC", 0.5, 3.0),
                                                ("CAG", 0.66, 5.0), ("ABC", 0.9, 1.0)])
def test_locator_contract(name, code, fraction, rf):
    fn, needs, tol_pct, gives_rf = LOCATORS[name]
    model = two_source_model(load_angle_deg=7.0, homogeneous=(needs == "homogeneous"))
    r = 0.0 if needs == "no_rf" else rf
    res = solve_fault(model, FaultSpec("L1", fraction, code, r))
    rng = np.random.default_rng(12345)

    def noisy(e):
        def n(x):
            return x * (1 + 1e-3 * (rng.standard_normal(3) + 1j * rng.standard_normal(3)))
        return dataclasses.replace(e, v_fault=n(e.v_fault), i_fault=n(e.i_fault))

    a = noisy(phasors_from_solution(res, model, "VM-L1"))
    b = noisy(phasors_from_solution(res, model, "CR-L1"))
    est = fn(model, a, b, line_from(model, "L1", model.terminal("VM-L1")))
    assert abs(est.distance_km - 100.0 * fraction) <= tol_pct
    rf_est = getattr(est, "fault_resistance_ohm", None)
    if rf_est is None:
        rf_est = getattr(est, "r_fault_ohm", None)
    if gives_rf:
        assert rf_est == pytest.approx(r, abs=0.1 * r + 0.3)
