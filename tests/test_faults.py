"""Faults outside the input: killed runs, unwritable outputs, damaged data files, cut files.

What is checked, and against what:

* a run killed with SIGKILL while it writes ``--out`` leaves the previous file byte for byte
  (POSIX ``rename`` replaces a name in one step: IEEE Std 1003.1, rename());
* SIGTERM (what cron and service managers send on a time-out) and Ctrl-C end a run with
  status 143 and 130 (128 + the signal number, the shell convention), one line, the old file
  intact and no temporary left;
* an output that cannot be written gives one line and status 4 (``skyplan/errors.py``);
* a truncated or corrupted DE421 file and a damaged IERS ``finals2000A.all`` table are named
  in one line (status 1) instead of giving wrong places; the DAF layout (1024-byte records)
  follows NAIF's "DAF Required Reading", the table layout the IERS ``ReadMe.finals2000A``;
* a catalogue cut in the middle of a row or of a UTF-8 character (RFC 3629 multi-byte
  sequences) is reported, never read silently as if whole.
"""

from __future__ import annotations

import errno
import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine import bodies, ephemeris, timescales
from skyplan.errors import (
    EXIT_FAILURE,
    EXIT_INTERRUPTED,
    EXIT_OUTPUT,
    EXIT_TERMINATED,
    OutputError,
)
from skyplan.inputs import scenario
from skyplan.render import output

DEMO_CATALOG = scenario.demo_path(scenario.DEMO_CATALOG)
PYTHON = sys.executable
OLD = b'{"previous": "run", "kept": true}\n'


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run ``skyplan ARGV`` in-process; return (exit status, stdout, stderr)."""
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def one_error_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("skyplan: "), err
    assert "Traceback" not in err
    return lines[0]


def leftovers(folder: Path, name: str) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name != name)


def big_catalogue(path: Path, rows: int) -> None:
    """Invented targets spread over the sky (a regular RA/Dec grid)."""
    lines = ["name,ra,dec,priority"]
    for i in range(rows):
        lines.append(f"T{i},{(i * 7.31) % 360:.4f},{-30 + (i * 0.0137) % 119:.4f},{1 + i % 5}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


# ---------------------------------------------------------------------------------------
# Killed runs


def test_sigkill_while_writing_through_write_atomic_keeps_the_old_file(tmp_path: Path) -> None:
    """The child stops inside write_atomic (a slow disk: fsync sleeps); SIGKILL arrives."""
    target = tmp_path / "plan.json"
    target.write_bytes(OLD)
    script = textwrap.dedent(f"""
        import os, sys, time
        from skyplan.render import output
        def slow_fsync(fd):
            print("writing", flush=True)
            time.sleep(60)
        output.os.fsync = slow_fsync
        output.write_atomic({str(target)!r}, b"x" * (32 << 20))
    """)
    child = subprocess.Popen([PYTHON, "-c", script], stdout=subprocess.PIPE)
    try:
        assert child.stdout.readline() == b"writing\n"
        partial = [p for p in tmp_path.iterdir() if p.name.endswith(".part")]
        assert len(partial) == 1 and partial[0].stat().st_size == 32 << 20
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=30)
    finally:
        child.kill()
    assert child.returncode == -signal.SIGKILL
    assert target.read_bytes() == OLD
    # what is left beside it is the temporary, under its own hidden name
    assert all(name.startswith(".plan.json.") and name.endswith(".part")
               for name in leftovers(tmp_path, "plan.json"))


def test_sigkill_at_random_moments_of_a_cli_run(tmp_path: Path) -> None:
    """``skyplan windows --out`` killed at several moments: the file is the old one or whole."""
    catalogue = tmp_path / "many.csv"
    big_catalogue(catalogue, 20_000)
    target = tmp_path / "windows.json"
    argv = [PYTHON, "-m", "skyplan", "windows", str(catalogue), "--demo", "-f", "json",
            "--out", str(target)]
    outcomes = set()
    for delay in (0.3, 1.5, 3.0, 6.0):
        target.write_bytes(OLD)
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        time.sleep(delay)
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=60)
        data = target.read_bytes()
        if data == OLD:
            outcomes.add("old")
        else:  # the run had finished: the new file is complete JSON, one record per target
            outcomes.add("new")
            assert len(json.loads(data)["targets"]) == 20_000
        for name in leftovers(tmp_path, "windows.json"):
            assert name == "many.csv" or name.startswith(".windows.json."), name
    assert "old" in outcomes


@pytest.mark.parametrize(("signum", "status", "line"), [
    (signal.SIGTERM, EXIT_TERMINATED, "skyplan: terminated (SIGTERM); no output was written"),
    (signal.SIGINT, EXIT_INTERRUPTED, "skyplan: interrupted"),
])
def test_signals_end_the_run_cleanly(tmp_path: Path, signum: int, status: int,
                                     line: str) -> None:
    """SIGTERM (128 + 15) and Ctrl-C (128 + 2), as shells report them."""
    target = tmp_path / "plan.json"
    target.write_bytes(OLD)
    script = textwrap.dedent(f"""
        import sys, time
        from skyplan.render import output
        from skyplan.cli import app, options
        def slow_fsync(fd):
            print("writing", flush=True)
            time.sleep(60)
        output.os.fsync = slow_fsync
        sys.argv = ["skyplan", "clock", "--demo", "-f", "json", "--out", {str(target)!r}]
        app.main()
    """)
    child = subprocess.Popen([PYTHON, "-c", script], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE)
    try:
        assert child.stdout.readline() == b"writing\n"
        child.send_signal(signum)
        _, err = child.communicate(timeout=30)
    finally:
        child.kill()
    assert child.returncode == status
    assert one_error_line(err.decode()) == line
    assert target.read_bytes() == OLD
    assert leftovers(tmp_path, "plan.json") == []


def test_reader_closing_the_pipe_is_status_4_without_a_traceback(tmp_path: Path) -> None:
    """``skyplan windows ... | head -c 100``: the reader stops long before the end."""
    catalogue = tmp_path / "many.csv"
    big_catalogue(catalogue, 5_000)  # about 1 MB of CSV: more than a pipe holds (64 KiB)
    reader = subprocess.Popen(["head", "-c", "100"], stdin=subprocess.PIPE,
                              stdout=subprocess.DEVNULL)
    writer = subprocess.run(
        [PYTHON, "-m", "skyplan", "windows", str(catalogue), "--demo", "-f", "csv"],
        stdout=reader.stdin, stderr=subprocess.PIPE, timeout=120, check=False)
    reader.stdin.close()
    reader.wait(timeout=30)
    err = writer.stderr.decode()
    assert writer.returncode == EXIT_OUTPUT
    assert "closed the pipe" in one_error_line(err)
    assert "Exception ignored" not in err


# ---------------------------------------------------------------------------------------
# Outputs that cannot be written


def test_missing_folder(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    where = tmp_path / "no-such-folder" / "night.json"
    status, out, err = run(capsys, "night", "--demo", "-f", "json", "--out", str(where))
    assert status == EXIT_OUTPUT and out == ""
    assert "does not exist" in one_error_line(err)
    assert not (tmp_path / "no-such-folder").exists()  # never created


def test_path_that_is_a_folder(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    status, _, err = run(capsys, "night", "--demo", "-f", "json", "--out", str(tmp_path))
    assert status == EXIT_OUTPUT
    assert "is a folder" in one_error_line(err)


def test_folder_that_is_a_file(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    plain = tmp_path / "notes.txt"
    plain.write_text("kept\n")
    status, _, err = run(capsys, "night", "--demo", "--out", str(plain / "night.txt"))
    assert status == EXIT_OUTPUT
    assert "is not a folder" in one_error_line(err)
    assert plain.read_text() == "kept\n"


@pytest.mark.parametrize("call", ["replace", "write", "fsync", "mkstemp"])
@pytest.mark.parametrize(("code", "words"), [
    (errno.EACCES, "permission denied"),
    (errno.ENOSPC, "no space left on the device"),
    (errno.EROFS, "read-only file system"),
])
def test_os_failures(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                     monkeypatch: pytest.MonkeyPatch, call: str, code: int, words: str) -> None:
    target = tmp_path / "clock.json"
    target.write_bytes(OLD)

    def refuse(*args, **kwargs):
        raise OSError(code, os.strerror(code))

    if call == "mkstemp":
        monkeypatch.setattr(output.tempfile, "mkstemp", refuse)
    else:
        monkeypatch.setattr(output.os, call, refuse)
    status, out, err = run(capsys, "clock", "--demo", "-f", "json", "--out", str(target))
    assert status == EXIT_OUTPUT and out == ""
    assert one_error_line(err) == f"skyplan: {target}: cannot write ({words})"
    assert target.read_bytes() == OLD
    assert leftovers(tmp_path, "clock.json") == []  # the temporary is removed


def test_short_writes_are_completed(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """os.write may take fewer bytes than offered (POSIX write()); the rest must follow."""
    real_write = os.write
    calls = []

    def dribble(fd, data):
        calls.append(len(data))
        return real_write(fd, bytes(data[:7]))

    monkeypatch.setattr(output.os, "write", dribble)
    payload = bytes(range(256)) * 3
    output.write_atomic(tmp_path / "x.bin", payload)
    assert (tmp_path / "x.bin").read_bytes() == payload
    assert len(calls) == -(-len(payload) // 7)


def test_names_are_taken_as_given(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """No folder creation, no ``~`` expansion, no suffix: the name is used exactly."""
    monkeypatch.chdir(tmp_path)
    output.write_atomic("~", b"tilde\n")
    output.write_atomic("plan", b"plain\n")
    assert (tmp_path / "~").read_bytes() == b"tilde\n"
    assert (tmp_path / "plan").read_bytes() == b"plain\n"
    with pytest.raises(OutputError, match="does not exist"):
        output.write_atomic("a/b/c.json", b"")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan", "~"]


def test_a_link_is_kept_and_its_file_replaced(tmp_path: Path) -> None:
    real = tmp_path / "real.json"
    real.write_bytes(OLD)
    link = tmp_path / "latest.json"
    link.symlink_to(real)
    output.write_atomic(link, b"new\n")
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert real.read_bytes() == b"new\n"


def test_a_device_is_written_in_place_not_replaced(tmp_path: Path) -> None:
    before = os.stat(os.devnull)
    output.write_atomic(os.devnull, b"discarded\n")
    after = os.stat(os.devnull)
    assert (after.st_ino, after.st_rdev, after.st_mode) == (
        before.st_ino, before.st_rdev, before.st_mode)


def test_empty_or_nul_name(capsys: pytest.CaptureFixture[str]) -> None:
    for name in ("", "  ", "a\x00b"):
        status, _, err = run(capsys, "clock", "--demo", "--out", name)
        assert status == 2
        assert "not a usable file name" in one_error_line(err)


# ---------------------------------------------------------------------------------------
# Damaged bundled data


@pytest.fixture
def fresh_data_caches():
    """Forget the loaded ephemeris and IERS table before and after the test."""

    def clear() -> None:
        ephemeris.planets.cache_clear()
        ephemeris.timescale.cache_clear()
        bodies.observer.cache_clear()
        timescales.earth_orientation.cache_clear()
        timescales._ut1_minus_tai_nodes.cache_clear()

    clear()
    yield
    clear()


def real_de421() -> bytes:
    return (ephemeris.skyfield_data_dir() / "de421.bsp").read_bytes()


@pytest.mark.parametrize("damage", ["cut-1-byte", "cut-half", "cut-to-header", "zeros-inside",
                                    "noise-inside", "empty"])
def test_damaged_ephemeris_is_named(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                    monkeypatch: pytest.MonkeyPatch, fresh_data_caches,
                                    damage: str) -> None:
    data = bytearray(real_de421())
    middle = len(data) // 2
    if damage == "cut-1-byte":
        data = data[:-1]
    elif damage == "cut-half":
        data = data[:middle]
    elif damage == "cut-to-header":
        data = data[:3000]
    elif damage == "zeros-inside":
        data[middle:middle + 4096] = bytes(4096)
    elif damage == "noise-inside":
        data[middle:middle + 4096] = os.urandom(4096)
    else:
        data = bytearray()
    (tmp_path / "de421.bsp").write_bytes(bytes(data))
    monkeypatch.setattr(ephemeris, "skyfield_data_dir", lambda: tmp_path)
    status, out, err = run(capsys, "night", "--demo", "-f", "json")
    assert status == EXIT_FAILURE and out == ""
    line = one_error_line(err)
    assert str(tmp_path / "de421.bsp") in line and "damaged" in line
    assert "reinstall skyfield-data" in line


def test_missing_ephemeris_is_named(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                    monkeypatch: pytest.MonkeyPatch, fresh_data_caches) -> None:
    monkeypatch.setattr(ephemeris, "skyfield_data_dir", lambda: tmp_path)
    status, _, err = run(capsys, "night", "--demo")
    assert status == EXIT_FAILURE
    assert "missing" in one_error_line(err) and str(tmp_path) in err


def test_intact_copy_of_the_ephemeris_passes_the_checks(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        fresh_data_caches) -> None:
    shutil.copyfile(ephemeris.skyfield_data_dir() / "de421.bsp", tmp_path / "de421.bsp")
    monkeypatch.setattr(ephemeris, "skyfield_data_dir", lambda: tmp_path)
    status, out, _ = run(capsys, "night", "--demo", "-f", "json")
    assert status == 0 and json.loads(out)


def finals_lines() -> list[str]:
    return ephemeris.iers_finals_path().read_text(encoding="ascii").splitlines(keepends=True)


def _cut_inside_ut1(lines: list[str]) -> str:
    # columns 59-68 hold UT1−UTC (IERS ReadMe.finals2000A); cut the 5001st record at column 63
    return "".join(lines[:5000]) + lines[5000][:63]


def _digit_changed(lines: list[str]) -> str:
    changed = list(lines)
    changed[4000] = changed[4000][:59] + "9" + changed[4000][60:]  # UT1−UTC now near 9 s
    return "".join(changed)


def _day_removed(lines: list[str]) -> str:
    return "".join(lines[:3000] + lines[3001:])


def _binary(lines: list[str]) -> str:
    return "".join(lines[:100]) + "\x00\x7f" * 300 + "".join(lines[101:])


@pytest.mark.parametrize("damage", [_cut_inside_ut1, _digit_changed, _day_removed, _binary,
                                    lambda lines: "", lambda lines: "not a table\n"],
                         ids=["cut", "digit", "gap", "binary", "empty", "text"])
def test_damaged_iers_table_is_named(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                     monkeypatch: pytest.MonkeyPatch, fresh_data_caches,
                                     damage) -> None:
    table = tmp_path / "finals2000A.all"
    table.write_text(damage(finals_lines()), encoding="latin-1")
    monkeypatch.setattr(timescales, "iers_finals_path", lambda: table)
    status, out, err = run(capsys, "clock", "--demo", "--at", "2026-12-18T21:00Z")
    assert status == EXIT_FAILURE and out == ""
    line = one_error_line(err)
    assert str(table) in line and "reinstall astropy-iers-data" in line


def test_iers_table_cut_at_a_line_end_is_a_shorter_table(
        tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch,
        fresh_data_caches) -> None:
    """Whole lines only: a valid table that ends earlier, and the notice says where."""
    lines = finals_lines()
    table = tmp_path / "finals2000A.all"
    table.write_text("".join(lines[:12000]), encoding="ascii")  # 12000 days from 1973-01-02
    monkeypatch.setattr(timescales, "iers_finals_path", lambda: table)
    status, _, err = run(capsys, "clock", "--demo", "--at", "2026-12-18T21:00Z")
    assert status == 0
    # the last kept record's own date, columns 1-6 (YYMMDD, IERS ReadMe.finals2000A)
    yy, mm, dd = (int(lines[11999][k:k + 2]) for k in (0, 2, 4))
    assert f"it ends {2000 + yy:04d}-{mm:02d}-{dd:02d}" in err


# ---------------------------------------------------------------------------------------
# Cut catalogues


def test_catalogue_cut_inside_a_utf8_character(tmp_path: Path,
                                               capsys: pytest.CaptureFixture[str]) -> None:
    # "é" is the two bytes C3 A9 in UTF-8 (RFC 3629); keep only the first
    path = tmp_path / "cut.csv"
    path.write_bytes("name,ra,dec\nCafé,10.0,20.0\nRivi".encode() + "è".encode()[:1])
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    line = one_error_line(err)
    assert f"{path}:3" in line and "cut short" in line


def test_catalogue_cut_inside_a_row_with_a_missing_field(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "cut.csv"
    text = DEMO_CATALOG.read_text(encoding="utf-8")
    last = text.rstrip("\n").rsplit("\n", 1)[1]  # "Linnet Ring,09h48m08.9s,+55:36:39,..."
    cut = text.rstrip("\n")[: len(text.rstrip("\n")) - len(last) + len("Linnet Ring,09h4")]
    path.write_text(cut, encoding="utf-8")
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    line = err.strip().splitlines()[-1]
    assert f"{path}:{cut.count(chr(10)) + 1}" in line and "Dec is empty" in line


def test_catalogue_cut_inside_the_last_field_is_flagged(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A cut that still parses ("+55:3" is a valid Dec) is not silent: a note names the row."""
    path = tmp_path / "cut.csv"
    text = DEMO_CATALOG.read_text(encoding="utf-8").rstrip("\n")
    cut = text[: text.rindex("+55:36:39") + len("+55:3")]
    path.write_text(cut, encoding="utf-8")
    status, _, err = run(capsys, "windows", str(path), "--demo", "-f", "csv")
    assert status == 0
    last_line = cut.count("\n") + 1
    assert f"last row (line {last_line}) is incomplete" in err


# ---------------------------------------------------------------------------------------
# Hostile files

VOTABLE_BODY = """<VOTABLE version="1.4" xmlns="http://www.ivoa.net/xml/VOTable/v1.3">
<RESOURCE><TABLE>
<FIELD name="name" datatype="char" arraysize="*"/>
<FIELD name="ra" datatype="double" unit="deg"/>
<FIELD name="dec" datatype="double" unit="deg"/>
<DATA><TABLEDATA>
<TR><TD>&xxe;</TD><TD>10</TD><TD>20</TD></TR>
</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>
"""


def xml_variants(secret: Path) -> dict[str, bytes]:
    """An external entity (XXE) and nested internal entities ("billion laughs"), plain,
    behind a long comment, and in UTF-16 (XML 1.0 allows both before the DOCTYPE)."""
    external = f'<!DOCTYPE VOTABLE [<!ENTITY xxe SYSTEM "file://{secret}">]>\n'
    laughs = ('<!DOCTYPE VOTABLE [<!ENTITY a "ha"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;">'
              '<!ENTITY xxe "&b;&b;&b;&b;&b;&b;&b;&b;">]>\n')
    head = '<?xml version="1.0"?>\n'
    padding = "<!--" + "x" * 100_000 + "-->\n"
    return {
        "external": (head + external + VOTABLE_BODY).encode(),
        "external-late": (head + padding + external + VOTABLE_BODY).encode(),
        "external-utf16": ('<?xml version="1.0" encoding="UTF-16"?>\n' + external
                           + VOTABLE_BODY).encode("utf-16"),
        "laughs-late": (head + padding + laughs + VOTABLE_BODY).encode(),
        "passwd": (head + '<!DOCTYPE VOTABLE [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>\n'
                   + VOTABLE_BODY).encode(),
    }


@pytest.mark.parametrize("variant", ["external", "external-late", "external-utf16",
                                     "laughs-late", "passwd"])
def test_votable_with_entities_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                          variant: str) -> None:
    secret = tmp_path / "secret.txt"
    secret.write_text("MARKER-6f1d-not-to-be-read\n")
    path = tmp_path / "targets.vot"
    path.write_bytes(xml_variants(secret)[variant])
    for argv in (["windows", str(path), "--demo", "-f", "json"],
                 ["convert", "--demo", "--at", "2026-12-18T21:00Z", str(path)]):
        status, out, err = run(capsys, *argv)
        assert status == 2 and out == ""
        line = one_error_line(err)
        assert line == f"skyplan: {path}: XML with a DOCTYPE or ENTITY declaration is not " \
                       "read; remove the declaration"
        assert "MARKER" not in out + err and "root:" not in out + err and "haha" not in err


def test_over_long_fields_are_named(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                    monkeypatch: pytest.MonkeyPatch) -> None:
    from skyplan.inputs import delimited

    monkeypatch.setattr(delimited, "MAX_FIELD_CHARS", 12)
    path = tmp_path / "long.csv"
    path.write_text("name,ra,dec,notes\nShort,10,20,fine\nLong,10,20," + "n" * 40 + "\n")
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    assert one_error_line(err) == (f"skyplan: {path}:3, field 'notes': field is "
                                   "40 characters long; at most 12 are read")
    status, out, err = run(capsys, "windows", str(path), "--demo", "--skip-bad-rows",
                           "-f", "json")
    assert status == 0 and [r["name"] for r in json.loads(out)["targets"]] == ["Short"]
    assert f"skipped 1 malformed row(s) (first: {path}:3" in err  # never dropped silently


@pytest.mark.parametrize("quoted", [False, True])
def test_too_many_rows_are_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                   monkeypatch: pytest.MonkeyPatch, quoted: bool) -> None:
    from skyplan.inputs import delimited

    monkeypatch.setattr(delimited, "MAX_ROWS", 3)
    path = tmp_path / "rows.csv"
    name = '"T{}"' if quoted else "T{}"
    path.write_text("name,ra,dec\n" + "".join(f"{name.format(i)},10,20\n" for i in range(5)))
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    assert one_error_line(err) == f"skyplan: {path}:5: more than 3 rows; split the catalogue"


def test_too_many_rows_in_a_votable(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                    monkeypatch: pytest.MonkeyPatch) -> None:
    from astropy.table import Table

    from skyplan.inputs import delimited

    monkeypatch.setattr(delimited, "MAX_ROWS", 3)
    path = tmp_path / "rows.vot"
    Table({"name": [f"T{i}" for i in range(5)], "ra": [10.0] * 5, "dec": [20.0] * 5}).write(
        path, format="votable")
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    assert one_error_line(err) == f"skyplan: {path}: more than 3 rows; split the catalogue"


def test_oversized_file_is_refused_before_reading(
        tmp_path: Path, capsys: pytest.CaptureFixture[str],
        monkeypatch: pytest.MonkeyPatch) -> None:
    from skyplan.inputs import delimited

    monkeypatch.setattr(delimited, "MAX_FILE_BYTES", 100)
    path = tmp_path / "big.csv"
    path.write_text("name,ra,dec\n" + "T,10,20\n" * 20)
    status, _, err = run(capsys, "windows", str(path), "--demo")
    assert status == 2
    assert "at most 100 bytes" in one_error_line(err)
