"""The bundled demo scenario: an invented observatory, its programme and a demo night.

The files live in ``catalogs-demo/`` of the source tree and are installed as the
``skyplan.demodata`` package.  Every name and number in them is invented.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

DEMO_SITE = "Hollowmere"
DEMO_DATE = "2026-12-18"
DEMO_CATALOG = "programme.csv"


def demo_path(name: str) -> Path:
    """Path of one file of the demo scenario (installed package data, or the source tree)."""
    try:
        return Path(str(resources.files("skyplan.demodata") / name))
    except ModuleNotFoundError:  # running from a source checkout that shadows the install
        return Path(__file__).resolve().parents[2] / "catalogs-demo" / name
