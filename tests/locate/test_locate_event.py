"""The entry point: pairing, the JSON contract, the answer stood behind, the caution."""

from __future__ import annotations

import dataclasses
import json
from datetime import datetime

import pytest

from eventlab.errors import ModelError
from eventlab.locate import CAUTION, LocateOptions, locate_event
from eventlab.locate.model_link import phasors_from_solution
from eventlab.network.faults import FaultSpec, solve_fault

from .locate_models import two_source_model

T0 = datetime(2025, 3, 14, 2, 17, 5, 120000)


def _ends(model, fraction=0.42, code="BG", rf=2.5, **kw):
    res = solve_fault(model, FaultSpec("L1", fraction, code, rf))
    common = dict(keep_id=False, inception_s=0.1, phasor_time_s=0.0, record_start=T0,
                  samples_per_cycle=64, **kw)
    return (phasors_from_solution(res, model, "VM-L1", **common),
            phasors_from_solution(res, model, "CR-L1", station="cardon_reach", **common))


def test_contract_keys_two_ended():
    model = two_source_model(load_angle_deg=9.0)
    a, b = _ends(model)
    out = locate_event(model, [a, b]).to_dict()
    json.dumps(out)  # serialisable
    loc = out["location"]
    for key in ("distance_km", "fraction", "fault_resistance_ohm", "interval_km", "method",
                "structures", "methods", "caution"):
        assert key in loc
    assert loc["method"] == "model_fit"
    assert loc["distance_km"] == pytest.approx(42.0, abs=1e-6)
    assert loc["fraction"] == pytest.approx(0.42, abs=1e-8)
    assert loc["fault_resistance_ohm"] == pytest.approx(2.5, abs=1e-6)
    lo, hi = loc["interval_km"]
    assert lo <= 42.0 <= hi
    names = [m["method"] for m in loc["methods"]]
    assert names == ["reactance", "takagi", "modified_takagi", "eriksson", "two_ended_unsync",
                     "two_ended_sync", "model_fit"]
    assert all("distance_km" in m for m in loc["methods"])
    assert loc["caution"] == CAUTION and "energized" in CAUTION
    rows = out["comparison"]
    assert {(r["terminal"], r["quantity"]) for r in rows} >= {("VM-L1", "IB"), ("CR-L1", "VA")}
    for r in rows:
        assert set(r) >= {"terminal", "quantity", "measured", "computed", "ratio",
                          "angle_diff_deg"}
        assert len(r["measured"]) == 2 and len(r["computed"]) == 2
    assert loc["verdict"][0].startswith("measured and computed")


def test_single_end_stands_behind_the_fit():
    model = two_source_model(load_angle_deg=-9.0)
    a, _ = _ends(model, 0.8, "CA", 6.0)
    rep = locate_event(model, [a])
    assert rep.best.method == "model_fit"
    assert rep.distance_km == pytest.approx(80.0, abs=0.01)
    assert rep.to_dict()["location"]["fault_resistance_ohm"] == pytest.approx(6.0, abs=0.05)


def test_distance_from_the_first_record():
    model = two_source_model(load_angle_deg=9.0)
    a, b = _ends(model, 0.3, "AG", 1.0)
    rep = locate_event(model, [b, a])
    assert rep.reference_terminal == "CR-L1"
    assert rep.distance_km == pytest.approx(70.0, abs=1e-6)


def test_unsynchronised_fallback_is_said():
    model = two_source_model(load_angle_deg=9.0)
    a, b = _ends(model, 0.55, "BC", 3.0)
    b_late = dataclasses.replace(b, record_start=datetime(2025, 3, 14, 2, 17, 5, 160000))
    rep = locate_event(model, [a, b_late])
    assert "two_ended_sync" not in [m.method for m in rep.methods]
    assert not rep.sync.synchronised
    assert any("not aligned" in n for n in rep.notes)
    assert rep.distance_km == pytest.approx(55.0, abs=1e-4)
    # without the model fit the unsynchronised method is the answer
    rep2 = locate_event(model, [a, b_late], options=LocateOptions(run_fit=False))
    assert rep2.best.method == "two_ended_unsync"
    assert rep2.distance_km == pytest.approx(55.0, abs=1e-6)


def test_pairing_errors_name_what_was_found():
    model = two_source_model()
    a, _ = _ends(model)
    with pytest.raises(ModelError, match="VM-L1"):
        locate_event(model, [dataclasses.replace(a, station="PELLINGFORD")])
    with pytest.raises(ModelError, match="unknown line"):
        locate_event(model, [a], line="L9")
    # explicit pairing
    rep = locate_event(model, [dataclasses.replace(a, station="PELLINGFORD")],
                       options=LocateOptions(terminal_map={"Pellingford": "VM-L1"}))
    assert rep.reference_terminal == "VM-L1"


def test_comparison_flags_reversed_ct():
    model = two_source_model(load_angle_deg=9.0)
    a, b = _ends(model, 0.5, "AG", 0.5)
    # the remote end's currents wired reversed; the fit uses the reference end only
    rep = locate_event(model, [a])
    assert rep.comparison.agrees
    from eventlab.locate.compare import comparison_rows, verdicts
    from eventlab.locate.model_fit import computed_phasors
    v, i = computed_phasors(rep.fit, [a], model.terminals[:1])[0]
    rows = comparison_rows("VM-L1", dataclasses.replace(a, i_fault=-a.i_fault), v, i)
    words = verdicts(rows, "AG")
    assert any("polarity" in w for w in words)


def test_wrong_remote_source_in_model_is_reported():
    truth = two_source_model(load_angle_deg=9.0)
    # the model file's remote source is 40 % too strong (impedance too low)
    written = two_source_model(load_angle_deg=9.0, remote_z_scale=1 / 1.4)
    a, b = _ends(truth, 0.35, "AG", 5.0)
    rep = locate_event(written, [a, b])
    assert rep.distance_km == pytest.approx(35.0, abs=0.05)
    assert rep.fit.remote_z_scale == pytest.approx(1.4, rel=0.02)
    words = " ".join(rep.comparison.verdicts)
    assert "remote source impedance" in words and "source strength" in words


def test_unsynchronised_bolted_three_phase_takes_angle_from_prefault():
    # a bolted three-phase fault leaves no fault-point voltage to carry the
    # clock angle; the pre-fault through current (I_L = -I_R) gives it
    model = two_source_model(load_angle_deg=15.0)
    a, b = _ends(model, 0.12, "ABC", 0.0)
    b_off = dataclasses.replace(b.rotated(2.0),
                                record_start=datetime(2025, 3, 14, 2, 17, 5, 170000))
    rep = locate_event(model, [a, b_off])
    assert not rep.sync.synchronised
    assert rep.distance_km == pytest.approx(12.0, abs=0.01)
    unsync = next(m for m in rep.methods if m.method == "two_ended_unsync")
    assert unsync.extra["sync_angle_deg"] == pytest.approx(-114.59155902616465, abs=0.01)


def test_station_names_paired_by_their_words_and_the_line_s_other_end():
    # a recorder that names its station "VELLMOOR 230KV SUBSTATION" pairs with the model's
    # VELLMOOR terminal by the words of the name; a record whose station the model does
    # not know ("FIELD DFR 7") pairs, beside a paired one, with the line's other terminal
    from eventlab.locate.model_link import pair_ends

    model = two_source_model()
    res = solve_fault(model, FaultSpec("L1", 0.35, "BG", 2.0))
    near = dataclasses.replace(phasors_from_solution(res, model, "VM-L1"), terminal_id=None,
                               station="Vellmoor 230kV substation")
    far = dataclasses.replace(phasors_from_solution(res, model, "CR-L1"), terminal_id=None,
                              station="FIELD DFR 7")
    p = pair_ends(model, [near, far])
    assert [t.id for t in p.terminals] == ["VM-L1", "CR-L1"]
    assert p.how == ("station name (partial match)", "the line's other terminal")
    p = pair_ends(model, [far, near])
    assert [t.id for t in p.terminals] == ["CR-L1", "VM-L1"]
    rep = locate_event(model, [far, near])
    assert rep.distance_km == pytest.approx(65.0, abs=1e-3)
    # one unknown record alone cannot be placed
    with pytest.raises(ModelError, match="FIELD DFR 7"):
        pair_ends(model, [far])


def test_report_seen_from_the_other_terminal():
    # the same physical point from the other end: L - d, the interval mirrored, the
    # same nearest structure (route distances of the model's structure list)
    from pathlib import Path

    from eventlab.analysis import analyze
    from eventlab.network.model import load_model
    from eventlab.records import read_record
    root = Path(__file__).resolve().parents[2]
    folder = root / "sample_events" / "cr_pf1_bg"
    model = load_model(root / "models" / "northmarch_132kv.toml")
    recs = [read_record(p) for p in sorted(folder.glob("*.cfg"))]
    rep = analyze(recs[:1], model=model).location
    other = next(t.id for t in model.terminals_of_line(rep.line_id)
                 if t.id != rep.reference_terminal)
    seen = rep.seen_from(model, other)
    L = rep.length_km
    assert seen.reference_terminal == other
    assert seen.distance_km == pytest.approx(L - rep.distance_km, abs=1e-9)
    assert seen.interval_km == pytest.approx((L - rep.interval_km[1], L - rep.interval_km[0]))
    assert seen.structures.nearest == rep.structures.nearest
    assert seen.fit.distance_km == pytest.approx(L - rep.fit.distance_km)
    assert all(m.terminal == other for m in seen.methods)
    # the fitted fault is the same physical fault
    assert seen.fit.spec().fraction == pytest.approx(rep.fit.spec().fraction, abs=1e-12)
    truth = json.loads((folder / "truth.json").read_text())
    assert abs(seen.distance_km - truth["distance_from_km"][other]) <= 0.005 * L
    assert rep.seen_from(model, rep.reference_terminal) is rep


def test_one_end_with_its_currents_doubled_names_the_ct_ratio_as_well():
    # from one end a CT ratio error and the local source strength look the same
    # (-dV/dI is the local source impedance): the verdict names both
    model = two_source_model(load_angle_deg=9.0)
    a, _ = _ends(model, 0.3, "AG", 1.0)
    doubled = dataclasses.replace(a, i_pre=2.0 * a.i_pre, i_fault=2.0 * a.i_fault)
    rep = locate_event(model, [doubled])
    assert rep.fit.local_z_scale == pytest.approx(0.5, rel=0.05)
    words = " ".join(rep.comparison.verdicts)
    assert "CT ratio (currents 2.0" in words and "source strength" in words
