"""Which schema pair and operation serve each POST path; shared by the CLI's local mode."""

LOCAL_OPERATIONS = {
    "/v1/tests": ("TestRequestSchema", "TestResponseSchema", "run_test"),
    "/v1/intervals": ("IntervalRequestSchema", "IntervalResponseSchema", "run_interval"),
}
