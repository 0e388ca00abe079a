"""Deep-sky objects by name, from the OpenNGC database (read-only, offline).

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
"""

from __future__ import annotations

import functools
import sqlite3
from dataclasses import dataclass

import numpy as np

from skyplan.errors import DataError
from skyplan.names.keys import key_of, pretty

OPENNGC_EPOCH_JYEAR = 2000.0

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


@dataclass
class DeepSky:
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


def cross_keys(refs: str, prefix: str) -> list[str]:
    """"0650,0651" -> ["NGC650", "NGC651"] (lookup keys of cross references)."""
    return [f"{prefix}{int(n)}" for n in refs.split(",") if n.strip().isdigit()]


@functools.cache
def deep_sky() -> DeepSky:
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
    keys = {key_of(name): row for row, name in enumerate(names)}
    for row, m in enumerate(messier):
        if m and types[row] != "Dup":
            keys.setdefault(f"M{int(m)}", row)
    for row, kind in enumerate(types):  # a duplicate record stands for its primary record
        if kind == "Dup":
            refs = cross_keys(ngc[row], "NGC") + cross_keys(ic[row], "IC")
            refs += [f"M{int(messier[row])}"] if messier[row] else []
            primary = [keys[r] for r in refs if r in keys and types[keys[r]] != "Dup"]
            if primary:
                keys[key_of(names[row])] = primary[0]
    for row, names_here in enumerate(commons):
        for c in names_here:
            keys.setdefault(key_of(c), row)
    source = f"OpenNGC (pyongc {getattr(pyongc, '__version__', '?')}, data {pyongc.DBDATE})"
    return DeepSky(
        list(names), list(types), messier, ngc, ic, commons,
        np.degrees(np.array(ra, dtype=float)), np.degrees(np.array(dec, dtype=float)),
        np.nan_to_num(np.array(pmra, dtype=float)), np.nan_to_num(np.array(pmdec, dtype=float)),
        np.where(galactic, np.nan_to_num(np.array(plx, dtype=float)), 0.0),
        np.where(galactic, np.nan_to_num(np.array(radvel, dtype=float)), 0.0),
        mag, keys, source, path,
    )


@functools.cache
def deep_sky_extra() -> tuple[dict[str, int], dict[str, str], list[str]]:
    """Cross-identifiers (PGC, UGC, MCG, LBN, Caldwell ...): key -> row, key -> identifier,
    and each row's comma-separated list.  Read only when a name is not a primary name."""
    ds = deep_sky()
    per_row = [ids or "" for (ids,) in _query(ds.path, "SELECT identifiers FROM objects"
                                                       " ORDER BY id")]
    keys: dict[str, int] = {}
    raw: dict[str, str] = {}
    for row, ids in enumerate(per_row):
        for ident in ids.split(","):
            key = key_of(ident)
            if key and key not in ds.keys and key not in keys:
                keys[key], raw[key] = row, ident
    return keys, raw, per_row


def row_identifiers(ds: DeepSky, row: int) -> tuple[str, ...]:
    """Cross-identifiers of one row, as printed (from the index if built, else one query)."""
    if deep_sky_extra.cache_info().currsize:
        ids = deep_sky_extra()[2][row]
    else:
        found = _query(ds.path, "SELECT identifiers FROM objects WHERE name = ?",
                       (ds.names[row],))
        ids = (found[0][0] if found else "") or ""
    return tuple(pretty(i) for i in ids.split(",") if i.strip())


def deep_sky_identifier(ds: DeepSky, row: int) -> str:
    parts = []
    if ds.messier[row]:
        parts.append(f"M {int(ds.messier[row])}")
    own = pretty(ds.names[row])
    if own not in parts:
        parts.append(own)
    return " = ".join(parts)
