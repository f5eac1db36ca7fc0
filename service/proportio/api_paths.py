"""Which schema pair and operation serve each POST path; shared by the CLI's local mode."""

LOCAL_OPERATIONS = {
    "/v1/tests": ("TestRequestSchema", "TestResponseSchema", "run_test"),
    "/v1/intervals": ("IntervalRequestSchema", "IntervalResponseSchema", "run_interval"),
    "/v1/batch": ("BatchRequestSchema", "BatchResponseSchema", "run_batch"),
    "/v1/arms": ("ArmsRequestSchema", "ArmsResponseSchema", "run_arms"),
    "/v1/allocation-check": ("AllocationRequestSchema", "AllocationResponseSchema", "run_allocation_check"),
    "/v1/guardrail": ("GuardrailRequestSchema", "GuardrailResponseSchema", "run_guardrail"),
    "/v1/sample-size": ("SampleSizeRequestSchema", "SampleSizeResponseSchema", "run_sample_size"),
    "/v1/sequential/plan": ("SequentialPlanRequestSchema", "SequentialPlanResponseSchema", "run_sequential_plan"),
    "/v1/sequential/analyze": ("SequentialAnalyzeRequestSchema", "SequentialAnalyzeResponseSchema",
                               "run_sequential_analyze"),
    "/v1/sequential/always-valid": ("AlwaysValidRequestSchema", "AlwaysValidResponseSchema", "run_always_valid"),
}
