"""Plain one-line notices from the engine (accuracy downgrades, skipped rows).

The engine never prints.  It records a notice here; the CLI prints each distinct notice
once on stderr after the command has run (or never, with ``--quiet``).
"""

from __future__ import annotations

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
