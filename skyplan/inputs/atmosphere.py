"""The standard atmosphere: pressure and temperature at a site's elevation, for refraction."""

from __future__ import annotations

import numpy as np

_ISA_P0_HPA = 1013.25  # sea-level pressure
_ISA_T0_K = 288.15  # sea-level temperature, 15 degrees C
_ISA_LAPSE_K_PER_M = 0.0065  # troposphere lapse rate, 6.5 K/km
_ISA_G0 = 9.80665  # standard gravity, m s^-2
_ISA_M = 0.0289644  # molar mass of dry air, kg mol^-1
_ISA_R = 8.31432  # gas constant as the 1976 standard states it, J mol^-1 K^-1
_ISA_R0_M = 6356766.0  # effective Earth radius for geopotential altitude


def geopotential_m(elevation_m: np.ndarray | float) -> np.ndarray:
    """Geopotential altitude H = r0 Z / (r0 + Z), r0 = 6356.766 km.

    U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF), eq. 18.
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    return _ISA_R0_M * z / (_ISA_R0_M + z)


def isa_temperature_c(elevation_m: np.ndarray | float) -> np.ndarray:
    """Standard-atmosphere temperature: 15 C falling 6.5 K per geopotential km (ICAO Doc 7488)."""
    return _ISA_T0_K - 273.15 - _ISA_LAPSE_K_PER_M * geopotential_m(elevation_m)


def isa_pressure_hpa(elevation_m: np.ndarray | float) -> np.ndarray:
    """Standard-atmosphere pressure by the barometric formula for a constant lapse rate.

    P = P0 [(T0 - L H) / T0]^(g0 M / (R L)) with P0 = 1013.25 hPa, T0 = 288.15 K, L = 6.5 K/km
    and H the geopotential altitude (U.S. Standard Atmosphere 1976, eq. 33a, there written with
    a signed lapse rate; the same model as the ICAO Standard Atmosphere, Doc 7488).  Valid in
    the troposphere, below 11 km.
    """
    h = geopotential_m(elevation_m)
    exponent = _ISA_G0 * _ISA_M / (_ISA_R * _ISA_LAPSE_K_PER_M)
    return _ISA_P0_HPA * ((_ISA_T0_K - _ISA_LAPSE_K_PER_M * h) / _ISA_T0_K) ** exponent

