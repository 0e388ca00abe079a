"""Writing results to files atomically, so cron jobs never leave half a file.

The result goes to a temporary file in the same folder (``.NAME.XXXXXXXX.part``), is flushed
to the disk, and is then renamed over the name asked for (POSIX ``rename`` replaces the
old file in one step).  A run that is killed at any moment leaves either the old file or the
new one under that name, never a mixture; at worst a ``.part`` file is left beside it.

The file is written exactly where named: no folder is created, no suffix added, ``~`` is
not expanded.  Two cases are not plain files and are written in place instead:

* a symbolic link: the file it points to is replaced (atomically), and the link is kept;
* a character device or a named pipe (``/dev/stdout``, ``/dev/null``, a FIFO): written
  directly, as a stream cannot be renamed over.
"""

from __future__ import annotations

import errno
import os
import stat
import tempfile
from collections.abc import Iterable
from pathlib import Path

from skyplan.errors import OutputError

WRITE_CHUNK_BYTES = 1 << 20
FLUSH_AHEAD_BYTES = 8 << 20  # flush to the disk in the background after this much
TMP_NAME_CHARS = 100  # the temporary name repeats at most this much of the file name

_REASONS = {
    errno.ENOSPC: "no space left on the device",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.EROFS: "read-only file system",
    errno.EDQUOT: "disk quota exceeded",
    errno.ENAMETOOLONG: "file name too long",
    errno.EIO: "input/output error on the device",
}


def _reason(exc: OSError) -> str:
    return _REASONS.get(exc.errno, exc.strerror or str(exc))


def chunks(data: bytes | Iterable[bytes]) -> Iterable[bytes]:
    """The pieces of a result: one bytes object, or an iterable of them (streamed output)."""
    return (data,) if isinstance(data, (bytes, bytearray, memoryview)) else data


def write_atomic(path: str | Path, data: bytes | Iterable[bytes]) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    ``data`` may be an iterable of byte strings, written as they come (large results need not
    be held in memory whole).

    An interrupted run leaves the previous file untouched; the new file appears whole or not
    at all.  The folder must exist: it is never created behind the user's back.  Raises
    :class:`OutputError` with one line saying what is wrong.
    """
    asked = Path(path)
    try:
        target = _destination(asked)
        if target is None:
            _write_stream(asked, data)
            return
        _replace(asked, target, data)
    except OSError as exc:  # e.g. a name too long to look up
        raise OutputError(f"{asked}: cannot write ({_reason(exc)})") from None
    except ValueError as exc:  # e.g. an embedded NUL character in the name
        raise OutputError(f"{asked}: cannot write ({exc})") from None


def _destination(asked: Path) -> Path | None:
    """The regular file to replace, or None for a device or pipe written as a stream."""
    target = Path(os.path.realpath(asked)) if asked.is_symlink() else asked
    try:
        mode = os.stat(target).st_mode
    except (FileNotFoundError, NotADirectoryError):
        mode = None
    if mode is not None and stat.S_ISDIR(mode):
        raise OutputError(f"{asked}: is a folder, not a file")
    if mode is not None and (stat.S_ISCHR(mode) or stat.S_ISFIFO(mode)):
        return None
    if mode is not None and not stat.S_ISREG(mode):
        raise OutputError(f"{asked}: is not a regular file")
    folder = target.parent
    if not folder.exists():
        raise OutputError(f"{asked}: the folder {folder} does not exist")
    if not folder.is_dir():
        raise OutputError(f"{asked}: {folder} is not a folder")
    return target


def _write_stream(asked: Path, data) -> None:
    try:
        with open(asked, "wb") as handle:
            for piece in chunks(data):
                handle.write(piece)
    except OSError as exc:
        raise OutputError(f"{asked}: cannot write ({_reason(exc)})") from None


def _replace(asked: Path, target: Path, data) -> None:
    folder = target.parent
    tmp_name = None
    try:
        prefix = f".{target.name[:TMP_NAME_CHARS]}."
        fd, tmp_name = tempfile.mkstemp(prefix=prefix, suffix=".part", dir=folder)
        ahead = _FlushAhead(fd)
        try:
            for piece in chunks(data):
                write_all(fd, piece)
                ahead.written(len(piece))
            ahead.wait()
            os.fsync(fd)
        finally:
            ahead.wait(check=False)
            os.close(fd)
        if target.exists():
            os.chmod(tmp_name, target.stat().st_mode & 0o7777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp_name, 0o666 & ~umask)
        os.replace(tmp_name, target)
        tmp_name = None
        _sync_folder(folder)
    except OSError as exc:
        raise OutputError(f"{asked}: cannot write ({_reason(exc)})") from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass


class _FlushAhead:
    """Flush a long result to the disk in the background while the rest is produced.

    After every ``FLUSH_AHEAD_BYTES`` written, a thread calls ``fdatasync``, so that the
    final ``fsync`` only waits for the last part.  An error in the thread is raised by
    :meth:`wait` (the kernel reports a write-back error once, to whichever call sees it).
    """

    def __init__(self, fd: int) -> None:
        self.fd = fd
        self.pending = 0
        self.thread = None
        self.error: OSError | None = None

    def written(self, size: int) -> None:
        self.pending += size
        if self.pending < FLUSH_AHEAD_BYTES or (self.thread and self.thread.is_alive()):
            return
        import threading

        self.pending = 0
        self.thread = threading.Thread(target=self._flush, name="skyplan-flush", daemon=True)
        self.thread.start()

    def _flush(self) -> None:
        try:
            os.fdatasync(self.fd)
        except OSError as exc:
            self.error = exc

    def wait(self, check: bool = True) -> None:
        if self.thread is not None:
            self.thread.join()
            self.thread = None
        if check and self.error is not None:
            raise self.error


def write_all(fd: int, data: bytes) -> None:
    """``os.write`` until every byte is out (a write may take fewer bytes than offered)."""
    view = memoryview(data)
    while view:
        done = os.write(fd, view[:WRITE_CHUNK_BYTES])
        if done <= 0:
            raise OSError(errno.EIO, "the device accepted no bytes")
        view = view[done:]


def _sync_folder(folder: Path) -> None:
    """Flush the rename itself to the disk (best effort: not every file system allows it)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
