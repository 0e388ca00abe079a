"""Benchmark: ``skyplan windows`` on 10,000 and 100,000 random targets, against astropy.

Run by hand (not part of the test suite):

    python benchmarks/bench_windows.py [--small 10000] [--targets 100000] [--repeat 5]

(a) skyplan end to end: ``python -m skyplan windows CATALOG ... -f json --out FILE`` in a
    fresh process, timed from outside (interpreter start, imports, reading the CSV, the
    night, every target's windows, JSON, atomic write), with the peak resident memory of
    that process (``os.wait4``); best of ``--repeat`` runs, each writing a new file;
(b) astropy's SkyCoord -> AltAz transform over the same night on a 5-minute grid, in a
    fresh process, the transform alone (imports excluded), in pieces of 10,000 targets
    (memory), best of ``--astropy-repeat`` runs;
(c) the windows engine alone (``compute_windows``), best of 3.

Two ratios are printed, each labelled: the end-to-end ratio per target at ``--targets``
(skyplan's whole command against astropy's transform alone, so it favours astropy), and
the marginal cost per target: the slope of each tool's time between ``--small`` and
``--targets`` targets, which leaves out what does not grow with the catalogue
(interpreter start, imports, the night, the ephemeris).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
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
frame = AltAz(obstime=t[None, :], location=loc)
t0 = time.perf_counter()
for a in range(0, n, 10_000):
    c = SkyCoord(ra[a:a + 10_000, None] * u.deg, dec[a:a + 10_000, None] * u.deg)
    alt = c.transform_to(frame).alt.deg
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


def run(code: str, *args: str) -> list[str]:
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                         check=False)
    for line in out.stdout.splitlines():
        if line.startswith("RESULT"):
            return line.split()[1:]
    raise SystemExit(f"benchmark run failed:\n{out.stderr}")


def run_command(argv: list[str]) -> tuple[float, float]:
    """Wall seconds (interpreter start included) and peak resident MiB of one command."""
    start = time.perf_counter()
    child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    wall = time.perf_counter() - start
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"skyplan failed: {child.stderr.read().decode()}")
    child.stderr.close()
    return wall, usage.ru_maxrss / 1024.0


def skyplan_runs(tmp: Path, n: int, repeat: int) -> tuple[list[float], float]:
    cat = tmp / f"targets{n}.csv"
    out = tmp / f"windows{n}.json"
    write_catalogue(cat, n)
    sites_file = tmp / "sites.toml"
    sites_file.write_text(SITES_TOML)
    # a configured site, as in a cron job (its zone is given: no zone lookup)
    argv = [sys.executable, "-m", "skyplan", "windows", str(cat), "--site", "bench",
            "--sites-file", str(sites_file), "--date", DATE, "--moon-gap", "20", "-f", "json",
            "--out", str(out), "--quiet"]
    walls, peaks = [], []
    for _ in range(repeat):
        out.unlink(missing_ok=True)  # each run writes a new file
        wall, peak = run_command(argv)
        walls.append(wall)
        peaks.append(peak)
    if len(json.loads(out.read_text())["targets"]) != n:
        raise SystemExit(f"expected {n} records")
    return walls, max(peaks)


def _all(values) -> str:
    return ", ".join(f"{v:.2f}" for v in values)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--small", type=int, default=10_000)
    ap.add_argument("--targets", type=int, default=100_000)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--astropy-repeat", type=int, default=2)
    args = ap.parse_args()
    # an installed package has its bytecode compiled by pip; do the same for a checkout
    import compileall

    import skyplan

    compileall.compile_dir(str(Path(skyplan.__file__).parent), quiet=1)
    sizes = (args.small, args.targets)
    with tempfile.TemporaryDirectory() as folder:
        tmp = Path(folder)
        sky = {n: skyplan_runs(tmp, n, args.repeat) for n in sizes}
        night = json.loads(subprocess.run(
            [sys.executable, "-m", "skyplan", "night", "--site", SITE, "--date", DATE, "-f",
             "json"], capture_output=True, text=True, check=True).stdout)
        import datetime as dt

        def unix(s):
            return dt.datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp()

        start, end = unix(night["sunset"]), unix(night["sunrise"])
        astro = {n: [run(RUN_ASTROPY, str(n), str(start), str(end))
                     for _ in range(args.astropy_repeat)] for n in sizes}
        (engine,) = run(RUN_ENGINE, str(tmp / f"targets{args.targets}.csv"), SITE, DATE)
    print(f"machine: {os.cpu_count()} cores; numpy {np.__version__}")
    for n in sizes:
        walls, peak = sky[n]
        print(f"skyplan windows, {n:,} targets, CSV in, JSON out, interpreter start included: "
              f"best {min(walls):.2f} s of {len(walls)} (all: {_all(walls)}); "
              f"peak RSS {peak:.0f} MiB")
    n_times = astro[args.targets][0][1]
    a_best = {n: min(float(w) for w, _ in runs) for n, runs in astro.items()}
    for n in sizes:
        print(f"astropy AltAz, {n:,} targets x {n_times} times (5-min grid), transform "
              f"alone: best {a_best[n]:.2f} s of {len(astro[n])} "
              f"(all: {_all(float(w) for w, _ in astro[n])})")
    print(f"windows engine alone (compute_windows, {args.targets:,} targets, best of 3): "
          f"{float(engine):.2f} s")
    s_best = {n: min(sky[n][0]) for n in sizes}
    big = args.targets
    per_sky, per_astropy = s_best[big] / big, a_best[big] / big
    print(f"end to end per target at {big:,}: skyplan {per_sky * 1e6:.1f} µs (whole command), "
          f"astropy {per_astropy * 1e6:.1f} µs (transform alone): ratio "
          f"{per_astropy / per_sky:.0f}x")
    span = big - args.small
    m_sky = (s_best[big] - s_best[args.small]) / span
    m_astropy = (a_best[big] - a_best[args.small]) / span
    print(f"marginal cost per target (slope {args.small:,} -> {big:,}): skyplan "
          f"{m_sky * 1e6:.1f} µs, astropy {m_astropy * 1e6:.1f} µs: ratio "
          f"{m_astropy / m_sky:.0f}x")
    print(f"engine per target: {float(engine) / big * 1e6:.1f} µs: ratio to astropy's "
          f"transform {per_astropy / (float(engine) / big):.0f}x")


if __name__ == "__main__":
    main()
