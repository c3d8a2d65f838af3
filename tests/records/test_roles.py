"""Channel roles: records mapped to terminals, and errors that list found and missing."""

from __future__ import annotations

import numpy as np
import pytest

from eventlab.errors import ChannelMapError
from eventlab.records import make_record
from eventlab.records.roles import channel_roles, map_terminals

N = 8
Z = np.zeros(N)


def terminal_channels(prefix="", circuit="", v_unit="V", i_unit="A", phase_field=True):
    chans = []
    for q, unit in (("V", v_unit), ("I", i_unit)):
        for ph in "ABC":
            chans.append((f"{prefix}{q}{ph}", ph if phase_field else "", unit,
                          Z + (1.0 if q == "V" else 2.0), circuit))
    return chans


def test_simulator_style_names_with_ph_and_ccbm():
    analog = terminal_channels(circuit="VM-CR1") + [("IN", "N", "A", Z, "VM-CR1")]
    rec = make_record("VELLMOOR", 1000.0, analog, [("TRIP", Z), ("52A", Z), ("D9", Z)])
    (t,) = map_terminals(rec)
    assert t.label == "VM-CR1"
    assert [c.name for c in t.voltages] == ["VA", "VB", "VC"]
    assert [c.name for c in t.currents] == ["IA", "IB", "IC"]
    assert t.neutral_current.name == "IN" and t.parallel_residual is None
    assert [c.name for c in t.trips] == ["TRIP"] and [c.name for c in t.breakers] == ["52A"]
    assert t.v_abc.shape == (3, N) and t.i_abc.shape == (3, N)


def test_units_rescaled_to_si():
    rec = make_record("X", 1000.0, terminal_channels(v_unit="kV", i_unit="kA"))
    (t,) = map_terminals(rec)
    # 1 kV -> 1000 V, 2 kA -> 2000 A (SI inside; common practice, no source)
    np.testing.assert_array_equal(t.v_abc, np.full((3, N), 1000.0))
    np.testing.assert_array_equal(t.i_abc, np.full((3, N), 2000.0))
    assert {c.unit for c in t.voltages} == {"V"} and {c.unit for c in t.currents} == {"A"}


@pytest.mark.parametrize("v_unit, i_unit, fv, fi", [
    ("Kv", "Ka", 1e3, 1e3), ("KV", "kA", 1e3, 1e3), ("Volts", "Amps", 1.0, 1.0),
    ("kilovolts", "amperes", 1e3, 1.0), ("mV", "mA", 1e-3, 1e-3), ("MV", "A", 1e6, 1.0)])
def test_unit_words_in_any_case_but_milli_and_mega_apart(v_unit, i_unit, fv, fi):
    # recorders write "Kv", "Volts", "Amps"; the SI prefixes m (milli) and M (mega)
    # differ only in case and are kept apart (SI brochure, from memory)
    rec = make_record("X", 1000.0, terminal_channels(v_unit=v_unit, i_unit=i_unit))
    (t,) = map_terminals(rec)
    np.testing.assert_allclose(t.v_abc, np.full((3, N), fv))
    np.testing.assert_allclose(t.i_abc, np.full((3, N), 2.0 * fi))


def test_sixteen_circuit_recorder_by_name_prefix():
    analog, status = [], []
    for k in range(1, 17):
        c = f"L{k:02d}"
        analog += terminal_channels(prefix=f"{c} ", phase_field=False)
        analog.append((f"{c} 3I0", "", "A", Z))
        status += [(f"{c} TRIP", Z), (f"{c} 52B", Z)]
    rec = make_record("PELLINGFORD", 1000.0, analog, status)
    terms = map_terminals(rec)
    assert [t.label for t in terms] == [f"L{k:02d}" for k in range(1, 17)]
    t5 = terms[4]
    assert t5.currents[1].name == "L05 IB" and t5.neutral_current.name == "L05 3I0"
    assert [c.name for c in t5.trips] == ["L05 TRIP"] and [c.name for c in t5.breakers] == ["L05 52B"]
    a_roles, s_roles = channel_roles(rec)
    assert a_roles[:7] == ["L01 VA", "L01 VB", "L01 VC", "L01 IA", "L01 IB", "L01 IC", "L01 IN"]
    assert s_roles[:2] == ["L01 TRIP", "L01 BKR"]


def test_shared_bus_voltages_and_parallel_residual():
    analog = [(f"V{p}", p, "V", Z, "BUS 1") for p in "ABC"]
    analog += [(f"I{p}", p, "A", Z, "CR1") for p in "ABC"]
    analog += [(f"I{p}", p, "A", Z, "CR2") for p in "ABC"]
    analog += [("IN PARALLEL", "N", "A", Z, "CR1")]
    rec = make_record("X", 1000.0, analog)
    t1, t2 = map_terminals(rec)
    assert (t1.label, t2.label) == ("CR1", "CR2")
    assert t1.voltages[0].circuit == "BUS 1" and t2.voltages[0].circuit == "BUS 1"
    assert t1.parallel_residual.name == "IN PARALLEL" and t2.parallel_residual is None


def test_explicit_channel_map():
    analog = [(n, "", "V", Z) for n in ("U1", "U2", "U3")] + [(n, "", "A", Z) for n in
                                                              ("I1", "I2", "I3", "IE")]
    rec = make_record("X", 1000.0, analog, [("TRIP L1", Z), ("CB OPEN", Z)])
    cmap = {"VA": "U1", "VB": "U2", "VC": "U3", "IA": "I1", "IB": "I2", "IC": "I3",
            "IN": "IE", "TRIP": "TRIP L1", "BKR": "CB OPEN"}
    (t,) = map_terminals(rec, cmap, label="VM-CR1")
    assert t.label == "VM-CR1" and t.neutral_current.name == "IE"
    assert t.roles()["TRIP1"] == "TRIP L1" and t.roles()["BKR1"] == "CB OPEN"
    # without IC the map's residual IN gives it (two phase CTs and the residual) ...
    (two_ct,) = map_terminals(rec, {k: v for k, v in cmap.items() if k != "IC"})
    assert two_ct.derived == ("IC",)
    # ... without IN too it is missing
    with pytest.raises(ChannelMapError, match="lacks IC"):
        map_terminals(rec, {k: v for k, v in cmap.items() if k not in ("IC", "IN")})
    with pytest.raises(ChannelMapError, match="'I9'.*the record has: U1, U2"):
        map_terminals(rec, dict(cmap, IA="I9"))
    with pytest.raises(ChannelMapError, match="not a role"):
        map_terminals(rec, dict(cmap, XX="I1"))


def test_error_lists_found_and_missing():
    analog = [(f"V{p}", p, "V", Z, "CR1") for p in "ABC"] + [("IA", "A", "A", Z, "CR1"),
                                                            ("IB", "B", "A", Z, "CR1")]
    rec = make_record("CARDON REACH", 1000.0, analog)
    with pytest.raises(ChannelMapError) as err:
        map_terminals(rec)
    msg = str(err.value)
    assert "found CR1: IA IB VA VB VC" in msg and "CR1 lacks IC" in msg
    assert channel_roles(rec) == ([""] * 5, [])


def test_find_channel_by_role():
    from eventlab.records.roles import find_channel

    analog = terminal_channels(prefix="L01 ", i_unit="kA") + terminal_channels(prefix="L02 ")
    rec = make_record("X", 1000.0, analog, [("L02 TRIP", Z)])
    ib = find_channel(rec, "IB", label="L01")
    assert ib.name == "L01 IB" and ib.unit == "A" and ib.values[0] == 2000.0
    assert find_channel(rec, "TRIP", label="L02").name == "L02 TRIP"
    assert find_channel(rec, "TRIP", label="L01") is None
    with pytest.raises(ChannelMapError, match="several terminals"):
        find_channel(rec, "IA")
    with pytest.raises(ChannelMapError, match="no terminal 'L09'"):
        find_channel(rec, "IA", label="L09")


def test_names_without_ph_field():
    # phase-to-neutral names (VAN, Ua) and IEC L1..L3, unit deciding V or I
    analog = [("VAN", "", "kV", Z), ("VBN", "", "kV", Z), ("VCN", "", "kV", Z),
              ("I_L1", "", "A", Z), ("I_L2", "", "A", Z), ("I_L3", "", "A", Z),
              ("VAB", "", "kV", Z)]
    (t,) = map_terminals(make_record("X", 1000.0, analog))
    assert [c.name for c in t.voltages] == ["VAN", "VBN", "VCN"]
    assert [c.name for c in t.currents] == ["I_L1", "I_L2", "I_L3"]


@pytest.mark.parametrize("chans", [
    # generic names, roles from the C37.111 ph field and the unit (clause 6.4:
    # ph is the channel's phase identification)
    [("CH1", "A", "V"), ("CH2", "B", "V"), ("CH3", "C", "V"),
     ("CH4", "A", "A"), ("CH5", "B", "A"), ("CH6", "C", "A")],
    # phases written 1 2 3 in ph (common practice, no source)
    [("V1", "1", "kV"), ("V2", "2", "kV"), ("V3", "3", "kV"),
     ("I1", "1", "A"), ("I2", "2", "A"), ("I3", "3", "A")],
])
def test_roles_from_ph_field_when_names_say_nothing(chans):
    n = 8
    analog = [(nm, ph, u, np.arange(n, dtype=float)) for nm, ph, u in chans]
    rec = make_record("S", 1000.0, analog)
    (t,) = map_terminals(rec)
    assert [c.name for c in t.voltages] == [c[0] for c in chans[:3]]
    assert [c.name for c in t.currents] == [c[0] for c in chans[3:]]
    assert t.label == ""
