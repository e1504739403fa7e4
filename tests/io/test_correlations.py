"""The H–H correlation list reader (ringshift.io.correlations) and the j_hz column of peak tables.

Every file here is hand-made and invented (no measured spectrum): the tests check the layout rules and the
one-line errors, not chemistry.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ringshift.errors import InputError
from ringshift.io.correlations import (
    DEFAULT_TOLERANCE_PPM,
    match_correlations,
    parse_correlations,
    read_correlations,
)
from ringshift.io.peak_tables import parse_peak_table_csv, read_peak_table_csv, write_peak_table_csv
from ringshift.spectra.peaks import Peak

#: Invented peak list the correlations are matched against.
PEAKS = (Peak(7.30, 2, label="pA"), Peak(7.10, 2, label="pB"), Peak(7.18, 1, label="pC"), Peak(2.35, 3, label="pM"),
         Peak(7.26, 0.1, kind="solvent", label="CHCl3"))


# ------------------------------------------------------------------------------------- good files
GOOD = {
    "comma": ("shift_a_ppm,shift_b_ppm\n2.35,7.10\n", [(3, 1, "cosy", None)], DEFAULT_TOLERANCE_PPM),
    "tab-kind-strength": ("shift_a_ppm\tshift_b_ppm\tkind\tstrength\n7.10\t7.30\tvicinal\tstrong\n",
                          [(1, 0, "vicinal", "strong")], DEFAULT_TOLERANCE_PPM),
    "semicolon-decimal-point": ("shift_a_ppm;shift_b_ppm;kind\n7.18;7.31;cosy\n", [(2, 0, "cosy", None)],
                                DEFAULT_TOLERANCE_PPM),
    "labels-and-case": ("Shift_A (ppm),Shift_B (ppm),Kind\npa,PB,Long-Range\n", [(0, 1, "long-range", None)],
                        DEFAULT_TOLERANCE_PPM),
    "tolerance-comment-bom-crlf": ("\ufeff# tolerance_ppm = 0.02\r\nshift_a_ppm,shift_b_ppm\r\n2.36,7.11\r\n",
                                   [(3, 1, "cosy", None)], 0.02),
    "comments-blank-lines-duplicate": ("# invented\nshift_a_ppm,shift_b_ppm\n\n2.35,7.10\n7.10,2.35\n# end\n",
                                       [(3, 1, "cosy", None)], DEFAULT_TOLERANCE_PPM),
    "geminal": ("shift_a_ppm,shift_b_ppm,kind\n7.30,7.18,geminal\n", [(0, 2, "geminal", None)],
                              DEFAULT_TOLERANCE_PPM),
}


@pytest.mark.parametrize("text,expected,tolerance", GOOD.values(), ids=GOOD.keys())
def test_good_files_are_read_and_matched(text, expected, tolerance):
    clist = parse_correlations(text, source="cosy.csv")
    assert clist.tolerance_ppm == pytest.approx(tolerance)
    matched = match_correlations(clist, PEAKS)
    assert [(m.peak_a, m.peak_b, m.kind, m.strength) for m in matched] == expected
    assert all(m.where.startswith("cosy.csv:") for m in matched)


def test_read_from_file(tmp_path):
    path = tmp_path / "cosy.csv"
    path.write_text("shift_a_ppm,shift_b_ppm\n2.35,7.10\n", encoding="utf-8")
    clist = read_correlations(path)
    assert clist.source == str(path) and clist.rows[0].line == 2


# -------------------------------------------------------------------------------------- bad files
BAD = {
    "empty": ("# nothing\n", "empty correlation list"),
    "no-separator": ("shift_a_ppm shift_b_ppm\n7.1 7.3\n", "no separator"),
    "missing-column": ("shift_a_ppm,kind\n7.1,cosy\n", "expected shift_a_ppm and shift_b_ppm"),
    "header-only": ("shift_a_ppm,shift_b_ppm\n", "no correlation rows"),
    "unknown-kind": ("shift_a_ppm,shift_b_ppm,kind\n7.1,7.3,noesy\n", "kind 'noesy'"),
    "shift-out-of-range": ("shift_a_ppm,shift_b_ppm\n7.1,73\n", "outside -20…40 ppm"),
    "extra-cells": ("shift_a_ppm,shift_b_ppm\n7.1,7.3,9\n", "row has 3 cells"),
    "empty-end": ("shift_a_ppm,shift_b_ppm\n7.1,\n", "empty shift cell"),
    "bad-tolerance": ("# tolerance_ppm = -1\nshift_a_ppm,shift_b_ppm\n7.1,7.3\n", "expected a tolerance"),
    "duplicate-column": ("shift_a_ppm,shift_b_ppm,shift_a\n7.1,7.3,7.2\n", "two columns give a"),
}


@pytest.mark.parametrize("text,message", BAD.values(), ids=BAD.keys())
def test_bad_files_give_one_line_errors(text, message):
    with pytest.raises(InputError) as exc:
        parse_correlations(text, source="cosy.csv")
    assert message in str(exc.value) and "\n" not in str(exc.value)
    assert str(exc.value).startswith("cosy.csv")


BAD_MATCH = {
    "no-peak-within-tolerance": ("shift_a_ppm,shift_b_ppm\n2.35,5.00\n", "cosy.csv:2", "matches no peak"),
    "ambiguous": ("# tolerance_ppm = 0.1\nshift_a_ppm,shift_b_ppm\n2.35,7.14\n", "cosy.csv:3", "ambiguous"),
    "diagonal": ("shift_a_ppm,shift_b_ppm\n7.10,7.11\n", "cosy.csv:2", "diagonal"),
    "solvent-line": ("shift_a_ppm,shift_b_ppm\n7.26,2.35\n", "cosy.csv:2", "solvent line"),
    "unknown-label": ("shift_a_ppm,shift_b_ppm\npZ,2.35\n", "cosy.csv:2", "labelled 'pZ'"),
}


@pytest.mark.parametrize("text,where,message", BAD_MATCH.values(), ids=BAD_MATCH.keys())
def test_unmatched_or_ambiguous_rows_name_file_and_row(text, where, message):
    clist = parse_correlations(text, source="cosy.csv")
    with pytest.raises(InputError) as exc:
        match_correlations(clist, PEAKS)
    assert str(exc.value).startswith(where + ":") and message in str(exc.value)


def test_nearest_peak_wins_when_clearly_nearer():
    # 7.29 is 0.01 from pA (7.30) and 0.03 from the solvent line (7.26): the nearer is at most half as far
    clist = parse_correlations("shift_a_ppm,shift_b_ppm\n7.29,2.35\n", source="cosy.csv")
    assert match_correlations(clist, PEAKS)[0].peak_a == 0


def test_missing_file_is_an_input_error(tmp_path):
    with pytest.raises(InputError):
        read_correlations(tmp_path / "absent.csv")


# --------------------------------------------------------------------------------- j_hz in peak lists
J_GOOD = {
    "slash": ("17.6/10.9", (17.6, 10.9)),
    "spaces-and-unit": ("17.6 10.9 Hz", (17.6, 10.9)),
    "one": ("7.8", (7.8,)),
    "empty": ("", None),
}


@pytest.mark.parametrize("cell,expected", J_GOOD.values(), ids=J_GOOD.keys())
def test_j_column_is_read(cell, expected):
    pl = parse_peak_table_csv(f"shift_ppm,integral,j_hz\n6.72,1,{cell}\n", source="p.csv")
    assert pl.peaks[0].j_hz == expected


J_BAD = {
    "zero": ("0", "expected 0 < J < 30 Hz"),
    "negative": ("-3.1", "expected 0 < J < 30 Hz"),
    "too-large": ("31", "expected 0 < J < 30 Hz"),
    "text": ("dd", "is not a number"),
}


@pytest.mark.parametrize("cell,message", J_BAD.values(), ids=J_BAD.keys())
def test_bad_j_values_name_file_and_line(cell, message):
    with pytest.raises(InputError) as exc:
        parse_peak_table_csv(f"shift_ppm,integral,j_hz\n6.72,1,2\n6.50,1,{cell}\n", source="p.csv")
    assert str(exc.value).startswith("p.csv:3:") and message in str(exc.value)


def test_j_header_with_unit_and_decimal_commas():
    pl = parse_peak_table_csv("shift_ppm;integral;J (Hz)\n6,72;1;17,6/10,9\n", source="p.csv")
    assert pl.peaks[0].j_hz == (17.6, 10.9) and pl.peaks[0].shift_ppm == pytest.approx(6.72)


def test_j_values_survive_the_csv_writer(tmp_path):
    path = tmp_path / "p.csv"
    peaks = (Peak(6.72, 1.0, j_hz=(17.6, 10.9)), Peak(5.28, 1.0, j_hz=(17.6,)), Peak(7.3, 5.0))
    write_peak_table_csv(path, peaks)
    assert [p.j_hz for p in read_peak_table_csv(path).peaks] == [(17.6, 10.9), (17.6,), None]


def test_peak_record_validates_j():
    with pytest.raises(InputError, match="0 < J < 30 Hz"):
        Peak(6.0, j_hz=(45.0,))
    with pytest.raises(InputError, match="sequence of coupling constants"):
        Peak(6.0, j_hz="7.5")


# -------------------------------------------------------------------------------------- properties
_CHUNKS = ["\n", ",", ";", "\t", " ", "#", "shift_a_ppm", "shift_b_ppm", "kind", "strength", "cosy", "geminal",
           "7.10", "2.35", "-0", "nan", "inf", "1e400", "pA", "\ufeff", "\u2212", "# tolerance_ppm = ", "0.02", '"']


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.sampled_from(_CHUNKS), max_size=40))
def test_random_text_gives_a_list_or_an_input_error(chunks):
    # common practice, no source: a reader fails only with its one-line error type
    text = "".join(chunks)
    try:
        clist = parse_correlations(text, source="fuzz.csv")
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    assert 0 < clist.tolerance_ppm <= 1
    try:
        match_correlations(clist, PEAKS)
    except InputError as exc:
        assert "\n" not in str(exc)
