"""skyplan: a terminal observation planner that works offline."""

__version__ = "0.1.0"
