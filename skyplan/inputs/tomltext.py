"""TOML text for the sites file: parsed to plain data with every problem as an
:class:`~skyplan.errors.InputError` (syntax errors with their line, nesting bounded without
recursion), the line on which each key stands (for messages that name it), and keys and
values written back (:func:`toml_key`, :func:`toml_value`).

The parser is the standard library's ``tomllib`` (TOML 1.0); this module only finds lines
and bounds what a hostile file could make it do.
"""

from __future__ import annotations

import json
import re
import tomllib

from skyplan.errors import InputError
from skyplan.inputs.fieldvalues import shown
from skyplan.text import excerpt

MAX_NESTING = 8  # tables and arrays inside one another, the document counting 1: the
# pairs of a horizon and the ranges of the limits are 5 deep


def toml_key(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else json.dumps(name)


def toml_value(value: object) -> str:
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, int | float):
        return repr(float(value))
    raise TypeError(f"cannot write {shown(value)} to a sites file")


# --------------------------------------------------------------------------- reading

_KEY_PART = r'"(?:[^"\\]|\\.)*"|\'[^\']*\'|[A-Za-z0-9_-]+'
_DOTTED = rf"(?:{_KEY_PART})(?:\s*\.\s*(?:{_KEY_PART}))*"
_HEADER_RE = re.compile(rf"\s*\[\s*({_DOTTED})\s*\]\s*(?:#.*)?")
_KEY_RE = re.compile(rf"\s*({_DOTTED})\s*=")
_TOML_WHERE = re.compile(r"\s*\(at line (\d+), column \d+\)\s*$")


class KeyLines:
    """Best-effort line numbers of TOML keys, found by scanning the text."""

    def __init__(self, text: str) -> None:
        self._first: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        for line_no, line in enumerate(text.splitlines(), start=1):
            header = _HEADER_RE.fullmatch(line)
            if header:
                table = _key_parts(header.group(1))
                self._first.setdefault(table, line_no)
                continue
            key = _KEY_RE.match(line)
            if key:
                self._first.setdefault(table + _key_parts(key.group(1)), line_no)

    def of(self, *path: str) -> int | None:
        """Line of the key at ``path``, else of its nearest enclosing table found."""
        for end in range(len(path), 0, -1):
            if path[:end] in self._first:
                return self._first[path[:end]]
        return None


def field_of(key_path: tuple[str, ...]) -> str:
    """The dotted field of a key for a message, each part a short escaped excerpt."""
    return ".".join(excerpt(part) for part in key_path)


def _key_parts(dotted: str) -> tuple[str, ...]:
    parts = re.findall(_KEY_PART, dotted)
    return tuple(_unquoted(p) for p in parts)


def _unquoted(part: str) -> str:
    """A key part as TOML reads it: a basic string's escapes (``\\u001b``) decoded."""
    if part[:1] == '"' and "\\" in part:
        try:
            return tomllib.loads(f"k = {part}")["k"]
        except tomllib.TOMLDecodeError:
            return part[1:-1]
    return part[1:-1] if part[:1] in "\"'" else part


def nesting(value: object) -> int:
    """How deeply arrays and tables nest in a parsed TOML value (without recursion)."""
    deepest, stack = 0, [(value, 0)]
    while stack:
        item, depth = stack.pop()
        if isinstance(item, dict | list):
            depth += 1
            if depth > MAX_NESTING:
                return depth
            deepest = max(deepest, depth)
            stack.extend((child, depth) for child in
                         (item.values() if isinstance(item, dict) else item))
    return deepest


def parse_toml(text: str, name: str) -> tuple[dict | None, list[InputError]]:
    """The TOML document, or the one problem that stops it being read."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        where = _TOML_WHERE.search(message)
        line = int(where.group(1)) if where else None
        return None, [
            InputError(f"TOML syntax: {_TOML_WHERE.sub('', message)}", file=name, line=line)
        ]
    except RecursionError:
        data = None
    except ValueError as exc:  # an integer of more digits than Python converts
        return None, [InputError(f"TOML value: {str(exc).split(';')[0]}", file=name)]
    if data is None or nesting(data) > MAX_NESTING:
        return None, [InputError(
            f"arrays or tables nested more than {MAX_NESTING} deep", file=name)]
    return data, []
