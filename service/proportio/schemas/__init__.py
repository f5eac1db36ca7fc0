"""Request and response schemas: the single source of validation and of the OpenAPI document.

One module per resource; everything is re-exported here so callers import from ``proportio.schemas``.
"""

from .base import (  # noqa: F401
    GroupSchema,
    HealthSchema,
    ProblemSchema,
    StrictSchema,
    alpha_field,
    alternative_field,
    flatten_errors,
    raise_for,
)
from .twogroup import (  # noqa: F401
    IntervalRequestSchema,
    IntervalResponseSchema,
    TestRequestSchema,
    TestResponseSchema,
)
