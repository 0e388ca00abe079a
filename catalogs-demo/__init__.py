"""The demo scenario's files, installed with the package as ``skyplan.demodata``."""
