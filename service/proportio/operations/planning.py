"""Operation of /v1/sample-size: one plan, or one plan per value of a swept field."""

from __future__ import annotations

import re

from ..errors import field_error
from ..stats import planning

# Request fields passed to the planning core as they are.
_PLAN_FIELDS = ("expected_rate", "absolute_effect", "relative_effect", "alpha", "power", "alternative",
                "allocation_ratio", "design", "margin", "method", "continuity_correction", "solve_for", "n_control",
                "n_treatment")
_EFFECT_FIELDS = ("expected_rate", "absolute_effect", "relative_effect")
# Core messages that start with the argument they are about.
_LEADING_NAMES = ("baseline_rate", "allocation_ratio", "n_control", "n_treatment", "margin", "power", "alpha",
                  *_EFFECT_FIELDS)
_SWEPT_POINT = re.compile(r"^values\[(\d+)\] \([a-z_]+=[^)]*\): ")



def _field_for(message: str, data: dict) -> str:
    """Name the request field a planning-core error is about."""
    for name in _LEADING_NAMES:
        if message.startswith(name + " "):
            return name
    if "alternative is" in message:
        return "alternative"
    if "margin" in message and ("equivalence margin" in message or "non-inferiority margin" in message):
        return "margin"
    if message.startswith(("no treatment rate", "even equal rates")):
        return "n_control"
    if "trials per group" in message:
        # The plan needs too many trials: the effect asked for is too small to detect.
        return next((name for name in _EFFECT_FIELDS if data.get(name) is not None), "baseline_rate")
    return "body"


def run_sample_size(data: dict) -> planning.PlanResult | dict:
    """Run one validated /v1/sample-size request: a PlanResult, or the curve of a sweep."""
    kwargs = {name: data[name] for name in _PLAN_FIELDS if name in data}
    sweep = data.get("sweep")
    if sweep is None:
        try:
            return planning.plan(data["baseline_rate"], **kwargs)
        except ValueError as exc:
            raise field_error(str(exc), _field_for(str(exc), data)) from exc

    parameter, values = sweep["parameter"], sweep["values"]
    kwargs.pop(parameter, None)
    try:
        curve = planning.sweep(parameter, values, baseline_rate=data["baseline_rate"], **kwargs)
    except ValueError as exc:
        message = str(exc)
        match = _SWEPT_POINT.match(message)
        if match is None:
            raise field_error(message, _field_for(message, data)) from exc
        i = int(match.group(1))
        raise field_error(f"sweep value {i} ({parameter} = {values[i]!r}): {message[match.end():]}",
                           f"sweep.values.{i}") from exc
    shared = [w for w in curve[0].warnings if all(w in point.warnings for point in curve)]
    return {"sweep": {"parameter": parameter, "values": list(values)}, "curve": curve,
            "summary": _sweep_summary(parameter, values, curve), "warnings": shared}


def _number(name: str, value: float) -> str:
    if name in ("n_control", "n_treatment", "n_total"):
        return f"{int(value):,}"
    if name in ("power", "alpha", "expected_rate", "baseline_rate"):
        return f"{100.0 * value:.4g}%"
    if name == "absolute_effect":
        return f"{100.0 * value:+.4g} percentage points"
    if name == "relative_effect":
        return f"{100.0 * value:+.4g}%"
    return f"{value:.4g}"


def _sweep_summary(parameter: str, values: list, curve: list[planning.PlanResult]) -> str:
    """One sentence: what varies, over what range, and what the solved quantity does."""
    solve_for = curve[0].solve_for
    solved = {"sample-size": "n_total", "power": "power", "effect": "absolute_effect"}[solve_for]
    got = [getattr(point, solved) for point in curve]
    what = {"n_total": "the total sample size", "power": "the power",
            "absolute_effect": "the detectable effect"}[solved]
    if len(curve) == 1:
        return (f"One plan with {parameter} {_number(parameter, values[0])}: {what} is "
                f"{_number(solved, got[0])}.")
    text = (f"{len(curve)} plans with {parameter} from {_number(parameter, values[0])} to "
            f"{_number(parameter, values[-1])}: {what} goes from {_number(solved, got[0])} to "
            f"{_number(solved, got[-1])}")
    if {min(got), max(got)} != {got[0], got[-1]}:
        text += f" (lowest {_number(solved, min(got))}, highest {_number(solved, max(got))})"
    return text + "."
