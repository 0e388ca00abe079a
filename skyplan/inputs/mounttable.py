"""The ``[site.NAME.mount]`` table of a sites file, read and validated with file, line and
field (see docs/sites.md, the mount; the :class:`~skyplan.inputs.site.Mount` it gives)."""

from __future__ import annotations

from collections.abc import Callable

from skyplan.inputs import limits as limits_mod
from skyplan.inputs.fieldvalues import in_range, number, shown
from skyplan.inputs.site import (
    MOUNT_AZ_RANGE_DEG,
    MOUNT_FLIP_TIME_RANGE_S,
    MOUNT_KINDS,
    MOUNT_MAX_ALT_RANGE_DEG,
    MOUNT_PAST_MERIDIAN_RANGE_MIN,
    MOUNT_RATE_RANGE_DEG_S,
    MOUNT_SETTLE_RANGE_S,
    Mount,
)
from skyplan.inputs.tomltext import KeyLines, field_of, toml_key
from skyplan.text import quoted

MOUNT_KEYS = ("kind", "max_alt_deg", "past_meridian_east_min", "past_meridian_west_min",
              "flip_time_s", "az_min_deg", "az_max_deg", "az_rate_max_deg_s", "slew_rate_deg_s",
              "settle_s")
MOUNT_KIND_KEYS = {  # the keys that belong to some kinds only
    "past_meridian_east_min": ("german-equatorial",),
    "past_meridian_west_min": ("german-equatorial",),
    "flip_time_s": ("german-equatorial",),
    "az_min_deg": ("altaz",),
    "az_max_deg": ("altaz",),
    "az_rate_max_deg_s": ("altaz",),
}


def mount_from_table(table: object, file: str, lines: KeyLines, site_name: str,
                      problem: Callable[..., None]) -> Mount | None:
    """The ``[site.NAME.mount]`` table: its kind and its limits (see :class:`Mount`)."""
    if not isinstance(table, dict):
        problem(f"expected a table [site.{toml_key(site_name)}.mount]", "mount")
        return None
    ok = True

    def bad(message: str, key: str) -> None:
        nonlocal ok
        problem(message, "mount", key)
        ok = False

    for key in table:
        if key not in MOUNT_KEYS:
            bad(f"unknown key {quoted(key)}; allowed: {', '.join(MOUNT_KEYS)}", key)
    kind = table.get("kind")
    if kind not in MOUNT_KINDS:
        bad(f"expected one of {', '.join(MOUNT_KINDS)}, got {shown(kind)}"
            if "kind" in table else "missing kind", "kind")
    for key, kinds in MOUNT_KIND_KEYS.items():
        if key in table and kind in MOUNT_KINDS and kind not in kinds:
            bad(f"only for a mount of kind {' or '.join(kinds)}, not {kind}", key)
    got: dict[str, object] = {}
    top = None
    if "max_alt_deg" in table:
        lo, hi = MOUNT_MAX_ALT_RANGE_DEG
        try:
            top = number(table["max_alt_deg"])
            if not lo < top <= hi:
                raise ValueError(f"maximum altitude {top:g}° must be above {lo:g}° and at most "
                                 f"{hi:g}°")
        except (TypeError, ValueError) as exc:
            bad(str(exc), "max_alt_deg")
    for key, (lo, hi), what, unit, above in _MOUNT_NUMBERS:
        if key not in table:
            continue
        try:
            got[key] = in_range(number(table[key]), lo, hi, what, unit)
            if above and got[key] <= lo:
                raise ValueError(f"{what} must be above {lo:g}{unit}")
        except (TypeError, ValueError) as exc:
            bad(str(exc), key)
    if "slew_rate_deg_s" in table:
        try:
            got["slew_rate_deg_s"] = _two_rates(table["slew_rate_deg_s"])
        except (TypeError, ValueError) as exc:
            bad(str(exc), "slew_rate_deg_s")
    if ("az_min_deg" in table) != ("az_max_deg" in table):
        bad("az_min_deg and az_max_deg go together", "az_min_deg" if "az_min_deg" in table
            else "az_max_deg")
    elif "az_min_deg" in got:
        width = float(got["az_max_deg"]) - float(got["az_min_deg"])
        if not 0.0 < width <= 720.0:
            bad(f"the azimuth range {got['az_min_deg']:g}°..{got['az_max_deg']:g}° is "
                f"{width:g}° wide; the cable wrap must span more than 0° and at most 720°",
                "az_max_deg")
    if not ok:
        return None
    path = ("site", site_name, "mount", "max_alt_deg")
    origin = limits_mod.Origin(field=field_of(path), file=file, line=lines.of(*path))
    return Mount(str(kind), top, origin, **got)  # type: ignore[arg-type]


_MOUNT_NUMBERS = (  # key, range, what, unit, must be above the range's low end
    ("past_meridian_east_min", MOUNT_PAST_MERIDIAN_RANGE_MIN, "tracking past the meridian",
     " min", False),
    ("past_meridian_west_min", MOUNT_PAST_MERIDIAN_RANGE_MIN, "tracking past the meridian",
     " min", False),
    ("flip_time_s", MOUNT_FLIP_TIME_RANGE_S, "flip time", " s", False),
    ("az_min_deg", MOUNT_AZ_RANGE_DEG, "azimuth limit", "°", False),
    ("az_max_deg", MOUNT_AZ_RANGE_DEG, "azimuth limit", "°", False),
    ("az_rate_max_deg_s", MOUNT_RATE_RANGE_DEG_S, "azimuth rate", "°/s", True),
    ("settle_s", MOUNT_SETTLE_RANGE_S, "settle time", " s", False),
)


def _two_rates(value: object) -> tuple[float, float]:
    """Two slew rates (axis 1, axis 2), degrees per second, each above 0 and at most 100."""
    if not isinstance(value, list) or len(value) != 2:
        raise ValueError(f"expected two rates [axis 1, axis 2] in degrees per second, got "
                         f"{shown(value)}")
    lo, hi = MOUNT_RATE_RANGE_DEG_S
    rates = (number(value[0]), number(value[1]))
    if not all(lo < r <= hi for r in rates):
        raise ValueError(f"slew rates {rates[0]:g}, {rates[1]:g} °/s must be above {lo:g} "
                         f"and at most {hi:g}")
    return rates
