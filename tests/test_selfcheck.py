"""skyplan selfcheck: every stored reference case passes on this installation, and a failing
case gives the selfcheck exit status."""

from __future__ import annotations

import json

import pytest

from skyplan.cli.app import main
from skyplan.engine import selfcheck
from skyplan.errors import EXIT_SELFCHECK


def run(args, capsys):
    with pytest.raises(SystemExit) as exc:
        main(args)
    out = capsys.readouterr()
    return exc.value.code, out.out, out.err


def test_every_reference_case_passes() -> None:
    report = selfcheck.run()
    failed = [(c.name, c.expected, c.got) for c in report.checks if not c.ok]
    assert not failed
    assert len(report.checks) >= 7
    assert all(c.source for c in report.checks)  # each check names where its value comes from
    assert report.ephemeris_span == ("1900-01-01", "2053-10-01")


def test_cli_json_and_exit_status(capsys) -> None:
    code, out, err = run(["selfcheck", "-f", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["ok"] is True and doc["iers_table_end"] >= doc["iers_observed_end"]


def test_a_failing_case_sets_the_status(monkeypatch, capsys) -> None:
    def broken() -> selfcheck.Check:
        raise RuntimeError("simulated damage")

    monkeypatch.setattr(selfcheck, "CHECKS", (*selfcheck.CHECKS, broken))
    code, out, _ = run(["selfcheck"], capsys)
    assert code == EXIT_SELFCHECK
    assert "FAIL" in out and "simulated damage" in out
