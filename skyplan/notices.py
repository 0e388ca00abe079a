"""Plain one-line notices from the engine (accuracy downgrades, skipped rows).

The engine never prints.  It records a notice here.  Each public API function hands the
notices recorded during its call to Python's ``warnings`` as :class:`SkyplanWarning`
(:func:`as_warnings`, the one bridge); the CLI prints every distinct one once on stderr as a
``note:`` line after the command has run (or never, with ``--quiet``).
"""

from __future__ import annotations

import functools
import warnings
from collections.abc import Callable
from typing import TypeVar

_notices: list[str] = []

F = TypeVar("F", bound=Callable)


class SkyplanWarning(UserWarning):
    """A notice from skyplan: something was skipped, assumed or computed less precisely."""


def add(message: str) -> None:
    """Record a notice once; repeated identical notices are folded."""
    if message not in _notices:
        _notices.append(message)


def take() -> list[str]:
    """Return the recorded notices and clear the list."""
    out = list(_notices)
    _notices.clear()
    return out


def as_warnings(function: F) -> F:
    """Deliver the notices recorded during a call of ``function`` as SkyplanWarning, in
    their order, when the call ends (returning or raising)."""

    @functools.wraps(function)
    def call(*args, **kwargs):
        start = len(_notices)
        try:
            return function(*args, **kwargs)
        finally:
            lines = _notices[start:]
            del _notices[start:]
            for line in lines:
                warnings.warn(line, SkyplanWarning, stacklevel=2)

    return call  # type: ignore[return-value]

