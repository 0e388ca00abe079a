"""The one place that configures bundled data for offline use.

* the JPL DE421 planetary ephemeris shipped by ``skyfield-data`` (never downloaded);
* a skyfield ``Timescale`` built from the IERS ``finals2000A.all`` table that
  ``astropy-iers-data`` ships (the newest Earth-orientation table on the machine), so
  skyfield and our own ERFA-based code use the same UT1 and polar motion;
* astropy's IERS configuration: no automatic downloads, bundled tables only.

DE421: Folkner, Williams & Boggs (2009), JPL IOM 343R-08-003; it covers
1899-07-29 to 2053-10-09 (TDB).
"""

from __future__ import annotations

import functools
import warnings
from pathlib import Path

from skyplan.errors import DataError, InputError

# Span of DE421 as POSIX seconds (UTC, to the day; safely inside the kernel's own span).
EPHEMERIS_NAME = "DE421"
EPHEMERIS_FIRST = "1900-01-01"
EPHEMERIS_LAST = "2053-10-01"


def _span_unix() -> tuple[float, float]:
    import datetime as dt

    first = dt.datetime.fromisoformat(EPHEMERIS_FIRST).replace(tzinfo=dt.UTC).timestamp()
    last = dt.datetime.fromisoformat(EPHEMERIS_LAST).replace(tzinfo=dt.UTC).timestamp()
    return first, last


EPHEMERIS_SPAN_UNIX = _span_unix()


def check_in_span(unix_min: float, unix_max: float, *, field: str = "time") -> None:
    """Raise InputError when an instant falls outside what the bundled ephemeris covers."""
    first, last = EPHEMERIS_SPAN_UNIX
    if not (unix_min >= first and unix_max <= last):
        raise InputError(
            f"outside the span of the bundled {EPHEMERIS_NAME} ephemeris "
            f"({EPHEMERIS_FIRST} to {EPHEMERIS_LAST})",
            field=field,
        )


def skyfield_data_dir() -> Path:
    """Folder of the data files that skyfield-data ships (de421.bsp)."""
    import skyfield_data

    with warnings.catch_warnings():
        # skyfield-data warns when its own copy of finals2000A.all is old; we do not use it
        warnings.simplefilter("ignore")
        return Path(skyfield_data.get_skyfield_data_path())


@functools.cache
def planets():
    """The DE421 kernel as a skyfield ``SpiceKernel``, loaded once."""
    from skyfield.api import Loader

    path = skyfield_data_dir() / "de421.bsp"
    if not path.is_file():
        raise DataError(f"the bundled ephemeris is missing: {path}; reinstall skyfield-data")
    try:
        loader = Loader(str(path.parent), verbose=False)
        kernel = loader("de421.bsp")
        kernel["earth"]  # touch a segment so a truncated file fails here
    except Exception as exc:  # any failure to read the kernel is a data fault
        raise DataError(f"the bundled ephemeris {path} could not be read ({exc})") from None
    return kernel


def iers_finals_path() -> Path:
    """The IERS finals2000A.all (IERS Bulletin A series) table shipped by astropy-iers-data."""
    from astropy_iers_data import IERS_A_FILE

    return Path(IERS_A_FILE)


@functools.cache
def timescale():
    """A skyfield Timescale built from the same IERS table as :mod:`skyplan.timescales`."""
    import numpy as np
    from skyfield.data import iers
    from skyfield.timelib import Timescale

    from skyplan.timescales import earth_orientation

    eo = earth_orientation()
    daily_tt, daily_delta_t, leap_dates, leap_offsets = iers.build_timescale_arrays(
        eo.mjd, eo.dut1_s
    )
    ts = Timescale((daily_tt, daily_delta_t), leap_dates, leap_offsets)
    table = np.zeros(
        len(eo.mjd),
        dtype=[("utc_mjd", float), ("x_arcseconds", float), ("y_arcseconds", float)],
    )
    table["utc_mjd"], table["x_arcseconds"], table["y_arcseconds"] = (
        eo.mjd,
        eo.xp_arcsec,
        eo.yp_arcsec,
    )
    iers.install_polar_motion_table(ts, table)
    return ts


def configure_astropy_offline() -> None:
    """Make astropy use only the bundled IERS tables and never reach the network."""
    from astropy.utils import iers as astropy_iers

    astropy_iers.conf.auto_download = False
    astropy_iers.conf.auto_max_age = None
    astropy_iers.conf.iers_degraded_accuracy = "warn"
