"""The observer's limits: one table of specs, one validator, plain data for engine.windows.

Each limit is one row of :data:`SPECS`: its key (as the sites file writes it), its
command-line option, its kind and range, its unit and its default (from
:mod:`skyplan.defaults`).  :func:`check_limits` is the one validator.  The command line, the
sites file and the Python API hand it values that carry their :class:`Origin`, so a bad value
is reported where it was written: ``field '--min-alt'`` for an option, or the sites file with
the line and key (``sites.toml:12, field 'site.ridge.limits.min_alt_deg'``).
:func:`limits_from` fills in the defaults and gives the :class:`Limits` the engine reads.
"""

from __future__ import annotations

import datetime as dt
import importlib
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from skyplan import defaults
from skyplan.errors import InputError, InputErrors
from skyplan.inputs.fieldvalues import decimal, number, shown

TWILIGHTS = defaults.TWILIGHT_SUN_ALT_DEG
NO_DARK = ("none", "off", "day")  # darkness not required (daytime work)
# the order in which engine.windows charges each limit with the minutes it removes
ORDER = ("dark", "between", "dec", "hour_angle", "altitude", "max_alt", "az_rate", "az_wrap",
         "airmass", "horizon", "moon", "sun")


@dataclass(frozen=True)
class Limits:
    min_alt_deg: float = defaults.MIN_ALT_DEG
    max_alt_deg: float | None = defaults.MAX_ALT_DEG  # None: no maximum altitude
    max_airmass: float | None = defaults.MAX_AIRMASS
    dark_sun_alt_deg: float | None = TWILIGHTS[defaults.DARK]  # None: no darkness limit
    dark_label: str = defaults.DARK
    moon_gap_deg: float = defaults.MOON_GAP_DEG
    sun_gap_deg: float = defaults.SUN_GAP_DEG
    ha_range_h: tuple[float, float] | None = None
    dec_range_deg: tuple[float, float] | None = None
    between_local: tuple[dt.time, dt.time] | None = None
    use_horizon_profile: bool = True
    airmass_model: str = defaults.AIRMASS_MODEL
    refraction_model: str = defaults.REFRACTION_MODEL

    def as_record(self) -> dict:
        return {
            "min_alt_deg": self.min_alt_deg, "max_alt_deg": self.max_alt_deg,
            "max_airmass": self.max_airmass,
            "dark": self.dark_label, "dark_sun_alt_deg": self.dark_sun_alt_deg,
            "moon_gap_deg": self.moon_gap_deg, "sun_gap_deg": self.sun_gap_deg,
            "ha_range_h": list(self.ha_range_h) if self.ha_range_h else None,
            "dec_range_deg": list(self.dec_range_deg) if self.dec_range_deg else None,
            "between": [t.strftime("%H:%M") for t in self.between_local]
            if self.between_local else None,
            "horizon_profile": self.use_horizon_profile,
            "airmass_model": self.airmass_model, "refraction_model": self.refraction_model,
        }


@dataclass(frozen=True)
class Origin:
    """Where a value was written: a command-line option, or a file's line and key."""

    field: str
    file: str | None = None
    line: int | None = None

    def error(self, message: str) -> InputError:
        return InputError(message, file=self.file, line=self.line, field=self.field)


@dataclass(frozen=True)
class Given:
    """A limit's value as given, with its origin."""

    value: object
    origin: Origin


@dataclass(frozen=True)
class LimitSpec:
    """One limit: key, option, kind, range, unit, default and help text.

    Kinds: ``number`` (a value in the range), ``range`` (MIN < MAX, both in the range),
    ``dark`` (a twilight name, none, or a Sun altitude in the range), ``clock`` (a local
    clock-time range), ``choice`` (a name from the ``MODELS`` of module ``choices``) and
    ``flag`` (an option that turns the limit off).
    """

    key: str
    option: str
    kind: str
    what: str
    help: str
    default: object = None
    lo: float = -math.inf
    hi: float = math.inf
    lo_open: bool = False
    hi_open: bool = False
    unit: str = ""
    choices: str = ""
    in_sites_file: bool = True

    @property
    def arg(self) -> str:
        """The option's Python name, as :func:`build_limits` takes it (``--min-alt``: min_alt)."""
        return self.option.removeprefix("--").replace("-", "_")

    def inside(self, value: float) -> bool:
        above = value > self.lo if self.lo_open else value >= self.lo
        below = value < self.hi if self.hi_open else value <= self.hi
        return above and below

    def bounds(self) -> str:
        """The range in words: 'at least -5° and below 90°'."""
        low = "above" if self.lo_open else "at least"
        high = "below" if self.hi_open else "at most"
        return f"{low} {self.lo:g}{self.unit} and {high} {self.hi:g}{self.unit}"

    def option_help(self) -> str:
        """Help text for the option: the description, the range and the default."""
        notes = [self.bounds()] if self.kind in ("number", "range") else []
        if self.kind != "flag":
            default = self.default
            notes.append(f"default: {default:g}" if isinstance(default, float)
                         else f"default: {'none' if default is None else default}")
        return f"{self.help} ({'; '.join(notes)})." if notes else f"{self.help}."


SPECS: dict[str, LimitSpec] = {spec.key: spec for spec in (
    LimitSpec("min_alt_deg", "--min-alt", "number", "minimum altitude",
              "Minimum apparent altitude in degrees", defaults.MIN_ALT_DEG,
              lo=-5.0, hi=90.0, hi_open=True, unit="°"),
    LimitSpec("max_alt_deg", "--max-alt", "number", "maximum altitude",
              "Maximum apparent altitude in degrees: the zenith keyhole of an alt-azimuth "
              "mount, where the azimuth cannot follow", defaults.MAX_ALT_DEG,
              lo=0.0, hi=90.0, lo_open=True, unit="°"),
    LimitSpec("max_airmass", "--max-airmass", "number", "maximum air mass",
              "Maximum air mass", defaults.MAX_AIRMASS,
              lo=1.0, hi=40.0, lo_open=True),
    LimitSpec("dark", "--dark", "dark", "Sun altitude for darkness",
              "Darkness: civil, nautical, astronomical, a Sun altitude in degrees, or none",
              defaults.DARK, lo=-90.0, hi=0.0, unit="°"),
    LimitSpec("moon_gap_deg", "--moon-gap", "number", "distance from the Moon",
              "Minimum distance from the Moon in degrees", defaults.MOON_GAP_DEG,
              lo=0.0, hi=180.0, unit="°"),
    LimitSpec("sun_gap_deg", "--sun-gap", "number", "distance from the Sun",
              "Minimum distance from the Sun in degrees; closer targets are flagged and never "
              "planned", defaults.SUN_GAP_DEG, lo=0.0, hi=180.0, unit="°"),
    LimitSpec("ha_range_h", "--ha-range", "range", "hour angle",
              "Mount hour-angle range MIN,MAX in hours", lo=-12.0, hi=12.0, unit=" h"),
    LimitSpec("dec_range_deg", "--dec-range", "range", "declination",
              "Mount declination range MIN,MAX in degrees", lo=-90.0, hi=90.0, unit="°"),
    LimitSpec("between", "--between", "clock", "clock-time range",
              "Local clock-time range, e.g. 20:00-02:30", in_sites_file=False),
    LimitSpec("horizon_profile", "--no-horizon-profile", "flag", "horizon profile",
              "Ignore the site's horizon profile", True, in_sites_file=False),
    LimitSpec("airmass_model", "--airmass-model", "choice", "air-mass model",
              "kasten-young (Kasten & Young 1989), pickering (2002) or secz",
              defaults.AIRMASS_MODEL, choices="skyplan.engine.airmass", in_sites_file=False),
    LimitSpec("refraction_model", "--refraction", "choice", "refraction model",
              "bennett (Bennett 1982/Sæmundsson 1986) or erfa (A tan z + B tan³ z)",
              defaults.REFRACTION_MODEL, choices="skyplan.engine.refraction",
              in_sites_file=False),
)}
FILE_KEYS = tuple(key for key, spec in SPECS.items() if spec.in_sites_file)


# --------------------------------------------------------------------------- the validator


def check_limits(given: Mapping[str, Given]) -> dict[str, object]:
    """The one validator: each value checked against its spec and normalised.

    Returns plain values by key: floats, a darkness name (``"nautical"``, ``"none"``) or Sun
    altitude, ``(min, max)`` tuples, a pair of clock times, model names, booleans.  Every bad
    value is reported at its origin (several at once as :class:`InputErrors`).
    """
    checked: dict[str, object] = {}
    problems: list[InputError] = []
    for key, item in given.items():
        spec = SPECS.get(key)
        try:
            if spec is None:
                raise ValueError(f"unknown limit {key!r}; known: {', '.join(SPECS)}")
            checked[key] = _CHECKS[spec.kind](spec, item.value)
        except (TypeError, ValueError) as exc:
            problems.append(item.origin.error(str(exc)))
    if problems:
        raise problems[0] if len(problems) == 1 else InputErrors(problems)
    return checked


def limits_from(given: Mapping[str, Given]) -> Limits:
    """Limits from given values (checked by :func:`check_limits`), the defaults for the rest."""
    values = {key: spec.default for key, spec in SPECS.items()} | check_limits(given)
    top = values["max_alt_deg"]
    if top is not None and top <= values["min_alt_deg"]:
        where = given.get("max_alt_deg") or given["min_alt_deg"]
        raise where.origin.error(f"maximum altitude {top:g}° must be above the minimum "
                                 f"altitude {values['min_alt_deg']:g}°")
    dark = values["dark"]
    if dark == "none":
        dark_alt, dark_label = None, "none"
    elif isinstance(dark, str):
        dark_alt, dark_label = TWILIGHTS[dark], dark
    else:
        dark_alt, dark_label = float(dark), f"sun below {dark:g}°"
    return Limits(
        min_alt_deg=values["min_alt_deg"], max_alt_deg=values["max_alt_deg"],
        max_airmass=values["max_airmass"],
        dark_sun_alt_deg=dark_alt, dark_label=dark_label, moon_gap_deg=values["moon_gap_deg"],
        sun_gap_deg=values["sun_gap_deg"], ha_range_h=values["ha_range_h"],
        dec_range_deg=values["dec_range_deg"], between_local=values["between"],
        use_horizon_profile=values["horizon_profile"], airmass_model=values["airmass_model"],
        refraction_model=values["refraction_model"],
    )


def build_limits(site_limits: Mapping[str, object], *,
                 origins: Mapping[str, Origin] | None = None, **options: object) -> Limits:
    """Limits from command-line values, falling back to the site's, then the defaults.

    ``site_limits`` are a site's limits by key, written where ``origins`` says (a key
    without an origin is named by itself); ``options`` are the command-line values by
    the options' Python names (``min_alt=25``, ``no_horizon_profile=True``), None when not
    given.
    """
    origins = origins or {}
    given = {key: Given(value, origins.get(key) or Origin(field=key))
             for key, value in site_limits.items()}
    by_arg = {spec.arg: spec for spec in SPECS.values()}
    for arg, value in options.items():
        spec = by_arg.get(arg)
        if spec is None:
            raise TypeError(f"build_limits() got an unknown option {arg!r}")
        if spec.kind == "flag":
            if value:
                given[spec.key] = Given(False, Origin(field=spec.option))
        elif value is not None:
            given[spec.key] = Given(value, Origin(field=spec.option))
    return limits_from(given)


# --------------------------------------------------------------------------- one check per kind


def _check_number(spec: LimitSpec, value: object) -> float:
    x = number(value)
    if not spec.inside(x):
        raise ValueError(f"{spec.what} {x:g}{spec.unit} must be {spec.bounds()}")
    return x


def _check_dark(spec: LimitSpec, value: object) -> str | float:
    if isinstance(value, str):
        text = value.strip().lower()
        if text in TWILIGHTS:
            return text
        if text in NO_DARK:
            return "none"
        try:
            value = decimal(text)
        except ValueError:
            raise ValueError(f"{value!r} is not {', '.join(TWILIGHTS)}, none or a Sun "
                             "altitude in degrees") from None
    return _check_number(spec, value)


def _check_range(spec: LimitSpec, value: object) -> tuple[float, float]:
    if isinstance(value, str):
        text = value.strip()
        colon = text.count(":") == 1 or "," in text
        parts = text.replace(",", ":").split(":") if colon else text.split("..")
        try:
            low, high = (decimal(part) for part in parts)
        except ValueError:
            raise ValueError(f"cannot read {value!r} as a range MIN,MAX") from None
    elif isinstance(value, list | tuple) and len(value) == 2:
        low, high = number(value[0]), number(value[1])
    else:
        raise ValueError(f"expected [min, max] for {spec.what}, got {shown(value)}")
    for end, x in (("minimum", low), ("maximum", high)):
        if not spec.inside(x):
            raise ValueError(f"{spec.what} {end} {x:g}{spec.unit} must be {spec.bounds()}")
    if low >= high:
        raise ValueError(f"{spec.what} range [{low:g}, {high:g}] must have min below max")
    return low, high


def _check_clock(spec: LimitSpec, value: object) -> tuple[dt.time, dt.time]:
    if isinstance(value, tuple | list) and all(isinstance(t, dt.time) for t in value):
        times = tuple(value)
    elif isinstance(value, str):
        try:
            times = tuple(dt.time.fromisoformat(part.strip()) for part in value.split("-"))
        except ValueError:
            times = ()
    else:
        times = ()
    if len(times) != 2:
        raise ValueError(f"cannot read {shown(value)} as a local clock range like 20:00-02:30")
    start, end = times
    if start.tzinfo is not None or end.tzinfo is not None:
        raise ValueError(f"{shown(value)}: give local clock times without an offset")
    if start == end:
        raise ValueError(f"{shown(value)} starts and ends at the same time; give no clock "
                         "range for the whole night")
    return start, end


def _check_choice(spec: LimitSpec, value: object) -> str:
    names = importlib.import_module(spec.choices).MODELS
    if value not in names:
        raise ValueError(f"{shown(value)} is not one of {', '.join(names)}")
    return str(value)


def _check_flag(spec: LimitSpec, value: object) -> bool:
    if not isinstance(value, bool):
        raise TypeError(f"expected true or false, got {shown(value)}")
    return value


_CHECKS: dict[str, Callable[[LimitSpec, object], object]] = {
    "number": _check_number, "range": _check_range, "dark": _check_dark,
    "clock": _check_clock, "choice": _check_choice, "flag": _check_flag,
}
