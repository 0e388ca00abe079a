"""Solar-system names: the Sun, the Moon and the planets, and orbits from elements files.

* **Sun, Moon, Mercury ... Neptune, Pluto**: kind ``"body"``, no fixed position (positions
  come from the JPL DE421 ephemeris elsewhere).
* **Orbits**: comets and minor planets of an elements file (:mod:`skyplan.inputs.orbits`),
  by designation, by name, or by either half of a "1P/Halley" style name.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from typing import TYPE_CHECKING

from skyplan.names.keys import normalise

if TYPE_CHECKING:
    from skyplan.inputs.orbits import OrbitElements


SOURCE_BODY = "JPL DE421 ephemeris"

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


def _orbit_keys(el: OrbitElements) -> set[str]:
    keys = {normalise(el.designation), normalise(el.name)}
    for text in (el.designation, el.name):
        keys.update(normalise(p) for p in re.findall(r"\(([^)]*)\)", text))
        outside = re.sub(r"\([^)]*\)", " ", text).strip()
        keys.add(normalise(outside))
        if re.match(r"\d+[A-Z](-[A-Z]+)?/", outside):  # "1P/Halley": "1P" and "Halley"
            keys.update(normalise(p) for p in outside.split("/", 1))
    return {k for k in keys if k and not k.isdigit()}  # a bare number is too ambiguous


def index_orbits(orbits: Sequence[OrbitElements]) -> dict[str, int]:
    index: dict[str, int] = {}
    for i, el in enumerate(orbits):
        for key in _orbit_keys(el):
            index.setdefault(key, i)
    return index


def find_orbit(name: str, orbits: Sequence[OrbitElements]) -> OrbitElements | None:
    """The elements that ``name`` resolves to among ``orbits`` (the matching of resolve)."""
    index = index_orbits(orbits).get(normalise(name))
    return None if index is None else orbits[index]
