"""The file readers against hostile or careless input: devices, pipes, huge lines, wide
headers, files that are not what they are named, and catalogues as spreadsheets save them.

Each test names the behaviour it guards; the references are the inputs themselves (the same
numbers written two ways must read the same), the standard library's ``resource`` for
memory, and wall-clock bounds far below what the unbounded readers took.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.errors import EXIT_BAD_INPUT, InputError
from skyplan.inputs import delimited, readfile
from skyplan.inputs.catalog import read_catalog
from skyplan.inputs.horizon import read_horizon_file
from skyplan.inputs.orbits import read_elements
from skyplan.inputs.planfile import read_plan_file

SECRET = [
    "root:$6$Qw3rTy$9aZ0secrethashvalue0001:19000:0:99999:7:::",
    "daemon x9 topsecret-token-ABCDEF",
    "backup:*:19000:0:99999:7:::",
    "operator 12 0xDEADBEEFsecret",
    "last-line-of-the-secret-file",
]


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run ``skyplan ARGV`` in this process; return (exit status, stdout, stderr)."""
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def run_process(*argv: str, stdin: bytes | None = None, timeout: float = 60.0):
    """Run ``skyplan ARGV`` in a child process (a hang fails the test by its timeout)."""
    return subprocess.run([sys.executable, "-m", "skyplan", *argv], input=stdin,
                          capture_output=True, timeout=timeout, check=False)


# --------------------------------------------------------------------------- not regular files


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom"])
def test_a_device_is_refused_at_once(tmp_path: Path, device: str) -> None:
    link = tmp_path / "targets.csv"
    link.symlink_to(device)
    for path in (device, link):
        start = time.perf_counter()
        with pytest.raises(InputError, match="device, not a regular file"):
            read_catalog(path, input_format="csv")
        assert time.perf_counter() - start < 1.0  # it grew past 3 GB in 15 s before


def test_every_reader_refuses_a_device(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="device"):
        read_horizon_file("/dev/zero")
    with pytest.raises(InputError, match="device"):
        read_elements("/dev/zero")
    with pytest.raises(InputError, match="device"):
        read_plan_file("/dev/zero")
    with pytest.raises(InputError, match="directory"):
        read_catalog(tmp_path, input_format="csv")


def test_a_named_pipe_without_writer_is_refused_not_waited_on(tmp_path: Path) -> None:
    fifo = tmp_path / "f.csv"
    os.mkfifo(fifo)
    start = time.perf_counter()
    with pytest.raises(InputError, match="named pipe"):
        readfile.open_input(fifo, what="catalogue")
    assert time.perf_counter() - start < 1.0
    # the whole command, in a child process so that a hang fails by the timeout
    done = run_process("windows", str(fifo), "--demo", timeout=60)
    assert done.returncode == EXIT_BAD_INPUT
    assert b"named pipe" in done.stderr and b"'-'" in done.stderr


# --------------------------------------------------------------------------- bounded reads


def test_read_input_stops_at_its_limit(tmp_path: Path) -> None:
    path = tmp_path / "t.csv"
    path.write_bytes(b"x" * 5000)
    assert readfile.read_input(path, 5000) == b"x" * 5000
    with pytest.raises(InputError, match="larger than 4999 bytes"):
        readfile.read_input(path, 4999)


def test_standard_input_is_bounded_too(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    path = tmp_path / "piped"
    path.write_bytes(b"name,ra,dec\n" + b"a,1,2\n" * 1000)
    monkeypatch.setattr(delimited, "MAX_FILE_BYTES", 1000)
    with path.open("rb") as handle:
        monkeypatch.setattr(sys, "stdin", handle)
        with pytest.raises(InputError, match="larger than 1000 bytes"):
            read_catalog("-", input_format="csv")


def test_a_huge_line_is_refused_with_bounded_memory(tmp_path: Path) -> None:
    # One line of 150 MB, inside the 1 GiB file limit: the reader once grew past 6 GiB on a
    # 500 MB one.  Peak memory is measured in a child process against 3 x the size + 200 MiB:
    # the child's own high-water mark (VmHWM of /proc/self/status, kB), since Linux carries
    # ru_maxrss across exec and it would report the (large) test process that forked it;
    # ru_maxrss where there is no /proc.
    path = tmp_path / "one.csv"
    size = 150_000_000
    with path.open("wb") as handle:
        handle.write(b"name,ra,dec,")
        handle.write(b"x" * (size - 13))
        handle.write(b"\n")
    script = textwrap.dedent(f"""
        import resource
        from skyplan.errors import InputError
        from skyplan.inputs.catalog import read_catalog
        try:
            read_catalog({str(path)!r})
        except InputError as exc:
            print(exc.message)
        try:
            with open("/proc/self/status") as status:
                print(next(line.split()[1] for line in status if line.startswith("VmHWM")))
        except OSError:
            print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          timeout=60, check=True)
    message, peak_kib = done.stdout.strip().splitlines()
    assert "a line longer than" in message
    assert int(peak_kib) * 1024 <= 3 * size + 200 * 2**20


def _peak_of_read(path: Path) -> tuple[int, int]:
    """Rows read and the peak resident memory (bytes) of ``read_catalog(path)`` in a child
    process: its VmHWM, or ru_maxrss where there is no /proc (see the test above)."""
    script = textwrap.dedent(f"""
        import resource
        from skyplan.inputs.catalog import read_catalog
        print(len(read_catalog({str(path)!r}).catalog))
        try:
            with open("/proc/self/status") as status:
                print(next(line.split()[1] for line in status if line.startswith("VmHWM")))
        except OSError:
            print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          timeout=120, check=True)
    rows, peak_kib = done.stdout.strip().splitlines()
    return int(rows), int(peak_kib) * 1024


@pytest.mark.parametrize("quoted", [False, True])
def test_an_ordinary_large_catalogue_is_read_in_memory_proportional_to_it(
    tmp_path: Path, quoted: bool
) -> None:
    # 500,000 valid rows (name, ra, dec, priority, exposure, notes; 20 MB): the reader made
    # a Python string per name and note and copies of the file's text, and peaked at 333 MiB
    # against the goal of 3 x the size + 200 MiB (259 MiB); columns of numpy StringDType and
    # float64, split a block at a time, read it in about 200 MiB.  With every name quoted
    # (the csv module's path, a Python string per cell) it went past 400 MiB.
    rows = 500_000
    rng = np.random.default_rng(15)
    ra = np.char.mod("%.5f", rng.uniform(0.0, 359.99999, rows))  # never 360.00000
    dec = np.char.mod("%.5f", np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, rows))))
    notes = np.array(["", "standard", "check seeing", "Be star"])[rng.integers(0, 4, rows)]
    names = np.char.add("T", np.arange(rows).astype(str))
    if quoted:
        names = np.char.add(np.char.add('"', names), '"')
    cells = [names, ra, dec,
             rng.integers(1, 6, rows).astype(str), rng.choice(["60", "300"], rows), notes]
    line = cells[0]
    for cell in cells[1:]:
        line = np.char.add(np.char.add(line, ","), cell)
    path = tmp_path / "large.csv"
    path.write_text("name,ra,dec,priority,exposure,notes\n" + "\n".join(line.tolist()) + "\n")
    size = path.stat().st_size
    read, peak = _peak_of_read(path)
    assert read == rows
    assert peak <= 3 * size + 200 * 2**20, f"peak {peak / 2**20:.0f} MiB for {size / 1e6:.1f} MB"


def test_a_sexagesimal_catalogue_is_read_in_memory_proportional_to_it(
    tmp_path: Path,
) -> None:
    # 700,000 rows with RA and Dec written sexagesimally (19 MiB; goal 3 x the size +
    # 200 MiB = 258 MiB).  The angle columns are read as text; polars' allocator and glibc's
    # heap kept the memory freed between blocks, and the read peaked at 268-280 MiB; with
    # the freed memory given back between blocks it takes about 220 MiB.
    rows = 700_000
    rng = np.random.default_rng(1505)
    tenths = rng.integers(0, 864_000, rows)  # RA in tenths of a second of time: below 24h
    arcsec = rng.integers(-323_640, 323_641, rows)  # Dec in arcseconds: |Dec| < 90 deg
    ra = [np.char.zfill((tenths // 36_000).astype(str), 2), ":",
          np.char.zfill((tenths // 600 % 60).astype(str), 2), ":",
          np.char.zfill((tenths // 10 % 60).astype(str), 2), ".", (tenths % 10).astype(str)]
    dec = [np.where(arcsec < 0, "-", "+"),
           np.char.zfill((np.abs(arcsec) // 3600).astype(str), 2), ":",
           np.char.zfill((np.abs(arcsec) // 60 % 60).astype(str), 2), ":",
           np.char.zfill((np.abs(arcsec) % 60).astype(str), 2)]
    line = np.char.add("S", np.arange(rows).astype(str))
    for part in [",", *ra, ",", *dec]:
        line = np.char.add(line, part)
    path = tmp_path / "sexagesimal.csv"
    path.write_text("name,ra,dec\n" + "\n".join(line.tolist()) + "\n")
    size = path.stat().st_size
    read, peak = _peak_of_read(path)
    assert read == rows
    assert peak <= 3 * size + 200 * 2**20, f"peak {peak / 2**20:.0f} MiB for {size / 1e6:.1f} MB"


def _table(rows: int, seed: int):
    """An astropy table of ``rows`` invented valid targets (name, ra and dec in degrees,
    priority, exposure, notes)."""
    from astropy import units as u
    from astropy.table import Table

    rng = np.random.default_rng(seed)
    table = Table()
    table["name"] = np.char.add("T", np.arange(rows).astype(str))
    table["ra"] = rng.uniform(0.0, 359.99999, rows) * u.deg
    table["dec"] = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, rows))) * u.deg
    table["priority"] = rng.integers(1, 6, rows)
    table["exposure"] = rng.choice([60.0, 300.0], rows)
    table["notes"] = np.array(["", "standard", "check seeing", "Be star"])[
        rng.integers(0, 4, rows)]
    return table


def test_a_large_fits_catalogue_is_read_in_memory_proportional_to_it(tmp_path: Path) -> None:
    # 1,000,000 rows (63 MiB; goal 3 x the size + 200 MiB = 388 MiB): read whole, copied by
    # astropy and every name and note made a Python string, it peaked at 429 MiB; mapped
    # into memory, only the columns read are loaded and their texts converted at once
    # (about 225 MiB).
    path = tmp_path / "large.fits"
    _table(1_000_000, 1506).write(path, format="fits")
    size = path.stat().st_size
    read, peak = _peak_of_read(path)
    assert read == 1_000_000
    assert peak <= 3 * size + 200 * 2**20, f"peak {peak / 2**20:.0f} MiB for {size / 1e6:.1f} MB"


def test_an_ecsv_catalogue_beyond_its_cells_is_refused_before_parsing(tmp_path: Path) -> None:
    # astropy's ECSV reader holds about 200 bytes a cell: 1,000,000 rows of 6 columns
    # (59 MiB) peaked at 1,450 MiB against the goal's 376.  Past ECSV_MAX_CELLS the file is
    # refused before it is parsed; at the limit it is read within the goal.
    from skyplan.inputs.tablefiles import ECSV_MAX_CELLS

    rows = ECSV_MAX_CELLS // 6
    at_limit = tmp_path / "limit.ecsv"
    _table(rows, 1507).write(at_limit, format="ascii.ecsv")
    size = at_limit.stat().st_size
    read, peak = _peak_of_read(at_limit)
    assert read == rows
    assert peak <= 3 * size + 200 * 2**20, f"peak {peak / 2**20:.0f} MiB for {size / 1e6:.1f} MB"
    beyond = tmp_path / "beyond.ecsv"
    _table(rows + 1, 1507).write(beyond, format="ascii.ecsv")
    start = time.perf_counter()
    with pytest.raises(InputError, match=f"rows and 6 columns; at most {ECSV_MAX_CELLS} cells"):
        read_catalog(beyond)
    assert time.perf_counter() - start < 2.0


def test_a_votable_beyond_its_size_is_refused_before_parsing(tmp_path: Path) -> None:
    # A VOTable is parsed from its bytes held whole: 1,000,000 rows (161 MiB) peaked at
    # 653-725 MiB, about 3.65 times the file, so that a VOTable near the 1 GiB limit would
    # break the goal of 3 x the size + 200 MiB.  Past VOTABLE_MAX_BYTES it is refused.
    from skyplan.inputs.tablefiles import VOTABLE_MAX_BYTES

    row = b"<TR><TD>T1</TD><TD>83.8</TD><TD>-5.4</TD></TR>\n"
    head = (b'<?xml version="1.0"?>\n<VOTABLE version="1.4"><RESOURCE><TABLE>\n'
            b'<FIELD name="name" datatype="char" arraysize="*"/>\n'
            b'<FIELD name="ra" datatype="double"/><FIELD name="dec" datatype="double"/>\n'
            b"<DATA><TABLEDATA>\n")
    tail = b"</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>\n"
    small = tmp_path / "small.vot"
    small.write_bytes(head + row * 3 + tail)
    assert list(read_catalog(small).catalog.ra_deg) == [83.8] * 3
    large = tmp_path / "large.vot"
    large.write_bytes(head + row * (VOTABLE_MAX_BYTES // len(row) + 1) + tail)
    start = time.perf_counter()
    with pytest.raises(InputError, match="a VOTable catalogue of at most 80 MiB is read"):
        read_catalog(large)
    assert time.perf_counter() - start < 5.0


def test_a_wide_header_is_read_in_linear_time(tmp_path: Path) -> None:
    def seconds(columns: int) -> float:
        path = tmp_path / f"w{columns}.csv"
        extra = [f"c{i}" for i in range(columns - 3)]
        path.write_text(",".join(["name", "ra", "dec", *extra]) + "\n"
                        + ",".join(["M42", "83.8", "-5.4", *["1"] * len(extra)]) + "\n")
        best = np.inf
        for _ in range(3):
            start = time.perf_counter()
            read = read_catalog(path)
            best = min(best, time.perf_counter() - start)
        assert len(read.ignored_columns) == columns - 3
        return best

    # quadratic time made 4x the width 16x slower (10,000 columns took 2.1 s)
    assert seconds(10_000) < 8 * seconds(2_500) + 0.2
    path = tmp_path / "huge.csv"
    path.write_text(",".join(f"c{i}" for i in range(100_000)) + "\nx\n")
    start = time.perf_counter()
    with pytest.raises(InputError, match="100000 columns; at most 10000"):
        read_catalog(path)
    assert time.perf_counter() - start < 2.0  # took over 60 s before


def test_a_wide_table_is_refused_before_astropy_parses_it(tmp_path: Path) -> None:
    # astropy's VOTable parser took 54 s on 32,000 columns (2.2 s on 8,000): quadratic
    fields = '<FIELD name="c" datatype="double"/>' * 32_000
    path = tmp_path / "wide.vot"
    path.write_text('<?xml version="1.0"?><VOTABLE version="1.4"><RESOURCE><TABLE>'
                    f"{fields}<DATA><TABLEDATA></TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>")
    start = time.perf_counter()
    with pytest.raises(InputError, match="declares 32000 columns; at most 10000"):
        read_catalog(path)
    assert time.perf_counter() - start < 2.0
    ecsv = tmp_path / "wide.ecsv"
    ecsv.write_text("# %ECSV 1.0\n# ---\n# datatype:\n"
                    + "".join(f"# - {{name: c{i}, datatype: float64}}\n" for i in range(20_000))
                    + " ".join(f"c{i}" for i in range(20_000)) + "\n")
    with pytest.raises(InputError, match="declares 20000 columns"):
        read_catalog(ecsv)


# --------------------------------------------------------------------------- no echo of files


def _secret(tmp_path: Path) -> Path:
    path = tmp_path / "private" / "shadow"
    path.parent.mkdir()
    path.write_text("\n".join(SECRET) + "\n")
    return path


def _sites_file(folder: Path, horizon_file: str) -> Path:
    sites = folder / "sites.toml"
    sites.write_text(
        '[site.home]\nlatitude = 40.4\nlongitude = -3.7\nelevation = 650\n'
        f'zone = "Europe/Madrid"\nhorizon_file = "{horizon_file}"\n')
    return sites


def _assert_no_secret(text: str) -> None:
    for line in SECRET:
        for piece in line.replace(":", " ").split():
            if len(piece) >= 6:
                assert piece not in text


def test_a_horizon_file_pointing_at_a_secret_never_shows_it(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    secret = _secret(tmp_path)
    folder = tmp_path / "conf"
    folder.mkdir()
    (folder / "link.txt").symlink_to(secret)
    for given in (str(secret), "../private/shadow", "link.txt"):
        sites = _sites_file(folder, given)
        code, out, err = run(capsys, "sites", "check", str(sites))
        assert code == EXIT_BAD_INPUT
        assert "not a horizon profile" in err and "first bad line 1" in err
        _assert_no_secret(out + err)
        code, out, err = run(capsys, "night", "--site", "home", "--sites-file", str(sites),
                             "--date", "2026-12-18")
        assert code == EXIT_BAD_INPUT
        _assert_no_secret(out + err)


def test_relative_horizon_files_resolve_against_the_sites_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "conf"
    folder.mkdir()
    (folder / "h.txt").write_text("0 5\n180 10\n")
    (tmp_path / "h.txt").write_text("not a profile\nat all\n")  # beside the working folder
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, "sites", "check", str(_sites_file(folder, "h.txt")))
    assert code == 0, err


def test_horizon_errors_quote_one_short_excerpt(tmp_path: Path) -> None:
    path = tmp_path / "h.txt"
    path.write_text("0 1\n90 " + "y" * 500 + "\n180 2\n270 3\n")
    with pytest.raises(InputError) as info:
        read_horizon_file(path)
    assert info.value.line == 2 and "y" * 14 not in str(info.value)
    assert len(info.value.message) < 60


def test_other_readers_refuse_a_secret_whole(tmp_path: Path) -> None:
    secret = _secret(tmp_path)
    with pytest.raises(InputError) as info:
        read_elements(secret)
    assert "not an elements file" in str(info.value) and "first bad line 1" in str(info.value)
    _assert_no_secret(str(info.value))
    for name in ("s.csv", "s.tsv", "s.txt"):
        copy = tmp_path / name
        copy.write_bytes(secret.read_bytes())
        with pytest.raises(InputError) as info:
            read_catalog(copy)
        assert "not a catalogue" in str(info.value)
        _assert_no_secret(str(info.value))
    with pytest.raises(InputError) as info:
        read_plan_file(secret)
    _assert_no_secret(str(info.value))


# --------------------------------------------------------------------------- as people save them


def _two_ways(tmp_path: Path, rows: int) -> tuple[Path, Path]:
    rng = np.random.default_rng(7)
    ra = np.round(rng.uniform(0, 360, rows), 5)
    dec = np.round(rng.uniform(-90, 90, rows), 5)
    exp = np.round(rng.uniform(1, 900, rows), 1)
    comma = ["name,ra,dec,exposure,notes"]
    semi = ["name;ra;dec;exposure;notes"]
    for i in range(rows):
        comma.append(f"T{i},{ra[i]},{dec[i]},{exp[i]},a note")
        semi.append(f"T{i};{str(ra[i]).replace('.', ',')};{str(dec[i]).replace('.', ',')};"
                    f"{str(exp[i]).replace('.', ',')};a note")
    a, b = tmp_path / f"c{rows}.csv", tmp_path / f"s{rows}.csv"
    a.write_text("\n".join(comma) + "\n")
    b.write_text("\n".join(semi) + "\n")
    return a, b


@pytest.mark.parametrize("rows", [5, 3000])  # the csv path and the polars path
def test_semicolons_with_decimal_commas_read_as_the_comma_version(
    tmp_path: Path, rows: int
) -> None:
    comma, semi = _two_ways(tmp_path, rows)
    a, b = read_catalog(comma).catalog, read_catalog(semi).catalog
    for field in ("ra_deg", "dec_deg", "exposure_s"):
        assert np.array_equal(getattr(a, field), getattr(b, field))
    assert list(a.name) == list(b.name) and list(b.notes) == ["a note"] * rows


def test_semicolons_with_decimal_points_and_sexagesimal(tmp_path: Path) -> None:
    path = tmp_path / "s.csv"
    path.write_text("name;ra;dec\nM42;05:35:17,3;-05:23:28\nVega;279.23473;38.78369\n")
    cat = read_catalog(path).catalog
    # 05h35m17.3s = 83.822083 deg (15 deg per hour)
    assert cat.ra_deg[0] == pytest.approx(83.8220833, abs=1e-6)
    assert cat.ra_deg[1] == 279.23473 and cat.dec_deg[1] == 38.78369


@pytest.mark.parametrize("name", ["t.txt", "t.csv", "t.tsv", "t.dat"])
def test_tab_separated_whatever_the_extension(tmp_path: Path, name: str) -> None:
    path = tmp_path / name
    path.write_text("name\tra\tdec\nM42\t83.82\t-5.39\nVega\t279.23\t38.78\n")
    fmt = "tsv" if name.endswith(".dat") else None
    cat = read_catalog(path, input_format=fmt).catalog
    assert list(cat.ra_deg) == [83.82, 279.23]


def test_the_separator_is_named_when_it_is_not_the_expected_one(tmp_path: Path) -> None:
    path = tmp_path / "t.tsv"
    path.write_text("name;ra;dec\nM42;83,82;-5,39\n")
    with pytest.raises(InputError, match="seems to use ';' as separator"):
        read_catalog(path)
    assert len(read_catalog(path, input_format="csv").catalog) == 1


def test_standard_input_with_input_format(tmp_path: Path) -> None:
    data = b"name;ra;dec\nM42;83,82;-5,39\nVega;279,23;38,78\n"
    done = run_process("windows", "-", "--input-format", "csv", "--demo", "--format", "csv",
                       stdin=data)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.decode().splitlines()
    assert [line.split(",")[:3] for line in lines[1:]] == [["M42", "83.82", "-5.39"],
                                                            ["Vega", "279.23", "38.78"]]
    done = run_process("windows", "-", "--demo", stdin=data)
    assert done.returncode == EXIT_BAD_INPUT and b"--input-format" in done.stderr


def test_unknown_input_format_is_refused(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="unknown input format"):
        read_catalog(tmp_path / "t.csv", input_format="xlsx")


# --------------------------------------------------------------------------- RA in hours


def _ra_notices(tmp_path: Path, body: str) -> list[str]:
    path = tmp_path / "t.csv"
    path.write_text("name,ra,dec\n" + body)
    notices.take()
    read_catalog(path)
    return [n for n in notices.take() if "RA looks like hours" in n]


def test_ra_in_hours_gets_a_notice(tmp_path: Path) -> None:
    # M42 at 5h35m17s written as decimal hours 5.5881 is read as 5.5881 degrees
    found = _ra_notices(tmp_path, "M42,5.5881,-5.39\nVega,18.6156,38.78\nDeneb,20.69,45.28\n")
    assert len(found) == 1 and "write 05:35:17 or 83.82" in found[0]


@pytest.mark.parametrize("body", [
    "M42,83.82,-5.39\nVega,279.23,38.78\nA,5.2,1\n",  # degrees
    "M42,5.5881,-5.39\nVega,18.6156,38.78\n",  # too few rows to tell
    "A,0.1,1\nB,0.2,2\nC,0.9,3\n",  # all below 1: degrees near 0
    "M42,05:35:17,-5.39\nVega,18:36:56,38.78\nDeneb,20:41:26,45.28\n",  # sexagesimal hours
])
def test_no_ra_notice_on_ordinary_data(tmp_path: Path, body: str) -> None:
    assert _ra_notices(tmp_path, body) == []

