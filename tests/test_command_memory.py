"""The whole ``windows`` command against the memory rule of issue 15: peak memory at most
3 x the catalogue's size + 200 MiB (docs/performance.md, "The whole command's memory").

The rule is checked on the peak resident memory (``VmHWM``), which counts the pages of the
shared libraries the process maps as well as its own memory; the peak of its own
(anonymous) memory, which is never larger, is reported beside it (tests/memorypeak.py).
Each command runs in a child process from the interpreter start to the end of its work;
the inputs are invented and written here.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
from inventedrows import sexagesimal_lines
from memorypeak import MIB, measure

pytestmark = pytest.mark.skipif(not Path("/proc/self/clear_refs").exists(),
                                reason="the peak is read from Linux's /proc")

SITE = "38.2,-2.9,1300"


def _plain(path: Path, rows: int) -> None:
    """name, ra, dec in decimal degrees (random, seeded)."""
    rng = np.random.default_rng(rows)
    ra = np.char.mod("%.5f", rng.uniform(0.0, 359.99999, rows))
    dec = np.char.mod("%.5f", np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, rows))))
    line = np.char.add(np.char.add(np.char.add(np.char.add(
        np.char.add("T", np.arange(rows).astype(str)), ","), ra), ","), dec)
    path.write_text("name,ra,dec\n" + "\n".join(line.tolist()) + "\n")


def _sexagesimal(path: Path, rows: int) -> None:
    """name, ra as hours ``05:35:17.3``, dec as degrees ``-05:23:28`` (random, seeded)."""
    line = sexagesimal_lines(np.random.default_rng(rows), 0, rows)
    path.write_text("name,ra,dec\n" + "\n".join(line.tolist()) + "\n")


@pytest.mark.parametrize(("kind", "rows"), [
    ("plain", 33_000),  # 0.9 MB: a fresh install once peaked at 235 MiB (allowed: 202)
    ("plain", 100_000),  # 2.6 MB: 242 MiB once (allowed: 207)
    ("sexagesimal", 200_000),  # 5.7 MB: 242 MiB (allowed: 216)
])
def test_the_windows_command_keeps_to_the_memory_rule(
    tmp_path: Path, kind: str, rows: int
) -> None:
    path = tmp_path / f"{kind}.csv"
    (_plain if kind == "plain" else _sexagesimal)(path, rows)
    out = tmp_path / "windows.csv"
    run = measure(sys.executable, ["-m", "skyplan", "windows", str(path), "--site", SITE,
                                   "--date", "2026-12-18", "-f", "csv", "--out", str(out),
                                   "--quiet"])
    assert run.status == 0, run.stderr
    with out.open("rb") as written:
        assert sum(1 for _ in written) == rows + 1  # the header and a record per target
    goal = 3 * path.stat().st_size + 200 * MIB
    said = (f"{rows} rows, {path.stat().st_size / 1e6:.1f} MB, allowed {goal / MIB:.0f} MiB: "
            f"{run.describe()}; margin {(goal - run.resident) / MIB:.0f} MiB resident, "
            f"{(goal - run.private) / MIB:.0f} MiB private")
    assert run.resident <= goal, said
