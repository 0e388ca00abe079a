"""Entry point for ``python -m skyplan``."""

from skyplan.cli.app import main

main()
