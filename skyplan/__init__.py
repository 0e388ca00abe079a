"""skyplan: a terminal observation planner that works offline.

The Python API, for notebooks and scripts (each name is loaded on first use, so that
``import skyplan`` stays instant; see docs/api.md)::

    import skyplan

    site = skyplan.site(demo=True)
    night = skyplan.night(site, "2026-12-18")
    found = skyplan.windows(skyplan.read_targets(demo=True), site, night)
    found.to_table()
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_HOMES = {
    "site": "skyplan.api.sites",
    "Site": "skyplan.inputs.sites",
    "read_targets": "skyplan.api.targets",
    "targets": "skyplan.api.targets",
    "Targets": "skyplan.api.targets",
    "night": "skyplan.api.night",
    "Night": "skyplan.api.night",
    "limits": "skyplan.api.windows",
    "Limits": "skyplan.inputs.limits",
    "windows": "skyplan.api.windows",
    "Windows": "skyplan.api.windows",
    "season": "skyplan.api.season",
    "Season": "skyplan.api.season",
    "catch": "skyplan.api.catch",
    "Catch": "skyplan.api.catch",
    "plan": "skyplan.api.plan",
    "plan_settings": "skyplan.api.plan",
    "Plan": "skyplan.api.plan",
    "next_visit": "skyplan.api.nextvisit",
    "NextVisit": "skyplan.api.nextvisit",
    "convert": "skyplan.api.positions",
    "Conversion": "skyplan.api.positions",
    "find": "skyplan.api.positions",
    "Lookup": "skyplan.api.positions",
    "SkyplanWarning": "skyplan.notices",
    "SkyplanError": "skyplan.errors",
    "InputError": "skyplan.errors",
    "NothingObservable": "skyplan.errors",
}

__all__ = ["__version__", *_HOMES]


def __getattr__(name: str):
    """Load a public name from its module on first use (PEP 562)."""
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'skyplan' has no attribute {name!r}")
    value = getattr(importlib.import_module(home), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_HOMES))
