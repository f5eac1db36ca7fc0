"""Request and response schemas: the single source of validation and of the OpenAPI document.

One module per resource; everything is re-exported here so callers import from ``proportio.schemas``.
"""

from .allocation import (  # noqa: F401
    AllocationRequestSchema,
    AllocationResponseSchema,
)
from .arms import (  # noqa: F401
    ArmsRequestSchema,
    ArmsResponseSchema,
)
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
from .batch import (  # noqa: F401
    BatchRequestSchema,
    BatchResponseSchema,
)
from .guardrail import (  # noqa: F401
    GuardrailRequestSchema,
    GuardrailResponseSchema,
)
from .planning import (  # noqa: F401
    SampleSizeRequestSchema,
    SampleSizeResponseSchema,
)
from .sequential import (  # noqa: F401
    AlwaysValidRequestSchema,
    AlwaysValidResponseSchema,
    SequentialAnalyzeRequestSchema,
    SequentialAnalyzeResponseSchema,
    SequentialPlanRequestSchema,
    SequentialPlanResponseSchema,
)
from .twogroup import (  # noqa: F401
    IntervalRequestSchema,
    IntervalResponseSchema,
    TestRequestSchema,
    TestResponseSchema,
)
