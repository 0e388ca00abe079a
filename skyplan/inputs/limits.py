"""The observer's limits: plain data, validated at the edge, evaluated by engine.windows.

Defaults (used when neither the command line nor the site file sets a limit): minimum
altitude 20° (a common practice for small telescopes), no air-mass cap, astronomical
darkness, no Moon distance, 15° from the Sun (a safety margin for optics, common practice),
no hour-angle, declination or clock-time range.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from skyplan.errors import InputError

DARK_LEVELS = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}
ORDER = ("dark", "between", "dec", "hour_angle", "altitude", "airmass", "horizon", "moon", "sun")


@dataclass(frozen=True)
class Limits:
    min_alt_deg: float = 20.0
    max_airmass: float | None = None
    dark_sun_alt_deg: float | None = -18.0  # None: no darkness limit (daytime work)
    dark_label: str = "astronomical"
    moon_gap_deg: float = 0.0
    sun_gap_deg: float = 15.0
    ha_range_h: tuple[float, float] | None = None
    dec_range_deg: tuple[float, float] | None = None
    between_local: tuple[dt.time, dt.time] | None = None
    use_horizon_profile: bool = True
    airmass_model: str = "kasten-young"
    refraction_model: str = "bennett"

    def as_record(self) -> dict:
        return {
            "min_alt_deg": self.min_alt_deg, "max_airmass": self.max_airmass,
            "dark": self.dark_label, "dark_sun_alt_deg": self.dark_sun_alt_deg,
            "moon_gap_deg": self.moon_gap_deg, "sun_gap_deg": self.sun_gap_deg,
            "ha_range_h": list(self.ha_range_h) if self.ha_range_h else None,
            "dec_range_deg": list(self.dec_range_deg) if self.dec_range_deg else None,
            "between": [t.strftime("%H:%M") for t in self.between_local]
            if self.between_local else None,
            "horizon_profile": self.use_horizon_profile,
            "airmass_model": self.airmass_model, "refraction_model": self.refraction_model,
        }


def _range(text, field: str, lo: float, hi: float) -> tuple[float, float]:
    if isinstance(text, (list, tuple)):
        parts = list(text)
    else:
        parts = str(text).replace(",", ":").split(":") if str(text).count(":") == 1 or "," in str(
            text) else str(text).split("..")
    try:
        a, b = (float(p) for p in parts)
    except (TypeError, ValueError):
        raise InputError(f"cannot read {text!r} as a range MIN,MAX", field=field) from None
    if not (lo <= a < b <= hi):
        raise InputError(f"range {a:g},{b:g} must satisfy {lo:g} <= MIN < MAX <= {hi:g}",
                         field=field)
    return a, b


def _dark(value) -> tuple[float | None, str]:
    if value is None:
        return -18.0, "astronomical"
    text = str(value).strip().lower()
    if text in DARK_LEVELS:
        return DARK_LEVELS[text], text
    if text in ("none", "off", "day"):
        return None, "none"
    try:
        alt = float(text)
    except ValueError:
        raise InputError(f"{value!r} is not civil, nautical, astronomical, none or a Sun "
                         "altitude in degrees", field="--dark") from None
    if not -90.0 <= alt <= 0.0:
        raise InputError(f"Sun altitude {alt:g} for darkness must be between -90 and 0",
                         field="--dark")
    return alt, f"sun below {alt:g}°"


def _between(text: str) -> tuple[dt.time, dt.time]:
    try:
        a, b = text.split("-")
        start, end = dt.time.fromisoformat(a.strip()), dt.time.fromisoformat(b.strip())
    except ValueError:
        raise InputError(f"cannot read {text!r} as a local clock range like 20:00-02:30",
                         field="--between") from None
    if start.tzinfo is not None or end.tzinfo is not None:
        raise InputError(f"{text!r}: give local clock times without an offset",
                         field="--between")
    if start == end:
        raise InputError(f"{text!r} starts and ends at the same time; leave --between out "
                         "for the whole night", field="--between")
    return start, end


def build_limits(site_limits: dict, *, min_alt=None, max_airmass=None, dark=None,
                 moon_gap=None, sun_gap=None, ha_range=None, dec_range=None, between=None,
                 no_horizon_profile=False, airmass_model="kasten-young",
                 refraction_model="bennett") -> Limits:
    """Limits from command-line values, falling back to the site file's, then the defaults."""
    from skyplan.engine import airmass as am
    from skyplan.engine import refraction

    def pick(cli, key, default):
        return cli if cli is not None else site_limits.get(key, default)

    min_alt = float(pick(min_alt, "min_alt_deg", 20.0))
    if not -5.0 <= min_alt < 90.0:
        raise InputError(f"minimum altitude {min_alt:g}° must be from -5 to below 90",
                         field="--min-alt")
    x = pick(max_airmass, "max_airmass", None)
    if x is not None:
        x = float(x)
        if not 1.0 < x <= 40.0:
            raise InputError(f"maximum air mass {x:g} must be above 1 and at most 40",
                             field="--max-airmass")
    dark_alt, dark_label = _dark(pick(dark, "dark", None))
    moon = float(pick(moon_gap, "moon_gap_deg", 0.0))
    sun = float(pick(sun_gap, "sun_gap_deg", 15.0))
    for value, name in ((moon, "--moon-gap"), (sun, "--sun-gap")):
        if not 0.0 <= value <= 180.0:
            raise InputError(f"{value:g}° must be from 0 to 180", field=name)
    ha = pick(ha_range, "ha_range_h", None)
    dec = pick(dec_range, "dec_range_deg", None)
    if airmass_model not in am.MODELS:
        raise InputError(f"{airmass_model!r} is not one of {', '.join(am.MODELS)}",
                         field="--airmass-model")
    if refraction_model not in refraction.MODELS:
        raise InputError(f"{refraction_model!r} is not one of {', '.join(refraction.MODELS)}",
                         field="--refraction")
    return Limits(
        min_alt_deg=min_alt, max_airmass=x, dark_sun_alt_deg=dark_alt, dark_label=dark_label,
        moon_gap_deg=moon, sun_gap_deg=sun,
        ha_range_h=_range(ha, "--ha-range", -12.0, 12.0) if ha is not None else None,
        dec_range_deg=_range(dec, "--dec-range", -90.0, 90.0) if dec is not None else None,
        between_local=_between(between) if between else None,
        use_horizon_profile=not no_horizon_profile, airmass_model=airmass_model,
        refraction_model=refraction_model,
    )
