"""The season record and its machine formats (JSON, NDJSON, CSV, Parquet), written by polars.

One record per target: ``name``, ``first_night``, ``last_night`` and ``best_night`` (local
``YYYY-MM-DD`` of the evening, null when no night qualifies), ``best_night_minutes``,
``nights_observable`` (nights with at least the minimum usable minutes),
``usable_hours_total`` (the usable hours of those nights), ``months`` (``YYYY-MM`` of every
month holding such a night) and, on request, ``nights``: a list of ``{date,
usable_minutes, airmass_mid, moon_illumination}``, one per night of the range.  CSV: the
summary, one row per target, ``months`` joined by ``;``; with the nights, one row per target
and night (``name,date,usable_minutes,airmass_mid,moon_illumination``).
"""

from __future__ import annotations

import io
from collections.abc import Iterator

import numpy as np

from skyplan.text import fixed_width

MINUTE_PLACES = 2
AIRMASS_PLACES = 4
ILLUMINATION_PLACES = 4


def _numbers(values, places: int):
    import polars as pl

    a = np.round(np.asarray(values, dtype=float), places)
    a[~np.isfinite(a)] = np.nan
    return pl.Series(a).fill_nan(None)


def _dates(summary, index):
    import polars as pl

    text = summary.date_text(index).astype(str)
    s = pl.Series(text, dtype=pl.String)
    return pl.select(pl.when(s != "").then(s)).to_series()


def frame(season, a: int = 0, b: int | None = None, *, per_night: bool = False):
    """Targets ``a`` to ``b`` of a :class:`skyplan.api.season.Season` as a DataFrame."""
    import polars as pl

    b = len(season.names) if b is None else b
    s = season.summary() if (a, b) == (0, len(season.names)) else _part(season, a, b)
    n = b - a
    rows = np.arange(n)
    cols = {
        "name": pl.Series(fixed_width(season.names[a:b]), dtype=pl.String),
        "first_night": _dates(s, s.first), "last_night": _dates(s, s.last),
        "best_night": _dates(s, s.best),
        "best_night_minutes": _numbers(s.best_minutes, MINUTE_PLACES),
        "nights_observable": pl.Series(s.nights_observable.astype("int64")),
        "usable_hours_total": _numbers(s.usable_hours, 3),
    }
    r, m = np.nonzero(s.month_share > 0)
    months = pl.DataFrame({"row": r.astype("int64"),
                           "m": np.asarray(s.months, dtype=object)[m].astype(str)})
    listed = months.group_by("row", maintain_order=True).agg(pl.col("m").alias("months"))
    base = pl.DataFrame({"row": rows.astype("int64")})
    cols["months"] = base.join(listed, on="row", how="left", maintain_order="left")[
        "months"].fill_null(pl.lit([], dtype=pl.List(pl.String)))
    out = pl.DataFrame([v.alias(k) for k, v in cols.items()])
    if per_night:  # every target has every night, in order: the long column cut in rows
        long = night_frame(season, a, b, with_row=True).select(
            pl.struct("date", "usable_minutes", "airmass_mid", "moon_illumination")
            .alias("nights")).to_series()
        cut = long.reshape((n, len(season.dates)))
        out = out.with_columns(cut.cast(pl.List(cut.dtype.inner)).alias("nights"))
    return out


def _part(season, a: int, b: int):
    from skyplan.engine.season import summarise

    return summarise(season.usable_min[a:b], season.airmass_mid[a:b], season.dates,
                     season.min_minutes)


def night_frame(season, a: int, b: int, *, with_row: bool = False):
    """One row per target and night, targets ``a..b`` (the long form of the matrix)."""
    import polars as pl

    n, m = b - a, len(season.dates)
    dates = pl.Series([d.isoformat() for d in season.dates], dtype=pl.String)
    cols = {}
    if with_row:
        cols["row"] = pl.Series(np.repeat(np.arange(n, dtype="int64"), m))
    else:  # each text built once, then repeated by index (in polars, not as Python text)
        names = pl.Series(fixed_width(season.names[a:b]), dtype=pl.String)
        cols["name"] = names.gather(np.repeat(np.arange(n), m))
    cols["date"] = dates.gather(np.tile(np.arange(m), n))
    cols["usable_minutes"] = _numbers(season.usable_min[a:b].ravel(), MINUTE_PLACES)
    cols["airmass_mid"] = _numbers(season.airmass_mid[a:b].ravel(), AIRMASS_PLACES)
    cols["moon_illumination"] = _numbers(np.tile(season.moon_illumination, n),
                                         ILLUMINATION_PLACES)
    return pl.DataFrame([v.alias(k) for k, v in cols.items()])


BLOCK = 5_000  # targets a frame when written piece by piece


def frames(season, *, per_night: bool) -> Iterator:
    n = len(season.names)
    for a in range(0, max(n, 1), BLOCK):
        yield frame(season, a, min(n, a + BLOCK), per_night=per_night)


def ndjson_stream(season, *, per_night: bool) -> Iterator[bytes]:
    for table in frames(season, per_night=per_night):
        buffer = io.BytesIO()
        table.write_ndjson(buffer)
        yield buffer.getvalue()


def json_stream(season, *, per_night: bool) -> Iterator[bytes]:
    yield b"["
    first = True
    for lines in ndjson_stream(season, per_night=per_night):
        if not lines:
            continue
        if not first:
            yield b","
        yield lines[:-1].replace(b"\n", b",")
        first = False
    yield b"]\n"


def csv_stream(season, *, per_night: bool) -> Iterator[bytes]:
    import polars as pl

    n = len(season.names)
    for k, a in enumerate(range(0, max(n, 1), BLOCK)):
        b = min(n, a + BLOCK)
        if per_night:
            table = night_frame(season, a, b)
        else:
            table = frame(season, a, b).with_columns(pl.col("months").list.join(";"))
        buffer = io.BytesIO()
        table.write_csv(buffer, include_header=k == 0)
        yield buffer.getvalue()


class _Sink(io.RawIOBase):
    """The file pyarrow's Parquet writer writes into: it hands the bytes on as they come
    and keeps only their count (the writer's offsets)."""

    def __init__(self) -> None:
        super().__init__()
        self.pieces: list[bytes] = []
        self.size = 0

    def writable(self) -> bool:
        return True

    def write(self, data) -> int:
        piece = bytes(data)
        self.pieces.append(piece)
        self.size += len(piece)
        return len(piece)

    def tell(self) -> int:
        return self.size

    def take(self) -> bytes:
        out = b"".join(self.pieces)
        self.pieces.clear()
        return out


def parquet_stream(season, *, per_night: bool) -> Iterator[bytes]:
    """Every record in one Parquet file, written frame by frame (one row group per
    :data:`BLOCK` targets; ``nights`` nested), so that only one frame is held at a time."""
    import pyarrow.parquet as pq

    sink = _Sink()
    writer = None
    for table in frames(season, per_night=per_night):
        arrow = table.to_arrow()
        if writer is None:
            writer = pq.ParquetWriter(sink, arrow.schema, compression="zstd")
        writer.write_table(arrow.cast(writer.schema))
        yield sink.take()
    if writer is not None:
        writer.close()
    yield sink.take()
