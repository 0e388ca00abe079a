"""Tests for skyplan.inputs.catalog: reading target lists.

Expected coordinates follow from the sexagesimal definitions (1 h = 15 deg, 1 deg = 3600
arcsec), worked out in the comments.  Tables in ECSV, VOTable and FITS are written with
astropy's own writers (the general-purpose reference for those open formats) and read back.
Target names and values are invented test data.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from skyplan.errors import InputError, InputErrors
from skyplan.inputs import catalogtypes, delimited
from skyplan.inputs.catalog import Catalog, read_catalog

# 05:35:17.3 = (5 + 35/60 + 17.3/3600) * 15 deg = 83.8220833 deg
RA_A = (5 + 35 / 60 + 17.3 / 3600) * 15
# -05:23:28 = -(5 + 23/60 + 28/3600) deg = -5.3911111 deg
DEC_A = -(5 + 23 / 60 + 28 / 3600)


@pytest.fixture(autouse=True)
def fast_path_for_small_files(monkeypatch: pytest.MonkeyPatch) -> None:
    """Files of any size take polars' fast path where they qualify (the size limit only
    spares small files the import), so that these small files check it."""
    monkeypatch.setattr(delimited, "FAST_FROM_ROWS", 1)


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_csv_with_comments_aliases_and_defaults(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        "targets.csv",
        "# invented targets\n"
        " Name , RA_deg ,DEC,pmra,PMDEC,plx,rv,Epoch,Priority,exp,notes,colour\n"
        "\n"
        "alpha,05:35:17.3,-05:23:28,1.5,-2.5,3.25,-12,J2015.5,3,120,first,red\n"
        "# a comment between rows\n"
        "beta,83.82,-5.39,,,,,,,,,\n"
        "gamma,5h35m17.3s,-5d23m28s,,,,,2015.5,,,,\n"
        "delta,,,,,,,J2000,,,name only,\n",
    )
    read = read_catalog(path)
    cat = read.catalog
    assert len(cat) == 4
    assert list(cat.name) == ["alpha", "beta", "gamma", "delta"]
    assert list(cat.line) == [4, 6, 7, 8]  # physical lines, comments and blanks counted
    assert cat.ra_deg[0] == pytest.approx(RA_A, abs=1e-12)
    assert cat.dec_deg[0] == pytest.approx(DEC_A, abs=1e-12)
    assert cat.ra_deg[1] == 83.82 and cat.dec_deg[1] == -5.39  # decimal degrees
    assert cat.ra_deg[2] == pytest.approx(RA_A, abs=1e-12)
    assert cat.pm_ra_masyr.tolist() == [1.5, 0, 0, 0]
    assert cat.pm_dec_masyr.tolist() == [-2.5, 0, 0, 0]
    assert cat.parallax_mas.tolist() == [3.25, 0, 0, 0]
    assert cat.radial_velocity_kms.tolist() == [-12, 0, 0, 0]
    assert cat.epoch_jyear.tolist() == [2015.5, 2000.0, 2015.5, 2000.0]
    assert cat.priority.tolist() == [3, 1, 1, 1] and cat.priority.dtype == np.int64
    assert cat.exposure_s[0] == 120 and np.isnan(cat.exposure_s[1:]).all()
    assert list(cat.notes) == ["first", "", "", "name only"]
    assert cat.needs_lookup.tolist() == [False, False, False, True]
    assert cat.source == str(path)
    assert read.ignored_columns == ["colour"]
    assert read.duplicates == [] and read.skipped == []


def test_tsv_and_txt(tmp_path: Path) -> None:
    body = "name\tra\tdec\nalpha\t05:35:17.3\t-05:23:28\nbeta, with comma\t10\t20\n"
    for name in ("t.tsv", "t.txt"):
        cat = read_catalog(write(tmp_path, name, body)).catalog
        assert list(cat.name) == ["alpha", "beta, with comma"]
        assert cat.ra_deg[0] == pytest.approx(RA_A, abs=1e-12)
    comma = read_catalog(write(tmp_path, "c.txt", "name,ra,dec\nalpha,10,20\n")).catalog
    assert comma.ra_deg.tolist() == [10.0]


def test_quoted_fields_keep_line_numbers(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        "q.csv",
        'name,ra,dec,remark\n"NGC 1976, Orion",83.8,-5.4,"two\nlines"\n'
        "# comment\n"
        '"#5",10,20,x\n'
        "bad,400,20,y\n",
    )
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    (problem,) = info.value.problems
    assert (problem.line, problem.field) == (6, "ra")  # line 2-3 is one quoted row
    cat = read_catalog(path, skip_bad=True).catalog
    assert list(cat.name) == ["NGC 1976, Orion", "#5"]
    assert list(cat.line) == [2, 5]


def test_errors_name_file_line_and_column(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        "bad.csv",
        "name,ra,dec,pm_ra,parallax,exposure,priority,epoch\n"
        "ok,10,20,,,,,\n"
        "a,05:61:00,+91,,,,,\n"  # line 3: minutes >= 60, |dec| > 90
        "b,10,20,200000,-1,0,2.5,B1950\n"  # line 4: pm, parallax, exposure, priority, epoch
        ",10,20,,,,,\n"  # line 5: empty name
        "c,10,,,,,,\n"  # line 6: RA without Dec
        "d,,20,,,,,\n",  # line 7: Dec without RA
    )
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    found = {(p.line, p.field) for p in info.value.problems}
    assert found == {
        (3, "ra"),
        (3, "dec"),
        (4, "pm_ra"),
        (4, "parallax"),
        (4, "exposure"),
        (4, "priority"),
        (4, "epoch"),
        (5, "name"),
        (6, "dec"),
        (7, "ra"),
    }
    for problem in info.value.problems:
        assert problem.file == str(path)
        text = problem.one_line()
        assert f"{path}:{problem.line}" in text and f"'{problem.field}'" in text
    assert isinstance(info.value, InputError)  # the CLI catches one type


def test_skip_bad_drops_exactly_the_bad_rows(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        "mixed.csv",
        "name,ra,dec,priority\n"
        "a,10,20,1\n"
        "b,x,y,1\n"  # two problems, one row
        "c,30,40,2\n"
        "d,30,40,high\n"
        "a,50,60,1\n",
    )
    read = read_catalog(path, skip_bad=True)
    assert list(read.catalog.name) == ["a", "c", "a"]
    assert [e.line for e in read.skipped] == [3, 5]
    assert "field 'ra'" in read.skipped[0].message and "field 'dec'" in read.skipped[0].message
    assert read.duplicates == ["a"]


def test_line_endings(tmp_path: Path) -> None:
    for newline in ("\r\n", "\r"):
        text = newline.join(["name,ra,dec", "# note", "a,1,2", "", "b,3,4"]) + newline
        cat = read_catalog(write(tmp_path, "le.csv", text)).catalog
        assert list(cat.name) == ["a", "b"] and list(cat.line) == [3, 5]
        plain = newline.join(["name,ra,dec", "a,1,2", "b,3,4"])
        cat = read_catalog(write(tmp_path, "le.csv", plain)).catalog
        assert list(cat.name) == ["a", "b"] and list(cat.line) == [2, 3]


_EXTRA = st.text(st.sampled_from(list('ab #,"\té')), max_size=6)


@settings(
    max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    st.lists(
        st.tuples(
            st.text(st.sampled_from(list("abé1")), min_size=1, max_size=4),
            st.floats(0, 359.9, allow_nan=False),
            st.floats(-90, 90, allow_nan=False),
            _EXTRA,
            st.booleans(),
        ),
        max_size=12,
    ),
    st.sampled_from(["\n", "\r\n"]),
    st.booleans(),
)
def test_rows_and_lines_match_the_csv_writer(
    tmp_path: Path, records, newline: str, multiline: bool
) -> None:
    import csv
    import io

    # The standard csv writer (the reference for the format) writes the file; comment lines
    # and blank lines are put in between, and the line each row starts on is recorded.
    out = io.StringIO(newline="")
    writer = csv.writer(out, lineterminator=newline)
    writer.writerow(["name", "ra", "dec", "extra"])
    expected_lines = []
    for name, ra, dec, extra, comment in records:
        if comment:
            out.write('# comment, with a quote"' + newline + newline)
        expected_lines.append(len(io.StringIO(out.getvalue(), newline="").readlines()) + 1)
        writer.writerow([name, repr(ra), repr(dec), extra + ("\nmore" if multiline else "")])
    path = tmp_path / "w.csv"
    path.write_bytes(out.getvalue().encode())
    cat = read_catalog(path).catalog
    assert list(cat.name) == [r[0] for r in records]
    assert cat.ra_deg.tolist() == [r[1] for r in records]
    assert cat.dec_deg.tolist() == [r[2] for r in records]
    assert cat.line.tolist() == expected_lines


def test_empty_and_missing_files(tmp_path: Path) -> None:
    empty = read_catalog(write(tmp_path, "h.csv", "# only a header\nname,ra,dec\n")).catalog
    assert len(empty) == 0 and empty.ra_deg.dtype == np.float64
    with pytest.raises(InputError, match="no header"):
        read_catalog(write(tmp_path, "nothing.csv", "# nothing\n\n"))
    missing = tmp_path / "absent.csv"
    with pytest.raises(InputError) as info:
        read_catalog(missing)
    assert info.value.file == str(missing)
    with pytest.raises(InputError, match="unknown catalogue format"):
        read_catalog(write(tmp_path, "t.json", "{}"))


def test_missing_and_doubled_columns(tmp_path: Path) -> None:
    with pytest.raises(InputError) as info:
        read_catalog(write(tmp_path, "m.csv", "name,ra\nalpha,10\n"))
    assert "dec" in str(info.value) and str(tmp_path / "m.csv") in str(info.value)
    with pytest.raises(InputError, match="both give"):
        read_catalog(write(tmp_path, "d.csv", "name,ra,ra_deg,dec\nalpha,1,2,3\n"))


def test_ragged_rows(tmp_path: Path) -> None:
    path = write(tmp_path, "r.csv", "name,ra,dec,notes\nshort,10,20\nlong,10,20,x,extra\n")
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    (problem,) = info.value.problems
    assert problem.line == 3 and "5 fields" in problem.message
    assert list(read_catalog(path, skip_bad=True).catalog.name) == ["short"]


def test_separator_only_rows_are_not_targets(tmp_path: Path) -> None:
    cat = read_catalog(write(tmp_path, "s.csv", "name,ra,dec\na,1,2\n,,\n , , \nb,3,4\n")).catalog
    assert list(cat.name) == ["a", "b"] and list(cat.line) == [2, 5]


def test_encoding_control_characters_and_sizes(tmp_path: Path, monkeypatch) -> None:
    path = tmp_path / "latin1.csv"
    path.write_bytes(b"name,ra,dec\nalpha,1,2\nb\xe9ta,3,4\n")
    with pytest.raises(InputError) as info:
        read_catalog(path)
    assert info.value.line == 3 and "UTF-8" in info.value.message

    with pytest.raises(InputErrors, match="control character"):
        read_catalog(write(tmp_path, "esc.csv", "name,ra,dec\nbad\x1b[31m,1,2\n"))

    huge = "x" * (delimited.MAX_FIELD_CHARS + 1)
    with pytest.raises(InputErrors, match="characters long"):
        read_catalog(write(tmp_path, "long.csv", f"name,ra,dec,notes\na,1,2,{huge}\n"))

    monkeypatch.setattr(delimited, "MAX_ROWS", 3)  # the limit of text files
    rows = "".join(f"t{i},1,2\n" for i in range(4))
    with pytest.raises(InputError, match="more than 3 rows"):
        read_catalog(write(tmp_path, "many.csv", "name,ra,dec\n" + rows))
    with pytest.raises(InputError, match="more than 3 rows"):
        read_catalog(write(tmp_path, "many_q.csv", 'name,ra,dec\n"q",1,2\n' + rows))


def test_epochs(tmp_path: Path) -> None:
    body = "name,ra,dec,epoch\na,1,2,2000\nb,1,2,J2000\nc,1,2,J2015.5\n"
    body += "d,1,2,2015.5\ne,1,2,j1991.25\nf,1,2, J 2010 \n"
    cat = read_catalog(write(tmp_path, "e.csv", body)).catalog
    assert cat.epoch_jyear.tolist() == [2000.0, 2000.0, 2015.5, 2015.5, 1991.25, 2010.0]


def make_table():
    from astropy.table import MaskedColumn, Table

    table = Table()
    table["name"] = ["alpha", "beta", "gamma"]
    table["ra"] = MaskedColumn([RA_A, 0.0, 279.5], mask=[False, True, False], unit="deg")
    table["dec"] = MaskedColumn([DEC_A, 0.0, 38.5], mask=[False, True, False], unit="deg")
    table["pmra"] = np.array([1.5, 0.0, 200.25]) * 1  # mas/yr, no unit given
    table["pmdec"] = MaskedColumn([-2.0, 0.0, 0.0], unit="arcsec / yr")
    table["priority"] = [1, 2, 3]
    table["notes"] = ["first", "", "third"]
    table["extra"] = [1, 2, 3]
    return table


@pytest.mark.parametrize(
    ("suffix", "fmt"), [(".ecsv", "ascii.ecsv"), (".vot", "votable"), (".fits", "fits")]
)
def test_astropy_formats_round_trip(tmp_path: Path, suffix: str, fmt: str) -> None:
    path = tmp_path / f"targets{suffix}"
    make_table().write(path, format=fmt)
    read = read_catalog(path)
    cat = read.catalog
    assert list(cat.name) == ["alpha", "beta", "gamma"]
    assert cat.ra_deg[0] == pytest.approx(RA_A, abs=1e-12)
    assert cat.dec_deg[0] == pytest.approx(DEC_A, abs=1e-12)
    assert cat.needs_lookup.tolist() == [False, True, False]  # masked RA/Dec: look up
    assert cat.pm_ra_masyr.tolist() == [1.5, 0.0, 200.25]
    assert cat.pm_dec_masyr[0] == pytest.approx(-2000.0)  # -2 arcsec/yr = -2000 mas/yr
    assert cat.priority.tolist() == [1, 2, 3]
    assert list(cat.notes) == ["first", "", "third"]
    assert read.ignored_columns == ["extra"]
    if suffix == ".ecsv":  # text lines where the rows are written
        text_lines = path.read_text().splitlines()
        expected = [n for n, t in enumerate(text_lines, 1) if t.split(" ")[0] in cat.name]
    else:  # row numbers
        expected = [1, 2, 3]
    assert cat.line.tolist() == expected


def test_astropy_units_and_string_columns(tmp_path: Path) -> None:
    from astropy.table import Table

    hours = Table({"name": ["a"], "ra": [5.5], "dec": [-0.5]})
    hours["ra"].unit = "hourangle"
    hours.write(tmp_path / "h.ecsv", format="ascii.ecsv")
    cat = read_catalog(tmp_path / "h.ecsv").catalog
    assert cat.ra_deg[0] == pytest.approx(82.5, abs=1e-12)  # 5.5 h * 15 deg/h

    text = Table({"name": ["a", "b"], "ra": ["05:35:17.3", "83.82"], "dec": ["-0:30:00", ""]})
    text.write(tmp_path / "s.vot", format="votable")
    with pytest.raises(InputErrors) as info:
        read_catalog(tmp_path / "s.vot")
    (problem,) = info.value.problems
    assert problem.field == "dec" and "row 2" in problem.message and problem.line is None
    cat = read_catalog(tmp_path / "s.vot", skip_bad=True).catalog
    assert cat.ra_deg[0] == pytest.approx(RA_A, abs=1e-12) and cat.dec_deg[0] == -0.5

    wrong = Table({"name": ["a"], "ra": [1.0], "dec": [2.0]})
    wrong["ra"].unit = "m"
    wrong.write(tmp_path / "w.fits", format="fits")
    with pytest.raises(InputError, match="cannot be converted"):
        read_catalog(tmp_path / "w.fits")


def test_table_text_that_is_not_utf8(tmp_path: Path) -> None:
    from astropy.table import Table

    table = Table({"name": np.array([b"ok", b"b\xffd"]), "ra": [1.0, 2.0], "dec": [3.0, 4.0]})
    table.write(tmp_path / "b.fits", format="fits")
    with pytest.raises(InputErrors) as info:
        read_catalog(tmp_path / "b.fits")
    (problem,) = info.value.problems
    assert problem.field == "name" and "row 2" in problem.message and "UTF-8" in problem.message


@pytest.mark.parametrize(
    ("suffix", "fmt"), [(".ecsv", "ascii.ecsv"), (".vot", "votable"), (".fits", "fits")]
)
def test_damaged_tables_give_input_errors_only(tmp_path: Path, suffix: str, fmt: str) -> None:
    path = tmp_path / f"good{suffix}"
    make_table().write(path, format=fmt)
    original = path.read_bytes()
    rng = np.random.default_rng(5)
    damaged = tmp_path / f"damaged{suffix}"
    for _ in range(25):
        data = bytearray(original)
        spots = rng.integers(0, len(data), size=3)
        data[spots[0]] = int(rng.integers(0, 256))
        data[spots[1]] = int(rng.integers(0, 256))
        damaged.write_bytes(bytes(data[: int(spots[2])] if rng.random() < 0.3 else data))
        try:
            read_catalog(damaged)
        except InputError:
            pass


def test_xml_declarations_are_refused(tmp_path: Path) -> None:
    make_table().write(tmp_path / "plain.xml", format="votable")
    assert len(read_catalog(tmp_path / "plain.xml").catalog) == 3
    text = (tmp_path / "plain.xml").read_text()
    hostile = text.replace(
        "?>", '?>\n<!DOCTYPE v [<!ENTITY boom "boom">]>', 1
    )  # billion-laughs style files start like this
    with pytest.raises(InputError, match="DOCTYPE"):
        read_catalog(write(tmp_path, "hostile.vot", hostile))
    with pytest.raises(InputError, match="cannot read as FITS"):
        read_catalog(write(tmp_path, "fake.fits", "not a FITS file"))


def test_catalog_subset_and_lengths() -> None:
    def column(values, dtype=np.float64):
        return np.array(values, dtype=dtype)

    cat = Catalog(
        name=column(["a", "b", "c"], object),
        ra_deg=column([1.0, np.nan, 3.0]),
        dec_deg=column([1.0, np.nan, 3.0]),
        pm_ra_masyr=column([0, 0, 0]),
        pm_dec_masyr=column([0, 0, 0]),
        epoch_jyear=column([2000, 2000, 2000]),
        parallax_mas=column([0, 0, 0]),
        radial_velocity_kms=column([0, 0, 0]),
        priority=column([1, 2, 3], np.int64),
        exposure_s=column([np.nan] * 3),
        notes=column(["", "", ""], object),
        line=column([2, 3, 4], np.int64),
        source="x.csv",
    )
    assert cat.needs_lookup.tolist() == [False, True, False]
    picked = cat.subset(np.array([2, 0]))
    assert list(picked.name) == ["c", "a"] and picked.priority.tolist() == [3, 1]
    assert picked.source == "x.csv"
    assert len(cat.subset(cat.needs_lookup)) == 1
    assert len(cat.subset([])) == 0
    with pytest.raises(ValueError, match="differ in length"):
        Catalog(**{**cat.__dict__, "line": column([1], np.int64)})


def test_reading_100000_rows(tmp_path: Path) -> None:
    # the speed of this read is measured in benchmarks/bench_catalog.py
    rng = np.random.default_rng(11)
    ra = rng.uniform(0, 360, 100_000)
    dec = rng.uniform(-90, 90, 100_000)
    pairs = enumerate(zip(ra.tolist(), dec.tolist(), strict=True))
    lines = [f"t{i},{r:.6f},{d:.6f},{i % 5},-1.5,2,\n" for i, (r, d) in pairs]
    path = write(tmp_path, "big.csv", "name,ra,dec,pmra,pmdec,priority,notes\n" + "".join(lines))
    cat = read_catalog(path).catalog
    assert len(cat) == 100_000
    assert np.allclose(cat.ra_deg, ra, atol=1e-6) and cat.line[-1] == 100_001


_CELL = st.text(st.sampled_from(list('ab1.5:-+# ",\t\n\r\x00é')), max_size=8)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    st.one_of(
        st.binary(max_size=300),
        st.lists(st.lists(_CELL, max_size=6), max_size=8).map(
            lambda rows: ("name,ra,dec,epoch\n" + "\n".join(",".join(r) for r in rows)).encode()
        ),
    ),
    st.booleans(),
)
def test_fuzz_only_input_errors(tmp_path: Path, data: bytes, skip_bad: bool) -> None:
    path = tmp_path / "fuzz.csv"
    path.write_bytes(data)
    try:
        read = read_catalog(path, skip_bad=skip_bad)
    except InputError:
        return
    cat = read.catalog
    assert len(cat.ra_deg) == len(cat) == len(cat.line)
    known = ~cat.needs_lookup
    assert ((cat.ra_deg[known] >= 0) & (cat.ra_deg[known] < 360)).all()
    assert (np.abs(cat.dec_deg[known]) <= 90).all()
    assert all(name for name in cat.name)


# Texts that Python's float() reads (or refuses) in ways a decimal reader could get wrong.
# The reference is float() itself: a correctly rounded conversion (David Gay's algorithm),
# which is what the general path gives for every entry.
_PLAIN_TEXTS = [
    "0.1", "0.3", "2.675", "1.15", "-0", "+7", "5.", ".5", "-.5", "+.5", "007.50",
    "229.306207", "-35.093468", "359.999999999999", "-89.9999999999999",
    "123456789012345", ".000000000000001", "999999999999999", "",
]
_OTHER_TEXTS = [
    "1e3", " 12.5 ", "inf", "nan", "-inf", "1_000", "１２", "٣", "12:30:00", ".", "+", "-",
    "1.2.3", "1-2", "++1", "J2015.5", "0x10", "1234567890123456", "0.000000000000001",
    "1.0000000000000002", "12345678901234567", "\xa01", "1\x00", " ",
]


def _outcome(path: Path, skip_bad: bool) -> tuple:
    """What reading a file gives: every column bit for bit, skipped rows, or the errors."""
    try:
        read = read_catalog(path, skip_bad=skip_bad)
    except InputErrors as exc:
        return ("errors", [(p.message, p.line, p.field) for p in exc.problems])
    except InputError as exc:
        return ("error", exc.message, exc.line, exc.field)
    cat = read.catalog
    columns = [
        [(type(x), x) for x in a.tolist()] if a.dtype.kind in "OT" else (a.dtype, a.tobytes())
        for a in (getattr(cat, f) for f in catalogtypes._ARRAY_FIELDS)
    ]
    skipped = [(e.message, e.line, e.field) for e in read.skipped]
    return ("read", columns, skipped, read.duplicates, read.ignored_columns)


_NUMBER_TEXT = st.one_of(
    st.floats(-400, 400, allow_nan=False).flatmap(
        lambda x: st.sampled_from([f"{x:.6f}", f"{x:.0f}", repr(x), f"{x:+.3f}", f"{x:.15f}"])
    ),
    st.sampled_from(
        ["", "", "0", "-0", ".5", "5.", "1e3", " 12.5", "12:30:00", "nan", "x", "J2015.5",
         "2000", "1_000", "３", "360", "-90.0000001"]
    ),
)
_NAME_TEXT = st.text(st.sampled_from(list("ab 1é\x1b.")), max_size=5)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    st.lists(
        st.tuples(_NAME_TEXT, _NUMBER_TEXT, _NUMBER_TEXT, _NUMBER_TEXT, _NUMBER_TEXT),
        max_size=10,
    ),
    st.sampled_from([",", "\t"]),
    st.booleans(),
)
def test_fast_path_reads_what_the_general_path_reads(
    tmp_path: Path, rows, delimiter: str, skip_bad: bool
) -> None:
    # A quote character anywhere in a file (here in a last comment line, which moves no
    # row) sends it through the csv module and the per-entry parsers: the reference here.
    header = delimiter.join(["name", "ra", "dec", "pmra", "epoch"])
    text = header + "\n" + "".join(delimiter.join(row) + "\n" for row in rows)
    suffix = ".csv" if delimiter == "," else ".tsv"
    fast = tmp_path / f"fast{suffix}"
    fast.write_text(text, encoding="utf-8")
    general = tmp_path / f"general{suffix}"
    general.write_text(text + '# "\n', encoding="utf-8")
    assert _outcome(fast, skip_bad) == _outcome(general, skip_bad)


def test_plain_decimal_columns_are_read_at_once(tmp_path: Path, monkeypatch) -> None:
    read_at_once = []

    def spy(cells):
        numbers = real(cells)
        read_at_once.append(numbers is not None)
        return numbers

    real = delimited.Cells.numbers
    monkeypatch.setattr(delimited.Cells, "numbers", spy)
    path = write(tmp_path, "p.csv", "name,ra,dec,epoch\na,10.5,-20.25,J2000\nb,400,+7,2015.5\n")
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    assert read_at_once == [True, True, False]  # ra, dec at once; "J2000" is not a decimal
    (problem,) = info.value.problems  # 400 is out of range: its text is named as written
    assert (problem.line, problem.field) == (3, "ra") and "'400'" in problem.message


def _polars_cells(texts: list[str]) -> delimited.Cells:
    import polars as pl

    return delimited.Cells(pl.Series(texts, dtype=pl.String))


@pytest.mark.parametrize("text", _PLAIN_TEXTS + _OTHER_TEXTS)
def test_column_reader_gives_what_float_gives(text: str) -> None:
    """The fast path's column reader (polars): plain decimals of any length, bit for bit
    what Python's float() gives (the reference); anything else is left to the general
    path, and sends the whole column there."""
    numbers = _polars_cells([text]).numbers()
    if not (text == "" or re.fullmatch(r"[+-]?(\d+\.?\d*|\.\d+)", text, re.ASCII)):
        assert numbers is None
        return
    assert numbers is not None
    expected = np.float64(float(text)) if text else np.float64(np.nan)
    assert numbers[0].tobytes() == expected.tobytes()
    assert _polars_cells([text, "1e3"]).numbers() is None


@settings(max_examples=200, deadline=None)
@given(st.lists(st.one_of(
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.text(st.sampled_from(list("0123456789.+-e _")), max_size=25)), max_size=8))
def test_column_reader_agrees_with_float(texts: list[str]) -> None:
    numbers = _polars_cells(texts).numbers()
    plain = [t == "" or re.fullmatch(r"[+-]?(\d+\.?\d*|\.\d+)", t, re.ASCII) for t in texts]
    assert (numbers is not None) == all(plain)
    if numbers is not None:
        expected = np.array([float(t) if t else np.nan for t in texts], dtype=np.float64)
        assert numbers.tobytes() == expected.tobytes()


# ---------------------------------------------------------------------------------------
# Separators told by the header, decimal commas, standard input


@pytest.mark.parametrize(("header", "expected"), [
    ("name,ra,dec", ","),
    ("name;ra;dec", ";"),
    ("name\tra\tdec", "\t"),
    ("name;ra;dec;notes, with a comma", ";"),  # more semicolons than commas
    ("name,ra,dec,notes; with a semicolon", ","),
    ("name", ","),
])
def test_separator_told_by_the_header(header: str, expected: str) -> None:
    assert delimited.sniff_delimiter(header) == expected


def test_quoted_semicolon_file_with_decimal_commas(tmp_path: Path) -> None:
    path = write(tmp_path, "q.csv", 'name;ra;dec;notes\n"M 42; Orion";83,82;-5,39;"a; b"\n'
                 "Vega;279,23;38,78;\n")
    cat = read_catalog(path).catalog
    assert list(cat.name) == ["M 42; Orion", "Vega"] and list(cat.notes) == ["a; b", ""]
    assert list(cat.ra_deg) == [83.82, 279.23] and list(cat.dec_deg) == [-5.39, 38.78]


def test_a_comma_with_a_point_is_not_a_decimal_comma(tmp_path: Path) -> None:
    path = write(tmp_path, "t.csv", "name;ra;dec\nA;1,083.82;-5,39\n")
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    (problem,) = info.value.problems
    assert problem.line == 2 and problem.field == "ra" and "'1,083.82'" in problem.message


def test_fits_from_standard_input(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import io
    import sys

    from astropy.table import Table

    buffer = io.BytesIO()
    Table({"name": ["M42", "Vega"], "ra": [83.82, 279.23], "dec": [-5.39, 38.78]}).write(
        buffer, format="fits")
    piped = tmp_path / "piped"
    piped.write_bytes(buffer.getvalue())
    with piped.open("rb") as handle:
        monkeypatch.setattr(sys, "stdin", handle)
        cat = read_catalog("-", input_format="fits").catalog
    assert cat.source == "<stdin>" and list(cat.ra_deg) == [83.82, 279.23]


# ---------------------------------------------------------------------------------------
# Large files: read in blocks of whole lines, split a piece at a time


@pytest.fixture
def small_blocks(monkeypatch: pytest.MonkeyPatch) -> None:
    """Blocks and pieces of a few dozen bytes, so that small files cross many of both."""
    from skyplan.inputs import readfile, regularsplit

    monkeypatch.setattr(readfile, "BLOCK_BYTES", 97)
    monkeypatch.setattr(regularsplit, "PIECE_BYTES", 41)


def test_read_blocks_end_on_lines_and_add_up_to_the_file(tmp_path: Path, monkeypatch) -> None:
    from skyplan.inputs import readfile

    monkeypatch.setattr(readfile, "BLOCK_BYTES", 10)
    data = b"name,ra,dec\n" + b"".join(b"t%d,%d.5,-1\n" % (i, i) for i in range(50)) + b"x,1,2"
    path = tmp_path / "b.csv"
    path.write_bytes(data)
    blocks = readfile.read_blocks(path, len(data))
    assert b"".join(blocks) == data and len(blocks) > 10
    assert all(b.endswith(b"\n") for b in blocks[:-1])
    with pytest.raises(InputError, match="larger than"):
        readfile.read_blocks(path, len(data) - 1)


@pytest.mark.usefixtures("small_blocks")
@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(_NAME_TEXT, _NUMBER_TEXT, _NUMBER_TEXT, _NUMBER_TEXT),
                min_size=2, max_size=40),
       st.booleans())
def test_blocks_and_pieces_read_what_the_general_path_reads(
    tmp_path: Path, rows, skip_bad: bool
) -> None:
    # the reference: the same text with a quote in a last comment line (the csv module)
    text = "name,ra,dec,priority\n" + "".join(",".join(row) + "\n" for row in rows)
    fast, general = tmp_path / "fast.csv", tmp_path / "general.csv"
    fast.write_text(text, encoding="utf-8")
    general.write_text(text + '# "\n', encoding="utf-8")
    assert _outcome(fast, skip_bad) == _outcome(general, skip_bad)


@pytest.mark.usefixtures("small_blocks")
def test_rows_of_other_widths_in_a_large_file_are_named(tmp_path: Path) -> None:
    # one row too long and one too short: the same number of separators in all, so only a
    # row-by-row count finds them; the long one is an error at its line, the short one read
    body = "".join(f"t{i},{i}.5,-1\n" for i in range(40))
    path = write(tmp_path, "w.csv", "name,ra,dec\n" + body + "x,1,2,3\ny,\n" + body)
    with pytest.raises(InputErrors) as info:
        read_catalog(path)
    (problem,) = info.value.problems
    assert problem.line == 42 and "row has 4 fields but the header has 3" in problem.message
    cat = read_catalog(path, skip_bad=True).catalog
    assert len(cat) == 81 and cat.name[40] == "y" and cat.line[40] == 43


@pytest.mark.usefixtures("small_blocks")
def test_bytes_that_are_not_utf8_are_named_by_line_in_a_later_block(tmp_path: Path) -> None:
    body = b"".join(b"t%d,%d.5,-1\n" % (i, i) for i in range(60))
    path = tmp_path / "u.csv"
    path.write_bytes(b"name,ra,dec\n" + body + b"caf\xe9,1,2\n" + body)
    with pytest.raises(InputError, match=r"not UTF-8 text \(byte 0xe9 at column 4\)") as info:
        read_catalog(path)
    assert info.value.line == 62


def test_a_large_catalogue_keeps_texts_as_strings_and_absent_columns_as_one_value(
    tmp_path: Path,
) -> None:
    path = write(tmp_path, "t.csv", "name,ra,dec,notes\n" + "".join(
        f"T{i},{i % 360}.25,{i % 90}.5,{'Be star' if i % 2 else ''}\n" for i in range(3000)))
    cat = read_catalog(path).catalog
    assert cat.name.dtype.kind == "T" and cat.notes.dtype.kind == "T"
    assert list(cat.name[:2]) == ["T0", "T1"] and list(cat.notes[:2]) == ["", "Be star"]
    assert cat.ra_deg[361] == 1.25 and cat.dec_deg[91] == 1.5  # written 1.25, 1.5
    # not in the file: the default (0 mas/yr, J2000, priority 1), no memory per row
    assert cat.pm_ra_masyr.strides == (0,) and not cat.pm_ra_masyr.any()
    assert (cat.epoch_jyear == 2000.0).all() and (cat.priority == 1).all()
    assert cat.subset(np.array([2, 0])).pm_ra_masyr.tolist() == [0.0, 0.0]


@pytest.mark.usefixtures("small_blocks")
@pytest.mark.parametrize("start", ["\u2003", "\u00a0", "\x1c", " ", "#", ",", "é", "\u3000",
                                   "\u2003#", "\x1c#", " #"])  # the last: comments
def test_a_line_starting_with_space_or_a_mark_reads_as_the_general_path(
    tmp_path: Path, start: str
) -> None:
    # str.isspace() is the reference for white space (U+2003, U+00A0, U+3000 and U+001C
    # are white space to it; é is not): such lines go through the csv module's path, where
    # white space then "#" is a comment line
    body = "".join(f"t{i},{i}.5,-1\n" for i in range(30))
    text = "name,ra,dec\n" + body + f"{start}x,1,2\n" + body
    fast, general = tmp_path / "fast.csv", tmp_path / "general.csv"
    fast.write_text(text, encoding="utf-8")
    general.write_text(text + '# "\n', encoding="utf-8")
    for skip_bad in (False, True):
        assert _outcome(fast, skip_bad) == _outcome(general, skip_bad)


def test_angles_as_text_read_in_blocks_as_in_one(tmp_path: Path, monkeypatch) -> None:
    # sexagesimal RA/Dec are parsed a block of rows at a time; the reference is the same
    # file parsed in one block: values, and errors named at their lines
    from skyplan.inputs import catalogrows

    rows = [f"t{i},{i % 24:02d}:{i % 60:02d}:{i % 7}.5,-{i % 90}:30:00\n" for i in range(40)]
    rows[17] = "bad,25:00:00,+10:00:00\n"  # 25 h is 375 deg: out of range
    rows[31] = "worse,12:00:00,x\n"
    path = write(tmp_path, "s.csv", '# "\nname,ra,dec\n' + "".join(rows))
    whole = _outcome(path, skip_bad=True)
    monkeypatch.setattr(catalogrows, "ANGLE_BLOCK", 3)
    assert _outcome(path, skip_bad=True) == whole
    assert [line for _, line, _ in whole[2]] == [20, 34]
