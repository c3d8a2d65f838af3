"""Distances for crews and the structures covering the interval."""

from __future__ import annotations

import pytest

from eventlab.locate.model_link import line_from
from eventlab.locate.structures import locate_structures

from .locate_models import two_source_model

CSV = "structure,distance_km\nT0,0.0\nT1,10.0\nT2,20.5\nT3,31.0\nT4,45.0\nT5,60.0\nT6,100.0\n"


@pytest.fixture
def model(tmp_path):
    (tmp_path / "s.csv").write_text(CSV)
    base = two_source_model(sections=True)
    # the same model with a structure list, through the network layer's reader
    import dataclasses

    from eventlab.network.model import read_structures
    st = read_structures(tmp_path / "s.csv", line_length_km=100.0)
    line = dataclasses.replace(base.lines[0], structures=st)
    return dataclasses.replace(base, lines=(line,))


def test_nearest_and_range_from_the_from_end(model):
    ld = line_from(model, "L1", model.terminal("VM-L1"))
    span = locate_structures(ld, 33.0, (22.0, 44.0))
    assert span.nearest == "T3"
    assert (span.first, span.last) == ("T2", "T4")
    assert span.names == ("T2", "T3", "T4")
    d = span.to_dict()
    assert d["distance_from_km"] == {"VM-L1": 33.0, "CR-L1": 67.0}
    # international mile = 1.609344 km exactly (NIST SP 811, from memory)
    assert d["distance_from_mi"]["VM-L1"] == pytest.approx(33.0 / 1.609344, rel=1e-12)


def test_seen_from_the_other_end_along_a_sectioned_route(model):
    ld = line_from(model, "L1", model.terminal("CR-L1"))
    assert ld.length_km == pytest.approx(100.0)
    # sections reversed: the 55 km section comes first from CARDON REACH
    assert ld.sections[0].length_km == 55.0
    span = locate_structures(ld, 67.0, (56.0, 78.0))
    assert span.nearest == "T3"          # 100 - 31 = 69 km from CARDON REACH
    assert (span.first, span.last) == ("T4", "T2")


def test_interval_beyond_the_list_is_clamped(model):
    ld = line_from(model, "L1", model.terminal("VM-L1"))
    span = locate_structures(ld, 2.0, (-5.0, 8.0))
    assert (span.first, span.last) == ("T0", "T1")
