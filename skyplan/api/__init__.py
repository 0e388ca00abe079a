"""Programmatic entry points: whole runs of the planner, called by the command line."""
