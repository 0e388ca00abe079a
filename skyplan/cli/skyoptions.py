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


# The limit options every sky command takes: (parameter, type, option), in help order.
LIMIT_PARAMS = (
    ("min_alt", float, MinAlt), ("max_alt", float, MaxAlt), ("max_airmass", float, MaxAirmass),
    ("dark", str, Dark), ("moon_gap", float, MoonGap), ("sun_gap", float, SunGap),
    ("ha_range", str, HaRange), ("dec_range", str, DecRange), ("between", str, Between),
    ("no_horizon_profile", bool, NoProfile), ("airmass_model", str, AirmassModel),
    ("refraction", str, Refraction),
)


def with_limit_options(command):
    """The command with the limit options (:data:`LIMIT_PARAMS`) in place of its parameter
    ``limits_kw``, which it receives as the keyword arguments of ``limits.build_limits``
    (``min_alt=...``, ...; None where the option was not given).  One list of the options
    for every command, in the same place of each one's help."""
    import functools
    import inspect

    sig = inspect.signature(command, eval_str=True)
    params = list(sig.parameters.values())
    at = [p.name for p in params].index("limits_kw")
    added = [inspect.Parameter(name, inspect.Parameter.POSITIONAL_OR_KEYWORD, default=option,
                               annotation=kind) for name, kind, option in LIMIT_PARAMS]

    @functools.wraps(command)
    def run(*args, **kwargs):
        given = {name: kwargs.pop(name, None) for name, _, _ in LIMIT_PARAMS}
        return command(*args, **kwargs, limits_kw=given)

    run.__signature__ = sig.replace(parameters=params[:at] + added + params[at + 1:])
    run.__annotations__ = {p.name: p.annotation for p in run.__signature__.parameters.values()}
    run.__annotations__["return"] = sig.return_annotation
    return run


Mount = typer.Option(None, "--mount", help="The mount: equatorial, german-equatorial or "
                     "altaz (default: the kind in the site's mount table, whose other keys "
                     "stay). Plans slew on its axes; german-equatorial keeps each visit on "
                     "one pier side and pays for flips; altaz takes the mount's max_alt_deg "
                     "(else 85) as --max-alt and keeps to its cable wrap.")

BASELINE_HELP = ("Out-of-event minutes wanted before ingress and after egress (time-critical "
                 "targets with event_t0, period_d, duration_h).")
SKIP_BAD_HELP = ("Skip malformed catalogue rows and rows whose name does not resolve (each "
                 "reported) instead of stopping.")
SkipBad = typer.Option(False, "--skip-bad-rows", help=SKIP_BAD_HELP)
