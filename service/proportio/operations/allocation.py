"""Operations of /v1/allocation-check: the sample-ratio-mismatch check."""

from __future__ import annotations

from ..stats import allocation

_FIELDS = ("expected_weights", "threshold", "observed")


def run_allocation_check(data: dict) -> dict:
    """Run one validated /v1/allocation-check request."""
    try:
        result = allocation.allocation_check(data["observed"], data["expected_weights"], data["threshold"])
    except ValueError as exc:
        message = str(exc)
        error = ValueError(message)
        error.field = next((name for name in _FIELDS if name in message), "observed")  # type: ignore[attr-defined]
        raise error from exc
    labels = data["labels"]
    summary = result.summary
    if labels is not None and result.mismatch:
        # The core numbers arms from 1; name the arm it singles out as well.
        for i, label in enumerate(labels, start=1):
            phrase = f"arm {i} received"
            if phrase in summary:
                summary = summary.replace(phrase, f'arm {i} ("{label}") received', 1)
                break
    return {
        "statistic": result.statistic,
        "df": result.df,
        "p_value": result.p_value,
        "log10_p_value": result.log10_p_value,
        "mismatch": result.mismatch,
        "threshold": result.threshold,
        "arms": [
            {"label": None if labels is None else labels[i], "observed": arm.observed, "expected": arm.expected,
             "observed_share": arm.observed_share, "expected_share": arm.expected_share,
             "standardized_residual": arm.standardized_residual}
            for i, arm in enumerate(result.arms)
        ],
        "summary": summary,
        "warnings": list(result.warnings),
    }
