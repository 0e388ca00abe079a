"""Plain conversion for the text and number options, without typer's validator layer.

Recent typer releases convert every option through a pydantic validator that they build on
first use: about 0.2 s on every run (0.14 s of it importing pydantic), whatever the
command.  Our options are text, numbers and flags, which need no more than
``str``, ``float``, ``int`` and ``bool``, and lists of texts; they get a converter of their
own here, before parsing.  Any other option (a path, a list of numbers, one with a custom
parser or bounds) keeps typer's.

typer offers no public switch for this, so it rests on typer's internals (its parameter
objects' ``_runtime_param`` and ``type_descriptor``): pyproject.toml pins the typer release
line it was tested with, and tests/test_cli_startup.py fails (rather than skips) when a
typer release no longer has them.  Only parameter objects that carry an unset
``_runtime_param`` are touched, so such a typer still runs, only slower.
"""

from __future__ import annotations

import re

# A value such as -05:23:28, -5d23m28s, -5.39 or -5°23′28″: a negative angle or number,
# never an option (no option of ours is a dash and a digit).
NEGATIVE_VALUE = re.compile(r"-\.?\d[\d.:hmsd°′″'\" ]*")

_KINDS = {str: "text", float: "number", int: "whole number", bool: "yes or no"}
_BOOLS = {"1": True, "true": True, "yes": True, "on": True,
          "0": False, "false": False, "no": False, "off": False}


class PlainConversion:
    """Converts one option's text to ``str``, ``float``, ``int`` or ``bool`` (None stays
    None)."""

    def __init__(self, kind: type) -> None:
        self.kind = kind

    def coerce(self, value, param=None, ctx=None):
        if value is None:
            return None
        if type(value) is self.kind:
            return value
        if self.kind is float and type(value) is int:
            return float(value)
        try:
            if self.kind is bool:
                return _BOOLS[str(value).strip().lower()]
            return self.kind(value)
        except (KeyError, TypeError, ValueError):
            from typer import BadParameter

            raise BadParameter(f"{value!r} is not a {_KINDS[self.kind]}", ctx=ctx,
                               param=param) from None


class TextList:
    """Converts a parameter that takes several texts (``list[str]``): none gives ``()``, as
    typer gives it (so that a required one is reported missing), else a list."""

    def coerce(self, value, param=None, ctx=None):
        if value is None:
            return ()
        if isinstance(value, str):
            from typer import BadParameter

            raise BadParameter("Value must be an iterable.", ctx=ctx, param=param)
        return [str(v) for v in value]


def _plain_kind(param) -> type | None:
    """The type to convert ``param`` to here, or None to leave it to typer."""
    if getattr(param, "_runtime_param", False) is not None:
        return None  # not a typer parameter of the kind this knows, or already set
    desc = getattr(param, "type_descriptor", None)
    info = getattr(desc, "parameter_info", None)
    if desc is None or info is None or getattr(desc, "file_annotation", None) is not None:
        return None
    if getattr(info, "parser", None) is not None or getattr(info, "click_type", None):
        return None
    if getattr(info, "min", None) is not None or getattr(info, "max", None) is not None:
        return None
    if getattr(param, "multiple", False) or getattr(param, "nargs", 1) != 1:
        return list if desc.annotation == list[str] else None
    return desc.annotation if desc.annotation in _KINDS else None


def _no_type(ctx) -> None:
    """A flag's help shows no value type (typer would show ``<bool>``)."""
    return None


def _give(param) -> bool:
    if getattr(param, "is_flag", False) and hasattr(param, "display_type_rich"):
        param.display_type_rich = _no_type
    kind = _plain_kind(param)
    if kind is list:
        param._runtime_param = TextList()
    elif kind is not None:
        param._runtime_param = PlainConversion(kind)
    return kind is not None


def _with_help_option(cmd) -> None:
    """The ``--help`` flag is made per run when parsing starts: converted here as well."""
    made = getattr(cmd, "get_help_option", None)
    if made is None:
        return

    def get_help_option(ctx):
        option = made(ctx)
        if option is not None:
            _give(option)
        return option

    cmd.get_help_option = get_help_option


def _negative_values_positional(cmd) -> None:
    """A negative angle typed as a value (``-5d23m28s``) is read as a value, not as a run
    of short options (click would read ``-5d23m28s`` as ``-5 -d ... -s``)."""
    made = getattr(cmd, "make_parser", None)
    if made is None:
        return

    def make_parser(ctx):
        parser = made(ctx)
        process = parser._process_opts

        def _process_opts(arg, state):
            if NEGATIVE_VALUE.fullmatch(arg):
                state.largs.append(arg)
            else:
                process(arg, state)

        parser._process_opts = _process_opts
        return parser

    cmd.make_parser = make_parser


def install(command) -> int:
    """Give every plain option of ``command`` and its subcommands our conversion.

    Returns how many options were given it (for the tests).
    """
    done = 0
    stack = [command]
    while stack:
        cmd = stack.pop()
        stack.extend(getattr(cmd, "commands", {}).values())
        _with_help_option(cmd)
        _negative_values_positional(cmd)
        done += sum(_give(param) for param in getattr(cmd, "params", ()))
    return done
