"""Offline target names: one name (or a column of names) to a target, from every source.

The sources, each in its own module: deep-sky catalogues (:mod:`skyplan.names.deepsky`),
Hipparcos stars and star names (:mod:`skyplan.names.stars`), the Sun, Moon, planets and
orbits (:mod:`skyplan.names.bodies`); how names are compared (:mod:`skyplan.names.keys`).
This module decides which source answers a name, builds the result, and suggests the
closest names when none does.  Indexes are built once per process, on first use (the OpenNGC
cross-identifiers only when a name is not a primary name); nothing is cached on disk.
"""

from __future__ import annotations

import difflib
import functools
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from skyplan.errors import InputError
from skyplan.names.bodies import BODIES, SOURCE_BODY, find_orbit, index_orbits
from skyplan.names.deepsky import (
    OPENNGC_EPOCH_JYEAR,
    OPENNGC_TYPES,
    DeepSky,
    cross_keys,
    deep_sky,
    deep_sky_extra,
    deep_sky_identifier,
    row_identifiers,
)
from skyplan.names.keys import CATALOGUE_KEY, PRIMARY_PREFIXES, key_of, normalise, pretty
from skyplan.names.stars import (
    HIPPARCOS_EPOCH_JYEAR,
    SOURCE_HIPPARCOS,
    STAR_NAMES_PATH,
    hipparcos_records,
    star_names,
)

if TYPE_CHECKING:
    from skyplan.inputs.orbits import OrbitElements

# names of the source modules that callers of this module use
__all__ = ["KIND_BODY", "KIND_DEEP_SKY", "KIND_ORBIT", "KIND_STAR", "STAR_NAMES_PATH",
           "Resolved", "ResolvedColumn", "find_orbit", "hipparcos_records", "normalise",
           "resolve", "resolve_many"]


KIND_STAR = "star"
KIND_DEEP_SKY = "deep_sky"
KIND_BODY = "body"
KIND_ORBIT = "orbit"


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

_HIP_KEY = re.compile(r"HIP(\d{1,7})")
SUGGEST_LIMIT = 20


def _classify(key: str, orbit_index: dict[str, int]) -> tuple[str, object]:
    """Which source answers a key: ("orbit", i), ("body", k), ("hip", n), ("deep", row)..."""
    if key in orbit_index:
        return "orbit", orbit_index[key]
    if key in BODIES:
        return "body", key
    m = _HIP_KEY.fullmatch(key)
    if m:
        return "hip", int(m.group(1))
    star = star_names()[0].get(key)
    if star is not None:
        return "hip", star.hip
    ds = deep_sky()
    if key in ds.keys:
        return "deep", ds.keys[key]
    m = CATALOGUE_KEY.fullmatch(key)
    if m and m.group(1) in PRIMARY_PREFIXES:  # never among the cross-identifiers
        return "unknown", None
    extra = deep_sky_extra()[0]
    if key in extra:
        return "deep", extra[key]
    return "unknown", None


@functools.cache
def _word_names() -> dict[str, str]:
    """Names without catalogue numbers (for suggestions): key -> name as printed."""
    out = {k: v[0] for k, v in BODIES.items()}
    out.update({k: s.name for k, s in star_names()[0].items()})
    for names_here in deep_sky().common:
        for c in names_here:
            if not CATALOGUE_KEY.fullmatch(key_of(c)):
                out.setdefault(key_of(c), c)
    return out


@functools.cache
def _catalogue_keys(prefix: str) -> frozenset[str]:
    """Known lookup keys with one catalogue prefix (for suggestions)."""
    tables = [deep_sky().keys]
    if prefix not in PRIMARY_PREFIXES:
        tables.append(deep_sky_extra()[0])
    return frozenset(k for table in tables for k in table
                     if k.startswith(prefix) and k[len(prefix):][:1].isdigit())


def _shown(key: str) -> str:
    """A deep-sky lookup key as the catalogue prints it."""
    ds = deep_sky()
    row = ds.keys.get(key)
    if row is None:
        return pretty(deep_sky_extra()[1].get(key, key))
    if key_of(ds.names[row]) == key:
        return pretty(ds.names[row])
    if ds.messier[row] and key == f"M{int(ds.messier[row])}":
        return f"M {int(ds.messier[row])}"
    return next((c for c in ds.common[row] if key_of(c) == key), key)


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
    m = CATALOGUE_KEY.fullmatch(key)
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


def _nonexistent(name: str, ds: DeepSky, row: int) -> InputError | None:
    if ds.types[row] == "NonEx":
        return InputError(f"'{name}' ({pretty(ds.names[row])}) is listed in OpenNGC as a "
                          "nonexistent object", field="name")
    if ds.types[row] == "Dup":
        return InputError(f"'{name}' is a duplicate record in OpenNGC whose primary record "
                          "could not be found", field="name")
    if not (np.isfinite(ds.ra_deg[row]) and np.isfinite(ds.dec_deg[row])):
        return InputError(f"'{name}' has no position in OpenNGC", field="name")
    return None


def _star_identity(hip: int) -> tuple[str, tuple[str, ...]]:
    star = star_names()[1].get(hip)
    if star is None:
        return f"HIP {hip}", (f"HIP {hip}",)
    return f"{star.name} = HIP {hip}", (star.name, f"HIP {hip}", *star.designations)


def resolve(name: str, *, orbits: Sequence[OrbitElements] = ()) -> Resolved:
    """Resolve one target name offline; raise InputError (with the closest names) if unknown.

    ``orbits``: elements read by :func:`skyplan.inputs.orbits.read_elements`; their designations and
    names resolve to kind "orbit" and take precedence over the catalogues.
    """
    key = normalise(name)
    what, value = _classify(key, index_orbits(orbits)) if key else ("unknown", None)
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
        ds = deep_sky()
        problem = _nonexistent(name, ds, value)
        if problem is not None:
            raise problem
        identifier = deep_sky_identifier(ds, value)
        extra = row_identifiers(ds, value)
        cross = [f"NGC {k[3:]}" for k in cross_keys(ds.ngc[value], "NGC")]
        cross += [f"IC {k[2:]}" for k in cross_keys(ds.ic[value], "IC")]
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
    orbit_index = index_orbits(orbits)
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
            problem = _nonexistent(str(name), deep_sky(), value)
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
        ds = deep_sky()
        take, sel = np.array(deep_rows), np.array(deep_index)
        kind[take], source[take] = KIND_DEEP_SKY, ds.source
        ra[take], dec[take], epoch[take] = ds.ra_deg[sel], ds.dec_deg[sel], OPENNGC_EPOCH_JYEAR
        pmra[take], pmdec[take] = ds.pm_ra[sel], ds.pm_dec[sel]
        plx[take], rv[take], mag[take] = ds.parallax[sel], ds.rv[sel], ds.magnitude[sel]
        labels = {int(r): deep_sky_identifier(ds, int(r)) for r in np.unique(sel)}
        identifier[take] = [labels[int(r)] for r in sel]
        otype[take] = [OPENNGC_TYPES.get(ds.types[int(r)], "other") for r in sel]
    column = ResolvedColumn(
        np.array(list(names), dtype=object), kind, identifier, ra, dec, epoch, pmra, pmdec, plx,
        rv, mag, otype, source,
    )
    return column, errors
