"""Worker processes (:mod:`skyplan.parallel`): a run that uses them writes byte for byte what
one process writes, reports the same notices in the same order, and turns a worker's error
or death into the usual one line and exit status.

The size thresholds are lowered so that a 3,000-target catalogue is cut into several blocks
and computed by two workers; the reference is the same run with ``SKYPLAN_WORKERS=1`` and,
independently, the whole result encoded at once in this process.
"""

from __future__ import annotations

import datetime as dt
import errno
import os
import pickle
from pathlib import Path

import numpy as np
import pytest

from skyplan import parallel
from skyplan.cli.app import main
from skyplan.engine import night, timescales, windows
from skyplan.errors import (
    EXIT_BAD_INPUT,
    EXIT_FAILURE,
    InputError,
    InputErrors,
    OutputError,
)
from skyplan.inputs import limits, scenario, sites, targets
from skyplan.render import output, windowview

N_RANDOM = 3000


def run(capsys, *argv: str) -> tuple[int, str, str]:
    try:
        main(list(argv))
        code = 0
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def catalogue(tmp_path: Path) -> Path:
    """Random stars, plus rows that take other paths: a body, names looked up offline (with
    identifiers), a name with a comma and quotes, a duplicate name (a notice)."""
    rng = np.random.default_rng(7)
    ra = rng.uniform(0, 360, N_RANDOM)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, N_RANDOM)))
    lines = ["name,ra,dec"] + [f"S{i:05d},{ra[i]:.5f},{dec[i]:.5f}" for i in range(N_RANDOM)]
    lines[1500:1500] = ["Jupiter,,", "M 42,,", "Vega,,", '"Comma, ""Q"" Star",81.5,-5.2',
                        "S00007,10.0,10.0"]
    path = tmp_path / "targets.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture
def small_thresholds(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Workers for any catalogue, blocks of at most 700 targets; records every pool and
    every process forked for a single call."""
    monkeypatch.setattr(parallel, "WORTHWHILE_BYTES", 1)
    monkeypatch.setattr(parallel, "PARALLEL_FROM", 1)
    monkeypatch.setattr(parallel, "MIN_BLOCK", 1)
    monkeypatch.setattr(parallel, "MAX_BLOCK", 700)
    pools: list[int] = []
    start, fork = parallel._start, parallel._fork

    def recorded(count: int):
        pools.append(count)
        return start(count)

    def forked(call, args):
        pools.append(1)  # one process, forked for one call
        return fork(call, args)

    monkeypatch.setattr(parallel, "_start", recorded)
    monkeypatch.setattr(parallel, "_fork", forked)
    return pools


def windows_args(path: Path, out: Path, fmt: str) -> list[str]:
    return ["windows", str(path), "--demo", "--date", "2026-12-18", "--moon-gap", "25",
            "--max-airmass", "2.5", "-f", fmt, "--out", str(out)]


@pytest.mark.parametrize("fmt", ["json", "ndjson", "csv"])
def test_workers_write_the_same_bytes_as_one_process(
        tmp_path: Path, capsys, monkeypatch: pytest.MonkeyPatch, catalogue: Path,
        small_thresholds: list[int], fmt: str) -> None:
    monkeypatch.setenv("SKYPLAN_WORKERS", "2")
    with_workers = tmp_path / f"a.{fmt}"
    code, _, err_a = run(capsys, *windows_args(catalogue, with_workers, fmt))
    assert code == 0, err_a
    assert small_thresholds == [1, 2]  # the night in one worker, the blocks in two
    monkeypatch.setenv("SKYPLAN_WORKERS", "1")
    alone = tmp_path / f"b.{fmt}"
    code, _, err_b = run(capsys, *windows_args(catalogue, alone, fmt))
    assert code == 0
    assert small_thresholds == [1, 2]  # no pool this time
    assert with_workers.read_bytes() == alone.read_bytes()
    assert err_a == err_b and "duplicate target names kept: S00007" in err_a

    # independently: the whole catalogue computed and encoded at once, here
    site = sites.find_site("Hollowmere", scenario.demo_path("sites.toml"))
    lim = limits.build_limits(site.limits, moon_gap=25, max_airmass=2.5)
    tset, _ = targets.target_set(targets.load_catalog(catalogue))
    res = windows.compute_windows(tset, site, night.compute_night(site, dt.date(2026, 12, 18)),
                                  lim)
    whole = (windowview.csv_chunks(res) if fmt == "csv"
             else windowview.json_chunks(res, ndjson=fmt == "ndjson"))
    assert b"".join(whole) == with_workers.read_bytes()
    assert len(res.names) == N_RANDOM + 5


def test_an_error_in_a_worker_is_one_line_and_status_2(
        tmp_path: Path, capsys, monkeypatch: pytest.MonkeyPatch, catalogue: Path,
        small_thresholds: list[int]) -> None:
    monkeypatch.setenv("SKYPLAN_WORKERS", "2")
    out = tmp_path / "w.json"
    out.write_text("old\n")

    def refuse(*args, **kwargs):
        raise InputError("refused in a worker", file="x.csv", line=3, field="ra")

    monkeypatch.setattr(windows, "compute_windows", refuse)
    code, stdout, err = run(capsys, *windows_args(catalogue, out, "json"))
    assert code == EXIT_BAD_INPUT and stdout == ""
    errors = [line for line in err.splitlines() if not line.startswith("skyplan: note:")]
    assert errors == ["skyplan: x.csv:3, field 'ra': refused in a worker"]
    assert small_thresholds[-1] == 2 and out.read_text() == "old\n"  # nothing replaced


def test_a_worker_that_dies_is_reported(tmp_path: Path, capsys,
                                        monkeypatch: pytest.MonkeyPatch, catalogue: Path,
                                        small_thresholds: list[int]) -> None:
    monkeypatch.setenv("SKYPLAN_WORKERS", "2")  # workers even on a one-core machine
    out = tmp_path / "w.ndjson"

    def die(*args, **kwargs):
        os._exit(9)  # as the kernel's out-of-memory killer would leave it

    monkeypatch.setattr(windows, "compute_windows", die)
    code, _, err = run(capsys, *windows_args(catalogue, out, "ndjson"))
    assert code == EXIT_FAILURE
    errors = [line for line in err.splitlines() if not line.startswith("skyplan: note:")]
    assert len(errors) == 1 and "worker process died" in errors[0]
    assert not out.exists() and not list(tmp_path.glob(".w.ndjson.*"))


@pytest.mark.parametrize("value", ["0", "two", "-1", "1000"])
def test_a_bad_worker_count_is_named(tmp_path: Path, capsys, monkeypatch: pytest.MonkeyPatch,
                                     catalogue: Path, value: str) -> None:
    monkeypatch.setenv("SKYPLAN_WORKERS", value)
    code, _, err = run(capsys, *windows_args(catalogue, tmp_path / "w.json", "json"))
    assert code == EXIT_BAD_INPUT
    assert "SKYPLAN_WORKERS" in err and len(err.strip().splitlines()) == 1


def test_blocks_cover_every_target_once() -> None:
    for n in (0, 1, 4_999, 5_000, 20_001, 100_000, 1_000_003):
        for workers in (1, 2, 8):
            bounds = parallel.block_bounds(n, workers)
            sizes = [b - a for a, b in bounds]
            assert sum(sizes) == n
            assert all(b == c for (_, b), (c, _) in zip(bounds, bounds[1:]))
            if n:
                assert bounds[0][0] == 0 and max(sizes) - min(sizes) <= 1
                assert max(sizes) <= parallel.MAX_BLOCK
                assert len(bounds) == 1 or min(sizes) >= parallel.MIN_BLOCK - 1


def test_errors_survive_the_trip_from_a_worker() -> None:
    one = InputError("bad value", file="t.csv", line=4, field="dec")
    many = InputErrors([one, InputError("empty name", line=9)])
    for exc in (one, many, OutputError("disk full")):
        back = pickle.loads(pickle.dumps(exc))
        assert type(back) is type(exc) and back.one_line() == exc.one_line()
        assert back.exit_status == exc.exit_status
    assert pickle.loads(pickle.dumps(many)).problems[0].line == 4


def test_iers_table_read_in_one_step_matches_the_line_reader() -> None:
    """The bundled finals2000A.all (IERS ReadMe.finals2000A layout), both readers."""
    from skyplan.engine import ephemeris

    raw = ephemeris.iers_finals_path().read_bytes()
    fast = timescales._columns_fixed(raw)
    assert fast is not None  # the shipped table is regular: the fast reader is used
    slow = timescales._columns_by_line(raw)
    for name in slow[0]:
        np.testing.assert_array_equal(fast[0][name], slow[0][name])
        assert fast[0][name].dtype == slow[0][name].dtype
    np.testing.assert_array_equal(fast[1], slow[1])
    np.testing.assert_array_equal(fast[2], slow[2])
    # one changed byte anywhere in a record's layout sends the table to the line reader
    damaged = bytearray(raw)
    damaged[188 * 100 + 57] = ord("X")  # the I/P flag of line 101
    assert timescales._columns_fixed(bytes(damaged)) is None
    with pytest.raises(ValueError, match="line 101"):
        timescales._parse_finals(bytes(damaged), "t")


def test_a_background_flush_error_is_reported(tmp_path: Path,
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    target = tmp_path / "big.json"
    target.write_text("old\n")
    monkeypatch.setattr(output, "FLUSH_AHEAD_BYTES", 1000)

    def failing(fd: int) -> None:
        raise OSError(errno.EIO, "Input/output error")

    monkeypatch.setattr(os, "fdatasync", failing)
    with pytest.raises(OutputError, match="input/output error"):
        output.write_atomic(target, (b"x" * 4000 for _ in range(5)))
    assert target.read_text() == "old\n" and not list(tmp_path.glob(".big.json.*"))


def test_a_long_result_is_flushed_ahead_and_written_whole(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    calls: list[int] = []
    real = os.fdatasync
    monkeypatch.setattr(output, "FLUSH_AHEAD_BYTES", 1000)
    monkeypatch.setattr(os, "fdatasync", lambda fd: (calls.append(fd), real(fd)))
    pieces = [bytes([65 + k]) * 3000 for k in range(6)]
    output.write_atomic(tmp_path / "big.txt", iter(pieces))
    assert (tmp_path / "big.txt").read_bytes() == b"".join(pieces)
    assert calls  # some of it was flushed before the end


def _letters(k: int, size: int) -> bytes:
    return bytes([65 + k % 26]) * size


def test_bytes_results_come_back_through_shared_memory_in_order() -> None:
    """Two workers, at most four results under way in four parts of shared memory: each part
    is used again only after its result was handed on; a result too large for its part comes
    back through the pipe instead, unchanged."""
    jobs = [(k, 1000 + 7 * k) for k in range(12)] + [(12, 5000)]  # the last is too large
    with parallel.Workers(2, result_bytes=4096) as pool:
        got = []
        for piece in pool.stream(_letters, jobs):
            got.append(bytes(piece))  # a copy: the view is only valid until the next
        last_through_pipe = isinstance(piece, bytes)
    assert got == [_letters(k, size) for k, size in jobs]
    assert last_through_pipe  # it did not fit its part of the shared memory


def test_a_view_kept_past_its_turn_is_released() -> None:
    with parallel.Workers(2, result_bytes=4096) as pool:
        pieces = list(pool.stream(_letters, [(0, 10), (1, 10)]))
    with pytest.raises(ValueError):
        bytes(pieces[0])  # not silently overwritten data: an error


def _refuse_the_date() -> None:
    raise InputError("no such night", field="--date")


def _die_at_once() -> None:
    os._exit(3)


def _unsendable():
    return lambda: None  # a function made here cannot be pickled


def test_a_single_call_runs_in_a_process_forked_for_it() -> None:
    import time

    with parallel.Workers(1) as pool:
        assert pool.run(pow, 2, 10).result() == 1024
        with pytest.raises(InputError, match="no such night"):
            pool.run(_refuse_the_date).result()
        with pytest.raises(parallel.WorkerLost):
            pool.run(_die_at_once).result()
        with pytest.raises(RuntimeError, match="unsendable"):
            pool.run(_unsendable).result()
        started = time.perf_counter()
        pool.run(time.sleep, 60)  # never waited for: stopped when the pool closes
    assert time.perf_counter() - started < 10


def _large_result() -> bytes:
    return b"x" * (8 << 20)  # far more than a pipe holds: the child waits to write it


def test_a_child_killed_while_it_sends_is_lost_not_misread() -> None:
    import signal
    import time

    with parallel.Workers(1) as pool:
        outcome = pool.run(_large_result)
        time.sleep(0.3)
        os.kill(outcome._future.pid, signal.SIGKILL)  # the forked process (internal)
        with pytest.raises(parallel.WorkerLost):
            outcome.result()
