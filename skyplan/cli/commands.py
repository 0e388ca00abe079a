"""Imports every command module so that each registers its commands on the app.

The order of the imports is the order of the commands in ``skyplan --help``.
"""

from skyplan.cli import sky  # noqa: F401  isort: skip  (night, windows)
from skyplan.cli import plan  # noqa: F401  isort: skip
from skyplan.cli import charts  # noqa: F401  isort: skip
from skyplan.cli import basic  # noqa: F401  isort: skip  (clock, convert, sites, selfcheck)
from skyplan.cli import find  # noqa: F401  isort: skip
