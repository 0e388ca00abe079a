"""Fuzzing the command line: random and hostile option values and input files.

Whatever is given, a run of ``skyplan`` ends with a documented exit status (0 ok, 2 bad input,
3 nothing observable, 4 output not written — ``skyplan/errors.py``), every line on stderr
starts with ``skyplan:``, no traceback is shown and no library warning reaches the user.
Status 1 (an internal fault) is a bug and fails these tests.

Each example runs the real command in-process through ``skyplan.cli.app.main``; examples are
few and deadlines generous so the file stays within a minute on a small, busy machine.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import re
import subprocess
import sys
import time
import warnings
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.inputs import scenario

configure_astropy_offline()

ALLOWED = {0, 2, 3, 4}
# SKYPLAN_FUZZ_SCALE=20 runs twenty times as many examples (a deeper search, minutes long).
SCALE = max(1, int(os.environ.get("SKYPLAN_FUZZ_SCALE", "1")))
FAST = settings(
    max_examples=12 * SCALE,
    deadline=20_000,
    derandomize=SCALE == 1,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
DEMO_CATALOG = str(scenario.demo_path(scenario.DEMO_CATALOG))
DEMO_SITES = str(scenario.demo_path("sites.toml"))


def run(argv: list[str]) -> tuple[int, bytes, str, list[warnings.WarningMessage]]:
    """Run ``skyplan ARGV`` in-process: (exit status, stdout bytes, stderr text, warnings)."""
    out = io.TextIOWrapper(io.BytesIO(), encoding="utf-8")
    err = io.StringIO()
    saved = sys.stdout
    status: int | str | None = 0
    with warnings.catch_warnings(record=True) as caught, contextlib.redirect_stderr(err):
        warnings.simplefilter("always")
        sys.stdout = out
        try:
            app.main(argv)
        except SystemExit as exc:
            status = exc.code
        finally:
            sys.stdout = saved
    out.flush()
    return (status if isinstance(status, int) else 1), out.buffer.getvalue(), err.getvalue(), \
        list(caught)


def check_outcome(argv: list[str]) -> tuple[int, bytes, str]:
    """Run and check the contract; return (status, stdout, stderr) for further checks."""
    status, out, err, caught = run(argv)
    shown = f"skyplan {argv!r} -> {status}\n{err}"
    assert status in ALLOWED, shown
    assert "Traceback" not in err and b"Traceback" not in out, shown
    for line in err.splitlines():
        assert line.startswith("skyplan:"), shown
    leaked = [w for w in caught if not issubclass(w.category, DeprecationWarning)]
    assert not leaked, f"{shown}\nwarnings: {[str(w.message) for w in leaked]}"
    # a library warning nobody handled is still shown, as a note naming its class: none
    # should get that far
    assert not re.search(r"^skyplan: note: \w*Warning:", err, re.MULTILINE), shown
    if status != 0:
        assert err.strip(), f"{shown}\nfailed without saying why"
    return status, out, err


# ---------------------------------------------------------------------------------------
# Strategies: plausible values, boundary values and hostile text

HOSTILE = st.sampled_from([
    "", " ", "-", "--", ",", ",,", "..", ":", "nan", "NaN", "inf", "-inf", "1e400", "-1e400",
    "1e-400", "0", "-0", "1e308", "9" * 400, "\x00", "\x1b[31m", "\u202e", "é", "𝔸", "🌙",
    "'", '"', "\\", "/", "../../etc/passwd", "/dev/null", "%s%n", "{}", "[]", "null", "true",
    "0x10", "1_000", "٣", "½", "∞", "−5", "2026-02-30", "24:00", "99:99-00:00",
])
NUMBER_TEXT = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-10**6, 10**6).map(str),
    st.floats(-200, 200).map(lambda v: f"{v:.3f}"),
)
ANY_TEXT = st.one_of(HOSTILE, NUMBER_TEXT, st.text(max_size=40))


def site_text() -> st.SearchStrategy[str]:
    coord = st.one_of(st.floats(-100, 100), st.sampled_from([90.0, -90.0, 180.0, -180.0, 0.0]))
    lon = st.one_of(st.floats(-400, 400), st.sampled_from([180.0, -180.0, 360.0, 0.0]))
    elev = st.one_of(st.none(), st.floats(-1000, 10000), st.sampled_from([-500.0, 9000.0]))
    spec = st.builds(
        lambda a, b, c: f"{a:g},{b:g}" + ("" if c is None else f",{c:g}"), coord, lon, elev)
    return st.one_of(spec, ANY_TEXT, st.just(scenario.DEMO_SITE))


def instant_text() -> st.SearchStrategy[str]:
    stamp = st.datetimes(
        min_value=__import__("datetime").datetime(1700, 1, 1),
        max_value=__import__("datetime").datetime(2200, 12, 31),
    )
    suffix = st.sampled_from(["", "Z", "+00:00", "-05:30", "+14:00", "-12:00", "+25:00"])
    iso = st.builds(lambda t, s: t.isoformat(timespec="seconds") + s, stamp, suffix)
    return st.one_of(iso, st.just("now"), ANY_TEXT)


def date_text() -> st.SearchStrategy[str]:
    day = st.dates(
        min_value=__import__("datetime").date(1850, 1, 1),
        max_value=__import__("datetime").date(2100, 12, 31),
    )
    return st.one_of(day.map(str), st.sampled_from(["today", "tonight", "1899-12-31",
                                                     "2053-10-01", "2053-09-29"]), ANY_TEXT)


def range_text() -> st.SearchStrategy[str]:
    pair = st.builds(lambda a, b: f"{a:g},{b:g}", st.floats(-100, 100), st.floats(-100, 100))
    return st.one_of(pair, ANY_TEXT)


def between_text() -> st.SearchStrategy[str]:
    clock = st.builds(lambda h, m: f"{h:02d}:{m:02d}", st.integers(0, 25), st.integers(0, 61))
    return st.one_of(st.builds(lambda a, b: f"{a}-{b}", clock, clock), ANY_TEXT,
                     st.sampled_from(["20:00+01:00-22:00", "20-22", "2000-0300", "20:00:00.5-1"]))


def fmt_text(valid: list[str]) -> st.SearchStrategy[str]:
    return st.one_of(st.sampled_from(valid), st.sampled_from(["", "JSON", " csv ", "xml"]),
                     ANY_TEXT)


def maybe(flag: str, values: st.SearchStrategy[str]) -> st.SearchStrategy[list[str]]:
    return st.one_of(st.just([]), values.map(lambda v: [flag, v]))


def options(*pairs: tuple[str, st.SearchStrategy[str]]) -> st.SearchStrategy[list[str]]:
    return st.tuples(*(maybe(flag, values) for flag, values in pairs)).map(
        lambda parts: [item for part in parts for item in part])


SITE_OR_DEMO = st.one_of(st.just(["--demo"]), site_text().map(lambda s: ["--site", s]),
                         st.tuples(st.just("--demo"), st.just("--site"), site_text()).map(list))
LIMITS = options(
    ("--min-alt", st.one_of(NUMBER_TEXT, ANY_TEXT)),
    ("--max-airmass", st.one_of(NUMBER_TEXT, ANY_TEXT)),
    ("--dark", st.one_of(st.sampled_from(["civil", "nautical", "astronomical", "none", "-9"]),
                         NUMBER_TEXT, ANY_TEXT)),
    ("--moon-gap", NUMBER_TEXT),
    ("--sun-gap", NUMBER_TEXT),
    ("--ha-range", range_text()),
    ("--dec-range", range_text()),
    ("--between", between_text()),
    ("--airmass-model", st.one_of(st.sampled_from(["kasten-young", "pickering", "secz"]),
                                  ANY_TEXT)),
    ("--refraction", st.one_of(st.sampled_from(["bennett", "erfa"]), ANY_TEXT)),
)


# ---------------------------------------------------------------------------------------
# Commands with random options


@FAST
@given(site=SITE_OR_DEMO, opts=options(("--at", instant_text()),
                                        ("--format", fmt_text(["table", "json"]))))
def test_clock(site: list[str], opts: list[str]) -> None:
    check_outcome(["clock", *site, *opts])


@FAST
@given(
    site=SITE_OR_DEMO,
    position=st.one_of(
        st.lists(ANY_TEXT, min_size=0, max_size=3),
        st.tuples(NUMBER_TEXT, NUMBER_TEXT).map(list),
        st.sampled_from([["M 42"], ["Vega", "Deneb"], ["Jupiter"], ["00:00:00", "+90:00:00"],
                         ["360", "-90"], ["0", "0"], ["23:59:59.999", "-89:59:59.9"]]),
    ),
    opts=options(
        ("--from", st.sampled_from(["icrs", "fk5", "apparent", "horizon", "ecliptic",
                                    "galactic", "bogus", ""])),
        ("--to", st.sampled_from(["icrs", "fk5", "apparent", "horizon", "ecliptic",
                                  "galactic", "bogus", ""])),
        ("--equinox", st.one_of(st.sampled_from(["J2000", "J1000", "J3000", "B1950", "J"]),
                                ANY_TEXT)),
        ("--at", instant_text()),
        ("--refraction", st.sampled_from(["bennett", "erfa", "none", "x"])),
        ("--format", fmt_text(["table", "json", "ndjson", "csv"])),
    ),
)
def test_convert(site: list[str], position: list[str], opts: list[str]) -> None:
    check_outcome(["convert", *site, *opts, "--", *position])


@FAST
@given(site=SITE_OR_DEMO, opts=options(("--date", date_text()),
                                        ("--format", fmt_text(["table", "json"]))))
def test_night(site: list[str], opts: list[str]) -> None:
    check_outcome(["night", *site, *opts])


@settings(FAST, max_examples=20 * SCALE)
@given(site=SITE_OR_DEMO, limits=LIMITS,
       opts=options(("--date", date_text()),
                    ("--format", fmt_text(["table", "json", "ndjson", "csv"]))))
def test_windows(site: list[str], limits: list[str], opts: list[str]) -> None:
    check_outcome(["windows", DEMO_CATALOG, *site, *limits, *opts])


@settings(FAST, max_examples=6 * SCALE)
@given(
    limits=LIMITS,
    opts=options(
        ("--exposure", st.one_of(NUMBER_TEXT, ANY_TEXT)),
        ("--setup", NUMBER_TEXT),
        ("--repeats", st.one_of(st.integers(-3, 200).map(str), ANY_TEXT)),
        ("--spacing", NUMBER_TEXT),
        ("--slew-rate", st.one_of(range_text(), NUMBER_TEXT)),
        ("--settle", NUMBER_TEXT),
        ("--priority-cut", st.one_of(st.integers(-5, 10).map(str), ANY_TEXT)),
        ("--format", fmt_text(["table", "json", "ndjson", "csv"])),
    ),
)
def test_plan(limits: list[str], opts: list[str]) -> None:
    check_outcome(["plan", "--demo", "--method", "dispatch", *limits, *opts])


@FAST
@given(names=st.lists(st.one_of(ANY_TEXT, st.sampled_from(
    ["M 31", "NGC 7000", "IC 434", "HIP 27989", "Polaris", "Moon", "Sun", "Pluto", "M 0",
     "NGC 99999", "HIP 0", "HIP -1"])), min_size=1, max_size=3),
       at=maybe("--at", instant_text()))
def test_find(names: list[str], at: list[str]) -> None:
    check_outcome(["find", *at, "--", *names])


@FAST
@given(name=st.one_of(site_text(), ANY_TEXT),
       fmt=maybe("--format", fmt_text(["table", "json", "toml"])),
       demo=st.booleans())
def test_sites_show(name: str, fmt: list[str], demo: bool) -> None:
    check_outcome(["sites", "show", *(["--demo"] if demo else []), *fmt, "--", name])


# ---------------------------------------------------------------------------------------
# Random bytes as input files

CATALOG_SUFFIXES = [".csv", ".tsv", ".txt", ".ecsv", ".vot", ".xml", ".fits"]
DEMO_HEADER = b"name,ra,dec,priority,exposure\n"


def file_bytes() -> st.SearchStrategy[bytes]:
    """Random bytes, random lines of catalogue-like text, and the demo cut at a random place."""
    demo = Path(DEMO_CATALOG).read_bytes()
    pieces = st.sampled_from([b",", b"\n", b'"', b"\r", b"#", b"\t", b" ", b"\xff", b"\xc3",
                              b"nan", b"1e999", b"-", b":", b"90", b"360", b"name", b"ra",
                              b"dec", b"<", b">", b"<!ENTITY", b"\x00"])
    lines = st.lists(st.one_of(pieces, st.binary(max_size=8)), max_size=60).map(b"".join)
    return st.one_of(st.binary(max_size=400), lines.map(lambda b: DEMO_HEADER + b),
                     st.integers(0, len(demo)).map(lambda k: demo[:k]))


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return tmp_path_factory.mktemp("fuzzfiles")


@settings(FAST, max_examples=25 * SCALE)
@given(data=file_bytes(), suffix=st.sampled_from(CATALOG_SUFFIXES), skip=st.booleans())
def test_catalogue_bytes_windows(folder: Path, data: bytes, suffix: str, skip: bool) -> None:
    path = folder / f"targets{suffix}"
    path.write_bytes(data)
    check_outcome(["windows", str(path), "--demo", "-f", "csv",
                   *(["--skip-bad-rows"] if skip else [])])


@settings(FAST, max_examples=10 * SCALE)
@given(data=file_bytes(), suffix=st.sampled_from(CATALOG_SUFFIXES))
def test_catalogue_bytes_convert(folder: Path, data: bytes, suffix: str) -> None:
    path = folder / f"positions{suffix}"
    path.write_bytes(data)
    check_outcome(["convert", "--demo", "--at", "2026-12-18T21:00Z", "-f", "json", str(path)])


def sites_bytes() -> st.SearchStrategy[bytes]:
    demo = Path(DEMO_SITES).read_bytes()
    keys = st.sampled_from([b"latitude", b"longitude", b"elevation", b"zone", b"horizon",
                            b"horizon_file", b"pressure", b"limits", b"default", b"min_alt_deg"])
    values = st.sampled_from([b"1e999", b"nan", b"inf", b'"Mars/Olympus"', b"[]", b"[[0,0]]",
                              b'"../../etc/passwd"', b"-91", b"400", b"true", b'"\\u0000"'])
    edits = st.lists(st.builds(lambda k, v: k + b" = " + v + b"\n", keys, values), max_size=6)
    return st.one_of(
        st.binary(max_size=300),
        st.integers(0, len(demo)).map(lambda k: demo[:k]),
        edits.map(lambda e: b'[site.X]\nlatitude = 1\nlongitude = 2\n' + b"".join(e)),
    )


@settings(FAST, max_examples=20 * SCALE)
@given(data=sites_bytes(), command=st.sampled_from(["check", "list", "show", "night"]))
def test_sites_file_bytes(folder: Path, data: bytes, command: str) -> None:
    path = folder / "sites.toml"
    path.write_bytes(data)
    (folder / "hollowmere-horizon.txt").write_bytes(
        Path(scenario.demo_path("hollowmere-horizon.txt")).read_bytes())
    argv = {
        "check": ["sites", "check", str(path)],
        "list": ["sites", "list", "--sites-file", str(path)],
        "show": ["sites", "show", "X", "--sites-file", str(path)],
        "night": ["night", "--sites-file", str(path), "--date", "2026-12-18"],
    }[command]
    check_outcome(argv)


@settings(FAST, max_examples=12 * SCALE)
@given(data=file_bytes())
def test_horizon_file_bytes(folder: Path, data: bytes) -> None:
    horizon = folder / "fuzz-horizon.txt"
    horizon.write_bytes(data)
    sites_file = folder / "horizon-sites.toml"
    sites_file.write_text(
        '[site.Ridge]\nlatitude = 38.2\nlongitude = -2.9\nelevation = 1300\n'
        'zone = "Europe/Madrid"\nhorizon_file = "fuzz-horizon.txt"\n', encoding="utf-8")
    check_outcome(["windows", DEMO_CATALOG, "--site", "Ridge", "--sites-file", str(sites_file),
                   "--date", "2026-12-18", "-f", "csv"])


def elements_bytes() -> st.SearchStrategy[bytes]:
    # Ceres in the MPCORB format (line layout from the MPC's format description; values from
    # memory, only their shape matters here), cut and spliced at random places.
    ceres = (b"00001    3.34  0.15 K2555 188.70269   73.27343   80.25221   10.58780  0.0794013"
             b"  0.21424651   2.7660512  0 MPO838504  7330 125 1801-2024 0.65 M-v 30k MPCLINUX"
             b"   4000      (1) Ceres              20240913\n")
    spliced = st.tuples(st.integers(0, len(ceres)), st.binary(max_size=12)).map(
        lambda t: ceres[:t[0]] + t[1] + ceres[t[0] + len(t[1]):])
    return st.one_of(st.binary(max_size=300), spliced,
                     st.integers(0, len(ceres)).map(lambda k: ceres[:k]))


@settings(FAST, max_examples=15 * SCALE)
@given(data=elements_bytes(), command=st.sampled_from(["find", "windows"]))
def test_elements_file_bytes(folder: Path, data: bytes, command: str) -> None:
    path = folder / "elements.txt"
    path.write_bytes(data)
    catalog = folder / "ceres.csv"
    catalog.write_text("name,ra,dec\n(1) Ceres,,\n", encoding="utf-8")
    if command == "find":
        argv = ["find", "--elements", str(path), "--at", "2026-12-18T21:00Z", "(1) Ceres"]
    else:
        argv = ["windows", str(catalog), "--demo", "--elements", str(path), "-f", "json"]
    check_outcome(argv)


# ---------------------------------------------------------------------------------------
# Output paths, and every command on the demo with all warnings shown


@settings(FAST, max_examples=10 * SCALE)
@given(name=st.one_of(ANY_TEXT, st.sampled_from(["out.json", "sub/out.json", ".", "..", "",
                                                  "a" * 300, "x\x00y", "/proc/version"])))
def test_out_paths(folder: Path, name: str) -> None:
    status, _, _ = check_outcome(["clock", "--demo", "--at", "2026-12-18T21:00Z",
                                  "-f", "json", "--out", str(folder / name) if name else name])
    assert status in (0, 2, 4)


DEMO_RUNS = [
    ["clock", "--demo", "--at", "2026-12-18T21:00Z"],
    ["convert", "--demo", "--at", "2026-12-18T21:00Z", "--to", "apparent"],
    ["convert", "--demo", "--at", "2026-12-18T21:00Z", "--to", "ecliptic",
     "--ecliptic-of-date"],
    ["night", "--demo"],
    ["windows", "--demo", "-f", "json"],
    ["plan", "--demo", "--method", "dispatch", "-f", "json"],
    ["find", "--at", "2026-12-18T21:00Z", "M 42", "Vega", "Jupiter"],
    ["sites", "list", "--demo"],
    ["sites", "show", "--demo", scenario.DEMO_SITE],
    ["selfcheck", "-f", "json"],
]


@pytest.mark.parametrize("argv", DEMO_RUNS, ids=lambda a: " ".join(a[:2]))
def test_demo_runs_show_no_library_warnings(argv: list[str]) -> None:
    """As ``python -W always -m skyplan ...``: stderr holds only our lines."""
    status, out, _ = check_outcome(argv)
    assert status == 0 and out


def test_environment_is_untouched_by_quiet() -> None:
    """``--quiet`` affects one run only (a cron wrapper may call main() repeatedly)."""
    before = dict(os.environ)
    check_outcome(["clock", "--demo", "--quiet", "--at", "2053-09-01T00:00Z"])
    assert dict(os.environ) == before
    _, _, err = check_outcome(["clock", "--demo", "--at", "2053-09-01T00:00Z"])
    assert "IERS" in err  # the notice is back on the next, non-quiet run


@pytest.mark.parametrize("argv", [["night", "--demo"], ["windows", "--demo", "-f", "json"],
                                  ["chart", "sky", "--demo", "--out", "{folder}/sky.svg"]],
                         ids=["night", "windows", "chart"])
def test_whole_process_with_every_warning_shown(folder: Path, argv: list[str]) -> None:
    """``python -W always -m skyplan``: nothing from the interpreter's final clean-up either
    (an ephemeris file left open shows up only there, as a ResourceWarning)."""
    argv = [a.format(folder=folder) for a in argv]
    done = subprocess.run([sys.executable, "-W", "always", "-m", "skyplan", *argv],
                          capture_output=True, timeout=120, check=False)
    assert done.returncode == 0 and done.stdout
    assert done.stderr.decode() == ""


# ---------------------------------------------------------------------------------------
# Generated sites files and plan files: valid structure with hostile values, broken text,
# deep nesting, huge numbers, odd unicode.  Every run ends 0 or 2 (3 for a night with
# nothing to show is not possible: night always shows the night), quickly, and nothing raw
# that could drive a terminal reaches stdout or stderr.

# Written out here, not imported: C0 (newline excepted) and C1 controls, DEL, line and
# paragraph separators, bidirectional embeddings, overrides and isolates.
RAW = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
ODD_TEXT = st.one_of(
    HOSTILE,
    st.sampled_from(["S\x1b[2J\x1b]0;x\x07", "\u202eevil", "a\u2028b", "x\x85y", "\x9b31m",
                     "tab\there", "bi\u2066di", "Europe/London", "UTC", "Etc/GMT+2",
                     "ridge.txt", "../sites.toml", "/dev/zero", "civil", "nautical"]),
    st.text(max_size=12),
)


def toml_text(text: str, raw: bool) -> str:
    """A TOML basic string: escaped (always valid) or with the characters written raw
    (tomllib refuses some of them: a syntax error, which is bad input too)."""
    return json.dumps(text, ensure_ascii=not raw)


def toml_values() -> st.SearchStrategy[str]:
    scalar = st.one_of(
        st.integers(-10**6, 10**6).map(str),
        st.sampled_from(["9" * 400, "-" + "9" * 5000, "1e999", "-1e999", "inf", "nan",
                         "1e-400", "0x7fffffff", "true", "1979-05-27T07:32:00Z", "[]", "{}"]),
        st.floats(allow_nan=False, allow_infinity=False).map(repr),
        st.tuples(ODD_TEXT, st.booleans()).map(lambda t: toml_text(*t)),
    )
    nested = st.tuples(st.integers(1, 3000), st.sampled_from(["[", "{a = "])).map(
        lambda t: t[1] * t[0] + "1" + ("]" if t[1] == "[" else "}") * t[0])
    pairs = st.lists(st.tuples(st.floats(-400, 400), st.floats(-100, 100)), max_size=5).map(
        lambda ps: "[" + ", ".join(f"[{a!r}, {b!r}]" for a, b in ps) + "]")
    return st.one_of(scalar, nested, pairs)


SITE_FIELDS = ["latitude", "longitude", "elevation", "zone", "pressure", "temperature",
               "humidity", "horizon", "horizon_file"]
LIMIT_FIELDS = ["min_alt_deg", "max_airmass", "dark", "moon_gap_deg", "sun_gap_deg",
                "ha_range_h", "dec_range_deg"]


@st.composite
def sites_documents(draw) -> bytes:
    """A sites file: sites with hostile names and values, then perhaps cut or spliced; one
    in four is a plain valid file (printable unicode names, a default, real zones)."""
    if draw(st.integers(0, 3)) == 0:
        name = draw(st.sampled_from(["ridge", "Hill 2", "Ünïcødé ☾", "𝔸bbey", "مرصد"]))
        zone = draw(st.sampled_from(["", 'zone = "America/Phoenix"', 'zone = "Etc/GMT+2"']))
        return (f"default = {toml_text(name, True)}\n[site.{toml_text(name, True)}]\n"
                f"latitude = {draw(st.floats(-90, 90))!r}\n"
                f"longitude = {draw(st.floats(-180, 180))!r}\n{zone}\n").encode()
    raw = draw(st.booleans())
    names = draw(st.lists(st.one_of(ODD_TEXT, st.just("ridge")), min_size=0, max_size=3))
    lines = []
    if draw(st.booleans()):
        lines.append(f"default = {draw(toml_values())}")
    for name in names:
        key = toml_text(name, raw)
        lines += [f"[site.{key}]", f"latitude = {draw(st.floats(-90, 90))!r}",
                  f"longitude = {draw(st.floats(-180, 180))!r}"]
        for field in draw(st.lists(st.sampled_from(SITE_FIELDS + ["bogus"]), max_size=4,
                                   unique=True)):
            lines.append(f"{field} = {draw(toml_values())}")
        limits = draw(st.lists(st.sampled_from(LIMIT_FIELDS), max_size=3, unique=True))
        if limits:
            lines.append(f"[site.{key}.limits]")
            lines += [f"{field} = {draw(toml_values())}" for field in limits]
    text = ("\n".join(lines) + "\n").encode("utf-8", "surrogatepass")
    cut = draw(st.one_of(st.none(), st.integers(0, len(text))))
    if cut is not None:
        text = text[:cut] + draw(st.binary(max_size=6)) + text[cut + 3:]
    return text


def check_clean(argv: list[str], wanted: set[int]) -> tuple[int, bytes, str]:
    """:func:`check_outcome`, then: a status in ``wanted``, nothing raw printed, quickly."""
    start = time.perf_counter()
    status, out, err = check_outcome(argv)
    elapsed = time.perf_counter() - start
    shown = f"skyplan {argv!r} -> {status}\n{err}"
    assert status in wanted, shown
    assert not RAW.search(out.decode("utf-8", "replace")), f"{shown}\nstdout: {out!r}"
    assert not RAW.search(err), f"{shown}\nstderr: {err!r}"
    assert elapsed < 30.0, f"{shown}\ntook {elapsed:.1f} s"
    return status, out, err


@settings(FAST, max_examples=25 * SCALE, deadline=None)
@given(data=sites_documents())
def test_generated_sites_file_check(folder: Path, data: bytes) -> None:
    path = folder / "generated-sites.toml"
    path.write_bytes(data)
    (folder / "ridge.txt").write_text("0 10\n180 20\n", encoding="utf-8")
    status, out, err = check_clean(["sites", "check", str(path)], {0, 2})
    if status == 2:
        assert str(path) in err, err


@settings(FAST, max_examples=8 * SCALE, deadline=None)
@given(data=sites_documents())
def test_generated_sites_file_night(folder: Path, data: bytes) -> None:
    path = folder / "generated-night-sites.toml"
    path.write_bytes(data)
    check_clean(["night", "--sites-file", str(path), "--date", "2026-12-18"],
                {0, 2})


def json_values(depth: int = 2) -> st.SearchStrategy[object]:
    scalar = st.one_of(st.none(), st.booleans(), st.integers(-10**30, 10**30),
                       st.floats(allow_nan=False, allow_infinity=False), ODD_TEXT)
    return st.recursive(scalar, lambda inner: st.one_of(
        st.lists(inner, max_size=3), st.dictionaries(ODD_TEXT, inner, max_size=3)),
        max_leaves=8)


@st.composite
def plan_documents(draw) -> bytes:
    """A plan file: the shape ``plan --format json`` writes, with hostile values, perhaps
    cut or spliced."""
    name = draw(ODD_TEXT)
    start = draw(st.sampled_from(["2026-12-18T21:00:00-07:00", "2026-12-18T21:00:00Z",
                                  "not a time", "2026-02-30T00:00:00Z"]))
    observation = {"name": name, "start": start, "end": "2026-12-18T21:30:00-07:00",
                   "ra_deg": draw(st.one_of(st.floats(-10, 370), json_values())),
                   "dec_deg": draw(st.one_of(st.floats(-100, 100), json_values()))}
    site = draw(st.one_of(
        st.fixed_dictionaries({"name": ODD_TEXT, "lat_deg": st.floats(-100, 100),
                               "lon_deg": st.floats(-200, 400),
                               "zone": st.one_of(st.sampled_from(["America/Phoenix", "UTC",
                                                                  ""]), ODD_TEXT)}),
        json_values()))
    doc = {"site": site, "night": {"date": draw(st.sampled_from(["2026-12-18", "x"]))},
           "observations": draw(st.lists(st.one_of(st.just(observation), json_values()),
                                         max_size=3)),
           "limits": draw(json_values())}
    text = json.dumps(doc, ensure_ascii=draw(st.booleans()), allow_nan=True).encode(
        "utf-8", "surrogatepass")
    cut = draw(st.one_of(st.none(), st.integers(0, len(text))))
    if cut is not None:
        text = text[:cut] + draw(st.binary(max_size=6)) + text[cut + 3:]
    return text


@settings(FAST, max_examples=10 * SCALE, deadline=None)
@given(data=plan_documents())
def test_generated_plan_file_chart(folder: Path, data: bytes) -> None:
    path = folder / "generated-plan.json"
    path.write_bytes(data)
    check_clean(["chart", "altitude", "--plan", str(path), "--sites-file", DEMO_SITES,
                 "--out", str(folder / "generated-chart.svg")], {0, 2})
