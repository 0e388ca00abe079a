"""Using every core: forked worker processes for the steps of a large run (Linux).

A run over a large catalogue uses workers twice: the night is computed in one while the
catalogue is read, and then the catalogue is cut into blocks of consecutive targets, each
computed and encoded in a worker.  Results come back in order, so the output is byte for
byte what one process writes (a test checks this).

Workers are forked: they start with everything the parent has loaded (modules, data
tables, the catalogue itself), so a block of targets is sent as two row numbers.  Results
travel pickled.  Only Linux forks here: elsewhere, with one core, for small catalogues, or
with ``SKYPLAN_WORKERS=1``, the same calls run in the process itself, one after another.

A worker never prints: its notices come back with its result and are recorded in the
parent; an error raised in a worker is raised again in the parent, unchanged.  A worker
that dies (killed, out of memory) is an error of its own, never a silent gap.  Workers
leave Ctrl-C and SIGTERM to the parent, which stops them, and die with the parent.
"""

from __future__ import annotations

import os
import signal
import sys
import warnings
from collections.abc import Callable, Iterable, Iterator
from typing import Any

from skyplan import notices
from skyplan.errors import InputError, SkyplanError

WORKERS_ENV = "SKYPLAN_WORKERS"
MIN_BLOCK = 5_000  # targets: smaller blocks cost more in fixed overheads than they gain
MAX_BLOCK = 50_000  # targets: bounds a worker's memory (about 120 MiB per block)
WORTHWHILE_BYTES = 2_000_000  # catalogue files from this size (~50,000 targets) use workers
PARALLEL_FROM = 20_000  # targets: fewer are done here (forking the workers costs ~20 ms)

_shared: Any = None  # what the workers of the current pool were forked with


class WorkerLost(SkyplanError):
    """A worker process died without a result (killed, or out of memory)."""


def worker_count() -> int:
    """How many processes to use: ``SKYPLAN_WORKERS`` if set, else the usable cores (Linux).

    Raises :class:`InputError` for a value that is not a whole number from 1 to 256.
    """
    text = os.environ.get(WORKERS_ENV, "").strip()
    if text:
        try:
            value = int(text)
        except ValueError:
            value = 0
        if not 1 <= value <= 256:
            raise InputError(f"{text!r} is not a whole number of processes from 1 to 256",
                             field=WORKERS_ENV)
        return value if _can_fork() else 1
    if not _can_fork():
        return 1
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _can_fork() -> bool:
    return sys.platform.startswith("linux") and hasattr(os, "fork")


def block_bounds(n: int, workers: int) -> list[tuple[int, int]]:
    """Consecutive ``(start, stop)`` row ranges covering ``0..n``.

    About two blocks per worker (so that writing one block overlaps computing the next),
    each of ``MIN_BLOCK`` to ``MAX_BLOCK`` targets; sizes differ by at most one target.
    """
    if n <= 0:
        return []
    want = -(-n // max(1, 2 * workers))
    size = min(MAX_BLOCK, max(MIN_BLOCK, want))
    fewest = -(-n // MAX_BLOCK)  # no block above MAX_BLOCK
    most = max(1, n // MIN_BLOCK)  # none below MIN_BLOCK (unless there is only one)
    count = max(fewest, min(-(-n // size), most))
    edges = [n * k // count for k in range(count + 1)]
    return list(zip(edges[:-1], edges[1:]))


class Workers:
    """``processes`` worker processes for one run, or none (0): calls then run here.

    ``shared`` is handed to the workers as they are forked (read it with :func:`shared`),
    so a large object they all need is not sent with every call.  Use as a context
    manager: leaving it stops the workers, at once if an error is on its way out.
    """

    def __init__(self, processes: int, shared: Any = None) -> None:
        global _shared
        self.processes = processes
        self._pool = None
        _shared = shared
        if processes >= 1:
            self._pool = _start(processes)  # forked here, with ``_shared`` set

    def run(self, call: Callable[..., Any], *args: Any) -> _Outcome:
        """Start ``call(*args)`` and return at once; ``.result()`` waits for it."""
        if self._pool is None:
            return _Outcome.now(call, args)
        return _Outcome(self._pool.submit(_run_call, call, args))

    def map(self, call: Callable[..., Any], jobs: Iterable[tuple]) -> Iterator[Any]:
        """``call(*job)`` for every job, results in order, handed on as they arrive."""
        if self._pool is None:
            for job in jobs:
                yield _Outcome.now(call, job).result()
            return
        futures = [self._pool.submit(_run_call, call, job) for job in jobs]
        for future in futures:
            yield _Outcome(future).result()

    def __enter__(self) -> Workers:
        return self

    def __exit__(self, kind, exc, tb) -> bool:
        self.close(abort=kind is not None)
        return False

    def close(self, abort: bool = False) -> None:
        global _shared
        _shared = None
        pool, self._pool = self._pool, None
        if pool is None:
            return
        if not abort:
            pool.shutdown(wait=True)
            return
        processes = list((getattr(pool, "_processes", None) or {}).values())
        pool.shutdown(wait=False, cancel_futures=True)
        for process in processes:
            try:
                process.kill()
            except (OSError, AttributeError):
                pass


def shared() -> Any:
    """In a worker (or here, without workers): the ``shared`` object of its :class:`Workers`."""
    return _shared


class _Outcome:
    """The result of a call: waited for in a worker, or already known."""

    def __init__(self, future=None) -> None:
        self._future = future
        self._value: Any = None
        self._error: BaseException | None = None

    @classmethod
    def now(cls, call, args) -> _Outcome:
        out = cls()
        try:
            out._value = call(*args)
        except Exception as exc:  # raised by .result(), as a worker's error would be
            out._error = exc
        return out

    def result(self) -> Any:
        if self._future is not None:
            from concurrent.futures.process import BrokenProcessPool

            try:
                kind, value, said = self._future.result()
            except BrokenProcessPool:
                raise WorkerLost("a worker process died before finishing its work (out of "
                                 f"memory? try {WORKERS_ENV}=1 or a smaller catalogue)") from None
            self._future = None
            for line in said:
                notices.add(line)
            if kind == "error":
                self._error = value
            else:
                self._value = value
        if self._error is not None:
            raise self._error
        return self._value


# ------------------------------------------------------------------ the machinery


def _start(count: int):
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("fork")
    with warnings.catch_warnings():
        # Python >= 3.12 warns that forking a multi-threaded process may deadlock.  The
        # only other threads are the numerical library's idle pool (fork-safe) and the
        # executor's own; the workers run our code only.
        warnings.filterwarnings("ignore", category=DeprecationWarning,
                                message=".*multi-threaded.*fork")
        pool = ProcessPoolExecutor(max_workers=count, mp_context=context,
                                   initializer=_worker_start)
        pool.submit(int)  # fork every worker now, while ``_shared`` is set
    return pool


def _worker_start() -> None:
    """In each worker: leave Ctrl-C and SIGTERM to the parent, and die with it."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    try:  # Linux: PR_SET_PDEATHSIG, so a worker never outlives a killed parent
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)
    except (OSError, AttributeError):
        pass
    notices.take()  # the parent's notices are the parent's to print


def _run_call(call, args):
    """Run in a worker: ("ok", value, notices) or ("error", exception, notices)."""
    try:
        value = call(*args)
    except BaseException as exc:  # everything goes back to the parent, which decides
        return "error", _portable(exc), notices.take()
    return "ok", value, notices.take()


def _portable(exc: BaseException) -> BaseException:
    """The exception itself if it survives pickling, else a plain one with its text."""
    import pickle

    try:
        pickle.loads(pickle.dumps(exc))
        return exc
    except Exception:
        return RuntimeError(f"{type(exc).__name__}: {exc}")
