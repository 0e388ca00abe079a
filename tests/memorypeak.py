"""The peak memory of a whole command, measured from outside the process (Linux).

Two figures, both of the child alone:

* ``resident``: its peak resident memory, ``VmHWM`` of ``/proc/PID/status`` (what
  ``ru_maxrss`` reports), exact (the kernel keeps it).  It counts the pages of the shared
  libraries and data files the process maps (``RssFile``), which depend on the page cache
  and the install as well as on the input: on one machine ten rows through ``windows``
  held 48 MiB of them from one venv and 61 MiB from a freshly written one.  The memory rule
  of docs/performance.md is checked on this one, the larger.
* ``private``: the peak of its anonymous (private) memory, ``RssAnon + RssShmem``: what the
  process computes and holds alone, the part that grows with the input.

How the private peak is bounded, not merely sampled: every ~1 ms the parent reads the
child's status and then resets its high-water mark (writing ``5`` to
``/proc/PID/clear_refs`` sets ``VmHWM`` to the present resident size).  The next read's
``VmHWM`` is then the peak of ``RssAnon + RssFile + RssShmem`` within that interval, so the
private memory at any instant of the interval is at most that peak less the file pages at
the interval's start, as long as file pages do not shrink within it (they grow as libraries
are loaded; the kernel takes them back only under memory pressure or when a mapped file is
closed; shrinks seen between reads are counted, and there the smaller figure is taken).  A
brief allocation between two reads is therefore counted, however short; what escapes is
only the few microseconds between a read and the reset that follows it.  The bound is
loose by the file pages mapped within one interval (a few MiB while libraries load).

The command runs under a small wrapper that, once the work is done (normally or not),
tells the parent and waits for its last read: the interpreter's final clean-up, which only
frees memory and closes files, is not measured.
"""

from __future__ import annotations

import os
import select
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

KIB = 1024
MIB = 1 << 20


@dataclass(frozen=True)
class Peak:
    """The figures of one run (bytes, seconds)."""

    status: int  # the exit status
    private: int  # bound on the peak of RssAnon + RssShmem (see the module's docstring)
    private_sampled: int  # the largest RssAnon + RssShmem read
    resident: int  # VmHWM: peak resident memory, file pages included
    file_at_end: int  # RssFile at the last read
    samples: int
    longest_gap_s: float  # the longest interval between two reads
    file_shrinks: int  # reads at which RssFile was below the read before
    wall_s: float
    stderr: str

    def describe(self) -> str:
        return (f"private peak {self.private / MIB:.1f} MiB "
                f"(sampled {self.private_sampled / MIB:.1f}), "
                f"resident peak {self.resident / MIB:.1f} MiB (file pages at the end "
                f"{self.file_at_end / MIB:.1f}), {self.samples} reads, longest gap "
                f"{self.longest_gap_s * 1e3:.1f} ms, {self.file_shrinks} file shrinks, "
                f"{self.wall_s:.2f} s")


def _fields(text: str) -> dict[str, int]:
    out = {}
    for line in text.splitlines():
        key, _, value = line.partition(":")
        if key in ("VmHWM", "RssAnon", "RssFile", "RssShmem"):
            out[key] = int(value.split()[0]) * KIB
    return out


# Runs a Python command line (``-m module ...`` or ``-c code ...``) and, when its work is
# done (even by SystemExit), says so on the first descriptor and waits for a byte on the
# second, so that the parent's last read sees the whole run, up to the interpreter's
# clean-up (which only frees, and closes the ephemeris file).
_WRAPPER = """
import os, runpy, sys
done, go = int(sys.argv[1]), int(sys.argv[2])
how, what, *rest = sys.argv[3:]
try:
    if how == "-m":
        sys.argv = [what, *rest]
        runpy.run_module(what, run_name="__main__", alter_sys=True)
    else:
        sys.argv = ["-c", *rest]
        exec(compile(what, "<string>", "exec"), {"__name__": "__main__"})
finally:
    os.write(done, b"x")
    os.read(go, 1)
"""


def measure(python: str, args: list[str], *, interval_s: float = 0.001,
            timeout_s: float = 300.0) -> Peak:
    """Run ``python args`` (``args`` starting ``-m module`` or ``-c code``; output to
    /dev/null, stderr kept) and measure its memory as the module's docstring says."""
    if args[0] not in ("-m", "-c"):
        raise ValueError("args must start with -m or -c")
    done_r, done_w = os.pipe()
    go_r, go_w = os.pipe()
    start = time.perf_counter()
    with tempfile.TemporaryFile() as err:
        child = subprocess.Popen([python, "-c", _WRAPPER, str(done_w), str(go_r), *args],
                                 stdout=subprocess.DEVNULL, stderr=err,
                                 pass_fds=(done_w, go_r))
        os.close(done_w)
        os.close(go_r)
        try:
            peak = _sample(child, done_r, interval_s, start + timeout_s)
            try:
                os.write(go_w, b"x")
            except BrokenPipeError:
                pass  # it ended without reaching the wrapper's end (killed, crashed)
            child.wait(timeout=max(1.0, start + timeout_s - time.perf_counter()))
        finally:
            os.close(done_r)
            os.close(go_w)
            if child.poll() is None:
                child.kill()
                child.wait()
        err.seek(0)
        stderr = err.read().decode(errors="replace")
    return Peak(child.returncode, *peak, time.perf_counter() - start, stderr)


def _sample(child: subprocess.Popen, done: int, interval_s: float, deadline: float) -> tuple:
    """Read and reset the child's status until it says it is done (or exits)."""
    status_path = Path(f"/proc/{child.pid}/status")
    private = sampled = resident = 0
    file_before: int | None = None
    samples = shrinks = 0
    longest = 0.0
    last = time.perf_counter()
    finished = False
    with open(f"/proc/{child.pid}/clear_refs", "w") as reset:
        while not finished:
            finished = bool(select.select([done], [], [], interval_s)[0])
            if time.perf_counter() > deadline:
                raise TimeoutError(f"the command ran longer than its time-out: {child.args}")
            try:
                fields = _fields(status_path.read_text())
                if "RssAnon" not in fields:
                    break  # it has exited (a zombie has no memory fields)
                reset.write("5")
                reset.flush()
            except OSError:
                break  # it has exited
            now = time.perf_counter()
            longest = max(longest, now - last)
            last = now
            samples += 1
            file_now = fields["RssFile"]
            own = fields["RssAnon"] + fields.get("RssShmem", 0)
            floor = file_now if file_before is None else min(file_before, file_now)
            if file_before is not None and file_now < file_before:
                shrinks += 1
            sampled = max(sampled, own)
            resident = max(resident, fields["VmHWM"])
            private = max(private, own, fields["VmHWM"] - floor)
            file_before = file_now
    return private, sampled, resident, file_before or 0, samples, longest, shrinks
