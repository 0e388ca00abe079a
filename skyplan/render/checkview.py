"""``selfcheck`` as a terminal table (formatting only; the record is
``tables.selfcheck_record``)."""

from __future__ import annotations

from skyplan.render.tables import Sheet


def selfcheck_table(report) -> Sheet:
    """One row per check: what was checked, expected and got, the verdict, and the source
    (below the table when narrow)."""
    verdict = "all checks pass" if report.ok else "SOME CHECKS FAIL"
    footer = [f"{verdict}; ephemeris {report.ephemeris} covers {report.ephemeris_span[0]} to "
              f"{report.ephemeris_span[1]}; IERS table: measured to "
              f"{report.iers_observed_end}, predicted to {report.iers_table_end}"]
    t = Sheet("skyplan selfcheck", footer=footer)
    t.column("check", rank=3, fate="wrap")
    t.column("expected", rank=1)
    t.column("got", rank=2)
    t.column("result", rank=0)
    t.column("source", rank=4, fate="note")
    for c in report.checks:
        t.add_row(c.name, c.expected, c.got, "pass" if c.ok else "FAIL", c.source)
    return t
