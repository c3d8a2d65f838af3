"""An end's direction and the two ends' pre-fault agreement, on the fault solver's phasors."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from eventlab.faulttypes import FAULT_TYPES
from eventlab.locate.consistency import (
    check_pair,
    direction_check,
    prefault_agreement,
    source_impedance_seen,
    suspect_end,
)
from eventlab.locate.model_link import external_two_port, line_from, phasors_from_solution
from eventlab.network.faults import FaultSpec, solve_fault
from eventlab.network.model import load_model, with_source

ROOT = Path(__file__).resolve().parents[2]
LINE = "VM-CR1"


@pytest.fixture(scope="module")
def model():
    # the demo model: a 96.4 km line with capacitance between two sources, load flowing
    return load_model(ROOT / "models" / "northmarch_230kv.toml")


def _ends(model, code="BG", fraction=0.4, rf=2.0):
    res = solve_fault(model, FaultSpec(LINE, fraction, code, rf, 1.0 if len(code) == 3 else 0.0))
    return tuple(phasors_from_solution(res, model, t.id) for t in model.terminals_of_line(LINE))


def _scaled(end, ct=1.0, vt=1.0):
    return dataclasses.replace(end, i_pre=end.i_pre * ct, i_fault=end.i_fault * ct,
                               v_pre=end.v_pre * vt, v_fault=end.v_fault * vt)


@pytest.mark.parametrize("code", FAULT_TYPES)
def test_forward_at_both_ends_and_reverse_with_the_polarity_reversed(model, code):
    # for a fault on the line -dV/dI at each end is the source impedance behind its bus
    # (negative sequence, or superimposed positive for ABC): the model's own, exactly
    ends = _ends(model, code)
    z_ext, _ = external_two_port(model, LINE, model.terminals_of_line(LINE)[0].bus)
    for k, end in enumerate(ends):
        kind, angle = direction_check(end)
        assert kind == "forward" and 60.0 < angle < 90.0
        # two sources, no other path between the buses: the diagonal is the source
        assert source_impedance_seen(end) == pytest.approx(complex(z_ext[k, k]), rel=1e-6)
        flipped = dataclasses.replace(end, i_pre=-end.i_pre, i_fault=-end.i_fault)
        assert direction_check(flipped)[0] == "reverse"


def test_a_fault_behind_the_bus_reads_reverse():
    # a fault on the next line beyond CARDON REACH (L2 to a third station): L1's end at
    # CARDON REACH looks away from it (reverse), its end at VELLMOOR towards it (forward:
    # the direction alone cannot tell a fault on the line from one beyond it)
    from eventlab.network.model import model_from_dict

    m = model_from_dict({
        "system": {"name": "behind", "frequency_hz": 60.0, "base_mva": 100.0},
        "bus": [{"id": "VM", "kv": 230.0}, {"id": "CR", "kv": 230.0}, {"id": "HX", "kv": 230.0}],
        "source": [{"bus": "VM", "z1_ohm": [0.9, 9.5], "z0_ohm": [1.6, 14.0]},
                   {"bus": "HX", "z1_ohm": [2.5, 22.0], "z0_ohm": [3.5, 30.0],
                    "angle_deg": -8.0}],
        "line": [{"id": "L1", "from": "VM", "to": "CR", "length_km": 60.0,
                  "z1_ohm_per_km": [0.03, 0.38], "z0_ohm_per_km": [0.26, 1.15]},
                 {"id": "L2", "from": "CR", "to": "HX", "length_km": 40.0,
                  "z1_ohm_per_km": [0.03, 0.38], "z0_ohm_per_km": [0.26, 1.15]}],
        "terminal": [{"id": "VM-L1", "line": "L1", "bus": "VM", "station": "VM"},
                     {"id": "CR-L1", "line": "L1", "bus": "CR", "station": "CR"}],
    }, source_name="<behind>")
    for code in ("AG", "BC", "ABC"):
        res = solve_fault(m, FaultSpec("L2", 0.5, code, 1.0))
        near = phasors_from_solution(res, m, "VM-L1")
        far = phasors_from_solution(res, m, "CR-L1")
        assert direction_check(far)[0] == "reverse"
        assert direction_check(near)[0] == "forward"


def test_prefault_agreement_is_exact_on_the_model(model):
    a, b = _ends(model)
    line = line_from(model, LINE, model.terminals_of_line(LINE)[0])
    agr = prefault_agreement(a, b, line)
    assert agr.v_ratio == pytest.approx(1.0, abs=1e-9)
    assert agr.i_ratio == pytest.approx(1.0, abs=1e-9)
    assert agr.pf_angle_diff_deg == pytest.approx(0.0, abs=1e-7)
    assert agr.agrees
    # a remote CT reading 20 % low: the current ratio says so, the voltage does not
    bad = prefault_agreement(a, _scaled(b, ct=0.8), line)
    assert bad.i_ratio == pytest.approx(0.8, rel=1e-9) and not bad.agrees
    assert bad.v_ratio == pytest.approx(1.0, abs=1e-9)
    # a local VT reading 8 % high: the remote voltage reads 1/1.08 of the expected
    # (roughly: the drop along the line is computed from the local voltage too)
    bad = prefault_agreement(_scaled(a, vt=1.08), b, line)
    assert bad.v_ratio == pytest.approx(1 / 1.08, rel=0.01) and not bad.agrees


@pytest.mark.parametrize("which, ct, vt", [(1, 0.8, 1.0), (1, 1.0, 1.1), (0, 2.0, 1.0),
                                           (0, 1.0, 0.92), (1, 1.25, 1.0)])
def test_the_end_with_the_ratio_error_is_found(model, which, ct, vt):
    ends = list(_ends(model, "CAG", 0.7, 4.0))
    ends[which] = _scaled(ends[which], ct, vt)
    k, words = check_pair(model, tuple(ends), LINE)
    assert k == which
    assert ends[which].station in words.split("suspected")[0].split("; the apparent")[-1]


def test_no_suspect_where_the_model_sources_are_off_as_much_as_the_ratio(model):
    # a remote CT 25 % high gives the current mismatch 1.25 and a remote -dV/dI of
    # 1/1.25 the model's; a local CT 20 % low would give the same mismatch with a local
    # -dV/dI 1.25 times the model's.  With the local source really 25 % weaker than the
    # model's, the records fit both explanations equally and no end is blamed
    truth = with_source(model, "VELLMOOR", z_scale=1.25)
    ends = list(_ends(truth, "AG", 0.5, 1.0))
    ends[1] = _scaled(ends[1], ct=1.25)
    k, words = check_pair(model, tuple(ends), LINE)
    assert k is None and "do not say which" in words


def test_agreeing_records_are_not_judged(model):
    assert check_pair(model, _ends(model, "AB", 0.2, 1.0), LINE) == (None, None)
    # sources far off the model (remote 4 times weaker, its EMF 20 deg on): the
    # pre-fault agreement needs only the line
    truth = with_source(with_source(model, "CARDON_REACH", z_scale=4.0, angle_deg=-20.0),
                        "VELLMOOR", z_scale=0.6)
    assert check_pair(model, _ends(truth, "BCG", 0.9, 8.0), LINE) == (None, None)


def test_suspect_end_needs_both_impedances():
    from eventlab.locate.consistency import PrefaultAgreement

    agr = PrefaultAgreement(1.0, 0.7, 0.0)
    assert suspect_end(agr, (None, 5j), (4j, 5j)) is None
    # a remote CT reading 1/0.7 too low shows as a remote -dV/dI 1/0.7 of the model's
    assert suspect_end(agr, (4j, 5j / 0.7), (4j, 5j)) == 1


def test_suspect_end_needs_an_explanation_that_fits():
    from eventlab.locate.consistency import PrefaultAgreement

    # a 10 % current mismatch; the remote -dV/dI 26 % under the model's: a remote CT
    # 10 % high explains only part of it (the rest: the model's source, an unmodelled
    # tap load), so no end is blamed although the remote explanation is the better one
    agr = PrefaultAgreement(1.0, float(np.exp(0.1)), 0.0)
    seen = (4j * np.exp(0.05), 5j * np.exp(-0.3))
    assert suspect_end(agr, seen, (4j, 5j)) is None
    # the same mismatch wholly explained by the remote CT
    assert suspect_end(agr, (4j, 5j * np.exp(-0.1)), (4j, 5j)) == 1
