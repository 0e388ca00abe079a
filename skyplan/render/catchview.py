"""The events that can be caught: JSON/CSV records and the terminal table (formatting only).

One record per event, phase span or fixed-time request.  The keys ``name``,
``epoch_number``, ``ingress``, ``mid``, ``egress`` (ISO 8601 UTC with Z), ``mid_sigma_min``,
``coverage``, ``baseline_before_min``, ``baseline_after_min``, ``alt_ingress_deg``,
``alt_mid_deg``, ``alt_egress_deg`` are fixed (docs/timed.md); the others follow them.
"""

from __future__ import annotations

import numpy as np

from skyplan.inputs.timeinput import iso_local, iso_utc
from skyplan.render.tables import Sheet, site_record

SCHEMA = "skyplan.catch/1"
CSV_COLUMNS = (
    "name", "epoch_number", "ingress", "mid", "egress", "mid_sigma_min", "coverage",
    "baseline_before_min", "baseline_after_min", "alt_ingress_deg", "alt_mid_deg",
    "alt_egress_deg", "kind", "night", "ingress_local", "mid_local", "egress_local",
    "airmass_ingress", "airmass_mid", "airmass_egress", "sun_alt_mid_deg", "moon_distance_deg",
    "moon_illumination", "fits", "observable_spans",
)
KIND_LABEL = {"event": "event", "phase": "phase", "fixed": "fixed time"}


def _num(value: float, places: int) -> float | None:
    return None if not np.isfinite(value) else round(float(value), places)


def records(res, site) -> list[dict]:
    """The records of every occurrence, in time order."""
    zone = site.tzinfo
    spans: list[list] = [[] for _ in range(len(res))]
    for i, a, b in zip(res.spans.rows.tolist(), res.spans.start.tolist(),
                       res.spans.end.tolist()):
        spans[i].append([iso_utc(a), iso_utc(b)])
    out = []
    for i in range(len(res)):
        epoch = res.epoch[i]
        out.append({
            "name": str(res.names[i]),
            "epoch_number": None if not np.isfinite(epoch) else int(epoch),
            "ingress": iso_utc(res.ingress[i]), "mid": iso_utc(res.mid[i]),
            "egress": iso_utc(res.egress[i]),
            "mid_sigma_min": _num(res.mid_sigma_s[i] / 60.0, 2),
            "coverage": _num(res.coverage[i], 3),
            "baseline_before_min": _num(res.baseline_before_s[i] / 60.0, 1),
            "baseline_after_min": _num(res.baseline_after_s[i] / 60.0, 1),
            "alt_ingress_deg": _num(res.alt_deg[i, 0], 2),
            "alt_mid_deg": _num(res.alt_deg[i, 1], 2),
            "alt_egress_deg": _num(res.alt_deg[i, 2], 2),
            "kind": str(res.kind[i]), "night": res.night[i].isoformat(),
            "ingress_local": iso_local(res.ingress[i], zone),
            "mid_local": iso_local(res.mid[i], zone),
            "egress_local": iso_local(res.egress[i], zone),
            "airmass_ingress": _num(res.airmass[i, 0], 3),
            "airmass_mid": _num(res.airmass[i, 1], 3),
            "airmass_egress": _num(res.airmass[i, 2], 3),
            "sun_alt_mid_deg": _num(res.sun_alt_deg[i], 2),
            "moon_distance_deg": _num(res.moon_distance_deg[i], 1),
            "moon_illumination": _num(res.moon_illumination[i], 3),
            "fits": bool(res.fits[i]),
            "observable_spans": spans[i],
        })
    return out


def document(res, site) -> dict:
    """The JSON document: what was asked, then the records."""
    return {
        "schema": SCHEMA, "site": site_record(site, brief=True),
        "from": res.dates[0].isoformat(), "to": res.dates[-1].isoformat(),
        "baseline_min": res.baseline_s / 60.0, "min_coverage": res.min_coverage,
        "limits": res.limits.as_record(), "events": records(res, site),
    }


def _clock(unix: float, zone) -> str:
    import datetime as dt

    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


def _minutes(seconds: float) -> str:
    return "—" if not np.isfinite(seconds) else f"{seconds / 60.0:.0f}"


def catch_table(res, site) -> Sheet:
    """One row per occurrence: night, target, times (local, then UTC), altitudes, baselines."""
    import datetime as dt

    zone = site.tzinfo
    lim = res.limits
    title = (f"Events to catch at {site.name}, nights of {res.dates[0].isoformat()} to "
             f"{res.dates[-1].isoformat()} ({len(res)} found, times {site.zone})")
    footer = [
        f"coverage: the part of ingress..egress observable under the limits (at least "
        f"{res.min_coverage:g}); before/after: observable baseline, up to "
        f"{res.baseline_s / 60.0:g} min; σ: the mid-time's uncertainty from the ephemeris.",
        f"limits: min alt {lim.min_alt_deg:g}°, dark: {lim.dark_label}, Sun ≥ "
        f"{lim.sun_gap_deg:g}°" + (f", Moon ≥ {lim.moon_gap_deg:g}°" if lim.moon_gap_deg
                                   else "")
        + "; fixed time: 'fits' when the whole visit is observable.",
    ]
    t = Sheet(title, footer=footer)
    t.column("night", rank=6)
    t.column("target")
    t.column("kind", rank=9, fate="drop")
    t.column("n", justify="right", rank=8, fate="drop")
    t.column("ingress", justify="right", rank=1)
    t.column("mid", justify="right", rank=2)
    t.column("egress", justify="right", rank=1)
    t.column("mid UTC", justify="right", rank=6, fate="drop")
    t.column("alt i/m/e", justify="right", rank=3)
    t.column("cov", justify="right", rank=0)
    t.column("before", justify="right", rank=4)
    t.column("after", justify="right", rank=4)
    t.column("σ min", justify="right", rank=7, fate="drop")
    t.column("Moon", justify="right", rank=5, fate="drop")
    utc = dt.UTC
    for i in range(len(res)):
        alts = "/".join("—" if not np.isfinite(a) else f"{a:.0f}" for a in res.alt_deg[i])
        times = [_clock(x, zone) for x in (res.ingress[i], res.mid[i], res.egress[i])]
        epoch = res.epoch[i]
        cov = f"{res.coverage[i]:.2f}"
        if res.kind[i] == "fixed":
            cov += " fits" if res.fits[i] else " no"
        sigma = res.mid_sigma_s[i] / 60.0
        t.add_row(res.night[i].isoformat()[5:], str(res.names[i]), KIND_LABEL[res.kind[i]],
                  "" if not np.isfinite(epoch) else str(int(epoch)), *times,
                  _clock(res.mid[i], utc) + "Z", alts, cov,
                  _minutes(res.baseline_before_s[i]), _minutes(res.baseline_after_s[i]),
                  "—" if not np.isfinite(sigma) else f"{sigma:.1f}",
                  f"{res.moon_distance_deg[i]:.0f}° {100 * res.moon_illumination[i]:.0f}%")
    return t
