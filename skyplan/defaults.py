"""Skyplan's defaults and shared constants, each defined here once.

Plain numbers and names, importing nothing of skyplan, so that every layer may use them: the
inputs for the observer's default limits, the engine for the standard altitudes of the Sun.
"""

from __future__ import annotations

from types import MappingProxyType

# Sun's centre altitude (degrees) at which each twilight begins and ends, topocentric and
# unrefracted (Explanatory Supplement to the Astronomical Almanac, 3rd ed. 2013, §15.3).
TWILIGHT_SUN_ALT_DEG = MappingProxyType({"civil": -6.0, "nautical": -12.0, "astronomical": -18.0})

# True (geometric) altitude of a point's centre when it rises or sets: the apparent horizon
# lowered by 34′ of standard refraction (Meeus 1998, Astronomical Algorithms, ch. 15, h0 = −0°34′).
RISE_SET_ALT_DEG = -34.0 / 60.0

# The observer's limits when neither the command line nor the site sets them.
MIN_ALT_DEG = 20.0  # minimum altitude: common practice for small telescopes
MAX_ALT_DEG = None  # no maximum altitude (an alt-azimuth mount may want ~85°: its zenith keyhole)
# an alt-azimuth mount whose table gives no max_alt_deg: its zenith keyhole, where the azimuth
# axis would have to turn too fast to follow (common practice for small alt-az telescopes,
# not a standard; the mount's own figure belongs in [site.NAME.mount])
ALTAZ_KEYHOLE_DEG = 85.0
MAX_AIRMASS = None  # no air-mass cap
DARK = "astronomical"  # a name of TWILIGHT_SUN_ALT_DEG, "none", or a Sun altitude
MOON_GAP_DEG = 0.0  # no distance from the Moon
SUN_GAP_DEG = 15.0  # distance from the Sun: a safety margin for optics, common practice
AIRMASS_MODEL = "kasten-young"  # Kasten & Young (1989)
REFRACTION_MODEL = "bennett"  # Bennett (1982) / Sæmundsson (1986)

# The bundled ephemeris (JPL DE421, shipped by skyfield-data) and the span it covers
# (Folkner, Williams & Boggs 2009, JPL IOM 343R-08-003).
EPHEMERIS_NAME = "DE421"
EPHEMERIS_FIRST = "1900-01-01"
EPHEMERIS_LAST = "2053-10-01"

# Time-critical targets (``catch``, and ``plan`` around them): out-of-event time wanted on
# each side of an event, and the part of an event that must be observable to list it
TIMED_BASELINE_MIN = 60.0  # common practice for transit photometry: an hour either side
TIMED_MIN_COVERAGE = 0.5
