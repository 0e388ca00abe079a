"""Imports every command module so that each registers its commands on the app."""

from skyplan.cli import basic, charts, find, plan, sky  # noqa: F401

