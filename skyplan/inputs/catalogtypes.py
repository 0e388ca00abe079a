"""The catalogue's types: :class:`Catalog` (targets as numpy columns), :class:`CatalogRead`
(a catalogue with what its reader noticed) and :class:`Columns`, the raw columns that every
format reader hands on to be checked (:mod:`skyplan.inputs.catalogrows`).

:class:`NumberCells` is a numeric column read at once by a fast reader.  The formats and
columns are described in :mod:`skyplan.inputs.catalog`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, fields

import numpy as np
from numpy.dtypes import StringDType

from skyplan.errors import InputError


@dataclass
class Catalog:
    """Targets as equal-length numpy columns.

    ``ra_deg``/``dec_deg`` are NaN for rows that give a name only.  ``priority``: higher
    numbers are more important (default 1).  ``exposure_s``: NaN means the command's
    default.  ``line``: where the row is in ``source`` — the 1-based line of a text file
    (CSV, TSV, TXT, ECSV), or the 1-based row number of a FITS or VOTable table.

    Texts are numpy ``StringDType`` arrays (no Python string per row).  A column the file
    does not have is its default broadcast over the rows (read-only; no memory per row).
    A new column is a field here and an entry of ``catalogrows.COLUMNS`` of the same key.
    """

    name: np.ndarray  # numpy StringDType
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    pm_ra_masyr: np.ndarray  # μα·cos δ
    pm_dec_masyr: np.ndarray
    epoch_jyear: np.ndarray
    parallax_mas: np.ndarray
    radial_velocity_kms: np.ndarray
    priority: np.ndarray  # int64
    exposure_s: np.ndarray
    notes: np.ndarray  # numpy StringDType
    line: np.ndarray  # int64
    source: str = ""
    timed: dict[str, np.ndarray] = field(default_factory=dict)  # ephemeris columns, raw

    def __post_init__(self) -> None:
        lengths = {f: len(getattr(self, f)) for f in _ARRAY_FIELDS}
        if len(set(lengths.values())) > 1:
            raise ValueError(f"catalogue columns differ in length: {lengths}")

    def __len__(self) -> int:
        return len(self.name)

    def subset(self, index: np.ndarray | Sequence[int]) -> Catalog:
        """The rows picked by an integer index array or a boolean mask, in that order."""
        picked = np.asarray(index)
        if picked.ndim != 1:
            raise ValueError("subset needs a one-dimensional index or mask")
        if picked.size == 0:
            picked = picked.astype(np.intp)
        return Catalog(**{f: getattr(self, f)[picked] for f in _ARRAY_FIELDS}, source=self.source,
                       timed={k: v[picked] for k, v in self.timed.items()})

    @property
    def needs_lookup(self) -> np.ndarray:
        """True for rows whose position must be found from the name (RA or Dec is NaN)."""
        return np.isnan(self.ra_deg) | np.isnan(self.dec_deg)


_ARRAY_FIELDS = tuple(f.name for f in fields(Catalog) if f.name not in ("source", "timed"))


@dataclass
class CatalogRead:
    """A catalogue as read, with what the reader noticed on the way."""

    catalog: Catalog
    skipped: list[InputError] = field(default_factory=list)  # one per dropped row
    duplicates: list[str] = field(default_factory=list)  # names given more than once
    ignored_columns: list[str] = field(default_factory=list)  # header names not used



class NumberCells(Sequence[str]):
    """A numeric column read at once: ``numbers`` (NaN where a cell is empty, infinity
    where it is not a plain decimal) and the text of the cells that need a second look
    (``rows``, sorted, and ``texts``): those not plain decimals and those failing the
    column's check (``delimited.Check``).  Indexing gives the text of such a cell; other
    cells have none."""

    def __init__(self, numbers: np.ndarray, rows: np.ndarray, texts: np.ndarray) -> None:
        self.numbers, self.rows, self.texts = numbers, rows, texts

    def __len__(self) -> int:
        return len(self.numbers)

    def __getitem__(self, row: int) -> str:  # type: ignore[override]
        k = int(np.searchsorted(self.rows, row))
        if k == len(self.rows) or self.rows[k] != row:
            raise IndexError(f"cell {row} was read as a number; its text is not kept")
        return str(self.texts[k])

    def any_read(self) -> bool:
        """Whether any cell was read as a finite number (else the column is all text)."""
        return bool(np.isfinite(self.numbers).any())

    def all_texts(self) -> np.ndarray:
        """Every cell as text (read only when no cell was a plain decimal: see any_read)."""
        full = np.full(len(self.numbers), "", dtype=StringDType())
        full[self.rows] = self.texts
        return full


@dataclass
class Columns:
    """What a format reader hands on: raw column values by field, before any checking."""

    source: str
    headers: dict[str, str]  # field -> column name as written in the file
    values: dict[str, Sequence[object]]  # field -> text, NumberCells, or typed numbers
    where: np.ndarray  # line (text files) or row number (tables) of each row
    in_lines: bool  # whether ``where`` holds text lines
    ignored: list[str]
    problems: dict[int, list[tuple[str | None, str]]]  # row -> [(column, message)]
    trimmed: bool = False  # every text is printable ASCII without a space at either end
    decimals: dict[str, np.ndarray] = field(default_factory=dict)  # see NumberCells
