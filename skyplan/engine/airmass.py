"""Relative air mass as a function of altitude.

* ``kasten-young`` (default): Kasten & Young (1989), Applied Optics 28, 4735, eq. 3:
  X = 1 / (sin h + 0.50572 (h + 6.07995°)^−1.6364), h the apparent altitude in degrees.
* ``pickering``: Pickering (2002), DIO 12, 3, eq. 3:
  X = 1 / sin(h + 244 / (165 + 47 h^1.1)), h apparent altitude in degrees.
* ``secz``: the plane-parallel sec z = 1 / sin h, for comparison (diverges at the horizon).

Below the horizon every model returns +inf.
"""

from __future__ import annotations

import numpy as np

MODELS = ("kasten-young", "pickering", "secz")


def airmass(alt_deg: np.ndarray, model: str = "kasten-young") -> np.ndarray:
    """Relative air mass at apparent altitude ``alt_deg`` (inf below the horizon)."""
    h = np.asarray(alt_deg, dtype=float)
    up = h > 0
    hp = np.where(up, h, 1.0)
    if model == "kasten-young":
        x = 1.0 / (np.sin(np.radians(hp)) + 0.50572 * (hp + 6.07995) ** -1.6364)
    elif model == "pickering":
        x = 1.0 / np.sin(np.radians(hp + 244.0 / (165.0 + 47.0 * hp**1.1)))
    elif model == "secz":
        x = 1.0 / np.sin(np.radians(hp))
    else:
        raise ValueError(f"unknown air-mass model {model!r}")
    return np.where(up, x, np.inf)


def altitude_for_airmass(x: float, model: str = "kasten-young") -> float:
    """Apparent altitude (deg) at which the air mass equals ``x`` (bisection; x >= 1)."""
    lo, hi = 1e-6, 90.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if airmass(mid, model) > x:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)
