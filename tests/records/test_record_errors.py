"""Bad input: one RecordFormatError naming file, line and field, never another exception.

Each case breaks one field of a valid hand-written record (IEEE C37.111-2013
clause 6 layout) and checks the error names the line and field concerned.
"""

from __future__ import annotations

import struct

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from eventlab.errors import RecordFormatError
from eventlab.records import read_record
from eventlab.records.cfg import decode_text, parse_cfg
from eventlab.records.reader import record_from_bytes

from .comtrade_cases import write_case

GOOD_CFG = """VELLMOOR,DFR-7,2013
3,2A,1D
1,VA,A,CR1,kV,0.01,0,0,-32767,32767,230,0.115,P
2,IA,A,CR1,A,0.002,0.5,0,-32767,32767,1200,5,S
1,TRIP CR1,,CR1,0
60
1
1000,4
02/12/2026,01:02:03.123456
02/12/2026,01:02:03.125456
BINARY
1
0,0
0,0
"""
ROWS = [(1, 0, 10, 20, 0), (2, 1000, -10, 30, 1), (3, 2000, 5, 5, 1), (4, 3000, 7, 9, 0)]


def good_dat(rows=ROWS) -> bytes:
    return b"".join(struct.pack("<IIhhH", *r) for r in rows)


def replace_line(text: str, line: int, new: str) -> str:
    lines = text.splitlines()
    lines[line - 1] = new
    return "\n".join(lines) + "\n"


def test_good_case_reads(tmp_path):
    rec = read_record(write_case(tmp_path, "ok", GOOD_CFG, good_dat()))
    np.testing.assert_allclose(rec.analog[0].values, [0.1, -0.1, 0.05, 0.07])


CFG_CASES = [
    # (line, new text, field named, words expected in the message)
    (1, "VELLMOOR,DFR-7,2005", "rev_year", "1991, 1999 or 2013"),
    (1, "VELLMOOR", "station_name", "3 fields"),
    (2, "4,2A,1D", "TT", "is not analog"),
    (2, "3,2,1D", "##A", "followed by 'A'"),
    (2, "3,xA,1D", "##A", "integer"),
    (3, "1,VA,A,CR1,kV,abc,0,0,-32767,32767,230,0.115,P", "a", "expected a number"),
    (3, "1,VA,A,CR1,kV,nan,0,0,-32767,32767,230,0.115,P", "a", "finite"),
    (3, "1,VA,A,CR1,kV,1e300,0,0,-32767,32767,230,0.115,P", "a", "magnitude"),
    (3, "1,VA,A,CR1,kV,0.01,inf,0,-32767,32767,230,0.115,P", "b", "finite"),
    (3, "1,VA,A,CR1,kV,0.01,0,0,-32767,32767,230,0.115,X", "PS", "'P' or 'S'"),
    (3, "1,VA,A,CR1,kV,0.01,0,0,-32767,32767,-230,0.115,P", "primary", "positive"),
    (3, "1,VA,A,CR1,kV,0.01,0,0,-32767", "An", "13 fields"),
    (5, "1,TRIP CR1,,CR1,2", "y", "<= 1"),
    (6, "sixty", "lf", "number"),
    (7, "one", "nrates", "integer"),
    (7, "-1", "nrates", ">= 0"),
    (8, "0,4", "samp", "sample rate > 0"),
    (8, "-1000,4", "samp", "sample rate > 0"),
    (8, "1e12,4", "samp", "sample rate > 0"),
    (8, "1000", "samp", "samp,endsamp"),
    (8, "1000,x", "endsamp", "integer"),
    (9, "31/02/2026,01:02:03.123456", "start date/time", "invalid date"),
    (9, "yesterday", "start date/time", "dd/mm/yyyy"),
    (11, "BINARY16", "ft", "ASCII, BINARY"),
    (12, "-1", "timemult", "positive"),
    (13, "five,0", "time_code", "offset"),
    (14, "Q,0", "tmq_code", "hexadecimal"),
    (14, "0,7", "leapsec", "<= 3"),
]


@pytest.mark.parametrize(("line", "new", "field", "words"), CFG_CASES)
def test_bad_cfg_field(tmp_path, line, new, field, words):
    cfg = write_case(tmp_path, "bad", replace_line(GOOD_CFG, line, new), good_dat())
    with pytest.raises(RecordFormatError) as err:
        read_record(cfg)
    e = err.value
    assert (e.path, e.line, e.field) == (str(cfg), line, field)
    assert words in str(e) and "\n" not in str(e)


def test_more_channels_declared_than_lines(tmp_path):
    text = replace_line(GOOD_CFG, 2, "900000001,900000000A,1D")
    text = "\n".join(text.splitlines()[:4]) + "\n"
    with pytest.raises(RecordFormatError, match="file ends before") as err:
        read_record(write_case(tmp_path, "bad", text, good_dat()))
    assert err.value.line == 5


def test_empty_missing_and_garbage_files(tmp_path):
    cfg = write_case(tmp_path, "empty", "", b"")
    with pytest.raises(RecordFormatError, match="empty"):
        read_record(cfg)
    with pytest.raises(RecordFormatError, match="no such"):
        read_record(tmp_path / "absent.cfg")
    (tmp_path / "lonely.cfg").write_text(GOOD_CFG)
    with pytest.raises(RecordFormatError, match="no data file"):
        read_record(tmp_path / "lonely.cfg")
    rng = np.random.default_rng(3)
    garbage = bytes(rng.integers(0, 256, 400, dtype=np.uint8))
    cfg = write_case(tmp_path, "garbage", b"", good_dat())
    cfg.write_bytes(garbage)
    with pytest.raises(RecordFormatError, match="binary data"):
        read_record(cfg)


def test_truncated_and_overlong_binary(tmp_path):
    cfg = write_case(tmp_path, "short", GOOD_CFG, good_dat()[:-3])
    with pytest.raises(RecordFormatError, match="declared 4 samples") as err:
        read_record(cfg)
    assert err.value.field == "endsamp" and err.value.path.endswith("short.dat")
    cfg = write_case(tmp_path, "long", GOOD_CFG, good_dat() + good_dat()[:14])
    with pytest.raises(RecordFormatError, match="holds 5 samples"):
        read_record(cfg)


def test_declared_size_far_beyond_file_allocates_nothing(tmp_path):
    # 4e9 samples of 14 bytes would be 56 GB: refused from the file length
    cfg = write_case(tmp_path, "huge", replace_line(GOOD_CFG, 8, "1000,4000000000"), good_dat())
    with pytest.raises(RecordFormatError, match="declared 4000000000 samples"):
        read_record(cfg)
    ascii_cfg = replace_line(replace_line(GOOD_CFG, 8, "1000,4000000000"), 11, "ASCII")
    cfg = write_case(tmp_path, "hugea", ascii_cfg, "1,0,1,1,0\n")
    with pytest.raises(RecordFormatError, match="declared 4000000000 samples"):
        read_record(cfg)


def test_sample_numbers_out_of_order(tmp_path):
    rows = [ROWS[0], ROWS[2], ROWS[1], ROWS[3]]
    with pytest.raises(RecordFormatError, match="expected increasing") as err:
        read_record(write_case(tmp_path, "order", GOOD_CFG, good_dat(rows)))
    assert (err.value.line, err.value.field) == (3, "n")


ASCII_CFG = replace_line(GOOD_CFG, 11, "ASCII")


@pytest.mark.parametrize(("dat", "line", "field", "words"), [
    ("1,0,1,1,0\n2,1000,x,1,0\n3,2000,1,1,0\n4,3000,1,1,0\n", 2, "A1 (VA)", "number"),
    ("1,0,1,1,0\n2,1000,1,1,0\n3,2000,1,1,2\n4,3000,1,1,0\n", 3, "D1", "0 or 1"),
    ("1,0,1,1,0\n2,1000,1,1\n3,2000,1,1,0\n4,3000,1,1,0\n", 2, None, "5 comma-separated"),
    ("1,0,1,1,0\n2,1000,1,1,0\n", 3, "endsamp", "declared 4 samples"),
    ("1,0,1,1,0\n2,1000,1,1,0\n3,2000,1,1,0\n4,3000,1,1,0\n5,1,1,1,0\n", 5, "endsamp", "5 lines"),
    ("1,0,1,1,0\n2,1000,1,1,0\n3,2000,1,\x00,0\n4,3000,1,1,0\n", 3, None, "binary data"),
    ("1,0,1,1,0\n1,1000,1,1,0\n3,2000,1,1,0\n4,3000,1,1,0\n", 2, "n", "increasing"),
])
def test_bad_ascii_data(tmp_path, dat, line, field, words):
    with pytest.raises(RecordFormatError) as err:
        read_record(write_case(tmp_path, "a", ASCII_CFG, dat))
    assert (err.value.line, err.value.field) == (line, field)
    assert words in str(err.value)


def test_missing_time_stamp_with_nrates_zero(tmp_path):
    cfg = replace_line(replace_line(replace_line(GOOD_CFG, 7, "0"), 8, "0,4"), 11, "ASCII")
    with pytest.raises(RecordFormatError, match="time stamp missing") as err:
        read_record(write_case(tmp_path, "t", cfg, "1,0,1,1,0\n2,,1,1,0\n3,2,1,1,0\n4,3,1,1,0\n"))
    assert (err.value.line, err.value.field) == (2, "timestamp")


def test_bad_cff(tmp_path):
    p = tmp_path / "x.cff"
    p.write_bytes(b"--- file type: CFG ---\n" + GOOD_CFG.encode())
    with pytest.raises(RecordFormatError, match="no DAT section"):
        read_record(p)
    p.write_bytes(b"--- file type: CFG ---\n" + GOOD_CFG.encode()
                  + b"--- file type: DAT BINARY: 999 ---\n" + good_dat())
    with pytest.raises(RecordFormatError, match="declares 999 bytes"):
        read_record(p)
    p.write_bytes(b"hello\n--- file type: CFG ---\n" + GOOD_CFG.encode())
    with pytest.raises(RecordFormatError, match="first"):
        read_record(p)


# ---- property: mutated .cfg text raises nothing but the reader's own error
_LINES = GOOD_CFG.splitlines()


@st.composite
def mutated_cfg(draw):
    lines = list(_LINES)
    for _ in range(draw(st.integers(1, 3))):
        k = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["replace", "delete", "field", "insert", "dup"]))
        if op == "replace":
            lines[k] = draw(st.text(max_size=30))
        elif op == "delete":
            del lines[k]
            if not lines:
                lines = [""]
        elif op == "insert":
            lines.insert(k, draw(st.text(alphabet="0123456789,.-AD PSxe", max_size=20)))
        elif op == "dup":
            lines.insert(k, lines[k])
        else:
            fields = lines[k].split(",")
            j = draw(st.integers(0, len(fields) - 1))
            fields[j] = draw(st.one_of(
                st.text(alphabet="0123456789.-+eE", max_size=12),
                st.sampled_from(["", "nan", "inf", "-0", "1e400", "99999999999999999999",
                                 "P", "S", "\xe9", "0x10"])))
            lines[k] = ",".join(fields)
    return "\n".join(lines) + "\n"


@given(text=mutated_cfg(), n_rows=st.integers(0, 6))
def test_mutated_cfg_raises_only_the_readers_error(text, n_rows):
    try:
        record_from_bytes(text.encode("utf-8", "surrogatepass"), good_dat(ROWS * 2)[:14 * n_rows],
                          cfg_name="m.cfg", dat_name="m.dat")
    except RecordFormatError as exc:
        assert "\n" not in str(exc)


@given(st.binary(max_size=300))
def test_random_bytes_as_cfg(raw):
    try:
        parse_cfg(decode_text(raw, "r.cfg"), "r.cfg")
    except RecordFormatError:
        pass


@given(st.one_of(st.binary(max_size=200),
                 st.text(alphabet="0123456789,.-+e \n\r", max_size=200).map(str.encode)))
def test_random_bytes_as_dat(raw):
    for cfg in (GOOD_CFG, ASCII_CFG):
        try:
            rec = record_from_bytes(cfg.encode(), raw, cfg_name="r.cfg", dat_name="r.dat")
        except RecordFormatError:
            continue
        assert rec.n_samples == 4


@pytest.mark.parametrize("n_last, words", [(4_000_000_000, "outside 0..8"), (2, "increasing")])
def test_corrupt_sample_number_is_refused_before_any_time_axis(tmp_path, n_last, words):
    # a sample number far beyond endsamp would stretch the time axis (and a resampling
    # grid) to terabytes; one that repeats or goes back breaks the order of samples
    # (C37.111-2013 clause 7: n is the sample number, 1.. endsamp; common practice for
    # the margin of a dropped sample or two)
    rows = ROWS[:3] + [(n_last,) + ROWS[3][1:]]
    with pytest.raises(RecordFormatError, match=words) as exc:
        read_record(write_case(tmp_path, "bad_n", GOOD_CFG, good_dat(rows)))
    assert exc.value.field == "n" and exc.value.line == 4


def test_a_dropped_sample_number_is_kept(tmp_path):
    rows = ROWS[:3] + [(5,) + ROWS[3][1:]]
    rec = read_record(write_case(tmp_path, "gap", GOOD_CFG, good_dat(rows)))
    np.testing.assert_allclose(rec.time, [0.0, 1e-3, 2e-3, 4e-3])


def test_rate_of_evenly_spaced_coarse_time_stamps_is_the_span_over_the_steps():
    # 3840 Hz stamped in whole microseconds: steps of 260 and 261 us; the median step
    # says 3846 Hz, the span over the steps 3840 Hz
    from eventlab.records.build import make_record

    t = np.round(np.arange(400) / 3840.0 * 1e6) * 1e-6
    rec = make_record("VELLMOOR", t, [("VA", "A", "V", np.sin(2 * np.pi * 60 * t))])
    assert rec.sample_rate_hz == pytest.approx(3840.0, rel=1e-5)


def test_cfg_with_cr_only_line_endings_reads(tmp_path):
    # some older recorders end lines with CR alone
    cfg = GOOD_CFG.replace("\n", "\r")
    rec = read_record(write_case(tmp_path, "cr", cfg, good_dat()))
    np.testing.assert_allclose(rec.analog[0].values, [0.1, -0.1, 0.05, 0.07])


def test_channel_counts_that_do_not_match_the_lines_say_so(tmp_path):
    # line 2 declares one analog channel less than the file lists: the second analog
    # line is then read as a status line
    cfg = replace_line(GOOD_CFG, 2, "2,1A,1D")
    with pytest.raises(RecordFormatError, match="##A and ##D counts") as exc:
        read_record(write_case(tmp_path, "counts", cfg, good_dat()))
    assert exc.value.line == 4 and exc.value.field == "Dn"
