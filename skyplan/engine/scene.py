"""What the charts draw: plain data, already computed by the engine.

The engine fills these frozen dataclasses; :mod:`skyplan.render.charts` only draws them.
Angles are degrees (altitude, azimuth from north through east), times are POSIX seconds UTC
("unix"), and every name ends in its unit where it has one.  Numeric fields are turned into
float64 numpy arrays on construction and their lengths are checked, so a renderer can trust
the shapes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike

__all__ = [
    "TWILIGHT_STATES",
    "AltitudeScene",
    "MoonMark",
    "SkyLine",
    "SkyPoints",
    "SkyScene",
    "SkyTargets",
    "Track",
    "TwilightEdges",
    "Visit",
]

#: Darkness states from light to dark, as used by :class:`TwilightEdges.start_state` and
#: recommended for :attr:`SkyScene.twilight`.
TWILIGHT_STATES = ("day", "civil twilight", "nautical twilight", "astronomical twilight", "night")


def _float_array(value: ArrayLike, name: str, ndim: int = 1) -> np.ndarray:
    arr = np.array(value, dtype=float)
    if arr.ndim != ndim:
        raise ValueError(f"{name} must be a {ndim}-d array, got shape {arr.shape}")
    return arr


def _same_length(names: dict[str, int]) -> None:
    if len(set(names.values())) > 1:
        listed = ", ".join(f"{k}={v}" for k, v in names.items())
        raise ValueError(f"lengths differ: {listed}")


@dataclass(frozen=True, eq=False)
class SkyLine:
    """A polyline on the sky (equator, ecliptic, horizon profile), sampled densely enough
    that straight chart segments between samples look smooth (a few degrees apart)."""

    alt_deg: np.ndarray
    az_deg: np.ndarray

    def __post_init__(self) -> None:
        object.__setattr__(self, "alt_deg", _float_array(self.alt_deg, "alt_deg"))
        object.__setattr__(self, "az_deg", _float_array(self.az_deg, "az_deg"))
        _same_length({"alt_deg": self.alt_deg.size, "az_deg": self.az_deg.size})


@dataclass(frozen=True, eq=False)
class SkyPoints:
    """Named points on the sky (planets)."""

    names: tuple[str, ...]
    alt_deg: np.ndarray
    az_deg: np.ndarray

    def __post_init__(self) -> None:
        object.__setattr__(self, "names", tuple(self.names))
        object.__setattr__(self, "alt_deg", _float_array(self.alt_deg, "alt_deg"))
        object.__setattr__(self, "az_deg", _float_array(self.az_deg, "az_deg"))
        _same_length(
            {"names": len(self.names), "alt_deg": self.alt_deg.size, "az_deg": self.az_deg.size}
        )


@dataclass(frozen=True, eq=False)
class SkyTargets:
    """The targets at the chart's time; ``ok`` is True where every limit holds."""

    names: tuple[str, ...]
    alt_deg: np.ndarray
    az_deg: np.ndarray
    ok: np.ndarray

    def __post_init__(self) -> None:
        object.__setattr__(self, "names", tuple(self.names))
        object.__setattr__(self, "alt_deg", _float_array(self.alt_deg, "alt_deg"))
        object.__setattr__(self, "az_deg", _float_array(self.az_deg, "az_deg"))
        object.__setattr__(self, "ok", np.array(self.ok, dtype=bool).reshape(-1))
        _same_length(
            {
                "names": len(self.names),
                "alt_deg": self.alt_deg.size,
                "az_deg": self.az_deg.size,
                "ok": self.ok.size,
            }
        )


@dataclass(frozen=True)
class MoonMark:
    """The Moon at the chart's time.

    ``illuminated_fraction`` is the lit fraction of the disc (0 new, 1 full).
    ``bright_limb_deg`` is the direction of the bright limb's midpoint at the Moon, measured
    from the direction towards the zenith, positive towards increasing azimuth.  None lets
    the chart place the lit side by ``waxing`` alone: to the chart's right (west, facing
    south) when waxing, to its left when waning.
    """

    alt_deg: float
    az_deg: float
    illuminated_fraction: float
    waxing: bool
    bright_limb_deg: float | None = None

    def __post_init__(self) -> None:
        if not 0.0 <= self.illuminated_fraction <= 1.0:
            raise ValueError(
                f"illuminated_fraction must be within [0, 1], got {self.illuminated_fraction}"
            )


@dataclass(frozen=True, eq=False)
class Track:
    """One target's path over the night, with hour marks.

    ``tick_index`` indexes the samples that carry an hour mark, ``tick_label`` their text
    (local time, e.g. "23h").
    """

    name: str
    alt_deg: np.ndarray
    az_deg: np.ndarray
    tick_index: tuple[int, ...] = ()
    tick_label: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "alt_deg", _float_array(self.alt_deg, "alt_deg"))
        object.__setattr__(self, "az_deg", _float_array(self.az_deg, "az_deg"))
        object.__setattr__(self, "tick_index", tuple(int(i) for i in self.tick_index))
        object.__setattr__(self, "tick_label", tuple(self.tick_label))
        _same_length({"alt_deg": self.alt_deg.size, "az_deg": self.az_deg.size})
        _same_length({"tick_index": len(self.tick_index), "tick_label": len(self.tick_label)})
        if any(not 0 <= i < self.alt_deg.size for i in self.tick_index):
            raise ValueError(f"tick_index out of range for {self.alt_deg.size} samples")


def _no_points() -> SkyPoints:
    return SkyPoints((), [], [])


def _no_targets() -> SkyTargets:
    return SkyTargets((), [], [], [])


@dataclass(frozen=True, eq=False)
class SkyScene:
    """Everything the whole-sky chart shows at one instant for one site.

    ``horizon`` is the site's horizon profile (altitude of the skyline against azimuth) or
    None for a flat horizon.  The meridian is implied (the north-south line of the chart).
    ``keyhole_alt_deg``: the circle above which an alt-azimuth mount cannot follow;
    ``flip_limits``: the hour circles where a German mount's two sides end.
    """

    site_name: str
    lat_deg: float
    lon_deg: float
    time_utc_iso: str
    time_local: str
    twilight: str
    min_alt_deg: float
    horizon: SkyLine | None = None
    equator: SkyLine | None = None
    ecliptic: SkyLine | None = None
    moon: MoonMark | None = None
    planets: SkyPoints = field(default_factory=_no_points)
    targets: SkyTargets = field(default_factory=_no_targets)
    tracks: tuple[Track, ...] = ()
    keyhole_alt_deg: float | None = None  # an alt-azimuth mount's highest altitude
    flip_limits: tuple[SkyLine, ...] = ()  # a German mount's flip limits (hour circles)

    def __post_init__(self) -> None:
        object.__setattr__(self, "tracks", tuple(self.tracks))
        object.__setattr__(self, "flip_limits", tuple(self.flip_limits))


@dataclass(frozen=True)
class TwilightEdges:
    """Sun events of the night as unix seconds, None where the event does not happen.

    ``start_state`` is the darkness at the start of the chart's time axis, one of
    :data:`TWILIGHT_STATES`; each evening edge then makes the sky one state darker and each
    morning edge one state lighter, so the bands follow without guessing (white nights and
    polar nights included).
    """

    start_state: str
    sunset: float | None = None
    civil_dusk: float | None = None
    nautical_dusk: float | None = None
    astronomical_dusk: float | None = None
    astronomical_dawn: float | None = None
    nautical_dawn: float | None = None
    civil_dawn: float | None = None
    sunrise: float | None = None

    def __post_init__(self) -> None:
        if self.start_state not in TWILIGHT_STATES:
            raise ValueError(
                f"start_state must be one of {TWILIGHT_STATES}, got {self.start_state!r}"
            )

    def changes(self) -> list[tuple[float, int]]:
        """The edges in time order as (unix, new state index into :data:`TWILIGHT_STATES`)."""
        evening = (self.sunset, self.civil_dusk, self.nautical_dusk, self.astronomical_dusk)
        morning = (self.astronomical_dawn, self.nautical_dawn, self.civil_dawn, self.sunrise)
        out = [(t, k + 1) for k, t in enumerate(evening) if t is not None]
        out += [(t, 3 - k) for k, t in enumerate(morning) if t is not None]
        return sorted(out)


@dataclass(frozen=True)
class Visit:
    """A planned visit of one target: ``start_unix`` to ``end_unix``; ``seq`` its place in
    the plan (1, 2, 3 ...; 0: not numbered); ``flip``: a German mount flips in its slew."""

    name: str
    start_unix: float
    end_unix: float
    seq: int = 0
    flip: bool = False

    def __post_init__(self) -> None:
        if not self.end_unix > self.start_unix:
            raise ValueError(f"visit of {self.name!r} ends before it starts")


@dataclass(frozen=True, eq=False)
class AltitudeScene:
    """Altitude against local time over one night for one site.

    ``alt_deg`` has one row per target (``names``) and one column per ``time_unix`` sample.
    ``hour_tick_unix`` / ``hour_tick_label`` are the local-time axis marks (e.g. "22:00"),
    ``zone`` the IANA time zone they are in.
    """

    site_name: str
    night_label: str
    zone: str
    time_unix: np.ndarray
    hour_tick_unix: np.ndarray
    hour_tick_label: tuple[str, ...]
    twilight: TwilightEdges
    names: tuple[str, ...]
    alt_deg: np.ndarray
    min_alt_deg: float
    max_airmass: float | None = None
    moon_alt_deg: np.ndarray | None = None
    visits: tuple[Visit, ...] = ()
    event_spans: tuple[tuple[float, float, str], ...] = ()  # (start, end, label): shaded

    def __post_init__(self) -> None:
        object.__setattr__(self, "time_unix", _float_array(self.time_unix, "time_unix"))
        object.__setattr__(
            self, "hour_tick_unix", _float_array(self.hour_tick_unix, "hour_tick_unix")
        )
        object.__setattr__(self, "hour_tick_label", tuple(self.hour_tick_label))
        object.__setattr__(self, "names", tuple(self.names))
        alt = (
            _float_array(self.alt_deg, "alt_deg", ndim=2)
            if self.names
            else np.zeros((0, self.time_unix.size))
        )
        object.__setattr__(self, "alt_deg", alt)
        object.__setattr__(self, "visits", tuple(self.visits))
        n_times = self.time_unix.size
        if n_times < 2 or np.any(np.diff(self.time_unix) <= 0):
            raise ValueError("time_unix must hold at least two increasing samples")
        _same_length(
            {
                "hour_tick_unix": self.hour_tick_unix.size,
                "hour_tick_label": len(self.hour_tick_label),
            }
        )
        if alt.shape != (len(self.names), n_times):
            raise ValueError(
                f"alt_deg has shape {alt.shape}, expected ({len(self.names)}, {n_times})"
            )
        if self.moon_alt_deg is not None:
            moon = _float_array(self.moon_alt_deg, "moon_alt_deg")
            _same_length({"moon_alt_deg": moon.size, "time_unix": n_times})
            object.__setattr__(self, "moon_alt_deg", moon)
        unknown = sorted({v.name for v in self.visits} - set(self.names))
        if unknown:
            raise ValueError(f"visits name targets not in the scene: {', '.join(unknown)}")
        if self.max_airmass is not None and not self.max_airmass >= 1.0:
            raise ValueError(f"max_airmass must be at least 1, got {self.max_airmass}")
