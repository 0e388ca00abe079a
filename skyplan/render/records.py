"""Machine-readable output: JSON, NDJSON and CSV from plain records (formatting only)."""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Sequence

import numpy as np


def _default(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def _clean(value):
    """Replace NaN/inf (not valid JSON) by null, recursively."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, np.generic):
        return _clean(value.item())
    return value


def to_json(document, *, indent: bool = True, clean: bool = True) -> bytes:
    """One JSON document (orjson: the standard library is too slow for 100,000 records).

    With ``clean=False`` the document is written as it is; orjson writes NaN and
    infinities as null, so the output is valid JSON either way.
    """
    import orjson

    option = (orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS | orjson.OPT_NAIVE_UTC
              | orjson.OPT_UTC_Z)
    if indent:
        option |= orjson.OPT_INDENT_2
    return (
        orjson.dumps(_clean(document) if clean else document, default=_default, option=option)
        + b"\n"
    )


def to_ndjson(records: Iterable[dict]) -> bytes:
    """One JSON object per line (NaN and infinities are written as null).

    Each line is appended to one growing buffer and let go at once: kept as separate bytes
    objects, a million short lines hold several kilobytes of allocator slack each.
    """
    import orjson

    option = (orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_APPEND_NEWLINE | orjson.OPT_NAIVE_UTC
              | orjson.OPT_UTC_Z)
    out = bytearray()
    for record in records:
        out += orjson.dumps(record, default=_default, option=option)
    return bytes(out)


def to_csv(records: Sequence[dict], columns: Sequence[str] | None = None) -> bytes:
    """CSV with a header; nested values are written as JSON text."""
    import orjson

    if columns is None:
        columns = list(records[0].keys()) if records else []
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for record in records:
        row = []
        for key in columns:
            value = _clean(record.get(key))
            if isinstance(value, (list, dict)):
                value = orjson.dumps(value).decode()
            elif value is None:
                value = ""
            row.append(value)
        writer.writerow(row)
    return buffer.getvalue().encode()
