"""Operation of /v1/guardrail."""

from __future__ import annotations

from ..stats import guardrail


def run_guardrail(data: dict) -> guardrail.GuardrailResult:
    """Give the verdict of one validated /v1/guardrail request."""
    t, c = data["treatment"], data["control"]
    return guardrail.guardrail(
        t["successes"], t["trials"], c["successes"], c["trials"], margin=data["margin"],
        margin_type=data["margin_type"], direction=data["direction"], alpha=data["alpha"], metric=data["metric"],
    )
