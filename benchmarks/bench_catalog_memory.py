"""Benchmark: peak memory of reading a large ordinary catalogue, against the goal
peak <= 3 x the file's size + 200 MiB (issue 15).

Run by hand (not part of the test suite):

    python benchmarks/bench_catalog_memory.py [--rows 5000000] [--repeat 3] [--kind KIND]

Writes an invented catalogue (name, ra, dec, priority, exposure, notes; every row valid;
seeded) in a temporary folder: ``--kind decimal`` (the default) a CSV with RA and Dec in
decimal degrees, ``sexagesimal`` a CSV of name, ra, dec written ``05:35:17.3,-05:23:28``,
``fits``, ``votable`` or ``ecsv`` a table written by astropy; from a child process so
that this process stays small (Linux carries a parent's high-water mark into a child it
starts, so a large parent would inflate the children's figures).  Then, ``--repeat``
times each, it runs in a child process: ``read_catalog`` on the file, and
``skyplan windows FILE --site ... -f csv --out OUT`` (interpreter start included), and
reports the best wall time and, for that child alone, the largest peak resident memory
(``VmHWM``) and the largest peak of its private (anonymous) memory, measured as
``tests/memorypeak.py`` says (Linux only).
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
from memorypeak import MIB, measure  # noqa: E402  (the tests' measure of peak memory)

SITE = "38.2,-2.9,1300"
GOAL_MIB = 200  # plus 3 x the file's size

WRITER = textwrap.dedent("""
    import sys
    import numpy as np

    path, rows = sys.argv[1], int(sys.argv[2])
    rng = np.random.default_rng(20261204)
    notes = np.array(["", "standard", "check seeing", "Be star", "flare"])
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("name,ra,dec,priority,exposure,notes\\n")
        for start in range(0, rows, 500_000):
            n = min(rows, start + 500_000) - start
            ra = np.char.mod("%.5f", rng.uniform(0.0, 359.99999, n))  # never 360.00000
            dec = np.char.mod("%.5f", np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n))))
            cells = [np.char.mod("T%07d", np.arange(start, start + n)), ra, dec,
                     rng.integers(1, 6, n).astype(str),
                     rng.choice(["60", "120", "300", "600"], n), notes[rng.integers(0, 5, n)]]
            line = cells[0]
            for cell in cells[1:]:
                line = np.char.add(np.char.add(line, ","), cell)
            handle.write("\\n".join(line.tolist()) + "\\n")
""")

SEXAGESIMAL = textwrap.dedent("""
    import sys
    import numpy as np

    sys.path.insert(0, sys.argv[3])
    from inventedrows import sexagesimal_lines

    path, rows = sys.argv[1], int(sys.argv[2])
    rng = np.random.default_rng(20261205)
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("name,ra,dec\\n")
        for start in range(0, rows, 500_000):
            n = min(rows, start + 500_000) - start
            handle.write("\\n".join(sexagesimal_lines(rng, start, n).tolist()) + "\\n")
""")

TABLE = textwrap.dedent("""
    import sys
    import numpy as np
    from astropy import units as u
    from astropy.table import Table

    path, rows, fmt = sys.argv[1], int(sys.argv[2]), sys.argv[3]
    rng = np.random.default_rng(20261205)
    table = Table()
    table["name"] = np.char.add("T", np.arange(rows).astype(str))
    table["ra"] = rng.uniform(0.0, 359.99999, rows) * u.deg
    table["dec"] = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, rows))) * u.deg
    table["priority"] = rng.integers(1, 6, rows)
    table["exposure"] = rng.choice([60.0, 120.0, 300.0, 600.0], rows)
    table["notes"] = np.array(["", "standard", "check seeing", "Be star", "flare"])[
        rng.integers(0, 5, rows)]
    table.write(path, format=fmt)
""")

# --kind: (suffix, writer, extra arguments of the writer)
KINDS = {
    "decimal": (".csv", WRITER, []),
    "sexagesimal": (".csv", SEXAGESIMAL, [str(Path(__file__).resolve().parent.parent / "tests")]),
    "fits": (".fits", TABLE, ["fits"]),
    "votable": (".vot", TABLE, ["votable"]),
    "ecsv": (".ecsv", TABLE, ["ascii.ecsv"]),
}

READER = "import sys\nfrom skyplan.inputs.catalog import read_catalog\nread_catalog(sys.argv[1])\n"


def report(label: str, args: list[str], repeat: int, goal_mib: float) -> None:
    """Run ``python args`` ``repeat`` times; print the best wall time and the largest peaks."""
    runs = [measure(sys.executable, args) for _ in range(repeat)]
    statuses = {r.status for r in runs}
    if statuses != {0}:
        print(f"{label}: FAILED, exit status {sorted(statuses)}:",
              *runs[0].stderr.strip().splitlines()[-3:], sep="\n    ")
        return
    best = min(r.wall_s for r in runs)
    resident = max(r.resident for r in runs) / MIB
    private = max(r.private for r in runs) / MIB
    verdict = "met" if resident <= goal_mib else "NOT met"
    print(f"{label}: wall {best:.1f} s best of {repeat} "
          f"(all: {', '.join(f'{r.wall_s:.1f}' for r in runs)}); "
          f"peak resident {resident:.0f} MiB, private {private:.0f} MiB (largest); "
          f"goal {goal_mib:.0f} MiB {verdict}")
    if runs[0].stderr.strip():
        print("  stderr:", *runs[0].stderr.strip().splitlines()[-3:], sep="\n    ")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=5_000_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--date", default="2026-12-18")
    parser.add_argument("--kind", choices=KINDS, default="decimal")
    args = parser.parse_args()

    suffix, writer, extra = KINDS[args.kind]
    with tempfile.TemporaryDirectory() as folder:
        catalogue = Path(folder) / f"big{suffix}"
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", writer, str(catalogue), str(args.rows), *extra],
                       check=True)
        size = catalogue.stat().st_size
        goal = 3 * size / 2**20 + GOAL_MIB
        print(f"catalogue ({args.kind}): {args.rows:,} rows, {size / 2**20:.0f} MiB, written in "
              f"{time.perf_counter() - t0:.1f} s; goal: peak <= 3 x size + {GOAL_MIB} MiB = "
              f"{goal:.0f} MiB")
        report("read_catalog", ["-c", READER, str(catalogue)], args.repeat, goal)
        out = Path(folder) / "windows.csv"
        report("skyplan windows -f csv --out",
               ["-m", "skyplan", "windows", str(catalogue), "--site", SITE,
                "--date", args.date, "-f", "csv", "--out", str(out)], args.repeat, goal)
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    print(f"this process: peak {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} "
          f"MiB; load average at the end {load}")
    print(f"machine: {platform.machine()}, {os.cpu_count()} CPUs, Python "
          f"{platform.python_version()}, {platform.system()} {platform.release()}")


if __name__ == "__main__":
    main()
