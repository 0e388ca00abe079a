"""Name keys: how a typed name is compared, and how catalogue names are printed.

Names are compared after normalisation: case and spacing do not matter, apostrophes are
ignored and leading zeros of numbers are dropped (``m42``, ``M 042``, ``NGC0224``,
``hip 27989``, ``rigil kentaurus`` all resolve).  Catalogue names are printed with their
prefix and number apart and without leading zeros ("NGC0224" -> "NGC 224").
"""

from __future__ import annotations

import re

# Catalogue prefixes whose numbers we print without leading zeros ("NGC0224" -> "NGC 224").
_PRETTY_PREFIXES = {"NGC", "IC", "M", "MEL", "C", "H", "B", "CL", "HCG", "PGC", "UGC", "UGCA",
                    "MWSC", "LBN"}
# Prefixes of the primary OpenNGC names (and HIP): never looked up among cross-identifiers.
PRIMARY_PREFIXES = {"M", "NGC", "IC", "HIP"}
_PREFIX_ALIASES = (("MESSIER", "M"), ("CALDWELL", "C"), ("HIPPARCOS", "HIP"), ("MELOTTE", "MEL"))

DROP = re.compile(r"[\s'\u2019_]+")
LEADING_ZEROS = re.compile(r"(?<![0-9.])0+(?=[0-9])")
CATALOGUE_KEY = re.compile(r"([A-Z]+)(\d.*)")
_PRETTY = re.compile(r"([A-Za-z]+)\s*0*(\d+)(.*)")


def normalise(name: str) -> str:
    """The lookup key of a name: upper case, no spaces or apostrophes, no leading zeros."""
    key = LEADING_ZEROS.sub("", DROP.sub("", str(name).upper()))
    for long, short in _PREFIX_ALIASES:
        if key.startswith(long) and key[len(long):][:1].isdigit():
            return short + key[len(long):]
    return key


def pretty(name: str) -> str:
    """Catalogue name as printed: "NGC0224" -> "NGC 224", "IC0080 NED01" -> "IC 80 NED01"."""
    m = _PRETTY.fullmatch(name.strip())
    if m and m.group(1).upper() in _PRETTY_PREFIXES:
        return f"{m.group(1)} {int(m.group(2))}{m.group(3)}"
    return name.strip()

_ASCII_DROP = str.maketrans("", "", " \t\n\r\x0b\x0c'_")


def key_of(name: str) -> str:
    """:func:`normalise` without the prefix aliases (fast path for catalogue names)."""
    key = name.upper().translate(_ASCII_DROP) if name.isascii() else DROP.sub("", name.upper())
    return LEADING_ZEROS.sub("", key) if "0" in key else key
