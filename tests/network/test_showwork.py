"""--show-work text on a network with transformers, mutual coupling and sections."""

import re

import pytest

from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import model_from_dict
from eventlab.network.showwork import show_work

from .test_phase_domain import DATA  # tests/network is on pytest's pythonpath (pyproject.toml)


@pytest.mark.parametrize("spec", [FaultSpec("LA", 0.3, "CG", 1.0),
                                  FaultSpec("LS", 0.9, "ABG", 0.5, 2.0),
                                  FaultSpec.at_bus("X", "BC", 0.2)])
def test_show_work_numbers_are_the_results(spec):
    m = model_from_dict(DATA)
    r = solve_fault(m, spec)
    text = "\n".join(show_work(m, r))
    assert "transformer T1 YNd1: on the LV side the positive sequence lags the HV side by 30" in text
    assert "zero-sequence mutual with LB" in text
    # the printed fault phase currents are the solver's (to the printed 0.1 A)
    for k, ph in enumerate("ABC"):
        mag = float(re.search(rf"^   {ph}: I = ([0-9.]+) A", text, re.M).group(1))
        assert mag == pytest.approx(abs(r.fault.i_abc[k]), abs=0.051)
    diff = float(text.split("largest difference ")[1].split()[0])
    assert diff < 1e-10
