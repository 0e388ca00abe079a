"""Options shared by the commands that compute the sky (windows, plan, next, charts): the
night's date, the observer's limits (from the limits' spec table) and the catalogue's format."""

from __future__ import annotations

import typer

from skyplan.inputs.limits import SPECS

DATE_HELP = ("Local date whose evening starts the night (YYYY-MM-DD, 'today', 'tonight', "
             "'tomorrow'); default: the current night.")
INPUT_FORMAT_HELP = ("Read the catalogue as csv (separator ',' ';' or tab, told by the header), "
                     "tsv, ecsv, votable or fits whatever its extension; needed with '-' "
                     "(standard input).")


def limit_option(key: str):
    """The option of one limit, its name and help from the limits' spec table."""
    spec = SPECS[key]
    return typer.Option(False if spec.kind == "flag" else None, spec.option,
                        help=spec.option_help())


MinAlt = limit_option("min_alt_deg")
MaxAlt = limit_option("max_alt_deg")
MaxAirmass = limit_option("max_airmass")
Dark = limit_option("dark")
MoonGap = limit_option("moon_gap_deg")
SunGap = limit_option("sun_gap_deg")
HaRange = limit_option("ha_range_h")
DecRange = limit_option("dec_range_deg")
Between = limit_option("between")
NoProfile = limit_option("horizon_profile")
AirmassModel = limit_option("airmass_model")
Refraction = limit_option("refraction_model")


def limit_args(min_alt, max_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range,
               between, no_horizon_profile, airmass_model, refraction) -> dict:
    """The limit options of a command as keyword arguments of ``limits.build_limits``."""
    return dict(min_alt=min_alt, max_alt=max_alt, max_airmass=max_airmass, dark=dark,
                moon_gap=moon_gap, sun_gap=sun_gap, ha_range=ha_range, dec_range=dec_range,
                between=between,
                no_horizon_profile=no_horizon_profile, airmass_model=airmass_model,
                refraction=refraction)

Mount = typer.Option(None, "--mount", help="The mount: equatorial, german-equatorial or "
                     "altaz (default: the site's [site.NAME.mount] kind, whose other keys "
                     "stay). Plans slew on its axes; german-equatorial keeps each visit on "
                     "one pier side and pays for flips; altaz takes the mount's max_alt_deg "
                     "(else 85) as --max-alt and keeps to its cable wrap.")

BASELINE_HELP = ("Out-of-event minutes wanted before ingress and after egress (time-critical "
                 "targets with event_t0, period_d, duration_h).")
SKIP_BAD_HELP = ("Skip malformed catalogue rows and rows whose name does not resolve (each "
                 "reported) instead of stopping.")
SkipBad = typer.Option(False, "--skip-bad-rows", help=SKIP_BAD_HELP)
