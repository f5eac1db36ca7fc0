"""What each endpoint does with a validated request, free of Flask so the CLI can run it in-process.

One module per resource; everything is re-exported here so callers use ``proportio.operations.<name>``.
"""

from .allocation import run_allocation_check  # noqa: F401
from .arms import run_arms  # noqa: F401
from .batch import batch_json, columns_json, run_batch, run_batch_columns  # noqa: F401
from .guardrail import run_guardrail  # noqa: F401
from .planning import run_sample_size  # noqa: F401
from .sequential import run_always_valid, run_sequential_analyze, run_sequential_plan  # noqa: F401
from .twogroup import run_interval, run_test, run_tests  # noqa: F401
