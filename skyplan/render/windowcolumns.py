"""The windows record, defined once as columns, and every machine format written from it.

One record per target (the layout the README documents): each entry of :data:`FIELDS` is
one column of a polars DataFrame, and JSON, NDJSON, CSV and Parquet are all written by
polars from that frame.  A new output field is added to :data:`FIELDS` alone.

Values: numbers rounded to the places given here (NaN and infinities are null), instants as
ISO 8601 UTC text to the second with ``Z`` (in Parquet, UTC timestamps to the second; null
where an event does not happen), windows
as a list of ``{start, end, minutes}``, the minutes lost to each limit as one object, and
``identifier`` only in the records of targets whose name was resolved (in Parquet, a column
that is null elsewhere).  CSV flattens the
record: ``identifier`` second (when any target has one), the windows as ``START/END``
pairs joined by ``;`` after the plain fields, then ``lost_<limit>_min`` per limit; flags
are written ``True``/``False`` and missing values as empty fields.
"""

from __future__ import annotations

import io
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import polars as pl

    from skyplan.engine.windows import WindowResult

TEXT, NUMBER, INSTANT, FLAG, WINDOWS, LOST, OPTIONAL_TEXT = (
    "text", "number", "instant", "flag", "windows", "lost", "optional text")
ISO_FORMAT = "%Y-%m-%dT%H:%M:%SZ"
MINUTE_PLACES = 2  # windows' and lost minutes
_NO_IDENTIFIER = b',"identifier":null'  # the key is left out where no name was resolved
SCHEMA = "skyplan.windows/1"  # skyplan/data/windows.schema.json, README "Windows as JSON"
NIGHT_KEYS = ("date", "sun_state", "sunset", "sunrise", "dusk", "dawn", "dark_hours",
              "local_midnight")


@dataclass(frozen=True)
class Field:
    """One field of the record: its key, its kind, its values for targets ``s`` (a slice)
    of a :class:`~skyplan.engine.windows.WindowResult`, and its decimal places."""

    key: str
    kind: str
    values: Callable | None = None
    places: int = 0


def status(res: WindowResult, s: slice = slice(None)) -> np.ndarray:
    """always_up / always_up_blocked / never_up / observable / not_observable (rises but has
    no window), targets ``s``."""
    base = np.asarray(res.status[s], dtype=object)
    usable = res.usable_s[s] > 0
    return np.where(base == "never_up", "never_up",
                    np.where(base == "always_up",
                             np.where(usable, "always_up", "always_up_blocked"),
                             np.where(usable, "observable", "not_observable"))).astype(str)


FIELDS: tuple[Field, ...] = (
    Field("name", TEXT, lambda r, s: r.names[s]),
    Field("ra_deg", NUMBER, lambda r, s: r.ra_deg[s], 7),
    Field("dec_deg", NUMBER, lambda r, s: r.dec_deg[s], 7),
    Field("rise", INSTANT, lambda r, s: r.rise[s]),
    Field("transit", INSTANT, lambda r, s: r.transit[s]),
    Field("set", INSTANT, lambda r, s: r.set[s]),
    Field("transit_alt_deg", NUMBER, lambda r, s: r.transit_alt_deg[s], 3),
    Field("transit_airmass", NUMBER, lambda r, s: r.transit_airmass[s], 4),
    Field("windows", WINDOWS),
    Field("usable_minutes", NUMBER, lambda r, s: r.usable_s[s] / 60.0, MINUTE_PLACES),
    Field("best_time", INSTANT, lambda r, s: r.best_time[s]),
    Field("best_airmass", NUMBER, lambda r, s: r.best_airmass[s], 4),
    Field("status", TEXT, status),
    Field("lost_minutes", LOST),
    Field("near_sun", FLAG, lambda r, s: r.near_sun[s]),
    Field("daylight_window", FLAG, lambda r, s: r.daylight_window[s]),
    Field("sun_distance_deg", NUMBER, lambda r, s: r.sun_distance_deg[s], 2),
    Field("moon_distance_deg", NUMBER, lambda r, s: r.moon_distance_deg[s], 2),
    Field("identifier", OPTIONAL_TEXT, lambda r, s: r.identifiers[s]),
)


def _numbers(values, places: int):
    import polars as pl

    a = np.round(np.asarray(values, dtype=float), places)
    a[~np.isfinite(a)] = np.nan
    return pl.Series(a).fill_nan(None)


def _instants(unix, text: bool = True):
    """ISO 8601 UTC text to the second with Z (or, with ``text`` false, UTC datetimes to the
    second); null for NaN."""
    import polars as pl

    u = np.round(np.asarray(unix, dtype=float))
    missing = np.flatnonzero(~np.isfinite(u))
    seconds = pl.Series(np.where(np.isfinite(u), u, 0.0).astype("int64"))
    if len(missing):
        seconds = seconds.scatter(missing, None)
    instants = pl.from_epoch(seconds, time_unit="s").dt.replace_time_zone("UTC")
    return instants.dt.strftime(ISO_FORMAT) if text else instants


def _windows(res, a: int, b: int, text: bool = True):
    """Each target's windows as a list of ``{start, end, minutes}`` (empty: no window)."""
    import polars as pl

    w = res.windows
    lo, hi = np.searchsorted(w.rows, [a, b])  # intervals are sorted by row
    start, end = w.start[lo:hi], w.end[lo:hi]
    parts = pl.DataFrame({"row": (w.rows[lo:hi] - a).astype("int64"),
                          "start": _instants(start, text), "end": _instants(end, text),
                          "minutes": _numbers((end - start) / 60.0, MINUTE_PLACES)})
    lists = parts.group_by("row", maintain_order=True).agg(
        pl.struct("start", "end", "minutes").alias("windows"))
    rows = pl.DataFrame({"row": np.arange(b - a, dtype="int64")})
    column = rows.join(lists, on="row", how="left", maintain_order="left")["windows"]
    return column.fill_null(pl.lit([], dtype=lists.schema["windows"]))


def _lost(res, s: slice):
    import polars as pl

    return pl.DataFrame({k: _numbers(v[s] / 60.0, MINUTE_PLACES)
                         for k, v in res.lost_s.items()}).to_struct("lost_minutes")


def has_identifiers(res: WindowResult) -> bool:
    """Whether any target's name was resolved (the ``identifier`` column is then written)."""
    return bool((np.asarray(res.identifiers) != "").any())


def frame(res: WindowResult, a: int = 0, b: int | None = None, *,
          identifier: bool | None = None, text_times: bool = True) -> pl.DataFrame:
    """Targets ``a`` to ``b`` as a DataFrame, one column per field of :data:`FIELDS`.

    ``identifier`` says whether the identifier column is there (default: when any of these
    targets has one); it holds null where a target has none.  ``text_times`` false keeps
    instants as UTC datetimes (for Parquet) instead of ISO 8601 text.
    """
    import polars as pl

    b = len(res.names) if b is None else b
    s = slice(a, b)
    identifier = has_identifiers(res) if identifier is None else identifier
    columns = {}
    for f in FIELDS:
        if f.kind == NUMBER:
            columns[f.key] = _numbers(f.values(res, s), f.places)
        elif f.kind == INSTANT:
            columns[f.key] = _instants(f.values(res, s), text_times)
        elif f.kind == FLAG:
            columns[f.key] = pl.Series(np.asarray(f.values(res, s), dtype=bool))
        elif f.kind == TEXT:
            columns[f.key] = _text(f.values(res, s))
        elif f.kind == WINDOWS:
            columns[f.key] = _windows(res, a, b, text_times)
        elif f.kind == LOST:
            columns[f.key] = _lost(res, s)
        elif identifier:  # OPTIONAL_TEXT
            text = _text(f.values(res, s))
            columns[f.key] = pl.select(pl.when(text != "").then(text)).to_series()
    return pl.DataFrame([v.alias(k) for k, v in columns.items()])


def _text(values) -> pl.Series:
    """Names and other texts as a polars column: numpy ``StringDType`` (the catalogue's
    texts) is taken as it is, anything else as ``str``."""
    import polars as pl

    texts = np.asarray(values)
    return pl.Series(texts if texts.dtype.kind == "T" else texts.astype(str), dtype=pl.String)


def records(res: WindowResult) -> list[dict]:
    """The records as dictionaries (for the small, indented JSON document)."""
    out = frame(res).to_dicts()
    for record in out:
        if record.get("identifier", "") is None:
            del record["identifier"]
    return out


def ndjson(table: pl.DataFrame) -> bytes:
    """One record a line."""
    buffer = io.BytesIO()
    table.write_ndjson(buffer)
    data = buffer.getvalue()
    return data.replace(_NO_IDENTIFIER, b"") if "identifier" in table.columns else data


def document_head(res: WindowResult, site) -> dict:
    """What the windows document says before its targets: schema, site, night and limits
    (the same records as the plan document's)."""
    from skyplan.render.nightview import night_record
    from skyplan.render.tables import site_record

    n = night_record(res.night, site)
    return {"schema": SCHEMA, "site": site_record(site, brief=True),
            "night": {k: n[k] for k in NIGHT_KEYS}, "limits": res.limits.as_record()}


def json_stream(tables: Iterable[pl.DataFrame],
                head: dict | None = None) -> Iterator[bytes | memoryview]:
    """Every record of the frames, in order, as it is produced: one JSON array, or with
    ``head`` (:func:`document_head`) the windows document, the records in its ``targets``.

    The array's members are the NDJSON lines joined by commas (a JSON text holds no raw
    line break: polars escapes those inside strings)."""
    if head is not None:
        from skyplan.render.records import to_json

        yield to_json(head, indent=False)[:-2] + b',"targets":'
    yield b"["
    first = True
    for table in tables:
        lines = ndjson(table)
        if not lines:
            continue
        if not first:
            yield b","
        yield memoryview(lines.replace(b"\n", b","))[:-1]
        first = False
    yield b"]\n" if head is None else b"]}\n"


def ndjson_stream(tables: Iterable[pl.DataFrame]) -> Iterator[bytes]:
    return (ndjson(table) for table in tables)


def csv_columns(lost_keys: Sequence[str], *, with_identifier: bool) -> list[str]:
    """The CSV header: the plain fields in record order (``identifier`` second), then the
    nested ones, flattened: ``windows``, then ``lost_<limit>_min`` per limit."""
    plain = [f.key for f in FIELDS if f.kind not in (WINDOWS, LOST, OPTIONAL_TEXT)]
    if with_identifier:
        plain.insert(1, "identifier")
    nested = []
    for f in FIELDS:
        if f.kind == WINDOWS:
            nested.append(f.key)
        elif f.kind == LOST:
            nested.extend(f"lost_{k}_min" for k in lost_keys)
    return plain + nested


def csv(table: pl.DataFrame, lost_keys: Sequence[str], *, header: bool) -> bytes:
    """The frame as CSV rows (with the header line when ``header``)."""
    import polars as pl

    flat = []
    for f in FIELDS:
        if f.key not in table.columns:
            continue
        col = pl.col(f.key)
        if f.kind == WINDOWS:
            pair = pl.element().struct.field("start") + "/" + pl.element().struct.field("end")
            flat.append(col.list.eval(pair).list.join(";"))
        elif f.kind == LOST:
            flat.extend(col.struct.field(k).alias(f"lost_{k}_min") for k in lost_keys)
        elif f.kind == FLAG:
            flat.append(pl.when(col).then(pl.lit("True")).otherwise(pl.lit("False")).alias(f.key))
        else:
            flat.append(col)
    columns = csv_columns(lost_keys, with_identifier="identifier" in table.columns)
    buffer = io.BytesIO()
    table.select(flat).select(columns).write_csv(buffer, include_header=header)
    return buffer.getvalue()


def csv_stream(tables: Iterable[pl.DataFrame], lost_keys: Sequence[str]) -> Iterator[bytes]:
    for k, table in enumerate(tables):
        yield csv(table, lost_keys, header=k == 0)


def parquet(tables: Iterable[pl.DataFrame]) -> bytes:
    """Every record in one Parquet file (the nested fields stay nested)."""
    import polars as pl

    buffer = io.BytesIO()
    pl.concat(list(tables)).write_parquet(buffer)
    return buffer.getvalue()
