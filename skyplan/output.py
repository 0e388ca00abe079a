"""Writing results to files atomically, so cron jobs never leave half a file."""

from __future__ import annotations

import errno
import os
import tempfile
from pathlib import Path

from skyplan.errors import OutputError


def write_atomic(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    An interrupted run leaves the previous file untouched; the new file appears whole or not
    at all.  The folder must exist: it is never created behind the user's back.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{target}: the folder {folder} does not exist")
    if target.is_dir():
        raise OutputError(f"{target}: is a folder, not a file")
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        if target.exists():
            os.chmod(tmp_name, target.stat().st_mode & 0o7777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp_name, 0o666 & ~umask)
        os.replace(tmp_name, target)
        tmp_name = None
    except OSError as exc:
        reason = {
            errno.ENOSPC: "no space left on the device",
            errno.EACCES: "permission denied",
            errno.EPERM: "permission denied",
            errno.EROFS: "read-only file system",
            errno.EDQUOT: "disk quota exceeded",
        }.get(exc.errno, exc.strerror or str(exc))
        raise OutputError(f"{target}: cannot write ({reason})") from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass
