"""Hand-written records, from the field definitions of IEEE C37.111-2013.

Each .cfg below is written by hand from clause 6 (configuration file) and
each .dat from clauses 7 (ASCII) and 8 (binary); the expected values are
worked out by hand in the comments.  Where the ``comtrade`` package reads a
case the way the standard says, it is checked too; where it does not (P/S
conversion, nanosecond time stamps, empty fields), the hand values decide.
"""

from __future__ import annotations

import struct
import zipfile
from datetime import datetime

import numpy as np
import pytest

from eventlab.errors import RecordFormatError
from eventlab.records import read_record

from .comtrade_cases import assert_matches_reference, load_reference, write_case

# clause 6.2 station_name,rec_dev_id,rev_year; 6.3 TT,##A,##D;
# 6.4 An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS;
# 6.5 Dn,ch_id,ph,ccbm,y; 6.6 lf; 6.7 nrates, samp,endsamp; 6.10 dd/mm/yyyy,hh:mm:ss.ssssss;
# 6.11 ft, timemult; 6.12 time_code,local_code; 6.13 tmq_code,leapsec
MULTI_CFG = """VELLMOOR,DFR-7,2013
4,2A,2D
1,VA,A,CR1,kV,0.01,0,0,-32767,32767,230,0.115,P
2,IA,A,CR1,A,0.002,0.5,125,-32767,32767,1200,5,S
1,TRIP CR1,,CR1,0
2,52A CR1,A,CR1,1
60
2
1000,3
500,5
02/12/2026,01:02:03.123456
02/12/2026,01:02:03.125456
ASCII
1
-5,-5
A,0
"""
MULTI_DAT = "1,0,1000,100,0,1\n2,1000,-2000,-100,0,1\n3,2000,0,300,1,1\n4,4000,99999,50,1,0\n5,6000,500,-50,1,0\n"


def test_2013_ascii_two_rates_ps_skew_time_codes(tmp_path):
    cfg = write_case(tmp_path, "multi", MULTI_CFG, MULTI_DAT)
    rec = read_record(cfg)
    assert (rec.station, rec.device, rec.revision, rec.data_format) == (
        "VELLMOOR", "DFR-7", 2013, "ASCII")
    assert rec.frequency_hz == 60.0
    # clause 6.7: samples 1..3 at 1000 Hz, 4..5 at 500 Hz after sample 3:
    # t = 0, 1, 2 ms, then 2 ms + 1/500 s = 4 ms, 6 ms
    np.testing.assert_allclose(rec.time, [0.0, 1e-3, 2e-3, 4e-3, 6e-3], rtol=0, atol=1e-15)
    assert [(r.samp_hz, r.endsamp) for r in rec.rates] == [(1000.0, 3), (500.0, 5)]
    va, ia = rec.analog
    # VA is primary (PS = P): 0.01 * x kV; 99999 is missing (C37.111-1999 clause 7.4.2,
    # from memory) -> NaN
    np.testing.assert_allclose(va.values, [10.0, -20.0, 0.0, np.nan, 5.0])
    # IA is secondary (PS = S): 0.002 x + 0.5 A, times 1200/5 for primary
    np.testing.assert_allclose(ia.values, np.array([0.7, 0.3, 1.1, 0.6, 0.4]) * 240.0)
    assert ia.skew_s == pytest.approx(125e-6)   # skew is in microseconds (clause 6.4)
    assert ia.ratio == 240.0
    sec = read_record(cfg, values="secondary")
    np.testing.assert_allclose(sec.analog[0].values, np.array([10, -20, 0, np.nan, 5]) * 0.115 / 230)
    np.testing.assert_allclose(sec.analog[1].values, [0.7, 0.3, 1.1, 0.6, 0.4])
    np.testing.assert_array_equal(rec.status[0].values, [0, 0, 1, 1, 1])
    np.testing.assert_array_equal(rec.status[1].values, [1, 1, 1, 0, 0])
    assert rec.status[1].normal == 1
    assert rec.start == datetime(2026, 12, 2, 1, 2, 3, 123456)
    assert rec.trigger == datetime(2026, 12, 2, 1, 2, 3, 125456)
    assert (rec.time_code, rec.local_code, rec.tmq_code, rec.leapsec) == ("-5", "-5", "A", 0)
    # the reference reads everything it reads the standard way (VA is primary as recorded)
    assert_matches_reference(rec, load_reference(cfg))


def test_1999_time_stamps_with_timemult(tmp_path):
    # nrates = 0, samp 0, endsamp 4: time = time stamp * 1 us * timemult (clauses 6.7, 6.11)
    cfg = write_case(tmp_path, "ts", """ORRINSBY,R1,1999
2,1A,1D
1,IA,A,HF1,A,1,0,0,-32767,32767,1,1,P
1,TRIP,,HF1,0
50
0
0,4
01/02/2026,00:00:00.000000
01/02/2026,00:00:00.000000
ASCII
2.5
""", "1,100,1,0\n2,500,2,0\n3,900,3,1\n4,1300,4,1\n")
    rec = read_record(cfg)
    # stamps 100, 500, 900, 1300 us * 2.5 = 0.25, 1.25, 2.25, 3.25 ms; from the first sample
    np.testing.assert_allclose(rec.time, [0.0, 1e-3, 2e-3, 3e-3], rtol=0, atol=1e-15)
    assert rec.rates[0].samp_hz == 0.0 and rec.sample_rate_hz == pytest.approx(1000.0)
    # dd/mm/yyyy in 1999 and 2013 (clause 6.10): 1 February
    assert rec.start == datetime(2026, 2, 1)
    assert_matches_reference(rec, load_reference(cfg))


def test_nanosecond_stamps_and_empty_time_column(tmp_path):
    # clause 6.10: nanosecond resolution when the fraction has 9 digits; the data file
    # time stamp may be left empty when nrates > 0 (clause 7, from memory)
    cfg = write_case(tmp_path, "ns", """ORRINSBY,R1,2013
1,1A,0D
1,IA,A,HF1,A,1,0,0,-32767,32767,1,1,P
50
1
1000,2
01/02/2026,10:20:30.123456789
01/02/2026,10:20:30.123457999
ASCII
1
0,0
0,0
""", "1,,5\n2,,6\n")
    rec = read_record(cfg)
    assert rec.start == datetime(2026, 2, 1, 10, 20, 30, 123456) and rec.start_ns == 789
    assert rec.trigger == datetime(2026, 2, 1, 10, 20, 30, 123457) and rec.trigger_ns == 999
    np.testing.assert_allclose(rec.analog[0].values, [5.0, 6.0])
    np.testing.assert_allclose(rec.time, [0.0, 1e-3])
    ref = load_reference(cfg)     # the package cuts the stamps to microseconds
    assert ref.start_timestamp == rec.start
    assert_matches_reference(rec, ref)


def test_status_only_binary(tmp_path):
    # zero analog channels is a valid record; status packed 16 to a word, channel 1 in
    # the least significant bit (clause 8)
    rows = [(1, 0, 0b011), (2, 1000, 0b110), (3, 2000, 0b101)]
    cfg = write_case(tmp_path, "so", """PELLINGFORD,R2,2013
3,0A,3D
1,TRIP,,L1,0
2,52A,,L1,1
3,52B,,L1,0
60
1
1000,3
01/02/2026,10:20:30.000000
01/02/2026,10:20:30.000000
BINARY
1
0,0
0,0
""", b"".join(struct.pack("<IIH", *r) for r in rows))
    rec = read_record(cfg)
    assert rec.analog == ()
    np.testing.assert_array_equal(rec.status[0].values, [1, 0, 1])
    np.testing.assert_array_equal(rec.status[1].values, [1, 1, 0])
    np.testing.assert_array_equal(rec.status[2].values, [0, 1, 1])
    np.testing.assert_allclose(rec.time, [0.0, 1e-3, 2e-3])


def _binary_case(tmp_path, fmt: str, raw_values, typecode: str):
    cfg_text = f"""VELLMOOR,R3,2013
2,1A,1D
1,VA,A,CR1,V,2,1,0,-32767,32767,1,1,P
1,TRIP,,CR1,0
60
1
1000,{len(raw_values)}
01/02/2026,10:20:30.000000
01/02/2026,10:20:30.000000
{fmt}
1
0,0
0,0
"""
    body = b"".join(struct.pack("<II" + typecode + "H", k + 1, 1000 * k, x, k % 2)
                    for k, x in enumerate(raw_values))
    return write_case(tmp_path, fmt.lower(), cfg_text, body)


def test_missing_data_codes_binary(tmp_path):
    # BINARY: 0x8000 = -32768 is missing (clause 8, from memory); value = 2 x + 1
    cfg = _binary_case(tmp_path, "BINARY", [3, -32768, -32767], "h")
    np.testing.assert_array_equal(read_record(cfg).analog[0].values, [7.0, np.nan, -65533.0])
    assert_matches_reference(read_record(cfg), load_reference(cfg))
    # BINARY32: 0x80000000 is missing
    cfg = _binary_case(tmp_path, "BINARY32", [3, -2**31, 2**31 - 1], "i")
    np.testing.assert_array_equal(read_record(cfg).analog[0].values,
                                  [7.0, np.nan, 2.0 * (2**31 - 1) + 1])
    assert_matches_reference(read_record(cfg), load_reference(cfg))


def test_missing_data_float32_pattern(tmp_path):
    # FLOAT32: 0xFFFFFFFF marks missing data (clause 8, from memory); value = 2 x + 1
    body = b"".join([struct.pack("<IIfH", 1, 0, 1.5, 0), struct.pack("<II", 2, 1000)
                     + b"\xff\xff\xff\xff" + struct.pack("<H", 1),
                     struct.pack("<IIfH", 3, 2000, -0.25, 0)])
    cfg = _binary_case(tmp_path, "FLOAT32", [0.0, 0.0, 0.0], "f")
    (tmp_path / "float32.dat").write_bytes(body)
    np.testing.assert_array_equal(read_record(cfg).analog[0].values, [4.0, np.nan, 0.5])


def test_ascii_empty_fields_are_missing(tmp_path):
    # an empty analog field is missing data; the comtrade package refuses it
    cfg = write_case(tmp_path, "gap", """VELLMOOR,R4,1999
2,2A,0D
1,IA,A,CR1,A,0.5,0,0,-32767,32767,1200,5,P
2,IB,B,CR1,A,0.5,0,0,-32767,32767,1200,5,P
60
1
1000,3
01/02/2026,10:20:30.000000
01/02/2026,10:20:30.000000
ASCII
1
""", "1,0,2,\n2,1000,,4\n3,2000,6,8\n")
    rec = read_record(cfg)
    np.testing.assert_array_equal(rec.analog[0].values, [1.0, np.nan, 3.0])
    np.testing.assert_array_equal(rec.analog[1].values, [np.nan, 2.0, 4.0])


def test_1991_file(tmp_path):
    # 1991: no rev_year, 10-field analog lines without ratios, mm/dd/yy dates,
    # no timemult line (from memory of C37.111-1991)
    cfg = write_case(tmp_path, "old", """HESKARD FEN,REL 1
2,1A,1D
1,IA,A,HF2,A,0.1,0,0,-32767,32767
1,TRIP,0
50
1
600,3
03/04/91,12:00:00.000
03/04/91,12:00:00.010
ASCII
""", "1,0,10,0\n2,1667,20,1\n3,3333,-30,1\n")
    rec = read_record(cfg)
    assert rec.revision == 1991 and rec.station == "HESKARD FEN"
    assert rec.start == datetime(1991, 3, 4, 12, 0, 0)   # mm/dd/yy: 4 March
    np.testing.assert_allclose(rec.analog[0].values, [1.0, 2.0, -3.0])
    assert rec.analog[0].ratio == 1.0 and rec.status[0].name == "TRIP"
    np.testing.assert_array_equal(rec.status[0].values, [0, 1, 1])
    np.testing.assert_allclose(rec.time, [0.0, 1 / 600, 2 / 600])


def test_latin1_names_hdr_inf_and_paths(tmp_path):
    cfg_text = MULTI_CFG.replace("VELLMOOR,DFR-7", "VELLMOOR S\xd8R,DFR-7").replace(
        "1,VA,A", "1,VA \xb5,A")
    cfg = tmp_path / "REC.CFG"
    cfg.write_bytes(cfg_text.encode("latin-1"))      # not UTF-8: read as Latin-1
    (tmp_path / "REC.DAT").write_text(MULTI_DAT)
    (tmp_path / "REC.HDR").write_text("Fault on CR1, relay 21 zone 1\n")
    (tmp_path / "REC.INF").write_bytes(b"[Public Record]\nnote=caf\xe9\n")
    rec = read_record(cfg)
    assert rec.station == "VELLMOOR S\xd8R" and rec.analog[0].name == "VA \xb5"
    assert rec.header_text == "Fault on CR1, relay 21 zone 1\n"
    assert rec.info_text == "[Public Record]\nnote=caf\xe9\n"
    for other in (tmp_path / "REC.DAT", tmp_path / "REC", tmp_path / "rec.cfg"):
        again = read_record(other)
        np.testing.assert_array_equal(again.analog[1].values, rec.analog[1].values)


def test_cff_written_by_hand(tmp_path):
    # clause 9 (single file): the sections CFG, INF, HDR, DAT; binary DAT with byte count
    cfg_text = MULTI_CFG.replace("ASCII\n1\n", "BINARY\n1\n")
    rows = [(1, 0, 1000, 100, 0b10), (2, 1000, -2000, -100, 0b10), (3, 2000, 0, 300, 0b11),
            (4, 4000, -32768, 50, 0b01), (5, 6000, 500, -50, 0b01)]
    dat = b"".join(struct.pack("<IIhhH", *r) for r in rows)
    body = (b"--- file type: CFG ---\n" + cfg_text.encode() + b"--- file type: INF ---\n"
            b"[x]\n--- file type: HDR ---\nheader\n"
            + f"--- file type: DAT BINARY: {len(dat)} ---\n".encode() + dat)
    path = tmp_path / "one.cff"
    path.write_bytes(body)
    rec = read_record(path)
    np.testing.assert_allclose(rec.analog[0].values, [10.0, -20.0, 0.0, np.nan, 5.0])
    np.testing.assert_array_equal(rec.status[0].values, [0, 0, 1, 1, 1])
    assert rec.header_text.strip() == "header" and rec.info_text.strip() == "[x]"
    assert_matches_reference(rec, load_reference(path))


def test_zip_with_one_record_and_unsafe_members(tmp_path):
    cfg = write_case(tmp_path, "multi", MULTI_CFG, MULTI_DAT)
    good = tmp_path / "good.zip"
    with zipfile.ZipFile(good, "w") as zf:
        zf.write(cfg, "event/multi.cfg")
        zf.write(tmp_path / "multi.dat", "event/multi.dat")
    np.testing.assert_array_equal(read_record(good).analog[0].values,
                                  read_record(cfg).analog[0].values)
    for bad_name in ("../multi.dat", "/abs/multi.dat"):
        bad = tmp_path / "bad.zip"
        with zipfile.ZipFile(bad, "w") as zf:
            zf.write(cfg, "multi.cfg")
            zf.writestr(zipfile.ZipInfo(bad_name), MULTI_DAT)
        with pytest.raises(RecordFormatError, match="absolute or '..' path"):
            read_record(bad)


def test_ascii_floating_point_values_and_leap_second(tmp_path):
    # 2013 allows floating-point notation in ASCII data (clause 4.5, from memory)
    dat = ("1,0,1.5e2,100,0,1\n2,1000,-2.25,-100,0,1\n3,2000,0.125,300,1,1\n"
           "4,4000,3,50,1,0\n5,6000,-7.5E-1,-50,1,0\n")
    cfg = write_case(tmp_path, "flt", MULTI_CFG, dat)
    rec = read_record(cfg)
    # VA = 0.01 x kV (PS = P)
    np.testing.assert_allclose(rec.analog[0].values, [1.5, -0.0225, 0.00125, 0.03, -0.0075])
    assert_matches_reference(rec, load_reference(cfg))
    # a stamp at second 60 is a leap second (leapsec field, clause 6.13): carried into the
    # next minute here (the comtrade package refuses it)
    text = MULTI_CFG.replace("02/12/2026,01:02:03.123456", "31/12/2016,23:59:60.500000")
    rec = read_record(write_case(tmp_path, "leap", text, dat))
    assert rec.start == datetime(2017, 1, 1, 0, 0, 0, 500000)


def test_ascii_trailing_comma_after_last_field(tmp_path):
    # clause 7: n,timestamp,A1..Ak,D1..Dm; some recorders end each row with a comma
    # (common practice, no source): one empty cell past the last field is not data
    cfg = write_case(tmp_path, "tc", """VELLMOOR,R5,1999
2,1A,1D
1,IA,A,CR1,A,0.5,0,0,-32767,32767,1200,5,P
1,TRIP,,CR1,0
60
1
1000,3
01/02/2026,10:20:30.000000
01/02/2026,10:20:30.000000
ASCII
1
""", "1,0,2,0,\n2,1000,4,1,\n3,2000,6,1,\n")
    rec = read_record(cfg)
    # values a*x + b = 0.5 * (2, 4, 6)
    np.testing.assert_array_equal(rec.analog[0].values, [1.0, 2.0, 3.0])
    np.testing.assert_array_equal(rec.status[0].values, [0, 1, 1])
