"""Plain one-line notices from the engine (accuracy downgrades, skipped rows).

The engine never prints.  It records a notice here; the CLI prints each distinct notice
once on stderr after the command has run (or never, with ``--quiet``).
"""

from __future__ import annotations

from contextlib import contextmanager

_notices: list[str] = []


def add(message: str) -> None:
    """Record a notice once; repeated identical notices are folded."""
    if message not in _notices:
        _notices.append(message)


def take() -> list[str]:
    """Return the recorded notices and clear the list."""
    out = list(_notices)
    _notices.clear()
    return out


class Held:
    """Notices taken out of the list for a while (see :func:`held`)."""

    def __init__(self) -> None:
        self.lines: list[str] = []

    def release(self) -> None:
        """Record the held notices now, after whatever was recorded meanwhile."""
        for line in self.lines:
            add(line)
        self.lines = []


@contextmanager
def held():
    """Hold back the notices recorded inside the block until ``.release()`` is called, so
    that work done out of order (in another process) reports in the usual order."""
    start = len(_notices)
    box = Held()
    try:
        yield box
    finally:
        box.lines = _notices[start:]
        del _notices[start:]
