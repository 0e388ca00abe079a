"""Tests for skyplan.inputs.angles: reading and writing sexagesimal angles.

Reference values come from the definitions (1 h of right ascension = 15 deg, 1 deg = 60 arcmin
= 3600 arcsec), worked out by hand in the comments, and from astropy's Angle parser and
formatter as an independent general-purpose reference library.
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from skyplan.inputs.angles import (
    MAX_ANGLE_CHARS,
    format_dms,
    format_dms_array,
    format_hms,
    format_hms_array,
    parse_angle_deg,
    parse_dec_column,
    parse_dec_deg,
    parse_ra_column,
    parse_ra_deg,
)

# 05:35:17.3 by definition: (5 + 35/60 + 17.3/3600) h * 15 deg/h = 83.822083333... deg
ORION_RA_DEG = (5 + 35 / 60 + 17.3 / 3600) * 15
# -05:23:28 by definition: -(5 + 23/60 + 28/3600) deg = -5.391111... deg
ORION_DEC_DEG = -(5 + 23 / 60 + 28 / 3600)


@pytest.mark.parametrize(
    "text", ["05:35:17.3", "5h35m17.3s", "05 35 17.3", "5H35M17.3S", " 05h 35m 17.3s ", "5h35m17.3"]
)
def test_ra_sexagesimal_forms(text: str) -> None:
    assert parse_ra_deg(text) == pytest.approx(ORION_RA_DEG, abs=1e-12)
    assert ORION_RA_DEG == pytest.approx(83.82208333, abs=1e-8)


@pytest.mark.parametrize(
    ("text", "expected_deg"),
    [
        ("5h35.5m", (5 + 35.5 / 60) * 15),  # = 83.875 deg
        ("5.5h", 5.5 * 15),  # = 82.5 deg
        ("83.82", 83.82),  # a bare number is degrees
        ("0", 0.0),
        ("83d49m19.5s", 83 + 49 / 60 + 19.5 / 3600),  # an explicit degree unit means degrees
        ("23:59:59.99", (23 + 59 / 60 + 59.99 / 3600) * 15),
    ],
)
def test_ra_other_forms(text: str, expected_deg: float) -> None:
    assert parse_ra_deg(text) == pytest.approx(expected_deg, abs=1e-12)


@pytest.mark.parametrize(
    "text", ["-05:23:28", "-5d23m28s", "-05 23 28", "-5°23′28″", "-5°23'28\"", "−5d23m28s"]
)
def test_dec_sexagesimal_forms(text: str) -> None:
    assert parse_dec_deg(text) == pytest.approx(ORION_DEC_DEG, abs=1e-12)


@pytest.mark.parametrize(
    ("text", "expected_deg"),
    [
        ("+41°16′09″", 41 + 16 / 60 + 9 / 3600),  # = 41.269166... deg
        ("-0:30:00", -0.5),  # the sign belongs to the whole angle
        ("-00 30 00", -0.5),
        ("-0d30m", -0.5),
        ("+90:00:00", 90.0),
        ("-90", -90.0),
        ("12.5", 12.5),
    ],
)
def test_dec_other_forms(text: str, expected_deg: float) -> None:
    assert parse_dec_deg(text) == pytest.approx(expected_deg, abs=1e-12)


@pytest.mark.parametrize(
    ("text", "kwargs", "parse"),
    [
        ("5h35m17.3s", {}, parse_ra_deg),
        ("05 35 17.3", {"unit": "hourangle"}, parse_ra_deg),
        ("-5d23m28s", {}, parse_dec_deg),
        ("+41°16′09″", {}, parse_dec_deg),
        ("-0:30:00", {"unit": "deg"}, parse_dec_deg),
        ("-123:45:06.7", {"unit": "deg"}, parse_angle_deg),
    ],
)
def test_agrees_with_astropy_angle(text: str, kwargs: dict, parse) -> None:
    from astropy.coordinates import Angle

    # astropy.coordinates.Angle is the reference parser for the same sexagesimal notation.
    assert parse(text) == pytest.approx(Angle(text, **kwargs).degree, abs=1e-12)


def test_general_angle_has_no_range_check() -> None:
    assert parse_angle_deg("-370:00:00") == -370.0
    assert parse_angle_deg("400") == 400.0
    assert parse_angle_deg("30d15m") == pytest.approx(30.25)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("24:00:00", "outside"),  # 24 h is 360 deg: not below 360
        ("24h", "outside"),
        ("360", "outside"),
        ("-0.1", "outside"),
        ("-01:00:00", "negative"),
        ("05:60:00", "minutes"),
        ("05:30:60", "seconds"),
        ("5.5:30:00", "last part"),
        ("5h30.5m10s", "last part"),
        ("abc", "cannot read"),
        ("", "empty"),
        ("   ", "empty"),
        ("nan", "finite"),
        ("inf", "finite"),
        ("1e999", "finite"),
        ("5:35:17.3h", "cannot read"),
        ("5h3517", "minutes"),  # no silent split of run-together digits
        ("05:35 17", "cannot read"),  # separators must not be mixed
        ("1" * (MAX_ANGLE_CHARS + 1), "too long"),
    ],
)
def test_ra_rejects(text: str, words: str) -> None:
    with pytest.raises(ValueError, match=words):
        parse_ra_deg(text)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("91", "outside"),
        ("-90:00:01", "outside"),
        ("+45:61:00", "minutes"),
        ("+45:00:60", "seconds"),
        ("5h", "cannot read"),
        ("--5", "cannot read"),
        ("+-5:00:00", "cannot read"),
        ("-05:-23:28", "cannot read"),
    ],
)
def test_dec_rejects(text: str, words: str) -> None:
    with pytest.raises(ValueError, match=words):
        parse_dec_deg(text)


def test_non_text_is_a_type_error() -> None:
    with pytest.raises(TypeError):
        parse_dec_deg(12.5)  # type: ignore[arg-type]


def test_columns_report_bad_entries_by_row() -> None:
    ra, errors = parse_ra_column(["83.82", "", "05:35:17.3", "x", "400", "  ", "-01:00:00"])
    assert ra[0] == 83.82
    assert math.isnan(ra[1]) and math.isnan(ra[5])  # empty: NaN, no error
    assert ra[2] == pytest.approx(ORION_RA_DEG, abs=1e-12)
    assert sorted(errors) == [3, 4, 6]
    assert "outside" in errors[4] and "negative" in errors[6]
    dec, errors = parse_dec_column(["-0:30:00", "+90:00:00", "-90:00:01", None, "12.5"])
    assert dec[0] == -0.5 and dec[1] == 90.0 and dec[4] == 12.5
    assert math.isnan(dec[3])
    assert list(errors) == [2]


def test_columns_accept_numbers_from_typed_tables() -> None:
    ra, errors = parse_ra_column(np.array([10.0, np.nan, 400.0]))
    assert ra[0] == 10.0 and math.isnan(ra[1]) and math.isnan(ra[2])
    assert list(errors) == [2]


def test_strict_colon_column_matches_entry_by_entry() -> None:
    texts = ["05:35:17.3", "", "23:59:59.999", "00:00:00", "12:60:00", "-01:00:00", "24:00:00"]
    ra, errors = parse_ra_column(texts)
    for i, text in enumerate(texts):
        if i in errors or not text:
            continue
        assert ra[i] == parse_ra_deg(text)  # bit-identical to the per-entry parser
    assert sorted(errors) == [4, 5, 6]


@settings(max_examples=30, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.sampled_from(["", "+", "-"]),
            st.integers(0, 99),
            st.integers(0, 59),
            st.floats(0, 59.999, allow_nan=False),
        ),
        min_size=1,
        max_size=20,
    )
)
def test_column_equals_scalar_for_colon_dec(parts) -> None:
    texts = [f"{s}{d:02d}:{m:02d}:{sec:06.3f}" for s, d, m, sec in parts]
    dec, errors = parse_dec_column(texts)
    for i, text in enumerate(texts):
        try:
            expected = parse_dec_deg(text)
        except ValueError:
            assert i in errors
        else:
            assert dec[i] == expected


def _string_column(texts: list[str]) -> np.ndarray:
    from numpy.dtypes import StringDType

    return np.array(texts, dtype=StringDType())


@settings(max_examples=40, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.sampled_from(["", " ", "\t", "\u2003"]),  # white space before and after
            st.sampled_from(["", "+", "-"]),
            st.integers(0, 999),
            st.integers(1, 3),  # digits of the first part
            st.integers(0, 99),
            st.integers(0, 99),
            st.text("0123456789", max_size=18),  # the seconds' fraction
            st.booleans(),  # with a decimal point
        ),
        min_size=1,
        max_size=30,
    )
)
def test_string_columns_read_at_once_equal_entry_by_entry(parts) -> None:
    # The CSV readers hand over numpy StringDType columns, read as bytes without a Python
    # string per entry (skyplan.inputs.colonangles); each value must be bit-identical to the
    # per-entry parser's (whose arithmetic is checked against astropy above), and each entry
    # it refuses must be refused.
    texts = [f"{w}{s}{d:0{k}d}:{m:02d}:{sec:02d}{'.' + frac if dot else ''}{w}"
             for w, s, d, k, m, sec, frac, dot in parts]
    for parse_column, parse_one in ((parse_ra_column, parse_ra_deg),
                                    (parse_dec_column, parse_dec_deg)):
        values, errors = parse_column(_string_column(texts))
        as_list, list_errors = parse_column(texts)
        assert np.array_equal(values, as_list, equal_nan=True) and errors == list_errors
        for i, text in enumerate(texts):
            try:
                expected = parse_one(text)
            except ValueError:
                assert i in errors
            else:
                assert values[i] == expected and i not in errors


@pytest.mark.parametrize("odd", ["12:00:00\x00", "\x0012:00:00", "12:0\x000:00", "12:00:00é",
                                 "12:00:00 x", "1:2:3:4", "12:00.5:00", "+-1:00:00", "1:2:3.4.5"])
def test_a_string_column_with_one_odd_entry_is_read_entry_by_entry(odd: str) -> None:
    texts = ["05:35:17.3"] * 3 + [odd, ""]
    dec, errors = parse_dec_column(_string_column(texts))
    assert dec[0] == parse_dec_deg("05:35:17.3") and math.isnan(dec[4])
    assert 3 in errors  # none of these is an angle the per-entry parser reads


def test_decimal_column_fast_path_agrees() -> None:
    # the speed of this path is measured in benchmarks/bench_catalog.py
    values = [f"{x:.6f}" for x in np.random.default_rng(3).uniform(0, 360, 100_000)]
    ra, errors = parse_ra_column(values)
    assert not errors and ra[0] == float(values[0])
    assert np.array_equal(ra, np.array(values, dtype=float))


def test_format_known_values() -> None:
    assert format_hms(ORION_RA_DEG) == "05:35:17.3"
    assert format_dms(ORION_DEC_DEG) == "-05:23:28"
    assert format_dms(0.5) == "+00:30:00"  # always a sign
    assert format_dms(-0.5) == "-00:30:00"
    assert format_dms(-1e-7) == "+00:00:00"  # rounds to zero: no minus sign
    assert format_hms(0.0, places=0) == "00:00:00"
    assert format_dms(ORION_DEC_DEG, places=2) == "-05:23:28.00"


def test_format_carries() -> None:
    # 01:59:59.99995 rounds to 60.0 s, which carries into minutes and hours.
    assert format_hms((1 + 59 / 60 + 59.99995 / 3600) * 15, places=1) == "02:00:00.0"
    # 359.99999 deg = 23:59:59.9976, which rounds to 24:00:00.0 and wraps to 00h.
    assert format_hms(359.99999, places=1) == "00:00:00.0"
    # 10 deg 59' 59.6" rounds up to 11 deg at whole arcseconds.
    assert format_dms(10 + 59 / 60 + 59.6 / 3600) == "+11:00:00"
    assert format_dms(-(10 + 59 / 60 + 59.6 / 3600)) == "-11:00:00"


def test_format_arrays_and_missing_values() -> None:
    assert format_hms_array([0.0, 15.0, np.nan]) == ["00:00:00.0", "01:00:00.0", ""]
    assert format_dms_array([np.nan, 90.0], missing="-") == ["-", "+90:00:00"]
    assert format_hms(float("nan"), missing="?") == "?"
    with pytest.raises(ValueError, match="places"):
        format_hms(10.0, places=12)


def test_format_agrees_with_astropy() -> None:
    import astropy.units as u
    from astropy.coordinates import Angle

    rng = np.random.default_rng(7)
    ra = rng.uniform(0, 359, 200)
    dec = rng.uniform(-89, 89, 200)
    # Skip values within 1e-6 of a rounding tie, where the two may round either way.
    ra_units = ra * 240 * 10
    dec_units = np.abs(dec) * 3600
    ra = ra[np.abs(ra_units - np.floor(ra_units) - 0.5) > 1e-6]
    dec = dec[np.abs(dec_units - np.floor(dec_units) - 0.5) > 1e-6]
    ours_ra = format_hms_array(ra, places=1)
    ours_dec = format_dms_array(dec, places=0)
    # astropy.coordinates.Angle.to_string is the reference formatter.
    theirs_ra = Angle(ra * u.deg).to_string(unit=u.hourangle, sep=":", precision=1, pad=True)
    theirs_dec = Angle(dec * u.deg).to_string(
        unit=u.deg, sep=":", precision=0, pad=True, alwayssign=True
    )
    assert ours_ra == list(theirs_ra)
    assert ours_dec == list(theirs_dec)


@settings(max_examples=100, deadline=None)
@given(
    st.floats(0, 360, exclude_max=True, allow_nan=False),
    st.integers(0, 4),
)
def test_hms_round_trip(ra_deg: float, places: int) -> None:
    text = format_hms(ra_deg, places)
    back = parse_ra_deg(text)
    half_unit_deg = 0.5 * 10.0**-places * 15 / 3600  # half of the last printed digit
    wrapped = (back - ra_deg + 180.0) % 360.0 - 180.0  # 24h wraps to 00h
    assert abs(wrapped) <= half_unit_deg * (1 + 1e-9) + 1e-12


@settings(max_examples=100, deadline=None)
@given(st.floats(-90, 90, allow_nan=False), st.integers(0, 4))
def test_dms_round_trip(dec_deg: float, places: int) -> None:
    back = parse_dec_deg(format_dms(dec_deg, places))
    half_unit_deg = 0.5 * 10.0**-places / 3600
    assert abs(back - dec_deg) <= half_unit_deg * (1 + 1e-9) + 1e-12


_ANGLE_ALPHABET = st.sampled_from(list("0123456789:.+- hdmsHDMS°′″'\"e\t−x"))


@settings(max_examples=300, deadline=None)
@given(st.one_of(st.text(max_size=80), st.text(_ANGLE_ALPHABET, max_size=30)))
def test_garbage_gives_value_in_range_or_value_error(text: str) -> None:
    for parse, low, high in ((parse_ra_deg, 0.0, 360.0), (parse_dec_deg, -90.0, 90.0)):
        try:
            value = parse(text)
        except ValueError:
            continue
        assert math.isfinite(value)
        assert low <= value <= high
        assert not (parse is parse_ra_deg and value == 360.0)
    try:
        assert math.isfinite(parse_angle_deg(text))
    except ValueError:
        pass


def test_adversarial_long_text_is_fast() -> None:
    hostile = ["1" * 100_000 + "x", "1:" * 50_000, " " * 100_000 + "1x", "9" * 10_000 + "h"]
    start = time.process_time()
    for text in hostile:
        with pytest.raises(ValueError):
            parse_dec_deg(text)
    values, errors = parse_ra_column(hostile)
    assert len(errors) == len(hostile) and np.isnan(values).all()
    assert time.process_time() - start < 5.0  # a guard against runaway backtracking
