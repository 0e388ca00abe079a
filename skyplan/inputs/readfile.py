"""Opening and reading user files with a bound enforced while reading.

Every reader of user input goes through this module, so that each one:

- refuses anything but a regular file (after symlinks are followed): a directory, a device
  such as ``/dev/zero``, a named pipe or a socket is an :class:`~skyplan.errors.InputError`
  at once.  The file is opened with ``O_NONBLOCK`` and its type checked on the open handle
  (``fstat``), so a named pipe without a writer never blocks and the check cannot be raced
  by a swap of the path.  The one exception is ``-``, standard input, which the user asks
  for explicitly and which may be a pipe;
- reads at most ``limit`` bytes, counted as they arrive (a file's reported size is not
  trusted: it is 0 for a device and may grow while being read), and fails past the limit.

The public surface is five functions: :func:`open_input` (a binary handle, for readers
that stream line by line), :func:`open_sized` (a handle on a regular file of a bounded
size, for readers that map it into memory), :func:`read_input` (the whole content as bytes) and
:func:`read_blocks` (the content as blocks of whole lines, for readers that let each block
go once it is read), and :func:`give_back_freed`, which readers of large files call between
blocks so that memory let go is given back to the system rather than kept for reuse.
"""

from __future__ import annotations

import ctypes
import os
import stat
import sys
from pathlib import Path
from typing import BinaryIO

from skyplan.errors import InputError

STDIN = "-"  # the path that means standard input


def _size_text(size: int) -> str:
    if size >= 1 << 30 and size % (1 << 30) == 0:
        return f"{size >> 30} GiB"
    if size >= 1 << 20 and size % (1 << 20) == 0:
        return f"{size >> 20} MiB"
    return f"{size} bytes"


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a directory"
    if stat.S_ISFIFO(mode):
        return "a named pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def open_input(path: str | Path, *, what: str = "file") -> BinaryIO:
    """A binary handle on ``path`` (``-``: standard input), which must be a regular file.

    ``what`` names the file in messages ("catalogue", "horizon file", ...).  Raises
    :class:`InputError` naming the path when the file is missing, unreadable or not a
    regular file.  The caller closes the handle (closing standard input's handle leaves
    the process's standard input open).
    """
    source = str(path)
    if source == STDIN:
        return os.fdopen(os.dup(sys.stdin.fileno()), "rb")
    flags = os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        raise InputError(f"cannot read the {what}: not found (no such file)",
                         file=source) from None
    except OSError as exc:
        raise InputError(f"cannot read the {what}: {exc.strerror or exc}", file=source) from None
    mode = os.fstat(fd).st_mode
    if not stat.S_ISREG(mode):
        os.close(fd)
        hint = "; give '-' to read standard input" if (
            stat.S_ISFIFO(mode) and what == "catalogue") else ""
        raise InputError(f"cannot read the {what}: it is {_kind(mode)}, not a regular file"
                         f"{hint}", file=source)
    os.set_blocking(fd, True)
    return os.fdopen(fd, "rb")


def open_sized(path: str | Path, limit: int, *, what: str = "file") -> BinaryIO:
    """A handle on the regular file ``path`` (not ``-``) whose size is at most ``limit``
    bytes, for a reader that maps the file into memory (pages are read as they are used,
    never past the file's end) instead of reading it whole.

    Raises as :func:`open_input` does, and when the file is larger than ``limit``.
    """
    handle = open_input(path, what=what)
    if os.fstat(handle.fileno()).st_size > limit:
        handle.close()
        raise _too_large(str(path), limit, what)
    return handle


def read_input(path: str | Path, limit: int, *, what: str = "file") -> bytes:
    """The content of ``path`` (``-``: standard input): at most ``limit`` bytes.

    Raises :class:`InputError` as :func:`open_input` does, and when the content goes past
    ``limit`` bytes.  One read of at most ``limit + 1`` bytes fills a single buffer (the
    pages of the part never filled are never touched), so memory holds the content once.
    """
    source = str(path)
    with open_input(path, what=what) as handle:
        try:
            data = handle.read(limit + 1)
        except OSError as exc:
            raise InputError(f"cannot read the {what}: {exc.strerror or exc}",
                             file=source) from None
    if len(data) > limit:
        raise _too_large(source, limit, what)
    return data


# The size of a block read by read_blocks (more, to end on a line).  Above glibc's largest
# threshold for serving an allocation by its own mapping (32 MiB on 64-bit systems), so that
# a block let go is given back to the system at once instead of kept in the heap.
BLOCK_BYTES = 48 << 20


# polars allocates through its own jemalloc, which keeps freed pages for 10 s by default
# (read from this variable when polars is first loaded): give them back within 0.1 s
# instead.  0.5 s left the reader's freed pages in place while the night was computed
# (16 MiB more at the peak of `windows` on 200,000 sexagesimal rows); at once saved a
# little more but slowed the decimal path by about 0.1 s in 1.3 (docs/performance.md).
_POLARS_ALLOCATOR = ("_RJEM_MALLOC_CONF", "dirty_decay_ms:100,muzzy_decay_ms:0")
_TRIM: list = []  # glibc's malloc_trim, once looked up (None where there is none)


def give_back_freed() -> None:
    """Give the memory freed so far back to the system: glibc keeps freed chunks of its
    heap for reuse, and a chunk of a large array freed among small live ones stays in the
    process (after a large allocation is freed glibc raises its threshold for serving
    allocations by their own mapping, so later arrays of up to 32 MiB come from the heap).
    ``malloc_trim(0)`` (glibc) hands back the whole free pages; elsewhere this does nothing.
    """
    if not _TRIM:
        try:
            _TRIM.append(ctypes.CDLL(None).malloc_trim)
        except (OSError, AttributeError):
            _TRIM.append(None)
    if _TRIM[0] is not None:
        _TRIM[0](0)


def read_blocks(path: str | Path, limit: int, *, what: str = "file") -> list[bytes]:
    """The content of ``path`` (``-``: standard input) as blocks of about
    :data:`BLOCK_BYTES`, each but the last ending with a line feed: at most ``limit``
    bytes in all.

    Raises as :func:`read_input` does.  A reader that takes the blocks one by one can let
    each go once it is read, so that the file is never held whole beside what is made of it
    (and, if polars is not loaded yet, its allocator is told to give freed pages back at
    once unless ``_RJEM_MALLOC_CONF`` is set already).
    """
    os.environ.setdefault(*_POLARS_ALLOCATOR)
    source = str(path)
    blocks: list[bytes] = []
    carry = bytearray()  # read, not yet in a block: a line's start
    total = 0
    with open_input(path, what=what) as handle:
        while True:
            try:
                chunk = handle.read(min(BLOCK_BYTES, limit + 1 - total))
            except OSError as exc:
                raise InputError(f"cannot read the {what}: {exc.strerror or exc}",
                                 file=source) from None
            if not chunk:
                break
            total += len(chunk)
            if total > limit:
                raise _too_large(source, limit, what)
            carry += chunk
            del chunk
            cut = carry.rfind(b"\n") + 1
            if cut and len(carry) >= BLOCK_BYTES:
                blocks.append(bytes(memoryview(carry)[:cut]))
                del carry[:cut]
    if carry:
        blocks.append(bytes(carry))
    return blocks


def _too_large(source: str, limit: int, what: str) -> InputError:
    return InputError(f"larger than {_size_text(limit)}; a {what} of at most "
                      f"{_size_text(limit)} is read", file=source)
