"""Gunicorn configuration for the container and for `proportio serve`: settings come from PROPORTIO_* variables."""

from proportio.gunicorn_conf import *  # noqa: F401,F403
