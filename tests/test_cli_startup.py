"""Start-up of the command: plain option conversion (no pydantic per option), only the
command asked for built, heavy libraries left unloaded where a command does not need them."""

from __future__ import annotations

import subprocess
import sys

import pytest
import typer

from skyplan.cli import app as app_module
from skyplan.cli import plainparams


def loaded_after(*argv: str) -> set[str]:
    """Top-level modules loaded by one run of the command, in a fresh interpreter."""
    code = ("import sys\nfrom skyplan.cli.app import main\ntry:\n    main(sys.argv[1:])\n"
            "except SystemExit:\n    pass\n"
            "print(' '.join(sorted({m.split('.')[0] for m in sys.modules})))")
    out = subprocess.run([sys.executable, "-c", code, *argv], capture_output=True, text=True,
                         check=True)
    return set(out.stdout.split())


def test_help_loads_no_heavy_library() -> None:
    loaded = loaded_after("--help")
    assert not loaded & {"numpy", "astropy", "skyfield", "scipy", "matplotlib", "pydantic"}


def plain_options_of_every_command() -> int:
    return plainparams.install(typer.main.get_command(app_module.build()))


def test_the_installed_typer_is_the_one_plain_conversion_was_tested_with() -> None:
    # pyproject.toml pins typer to the release line whose option objects plainparams knows;
    # a typer outside it must fail here (not skip), so that the loss of speed is seen.
    from importlib.metadata import version

    major, minor, *_ = (int(p) for p in version("typer").split(".")[:3])
    assert (major, minor) == (0, 29), f"typer {version('typer')} is outside the tested range"
    assert plain_options_of_every_command() >= 100  # every text, number and flag option


def test_a_windows_run_converts_its_options_without_pydantic(tmp_path) -> None:
    assert plain_options_of_every_command() > 0
    loaded = loaded_after("windows", "--demo", "--min-alt", "25", "-f", "json", "--out",
                          str(tmp_path / "w.json"), "--quiet")
    assert "pydantic" not in loaded and (tmp_path / "w.json").stat().st_size > 0


def test_a_find_run_converts_its_names_without_pydantic() -> None:
    assert plain_options_of_every_command() > 0
    assert "pydantic" not in loaded_after("find", "M 42", "Vega")


def test_lists_of_texts() -> None:
    texts = plainparams.TextList()
    assert texts.coerce(("M 42", "Vega")) == ["M 42", "Vega"] and texts.coerce(None) == ()
    with pytest.raises(typer.BadParameter):
        texts.coerce("M 42")


def test_a_missing_name_is_one_line_and_status_2(capsys) -> None:
    with pytest.raises(SystemExit) as stop:
        app_module.main(["find"])
    assert stop.value.code == 2
    assert capsys.readouterr().err.strip().splitlines() == [
        "skyplan: Missing argument 'name'. (see 'skyplan find --help')"]


def conversion(kind: type) -> plainparams.PlainConversion:
    return plainparams.PlainConversion(kind)


def test_plain_conversion() -> None:
    assert conversion(float).coerce("2.5") == 2.5 and conversion(float).coerce(" 1e3 ") == 1000
    assert conversion(float).coerce(3) == 3.0 and type(conversion(float).coerce(3)) is float
    assert conversion(int).coerce("12") == 12 and conversion(str).coerce("x") == "x"
    assert conversion(bool).coerce("yes") is True and conversion(bool).coerce("0") is False
    assert conversion(float).coerce(None) is None
    for kind, text in ((float, "abc"), (int, "1.5"), (bool, "maybe")):
        with pytest.raises(typer.BadParameter, match=repr(text)):
            conversion(kind).coerce(text)


def test_a_bad_number_is_one_line_and_status_2(capsys) -> None:
    with pytest.raises(SystemExit) as stop:
        app_module.main(["windows", "--demo", "--moon-gap", "far"])
    assert stop.value.code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == ["skyplan: Invalid value for '--moon-gap': 'far' is not a number "
                   "(see 'skyplan windows --help')"]


def test_only_the_command_asked_for_is_built() -> None:
    one = app_module._command(["night", "--demo"])
    assert list(one.commands) == ["night"]
    everything = app_module._command(["--help"])
    assert {"night", "windows", "plan"} <= set(everything.commands)
    assert set(app_module._command(["nigth"]).commands) == set(everything.commands)


def test_a_run_imports_only_its_own_command_module() -> None:
    code = ("import sys\nfrom skyplan.cli.app import main\ntry:\n    main(sys.argv[1:])\n"
            "except SystemExit:\n    pass\n"
            "print(' '.join(sorted(m for m in sys.modules if m.startswith('skyplan.cli.'))),"
            " file=sys.stderr)")
    out = subprocess.run([sys.executable, "-c", code, "clock", "--demo", "--at",
                          "2026-12-18T22:00"], capture_output=True, text=True, check=True)
    assert set(out.stderr.split()) == {"skyplan.cli.app", "skyplan.cli.clock",
                                       "skyplan.cli.options", "skyplan.cli.plainparams"}
