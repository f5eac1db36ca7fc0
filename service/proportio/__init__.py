"""Proportio: compare success rates between groups over HTTP."""

__version__ = "0.1.0"
