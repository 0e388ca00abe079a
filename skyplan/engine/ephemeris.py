"""The one place that configures bundled data for offline use.

* the JPL DE421 planetary ephemeris shipped by ``skyfield-data`` (never downloaded),
  checked when it is opened (whole DAF records, every coefficient finite, neighbouring
  Chebyshev records meeting end to end) so that a damaged file is named instead of giving
  wrong places;
* a skyfield ``Timescale`` whose ΔT = TT − UT1 comes from :mod:`skyplan.engine.timescales`, so
  skyfield (the Sun, the Moon, planets, orbits) and our ERFA-based code (fixed targets,
  sidereal time) turn every instant with the same UT1 — inside the IERS table and beyond it;
* astropy's IERS configuration: no automatic downloads, bundled tables only.

DE421: Folkner, Williams & Boggs (2009), JPL IOM 343R-08-003; it covers
1899-07-29 to 2053-10-09 (TDB).  DAF layout (1024-byte records, 8-byte words, the free
address in the file record): NAIF "DAF Required Reading"; SPK type 2 records (MID, RADIUS,
then Chebyshev coefficients per component): NAIF "SPK Required Reading".
"""

from __future__ import annotations

import atexit
import functools
import warnings
from pathlib import Path

import numpy as np

from skyplan.defaults import EPHEMERIS_FIRST, EPHEMERIS_LAST, EPHEMERIS_NAME
from skyplan.engine import timescales
from skyplan.errors import DataError, InputError

DAF_RECORD_BYTES = 1024
# Neighbouring Chebyshev records of DE421 meet within 3e-6 km (measured over every segment);
# a gap above this means damaged coefficients.
CONTINUITY_KM = 1.0


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


def _damaged(path: Path, reason: str) -> DataError:
    return DataError(
        f"the bundled ephemeris {path} is damaged ({reason}); reinstall skyfield-data "
        "(pip install --force-reinstall skyfield-data)"
    )


def _check_kernel(kernel, path: Path) -> None:
    """Refuse a truncated or corrupted SPK file (see the module docstring for the checks)."""
    size = path.stat().st_size
    daf = kernel.spk.daf
    if size % DAF_RECORD_BYTES or size < (int(daf.free) - 1) * 8:
        raise _damaged(path, f"{size} bytes: the file is cut short")
    for segment in kernel.spk.segments:
        if segment.data_type != 2:
            continue
        _, _, rsize, n = daf.read_array(segment.end_i - 3, segment.end_i)
        n, rsize = int(n), int(rsize)
        if n < 1 or rsize < 5 or (rsize - 2) % 3 \
                or segment.end_i - segment.start_i + 1 != n * rsize + 4:
            raise _damaged(path, f"segment of body {segment.target} has a bad directory")
        records = np.asarray(daf.map_array(segment.start_i, segment.end_i - 4)).reshape(n, rsize)
        # each record's x, y, z at the end (T_k(+1) = 1) and the start (T_k(-1) = (-1)^k) of
        # its interval, in one matrix product; a NaN or infinite coefficient makes them so too
        degree = (rsize - 2) // 3
        weights = np.zeros((rsize, 6))
        for axis in range(3):
            rows = slice(2 + axis * degree, 2 + (axis + 1) * degree)
            weights[rows, axis] = 1.0
            weights[rows, 3 + axis] = (-1.0) ** np.arange(degree)
        with np.errstate(all="ignore"):  # non-numbers are reported below
            ends_starts = records @ weights
        if not np.isfinite(ends_starts).all():
            raise _damaged(path, f"segment of body {segment.target} holds non-numbers")
        ends, starts = ends_starts[:, :3], ends_starts[:, 3:]
        with np.errstate(all="ignore"):  # huge damaged values overflow: a jump all the same
            jump = np.abs(ends[:-1] - starts[1:]).max() if n > 1 else 0.0
        if not jump <= CONTINUITY_KM:
            raise _damaged(path, f"segment of body {segment.target} does not join up")


@functools.cache
def planets():
    """The DE421 kernel as a skyfield ``SpiceKernel``, loaded and checked once."""
    from skyfield.jpllib import SpiceKernel  # not skyfield.api: it imports the network code

    path = skyfield_data_dir() / "de421.bsp"
    if not path.is_file():
        raise DataError(f"the bundled ephemeris is missing: {path}; reinstall skyfield-data")
    try:
        kernel = SpiceKernel(str(path))
        kernel["earth"]  # a file without the Earth is no use
        _check_kernel(kernel, path)
    except DataError:
        raise
    except Exception as exc:  # any failure to read the kernel is a data fault
        reason = " ".join(str(exc).split())[:120] or type(exc).__name__
        raise _damaged(path, reason) from None
    atexit.register(kernel.close)  # close the file ourselves, not in the final clean-up
    return kernel


# the IERS table's path, where it was before :mod:`skyplan.engine.timescales` (which reads it)
# took it over; kept for callers of the old name
iers_finals_path = timescales.iers_finals_path


def delta_t_s(tt_jd: np.ndarray) -> np.ndarray:
    """ΔT = TT − UT1 in seconds at Julian dates of TT, from :mod:`skyplan.engine.timescales`.

    TT = UTC + (TAI − UTC) + 32.184 s (IAU 1991 Resolution A4) and UT1 = UTC + (UT1 − UTC),
    so ΔT = (TAI − UTC) + 32.184 s − (UT1 − UTC).  UTC is found from TT by two passes over
    the leap-second table (one pass can land on the wrong side of a leap second).
    """
    tt_unix = (np.asarray(tt_jd, dtype=float) - timescales.UNIX_EPOCH_JD) * timescales.DAY_S \
        - timescales.TT_MINUS_TAI_S
    tai_utc = timescales.tai_minus_utc_s(tt_unix - 37.0)
    tai_utc = timescales.tai_minus_utc_s(tt_unix - tai_utc)
    utc = tt_unix - tai_utc
    return tai_utc + timescales.TT_MINUS_TAI_S - timescales.dut1_s(utc)


@functools.cache
def timescale():
    """A skyfield Timescale on the same UT1 and polar motion as :mod:`skyplan.engine.timescales`."""
    from skyfield.data import iers
    from skyfield.timelib import Timescale

    eo = timescales.earth_orientation()
    _, _, leap_dates, leap_offsets = iers.build_timescale_arrays(eo.mjd, eo.dut1_s)
    ts = Timescale(delta_t_s, leap_dates, leap_offsets)
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
