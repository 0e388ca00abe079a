"""The one description of targets that the input edge builds and the engine consumes.

Plain data (numpy arrays, one entry per target), imported by ``inputs`` (which builds it
from catalogues, positions and names) and by the engine (which computes with it), so that
neither imports the other for it.  A target is one of three kinds, told by ``body``:

* ``""`` — a fixed target: a place (``ra_deg``, ``dec_deg``, ICRS) at ``epoch_jyear`` with
  its space motion (proper motion μα·cosδ and μδ, parallax, radial velocity; 0 if unknown);
* a body key (``"moon"``, ``"jupiter"``, ...) — the Sun, the Moon or a planet, from the
  bundled ephemeris;
* ``"orbit:<designation>"`` — a comet or minor planet from orbital elements.

For ``convert`` from a frame other than ICRS, ``ra_deg``/``dec_deg`` hold the longitude and
latitude in that frame (the request names the frame).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

KINDS = ("fixed", "body", "orbit")


@dataclass(frozen=True)
class TargetSet:
    """Targets as arrays: names, catalogue place and space motion, kind, identifiers."""

    names: np.ndarray
    ra_deg: np.ndarray  # catalogue place at epoch_jyear (NaN for bodies and orbits)
    dec_deg: np.ndarray
    pm_ra_masyr: np.ndarray  # μα·cosδ
    pm_dec_masyr: np.ndarray
    parallax_mas: np.ndarray
    rv_kms: np.ndarray
    epoch_jyear: np.ndarray
    body: np.ndarray  # object array: body key ("moon", "orbit:1P", ...) or "" for fixed targets
    identifiers: np.ndarray | None = None  # catalogue identifier of a resolved name, else ""

    def __post_init__(self) -> None:
        if self.identifiers is None:
            object.__setattr__(self, "identifiers", np.full(len(self.names), "", dtype=object))

    @classmethod
    def fixed(cls, names, ra_deg, dec_deg, *, identifiers=None) -> TargetSet:
        """Fixed targets at J2000.0 with no known space motion."""
        ra = np.atleast_1d(np.asarray(ra_deg, dtype=float))
        zeros = np.zeros(ra.shape)
        return cls(np.asarray(names, dtype=object), ra,
                   np.atleast_1d(np.asarray(dec_deg, dtype=float)), zeros, zeros.copy(),
                   zeros.copy(), zeros.copy(), np.full(ra.shape, 2000.0),
                   np.full(ra.shape, "", dtype=object),
                   None if identifiers is None else np.asarray(identifiers, dtype=object))

    def __len__(self) -> int:
        return len(self.names)

    @property
    def kind(self) -> np.ndarray:
        """"fixed", "body" or "orbit" for each target."""
        body = np.asarray(self.body, dtype=str)
        return np.where(body == "", "fixed",
                        np.where(np.char.startswith(body, "orbit:"), "orbit", "body"))

    def rows(self, start: int, stop: int) -> TargetSet:
        """Targets ``start`` to ``stop``, a block of the catalogue (views, not copies)."""
        return TargetSet(*(getattr(self, f.name)[start:stop] for f in dataclasses.fields(self)))

    def take(self, rows) -> TargetSet:
        """The targets at the indices ``rows`` (copies)."""
        return TargetSet(*(getattr(self, f.name)[rows] for f in dataclasses.fields(self)))
