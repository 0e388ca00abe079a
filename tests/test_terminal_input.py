"""Catalogues on standard input for convert and next; names that do not resolve skipped with
--skip-bad-rows (windows, plan, next, convert and the API's read_targets)."""

from __future__ import annotations

import io
import json
import sys
import tempfile
import warnings
from pathlib import Path

import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline

configure_astropy_offline()

AT = "2026-12-18T21:00:00Z"
FIXED = "name,ra,dec\nOne,83.82,-5.39\nTwo,279.23,38.78\n"
# Lines 3 and 5 hold names that resolve nowhere; 'Veag' is one letter pair from Vega.
UNRESOLVED = "name,ra,dec\nM42,,\nNoSuchThing,,\nPlain,10,20\nVeag,,\n"


def run(capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, *argv: str,
        stdin: str | None = None) -> tuple[int, str, str]:
    """Run ``skyplan ARGV`` (``stdin``: what standard input holds); (status, stdout, stderr)."""
    if stdin is not None:  # a real file: the reader asks standard input for its descriptor
        piped = tempfile.TemporaryFile()
        piped.write(stdin.encode())
        piped.seek(0)
        monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(piped))
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def _galactic(rows: list[dict]) -> dict[str, tuple[float, float]]:
    return {r["name"]: (r["l_deg"], r["b_deg"]) for r in rows}


@pytest.mark.parametrize("kind", ["csv", "tsv"])
def test_convert_reads_standard_input(capsys, monkeypatch, tmp_path: Path, kind: str) -> None:
    from astropy.coordinates import SkyCoord

    text = FIXED if kind == "csv" else FIXED.replace(",", "\t")
    status, out, err = run(capsys, monkeypatch, "convert", "-", "--input-format", kind,
                           "--to", "galactic", "-f", "json", stdin=text)
    assert status == 0, err
    piped = _galactic(json.loads(out))
    path = tmp_path / f"list.{kind}"
    path.write_text(text)
    status, out, err = run(capsys, monkeypatch, "convert", str(path), "--to", "galactic",
                           "-f", "json")
    assert status == 0, err
    assert piped == _galactic(json.loads(out))
    # Reference: astropy's ICRS -> Galactic transformation of the same positions; astropy
    # reaches the galactic frame through FK5 J2000, 0.025" from ours (see test_frames).
    for name, ra, dec in (("One", 83.82, -5.39), ("Two", 279.23, 38.78)):
        ref = SkyCoord(ra=ra, dec=dec, unit="deg", frame="icrs").galactic
        ours = SkyCoord(l=piped[name][0], b=piped[name][1], unit="deg", frame="galactic")
        assert ours.separation(ref).arcsec < 0.04


def test_convert_standard_input_needs_a_format(capsys, monkeypatch) -> None:
    status, _, err = run(capsys, monkeypatch, "convert", "-", "--to", "galactic", stdin=FIXED)
    assert status == 2 and "--input-format" in err and "Traceback" not in err


def test_input_format_is_only_for_catalogues(capsys, monkeypatch) -> None:
    status, _, err = run(capsys, monkeypatch, "convert", "10", "20", "--to", "galactic",
                         "--input-format", "csv")
    assert status == 2 and "--input-format" in err and "not positions or names" in err


def test_next_reads_standard_input(capsys, monkeypatch, tmp_path: Path) -> None:
    argv = ("--demo", "--at", AT, "-f", "json")
    path = tmp_path / "list.csv"
    path.write_text(FIXED)
    status_file, out_file, err = run(capsys, monkeypatch, "next", str(path), *argv)
    assert status_file in (0, 3), err
    status, out, err = run(capsys, monkeypatch, "next", "-", "--input-format", "csv", *argv,
                           stdin=FIXED)
    assert status == status_file, err
    piped, named = json.loads(out), json.loads(out_file)
    assert piped["status"] == named["status"]
    assert piped["visit"] == named["visit"] and piped["visit"]["name"] in ("One", "Two")


def _skip_notes(err: str, source: str) -> list[str]:
    return [line for line in err.splitlines() if "note: skipped:" in line and source in line]


def _check_skip_notes(err: str, source: str) -> None:
    notes = _skip_notes(err, source)
    assert len(notes) == 2, err
    assert f"{source}:3" in notes[0] and "'NoSuchThing'" in notes[0]
    assert f"{source}:5" in notes[1] and "'Veag'" in notes[1] and "Vega" in notes[1]


COMMANDS = {
    "windows": ("windows", "--demo", "-f", "json"),
    "plan": ("plan", "--demo", "-f", "json"),
    "next": ("next", "--demo", "--at", AT, "-f", "json"),
    "convert": ("convert", "--to", "galactic", "-f", "json"),
}


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_unresolved_names_stop_without_the_flag(capsys, monkeypatch, tmp_path: Path,
                                                 command: str) -> None:
    path = tmp_path / "names.csv"
    path.write_text(UNRESOLVED)
    name, *rest = COMMANDS[command]
    status, out, err = run(capsys, monkeypatch, name, str(path), *rest)
    assert status == 2 and out == ""
    lines = err.splitlines()
    assert lines[0] == f"skyplan: 2 problems in {path}:"
    assert f"{path}:3" in lines[1] and "'NoSuchThing'" in lines[1]
    assert f"{path}:5" in lines[2] and "closest known names: Vega" in lines[2]


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_unresolved_names_skipped_with_the_flag(capsys, monkeypatch, tmp_path: Path,
                                                command: str) -> None:
    path = tmp_path / "names.csv"
    path.write_text(UNRESOLVED)
    name, *rest = COMMANDS[command]
    status, out, err = run(capsys, monkeypatch, name, str(path), *rest, "--skip-bad-rows")
    assert status in (0, 3), err
    _check_skip_notes(err, str(path))
    assert "NoSuchThing" not in out and "Veag" not in out
    if command == "convert":
        assert sorted(r["name"] for r in json.loads(out)) == ["M42", "Plain"]
    if command == "windows":
        assert "M42" in out and "Plain" in out


def test_unresolved_names_skipped_from_standard_input(capsys, monkeypatch) -> None:
    status, out, err = run(capsys, monkeypatch, "convert", "-", "--input-format", "csv",
                           "--to", "galactic", "-f", "json", "--skip-bad-rows", stdin=UNRESOLVED)
    assert status == 0, err
    _check_skip_notes(err, "<stdin>")
    assert [r["name"] for r in json.loads(out)] == ["M42", "Plain"]


def test_read_targets_skips_unresolved_names(tmp_path: Path) -> None:
    import skyplan

    path = tmp_path / "names.csv"
    path.write_text("name,ra,dec,priority\nM42,,,3\nNoSuchThing,,,9\nPlain,10,20,5\nVeag,,,7\n")
    with pytest.raises(skyplan.InputError):
        skyplan.read_targets(path)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        got = skyplan.read_targets(path, skip_bad_rows=True)
    assert list(got.names) == ["M42", "Plain"]
    # Priorities follow their rows once the unresolved ones are dropped.
    assert list(got.priority) == [3, 5]
    texts = [str(w.message) for w in caught if issubclass(w.category, skyplan.SkyplanWarning)]
    assert any(f"{path}:3" in t and "NoSuchThing" in t for t in texts)
    assert any(f"{path}:5" in t and "Vega" in t for t in texts)


def test_only_unresolved_names_leave_an_empty_list(tmp_path: Path) -> None:
    import skyplan

    path = tmp_path / "names.csv"
    path.write_text("name,ra,dec\nNoSuchThing,,\n")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        got = skyplan.read_targets(path, skip_bad_rows=True)
    assert len(got) == 0
    assert any("holds no targets" in str(w.message) for w in caught)
