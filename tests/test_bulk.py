"""Whole-catalogue windows runs (:mod:`skyplan.api.bulk`): a run computed and written block
by block of targets writes exactly what one block writes, reports the same notices in the
same order, and turns an error met in any block into the usual one line and exit status,
leaving an ``--out`` file as it was.

The block size is lowered so that a 3,000-target catalogue is cut into several blocks; the
reference is the same run in one block and, independently, the whole result encoded at once
in this process and read back with :mod:`json` / :mod:`csv`.
"""

from __future__ import annotations

import csv
import datetime as dt
import errno
import io
import json
import os
import pickle
from pathlib import Path

import numpy as np
import pytest

from skyplan.api import bulk
from skyplan.cli.app import main
from skyplan.engine import night, windows
from skyplan.errors import (
    EXIT_BAD_INPUT,
    InputError,
    InputErrors,
    OutputError,
)
from skyplan.inputs import limits, scenario, sites, targets
from skyplan.render import output, windowcolumns

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
def small_blocks(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Blocks of at most 700 targets; records the size of every block computed."""
    monkeypatch.setattr(bulk, "BLOCK", 700)
    sizes: list[int] = []
    compute = windows.compute_windows

    def recorded(tset, *args, **kwargs):
        sizes.append(len(tset))
        return compute(tset, *args, **kwargs)

    monkeypatch.setattr(windows, "compute_windows", recorded)
    return sizes


def windows_args(path: Path, out: Path, fmt: str) -> list[str]:
    return ["windows", str(path), "--demo", "--date", "2026-12-18", "--moon-gap", "25",
            "--max-airmass", "2.5", "-f", fmt, "--out", str(out)]


def _whole_result(catalogue: Path):
    site = sites.find_site("Hollowmere", scenario.demo_path("sites.toml"))
    lim = limits.build_limits(site.limits, moon_gap=25, max_airmass=2.5)
    tset, _ = targets.target_set(targets.load_catalog(catalogue))
    return windows.compute_windows(tset, site, night.compute_night(site, dt.date(2026, 12, 18)),
                                   lim)


@pytest.mark.parametrize("fmt", ["json", "ndjson", "csv", "parquet"])
def test_blocks_write_the_same_as_one_block(
        tmp_path: Path, capsys, monkeypatch: pytest.MonkeyPatch, catalogue: Path,
        small_blocks: list[int], fmt: str) -> None:
    blocks = tmp_path / f"a.{fmt}"
    code, _, err_a = run(capsys, *windows_args(catalogue, blocks, fmt))
    assert code == 0, err_a
    assert len(small_blocks) == 5 and max(small_blocks) == 700  # 3,005 targets
    assert sum(small_blocks) == N_RANDOM + 5
    monkeypatch.setattr(bulk, "BLOCK", 1_000_000)
    whole = tmp_path / f"b.{fmt}"
    code, _, err_b = run(capsys, *windows_args(catalogue, whole, fmt))
    assert code == 0 and small_blocks[5:] == [N_RANDOM + 5]
    if fmt != "parquet":  # Parquet's row groups follow the blocks; its values are checked below
        assert blocks.read_bytes() == whole.read_bytes()
    assert err_a == err_b and "duplicate target names kept: S00007" in err_a

    # independently: the whole catalogue computed and encoded at once, here, read back
    res = _whole_result(catalogue)
    assert len(res.names) == N_RANDOM + 5
    reference = windowcolumns.frame(res)
    data = blocks.read_bytes()
    if fmt == "json":
        assert json.loads(data)["targets"] == json.loads(
            b"".join(windowcolumns.json_stream([reference])))
    elif fmt == "ndjson":
        assert data == windowcolumns.ndjson(reference)
        assert len(data.splitlines()) == N_RANDOM + 5
    elif fmt == "csv":
        want = windowcolumns.csv(reference, list(res.lost_s), header=True)
        assert list(csv.reader(io.StringIO(data.decode()))) == \
            list(csv.reader(io.StringIO(want.decode())))
    else:
        import pyarrow.parquet as pq

        timed = windowcolumns.frame(res, text_times=False)  # Parquet keeps UTC timestamps
        assert pq.read_table(blocks).to_pylist() == timed.to_dicts()


def test_an_error_while_computing_is_one_line_and_status_2(
        tmp_path: Path, capsys, monkeypatch: pytest.MonkeyPatch, catalogue: Path,
        small_blocks: list[int]) -> None:
    out = tmp_path / "w.json"
    out.write_text("old\n")
    compute = windows.compute_windows

    def refuse_the_third(tset, *args, **kwargs):
        if len(small_blocks) == 3:  # after two blocks were written to the temporary file
            raise InputError("refused in a block", file="x.csv", line=3, field="ra")
        return compute(tset, *args, **kwargs)

    monkeypatch.setattr(windows, "compute_windows", refuse_the_third)
    code, stdout, err = run(capsys, *windows_args(catalogue, out, "json"))
    assert code == EXIT_BAD_INPUT and stdout == ""
    errors = [line for line in err.splitlines() if not line.startswith("skyplan: note:")]
    assert errors == ["skyplan: x.csv:3, field 'ra': refused in a block"]
    assert out.read_text() == "old\n" and not list(tmp_path.glob(".w.json.*"))


def test_parquet_needs_a_file(capsys, catalogue: Path) -> None:
    code, stdout, err = run(capsys, "windows", str(catalogue), "--demo", "-f", "parquet")
    assert code == EXIT_BAD_INPUT and stdout == ""
    assert err.strip().splitlines() == [
        "skyplan: field '--format': parquet output is a binary file: name it with --out"]


def test_blocks_cover_every_target_once(monkeypatch: pytest.MonkeyPatch) -> None:
    seen: list[tuple[int, int]] = []

    class Targets:
        def __init__(self, n: int) -> None:
            self.n = n

        def __len__(self) -> int:
            return self.n

        def rows(self, a: int, b: int):
            seen.append((a, b))
            return Targets(b - a)

    monkeypatch.setattr(windows, "compute_windows", lambda tset, *a, **k: len(tset))
    for n in (0, 1, 699, 700, 701, 20_001):
        seen.clear()
        run_ = bulk.WindowRun(None, None, None, Targets(n))
        sizes = list(bulk.window_blocks(run_, block=700))
        assert sum(sizes) == n and all(0 < s <= 700 for s in sizes) or sizes == [0] == [n]
        assert seen[0][0] == 0 and seen[-1][1] == n
        assert all(b == c for (_, b), (c, _) in zip(seen, seen[1:]))


def test_errors_pickle_with_their_message_and_status() -> None:
    one = InputError("bad value", file="t.csv", line=4, field="dec")
    many = InputErrors([one, InputError("empty name", line=9)])
    for exc in (one, many, OutputError("disk full")):
        back = pickle.loads(pickle.dumps(exc))
        assert type(back) is type(exc) and back.one_line() == exc.one_line()
        assert back.exit_status == exc.exit_status
    assert pickle.loads(pickle.dumps(many)).problems[0].line == 4


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
