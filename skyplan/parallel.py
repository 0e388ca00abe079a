"""Using every core: forked worker processes for the steps of a large run (Linux).

A run over a large catalogue uses workers twice: the night is computed in a process forked
for it (:meth:`Workers.run`) while the catalogue is read, and then the catalogue is cut into
blocks of consecutive targets, each computed and encoded by a pool of workers
(:meth:`Workers.stream`).  Results come back in order, so the output is byte for
byte what one process writes (a test checks this).

Workers are forked: they start with everything the parent has loaded (modules, data
tables, the catalogue itself), so a block of targets is sent as two row numbers.  Results
travel pickled, except the text of a block, which a worker puts in memory shared with the
parent (mapped before the fork) for the parent to write from.  Only Linux forks here:
elsewhere, with one core, for small catalogues, or with ``SKYPLAN_WORKERS=1``, the same
calls run in the process itself, one after another.

A worker never prints: its notices come back with its result and are recorded in the
parent; an error raised in a worker is raised again in the parent, unchanged.  A worker
that dies (killed, out of memory) is an error of its own, never a silent gap.  Workers
leave Ctrl-C and SIGTERM to the parent, which stops them, and die with the parent.
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
import warnings
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from typing import Any

from skyplan import notices
from skyplan.errors import InputError, SkyplanError

WORKERS_ENV = "SKYPLAN_WORKERS"
MIN_BLOCK = 2_500  # targets: smaller blocks cost more in fixed overheads than they gain
MAX_BLOCK = 25_000  # targets: bounds a worker's memory (about 60 MiB per block)
BLOCKS_PER_WORKER = 4  # small blocks: a fresh worker's first, slower block is short, the
# last block to finish is short, and the blocks spread evenly over the workers
WORTHWHILE_BYTES = 2_000_000  # catalogue files from this size (~50,000 targets) use workers
PARALLEL_FROM = 20_000  # targets: fewer are done here (forking the workers costs ~20 ms)

_shared: Any = None  # what the workers of the current pool were forked with
_winding_down: list = []  # pools left to stop on their own (``last``, or stopped by an
# error): joined before the next fork
_arena: _Arena | None = None  # shared memory the workers of the current pool put bytes in


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

    About ``BLOCKS_PER_WORKER`` blocks per worker (so that writing one block overlaps
    computing the next), each of ``MIN_BLOCK`` to ``MAX_BLOCK`` targets; sizes differ by at
    most one target.
    """
    if n <= 0:
        return []
    want = -(-n // max(1, BLOCKS_PER_WORKER * workers))
    size = min(MAX_BLOCK, max(MIN_BLOCK, want))
    fewest = -(-n // MAX_BLOCK)  # no block above MAX_BLOCK
    most = max(1, n // MIN_BLOCK)  # none below MIN_BLOCK (unless there is only one)
    count = max(fewest, min(-(-n // size), most))
    edges = [n * k // count for k in range(count + 1)]
    return list(zip(edges[:-1], edges[1:]))


class Workers:
    """``processes`` worker processes for one run, or none (0): calls then run here.

    ``shared`` is handed to the workers as they are forked (read it with :func:`shared`),
    so a large object they all need is not sent with every call; ``result_bytes`` makes
    room for bytes results in shared memory (:meth:`stream`).  Use as a context manager:
    leaving it stops the workers, at once if an error is on its way out.  ``last`` (no
    pool is forked after this one) lets them exit while the run goes on.
    """

    def __init__(self, processes: int, shared: Any = None, result_bytes: int = 0,
                 last: bool = False) -> None:
        global _shared, _arena
        self.processes = processes
        self.last = last
        self.result_bytes = result_bytes
        self._pool = None
        self._children: list[_Child] = []
        _shared = shared
        _arena = None

    def _executor(self):
        """The pool of worker processes, forked on first use (``_shared`` is set by then)."""
        global _arena
        if self._pool is None and self.processes >= 1:
            if self.result_bytes > 0:
                _arena = _Arena.make(2 * self.processes, self.result_bytes)
            self._pool = _start(self.processes)
        return self._pool

    def run(self, call: Callable[..., Any], *args: Any) -> _Outcome:
        """Start ``call(*args)`` and return at once; ``.result()`` waits for it.

        With workers, the call runs in a process forked for it at once: it inherits the
        call and its arguments, so it starts without waiting for this process to send them.
        """
        if self.processes < 1:
            return _Outcome.now(call, args)
        child = _fork(call, args)
        self._children.append(child)
        return _Outcome(child)

    def map(self, call: Callable[..., Any], jobs: Iterable[tuple]) -> Iterator[Any]:
        """``call(*job)`` for every job, results in order, handed on as they arrive."""
        pool = self._executor()
        if pool is None:
            for job in jobs:
                yield _Outcome.now(call, job).result()
            return
        futures = [pool.submit(_run_call, call, job) for job in jobs]
        for future in futures:
            yield _Outcome(future).result()

    def stream(self, call: Callable[..., Any], jobs: Iterable[tuple]) -> Iterator[Any]:
        """Like :meth:`map`, for calls that return bytes of up to ``result_bytes``.

        Such results come back through memory shared with the workers instead of a pipe
        (no pickling, no copies through the kernel) and are handed on as memoryviews,
        each valid until the next result is asked for: write it, do not keep it.  At most
        two calls per process are under way, each with its own part of that memory.
        """
        pool = self._executor()
        arena = _arena
        if pool is None or arena is None:
            yield from self.map(call, jobs)
            return
        waiting = list(jobs)[::-1]
        under_way: deque = deque()
        for slot in range(min(arena.slots, len(waiting))):
            under_way.append((slot, pool.submit(_run_into, call, waiting.pop(), slot)))
        while under_way:
            slot, future = under_way.popleft()
            value = _Outcome(future).result()
            if isinstance(value, _InArena):
                view = arena.view(slot, value.size)
                yield view
                view.release()
            else:
                yield value
            if waiting:
                under_way.append((slot, pool.submit(_run_into, call, waiting.pop(), slot)))

    def __enter__(self) -> Workers:
        return self

    def __exit__(self, kind, exc, tb) -> bool:
        self.close(abort=kind is not None)
        return False

    def close(self, abort: bool = False) -> None:
        global _shared, _arena
        _shared = None
        arena, _arena = _arena, None
        for child in self._children:
            child.stop()  # any whose result was not taken
        self._children = []
        pool, self._pool = self._pool, None
        if pool is None:
            return
        if not abort:
            # the last pool of a run lets its workers wind down while the run ends (the
            # interpreter waits for them at exit); an earlier one is gone before the next forks
            pool.shutdown(wait=not self.last)
            if self.last:
                _winding_down.append(pool)
            if arena is not None:
                arena.close()
            return
        processes = list((getattr(pool, "_processes", None) or {}).values())
        pool.shutdown(wait=False, cancel_futures=True)
        for process in processes:
            try:
                process.kill()
            except (OSError, AttributeError):
                pass
        _winding_down.append(pool)  # its thread notices the killed workers and ends


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
                raise _lost() from None
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


def _lost() -> WorkerLost:
    return WorkerLost("a worker process died before finishing its work (out of memory? try "
                      f"{WORKERS_ENV}=1 or a smaller catalogue)")


# ------------------------------------------------------------------ the machinery


class _Child:
    """One call in a process forked for it; its outcome comes back pickled through a pipe.

    ``result()`` gives what :func:`_run_call` returns, as a pool's future would.
    """

    def __init__(self, call, args) -> None:
        _settle()
        read, write = os.pipe()
        with _quiet_fork():
            self.pid = os.fork()
        if self.pid == 0:  # the child: run, send, and leave without any clean-up of the parent's
            try:
                os.close(read)
                _worker_start()
                with open(write, "wb") as pipe:
                    pipe.write(_pickled(_run_call(call, args)))
            finally:
                os._exit(0)
        os.close(write)
        self.read = read

    def result(self):
        import pickle

        chunks = []
        status = 0
        try:
            while chunk := os.read(self.read, 1 << 20):
                chunks.append(chunk)
            try:
                _, status = os.waitpid(self.pid, 0)  # it leaves once it has written
            except ChildProcessError:
                pass
            self.pid = 0
        finally:
            self.stop()
        if not chunks or status != 0:  # killed before or while it wrote
            raise _lost()
        return pickle.loads(b"".join(chunks))

    def stop(self) -> None:
        """Reap the child, killing it first if it is still at work."""
        if self.pid:
            try:
                if os.waitpid(self.pid, os.WNOHANG) == (0, 0):
                    os.kill(self.pid, signal.SIGKILL)
                    os.waitpid(self.pid, 0)
            except ChildProcessError:
                pass
            self.pid = 0
        if self.read >= 0:
            os.close(self.read)
            self.read = -1


def _fork(call, args) -> _Child:
    return _Child(call, args)


def _pickled(outcome) -> bytes:
    import pickle

    try:
        return pickle.dumps(outcome, protocol=pickle.HIGHEST_PROTOCOL)
    except Exception as exc:  # an outcome that cannot travel: say so instead
        kind, value, said = outcome
        return pickle.dumps(("error", RuntimeError(f"unsendable result: {exc}"), said))


class _InArena:
    """What a worker sends back for a result it put in the shared memory: its size."""

    def __init__(self, size: int) -> None:
        self.size = size


class _Arena:
    """Anonymous shared memory, mapped before the workers fork: ``slots`` parts of
    ``slot_bytes`` each.  Pages are only taken as they are written."""

    def __init__(self, memory, slots: int, slot_bytes: int) -> None:
        self.memory = memory
        self.slots = slots
        self.slot_bytes = slot_bytes

    @classmethod
    def make(cls, slots: int, slot_bytes: int) -> _Arena | None:
        import mmap

        try:
            return cls(mmap.mmap(-1, slots * slot_bytes), slots, slot_bytes)
        except (OSError, ValueError, OverflowError):
            return None  # results then travel through the pipe

    def put(self, slot: int, data) -> bool:
        if len(data) > self.slot_bytes:
            return False
        start = slot * self.slot_bytes
        self.memory[start:start + len(data)] = data
        return True

    def view(self, slot: int, size: int) -> memoryview:
        start = slot * self.slot_bytes
        return memoryview(self.memory)[start:start + size]

    def close(self) -> None:
        try:
            self.memory.close()
        except BufferError:
            pass  # a view is still held somewhere: the memory goes when that does


def _start(count: int):
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("fork")
    _settle()
    with _quiet_fork():
        pool = ProcessPoolExecutor(max_workers=count, mp_context=context,
                                   initializer=_worker_start)
        pool.submit(int)  # fork every worker now, while ``_shared`` is set
    return pool


def _settle() -> None:
    """Wait for earlier pools that were left to stop on their own.

    A child forked while a pool's own thread holds one of its locks would wait for that
    lock forever if it ever took it (when its copy of the pool is collected, say): fork
    only when no such thread runs.  A command forks its last pool last, so this costs it
    nothing; a program that runs several commands waits here.
    """
    while _winding_down:
        _winding_down.pop().shutdown(wait=True)


@contextlib.contextmanager
def _quiet_fork():
    """Python >= 3.12 warns that forking a multi-threaded process may deadlock.  The only
    other threads are the numerical library's idle pool (fork-safe) and an executor's own;
    the children run our code only."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", category=DeprecationWarning,
                                message=".*multi-threaded.*fork")
        yield


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


def _run_into(call, args, slot: int):
    """Run in a worker: like :func:`_run_call`, with a bytes result put in the arena."""
    kind, value, said = _run_call(call, args)
    if kind == "ok" and isinstance(value, bytes) and _arena is not None \
            and _arena.put(slot, value):
        value = _InArena(len(value))
    return kind, value, said


def _portable(exc: BaseException) -> BaseException:
    """The exception itself if it survives pickling, else a plain one with its text."""
    import pickle

    try:
        pickle.loads(pickle.dumps(exc))
        return exc
    except Exception:
        return RuntimeError(f"{type(exc).__name__}: {exc}")
