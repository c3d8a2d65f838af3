"""A phase current derived from the residual where a recorder has two phase CTs and IN."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from eventlab.errors import ChannelMapError
from eventlab.records import read_record
from eventlab.records.roles import map_terminals

from .comtrade_cases import line_to_line_record

ROOT = Path(__file__).resolve().parents[2]


def _record():
    return read_record(ROOT / "sample_events" / "vm_cr1_bg" / "VELLMOOR.cfg")


@pytest.mark.parametrize("gone", ["IA", "IB", "IC"])
def test_the_missing_phase_is_the_residual_less_the_other_two(gone):
    rec = _record()
    full = map_terminals(rec)[0]
    without = dataclasses.replace(rec, analog=tuple(c for c in rec.analog if c.name != gone))
    (term,) = map_terminals(without)
    assert term.derived == (gone,)
    k = "ABC".index(gone[1])
    # Kirchhoff: IA + IB + IC = IN, the recorded residual (the sample's channels carry
    # their own noise and quantisation: they agree to about that)
    got, want = term.currents[k].values, full.currents[k].values
    assert np.max(np.abs(got - want)) < 0.01 * np.max(np.abs(want))
    assert term.currents[k].name.startswith(f"{gone} = IN - ")
    # by the model's channel map too
    cmap = {r: r for r in ("VA", "VB", "VC", "IA", "IB", "IC", "IN") if r != gone}
    (mapped,) = map_terminals(without, cmap)
    assert mapped.derived == (gone,)
    assert np.array_equal(mapped.currents[k].values, got)


def test_two_missing_phases_are_not_derived():
    rec = _record()
    two_gone = dataclasses.replace(rec, analog=tuple(c for c in rec.analog
                                                     if c.name not in ("IB", "IC")))
    with pytest.raises(ChannelMapError, match="lacks IB IC"):
        map_terminals(two_gone)


@pytest.mark.parametrize("keep", [("VAB", "VBC", "VCA"), ("VAB", "VBC"), ("VBC", "VCA")])
def test_phase_voltages_from_line_to_line_channels(keep):
    # line-to-line quantities hold no zero sequence (Fortescue): the derived set is the
    # phase-to-ground one less its V0, and its differences are the recorded channels
    rec = _record()
    (full,) = map_terminals(rec)
    (term,) = map_terminals(line_to_line_record(rec, keep))
    assert term.derived == ("VA", "VB", "VC")
    v = term.v_abc
    v_true = full.v_abc
    v0 = v_true.mean(axis=0)
    assert np.max(np.abs(v - (v_true - v0))) < 1e-6 * np.max(np.abs(v_true))
    assert np.max(np.abs(v.sum(axis=0))) < 1e-6 * np.max(np.abs(v_true))
    assert term.voltages[0].name.startswith("VA = (")


def test_one_line_to_line_voltage_is_named_in_the_error():
    rec = line_to_line_record(_record(), keep=("VAB",))
    with pytest.raises(ChannelMapError, match="VAB look line-to-line"):
        map_terminals(rec)
    # phase-to-ground channels are not named so
    with pytest.raises(ChannelMapError) as err:
        map_terminals(dataclasses.replace(_record(), analog=tuple(
            c for c in _record().analog if c.name != "VA")))
    assert "line-to-line" not in str(err.value)


def test_derived_quantities_are_not_shown_as_roles_of_record_channels():
    from eventlab.records.roles import channel_roles

    rec = _record()
    no_ib = dataclasses.replace(rec, analog=tuple(c for c in rec.analog if c.name != "IB"))
    roles = dict(zip((c.name for c in no_ib.analog), channel_roles(no_ib)[0], strict=True))
    assert roles["IN"] == "IN" and "IB" not in roles.values()
    ll = line_to_line_record(rec)
    roles = dict(zip((c.name for c in ll.analog), channel_roles(ll)[0], strict=True))
    assert roles["VAB"] == "" and roles["IA"] == "IA"
