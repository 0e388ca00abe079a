"""Benchmark: ``skyplan windows`` on 100,000 random targets, against astropy's AltAz grid.

Run by hand (not part of the test suite):

    python benchmarks/bench_windows.py [--targets 100000] [--subset 2000]

(a) end to end in a fresh process: read the CSV, compute the night and every target's
    windows, write JSON to a new file; wall time measured inside the process from before
    the CLI import (interpreter start excluded), the peak resident memory of the process
    and of its largest worker; the same run writing over the previous output, and in one
    process (``SKYPLAN_WORKERS=1``);
(b) astropy's SkyCoord → AltAz transform over the same night on a 5-minute grid for a
    subset of the targets, also the best of fresh processes; the per-target speed ratio is
    printed.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

SITE = "38.2,-2.9,1300"
DATE = "2026-12-18"
SITES_TOML = """
[site.bench]
latitude = 38.2
longitude = -2.9
elevation = 1300
zone = "Europe/Madrid"
"""

RUN_SKYPLAN = r"""
import resource, sys, time
t0 = time.perf_counter()
from skyplan.cli.app import main
try:
    main(sys.argv[1:])
except SystemExit as exc:
    code = exc.code
t1 = time.perf_counter()
peak_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
worker_mib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
print(f"RESULT {t1 - t0:.3f} {peak_mib:.1f} {code} {worker_mib:.1f}")
"""

RUN_ENGINE = r"""
import sys, time, datetime as dt
from skyplan.inputs import limits
from skyplan.engine import night
from skyplan.inputs import sites
from skyplan.inputs import targets
from skyplan.engine import windows
site = sites.parse_site_spec(sys.argv[2])
cat = targets.load_catalog(sys.argv[1])
tset, _ = targets.target_set(cat)
n = night.compute_night(site, dt.date.fromisoformat(sys.argv[3]))
lim = limits.build_limits({}, moon_gap=20)
best = 1e9
for _ in range(3):
    t0 = time.perf_counter()
    windows.compute_windows(tset, site, n, lim)
    best = min(best, time.perf_counter() - t0)
print(f"RESULT {best:.3f}")
"""

RUN_ASTROPY = r"""
import sys, time, numpy as np
from skyplan.engine.ephemeris import configure_astropy_offline
configure_astropy_offline()
import astropy.units as u
from astropy.coordinates import AltAz, EarthLocation, SkyCoord
from astropy.time import Time
n = int(sys.argv[1]); start, end = float(sys.argv[2]), float(sys.argv[3])
rng = np.random.default_rng(1)
ra = rng.uniform(0, 360, n); dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
t = Time(np.arange(start, end, 300.0), format="unix")
loc = EarthLocation(lat=38.2 * u.deg, lon=-2.9 * u.deg, height=1300 * u.m)
t0 = time.perf_counter()
c = SkyCoord(ra[:, None] * u.deg, dec[:, None] * u.deg)
aa = c.transform_to(AltAz(obstime=t[None, :], location=loc))
alt = aa.alt.deg
t1 = time.perf_counter()
print(f"RESULT {t1 - t0:.3f} {alt.shape[1]}")
"""


def write_catalogue(path: Path, n: int) -> None:
    rng = np.random.default_rng(0)
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    with open(path, "w") as f:
        f.write("name,ra,dec\n")
        f.writelines(f"T{i:07d},{ra[i]:.6f},{dec[i]:.6f}\n" for i in range(n))


def run(code: str, *args: str, env: dict | None = None) -> list[str]:
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                         check=False, env=env)
    for line in out.stdout.splitlines():
        if line.startswith("RESULT"):
            return line.split()[1:]
    raise SystemExit(f"benchmark run failed:\n{out.stderr}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--targets", type=int, default=100_000)
    ap.add_argument("--subset", type=int, default=2_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    # an installed package has its bytecode compiled by pip; do the same for a checkout
    import compileall

    import skyplan

    compileall.compile_dir(str(Path(skyplan.__file__).parent), quiet=1)
    with tempfile.TemporaryDirectory() as tmp:
        cat = Path(tmp) / "targets.csv"
        out = Path(tmp) / "windows.json"
        write_catalogue(cat, args.targets)
        sites_file = Path(tmp) / "sites.toml"
        sites_file.write_text(SITES_TOML)
        # a configured site, as in a cron job (its zone is given: no zone lookup)
        cli = ["windows", str(cat), "--site", "bench", "--sites-file", str(sites_file),
               "--date", DATE, "--moon-gap", "20", "-f", "json", "--out", str(out), "--quiet"]
        walls, peaks, worker_peaks, alone, replacing = [], [], [], [], []
        for _ in range(args.repeat):
            # each timed run writes a new file: replacing the last run's 51 MB file adds the
            # file system's work of freeing it (timed separately below)
            out.unlink(missing_ok=True)
            wall, peak, code, worker_peak = run(RUN_SKYPLAN, *cli)
            if code not in ("0", "None"):
                raise SystemExit(f"skyplan exited with {code}")
            walls.append(float(wall))
            peaks.append(float(peak))
            worker_peaks.append(float(worker_peak))
            replacing.append(float(run(RUN_SKYPLAN, *cli)[0]))  # over the file just written
            out.unlink()
            one = run(RUN_SKYPLAN, *cli, env={**os.environ, "SKYPLAN_WORKERS": "1"})
            alone.append(float(one[0]))
        doc = json.loads(out.read_text())
        if len(doc) != args.targets:
            raise SystemExit(f"expected {args.targets} records, got {len(doc)}")
        night = json.loads(subprocess.run(
            [sys.executable, "-m", "skyplan", "night", "--site", SITE, "--date", DATE, "-f",
             "json"], capture_output=True, text=True, check=True).stdout)
        import datetime as dt

        def unix(s):
            return dt.datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp()

        start, end = unix(night["sunset"]), unix(night["sunrise"])
        # astropy like skyplan: each run in a fresh process, the best of them kept
        astropy_runs = [run(RUN_ASTROPY, str(args.subset), str(start), str(end))
                        for _ in range(args.repeat)]
        a_wall = min(float(wall) for wall, _ in astropy_runs)
        n_times = astropy_runs[0][1]
        (engine,) = run(RUN_ENGINE, str(cat), SITE, DATE)
    best = min(walls)
    per_sky = best / args.targets
    per_astropy = float(a_wall) / args.subset
    print(f"machine: {os.cpu_count()} cores; numpy {np.__version__}")
    print(f"skyplan windows, {args.targets:,} targets, CSV in, JSON out: "
          f"best {best:.2f} s of {args.repeat} (all: {', '.join(f'{w:.2f}' for w in walls)}); "
          f"peak RSS {max(peaks):.0f} MiB, largest worker {max(worker_peaks):.0f} MiB")
    print(f"the same replacing the previous run's output: best {min(replacing):.2f} s "
          f"(all: {', '.join(f'{w:.2f}' for w in replacing)})")
    print(f"the same in one process (SKYPLAN_WORKERS=1): best {min(alone):.2f} s "
          f"(all: {', '.join(f'{w:.2f}' for w in alone)})")
    print(f"astropy AltAz, {args.subset:,} targets x {n_times} times (5-min grid): "
          f"best {a_wall:.2f} s of {args.repeat} (all: "
          f"{', '.join(f'{float(w):.2f}' for w, _ in astropy_runs)})")
    per_engine = float(engine) / args.targets
    print(f"windows engine alone (compute_windows, best of 3): {float(engine):.2f} s")
    print(f"per target: skyplan end to end {per_sky * 1e6:.1f} µs, "
          f"engine {per_engine * 1e6:.1f} µs; astropy {per_astropy * 1e6:.1f} µs")
    print(f"speed ratio: end to end {per_astropy / per_sky:.0f}x, "
          f"engine {per_astropy / per_engine:.0f}x")


if __name__ == "__main__":
    main()
