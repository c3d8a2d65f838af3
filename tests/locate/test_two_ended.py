"""Two-ended methods on fault-solver phasors (exact: equation (1) holds for a series line)."""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pytest

from eventlab.errors import SignalError
from eventlab.faulttypes import FAULT_TYPES
from eventlab.locate.model_link import line_from, phasors_from_solution
from eventlab.locate.two_ended import (
    align_remote,
    sync_check,
    two_ended_synchronised,
    two_ended_unsynchronised,
)
from eventlab.network.faults import FaultSpec, solve_fault

from .locate_models import two_source_model

T0 = datetime(2025, 3, 14, 2, 17, 5, 120000)


def _ends(model, fraction, code, rf, rg=0.0, **kw):
    res = solve_fault(model, FaultSpec("L1", fraction, code, rf, rg))
    a = phasors_from_solution(res, model, "VM-L1", **kw)
    b = phasors_from_solution(res, model, "CR-L1", **kw)
    return a, b, line_from(model, "L1", model.terminal("VM-L1"))


@pytest.mark.parametrize("code", FAULT_TYPES)
@pytest.mark.parametrize("sections", [False, True])
def test_two_ended_exact_with_resistance_and_load(code, sections):
    model = two_source_model(load_angle_deg=-18.0, sections=sections)
    rg = 6.0 if code in ("ABG", "BCG", "CAG") else 0.0
    a, b, line = _ends(model, 0.23, code, 25.0, rg)
    s = two_ended_synchronised(a, b, line, aligned=True)
    # the remote record rotated by an unknown clock angle
    u = two_ended_unsynchronised(a, b.rotated(1.1), line)
    assert s.distance_km == pytest.approx(23.0, abs=1e-6 * 100)
    assert u.distance_km == pytest.approx(23.0, abs=1e-6 * 100)
    assert s.fault_resistance_ohm == pytest.approx(25.0, abs=1e-6)
    assert u.fault_resistance_ohm == pytest.approx(25.0, abs=1e-6)
    assert u.extra["sync_angle_deg"] == pytest.approx(-np.degrees(1.1), abs=1e-6)


def test_alignment_by_record_clocks():
    # the remote record starts 2.5 ms later: its phasors, referred to its own
    # first sample, are rotated by w * 2.5 ms; the clocks put them back
    model = two_source_model(load_angle_deg=10.0)
    a, b, line = _ends(model, 0.6, "CG", 5.0, inception_s=0.1, phasor_time_s=0.0,
                       record_start=T0, samples_per_cycle=64)
    lag = 2.5e-3
    w = 2 * np.pi * 60.0
    from dataclasses import replace
    b_late = replace(b.rotated(w * lag), record_start=T0 + timedelta(seconds=lag),
                     inception_s=0.1 - lag)
    chk = sync_check(a, b_late)
    assert chk.synchronised and abs(chk.offset_s) < 1e-9
    est = two_ended_synchronised(a, align_remote(a, b_late), line, aligned=True)
    assert est.distance_km == pytest.approx(60.0, abs=1e-6)


def test_sync_offset_reported_in_samples_and_large_offset_rejected():
    model = two_source_model()
    a, b, _ = _ends(model, 0.5, "AG", 0.0, inception_s=0.1, phasor_time_s=0.0,
                    record_start=T0, samples_per_cycle=64)
    from dataclasses import replace
    # the remote clock 3 samples late (64 samples per cycle at 60 Hz)
    dt = 3 / (64 * 60.0)
    chk = sync_check(a, replace(b, record_start=T0 + timedelta(seconds=dt)))
    assert chk.offset_samples == pytest.approx(3.0, abs=1e-3)  # datetime keeps microseconds
    assert not chk.synchronised and "not aligned" in chk.reason
    assert sync_check(a, replace(b, record_start=None)).synchronised is False


@pytest.mark.parametrize("vt_error", [0.99, 0.995, 0.998])
def test_unsynchronised_nearly_bolted_three_phase_sides_touch(vt_error):
    # a 1-ohm A-B-C fault: both sides' fault-point voltages nearly vanish there, and a
    # VT ratio error of under 1 % at the remote end leaves the two magnitude curves
    # touching without crossing; the answer is their closest approach (reference: the
    # fault solver's phasors; common practice, no source)
    from dataclasses import replace
    model = two_source_model(load_angle_deg=-10.0)
    a, b, line = _ends(model, 0.3, "ABC", 1.0)
    b_err = replace(b, v_fault=b.v_fault * vt_error, v_pre=b.v_pre * vt_error)
    u = two_ended_unsynchronised(a, b_err.rotated(0.4), line)
    assert u.distance_km == pytest.approx(30.0, abs=0.005 * 100)
    assert any("touch" in n for n in u.notes)
    # a remote record that is not the other end at all still raises
    far = replace(b_err, v_fault=b_err.v_fault * 3.0)
    with pytest.raises(SignalError, match="no distance"):
        two_ended_unsynchronised(a, far.rotated(0.4), line)
