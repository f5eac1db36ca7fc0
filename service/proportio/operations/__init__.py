"""What each endpoint does with a validated request, free of Flask so the CLI can run it in-process.

One module per resource; everything is re-exported here so callers use ``proportio.operations.<name>``.
"""

from .twogroup import run_interval, run_test, run_tests  # noqa: F401
