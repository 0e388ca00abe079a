"""User text made safe for a terminal: the one list of characters that must not be printed raw.

A name, a note or a file name that reaches stdout or stderr could carry characters that move
the cursor, clear the screen, set the window title or reorder what follows: C0 and C1
control characters (newline and tab included), DEL, the line and paragraph separators and
the bidirectional embeddings, overrides and isolates.  Readers refuse them at the input
edge (:func:`first_unprintable` finds the one to name); where refusing is wrong (an option
value quoted back in an error, a file name) :func:`escaped` shows them as Python-style
escapes instead.  Every layer imports this module; it imports nothing of skyplan.
"""

from __future__ import annotations

import re

UNPRINTABLE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def escaped(text: str) -> str:
    """``text`` with every :data:`UNPRINTABLE` character written as an escape (``\\x1b``,
    ``\\u202e``); other characters unchanged."""
    return UNPRINTABLE.sub(lambda m: repr(m.group())[1:-1], text)


def first_unprintable(text: str) -> str | None:
    """The first :data:`UNPRINTABLE` character of ``text`` as ``U+XXXX``, or None."""
    match = UNPRINTABLE.search(text)
    return None if match is None else f"U+{ord(match.group()):04X}"


EXCERPT_CHARS = 40  # a quote of user text in a message is cut to this many characters


def excerpt(text: str, limit: int = EXCERPT_CHARS) -> str:
    """A short quote of user text for a message: escaped (:func:`escaped`), then cut to
    ``limit`` characters with ``…`` at the end when longer."""
    shown = escaped(text)
    return shown if len(shown) <= limit else shown[: limit - 1] + "…"


def fixed_width(texts):
    """Texts (a numpy ``StringDType`` array, as catalogues give names and notes, or any
    array of str) as a fixed-width numpy ``str`` array, the form astropy tables take."""
    import numpy as np

    array = np.asarray(texts)
    return (array.astype(object) if array.dtype.kind == "T" else array).astype(str)


def quoted(text: str, limit: int = EXCERPT_CHARS) -> str:
    """:func:`excerpt` between single quotes, as messages quote what was given."""
    return f"'{excerpt(text, limit)}'"
