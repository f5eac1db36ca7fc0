"""Operations of /v1/sequential/plan, /v1/sequential/analyze and /v1/sequential/always-valid."""

from __future__ import annotations

import math
import re

from ..errors import field_error
from ..stats import planning, sequential
from ..stats._common import MAX_TRIALS

PLANNING_EFFECTS = ("expected_rate", "absolute_effect", "relative_effect")
_SIDE = {"two-sided": "|z| >= ", "greater": "z >= ", "less": "z <= "}



def information_fractions(data: dict) -> list[float]:
    """The fractions of a plan request: ``k / looks`` for equal spacing, else as given."""
    if data.get("looks") is not None:
        k = data["looks"]
        return [i / k for i in range(1, k + 1)]
    return list(data["information_fractions"])


def spending_parameter(data: dict) -> float | None:
    """The core's single ``parameter``: rho for power-family, gamma for hwang-shih-decani, else None."""
    spending = data.get("spending", "obrien-fleming-type")
    if spending == "power-family":
        return data.get("rho")
    if spending == "hwang-shih-decani":
        return data.get("gamma")
    return None


def _core_error(exc: ValueError, default: str) -> ValueError:
    """Name the field of a core message such as ``looks[2].control.trials must ...`` in dotted form."""
    message = str(exc)
    match = re.search(r"looks\[(\d+)\]((?:\.[a-z_]+)*)", message)
    if match:
        return field_error(message, f"looks.{match.group(1)}{match.group(2)}")
    for name in ("max_trials", "alpha", "alternative", "spending", "power", "futility", "tuning", "null_value",
                 "treatment.successes", "treatment.trials", "control.successes", "control.trials"):
        if name in message:
            return field_error(message, name)
    return field_error(message, default)


# ------------------------------------------------------------------------------------------------
# /v1/sequential/plan


def run_sequential_plan(data: dict) -> dict:
    """Run one validated /v1/sequential/plan request."""
    fractions = information_fractions(data)
    futility = data.get("futility")
    try:
        plan = sequential.plan_boundaries(
            fractions, data["alpha"], data["alternative"], data["spending"], spending_parameter(data),
            power=data["power"],
            futility=None if futility is None else futility["spending"],
            futility_parameter=None if futility is None else spending_parameter(futility),
        )
    except ValueError as exc:
        raise _core_error(exc, "spending") from exc
    warnings = list(plan.warnings)
    max_size = _max_sample_size(data, fractions, plan.inflation_factor, warnings) if "baseline_rate" in data else None
    return {
        "looks": plan.looks,
        "inflation_factor": plan.inflation_factor,
        "alpha": plan.alpha,
        "alternative": plan.alternative,
        "spending": plan.spending,
        "rho": data.get("rho"),
        "gamma": data.get("gamma"),
        "power": plan.power,
        "futility": None if futility is None else {"spending": futility["spending"], "rho": futility.get("rho"),
                                                   "gamma": futility.get("gamma")},
        "max_sample_size": max_size,
        "warnings": warnings,
        "summary": _plan_summary(plan, max_size),
    }


def _max_sample_size(data: dict, fractions: list[float], inflation: float, warnings: list[str]) -> dict:
    """Fixed-sample size of /v1/sample-size's planner times the inflation factor, rounded up per group."""
    effects = {name: data[name] for name in PLANNING_EFFECTS if name in data}
    try:
        fixed = planning.plan(data["baseline_rate"], **effects, alpha=data["alpha"], power=data["power"],
                              alternative=data["alternative"], allocation_ratio=data.get("allocation_ratio", 1.0))
    except ValueError as exc:
        message = str(exc)
        field = next((name for name in ("baseline_rate", *PLANNING_EFFECTS, "allocation_ratio", "power", "alpha")
                      if name in message), next(iter(effects)))
        raise field_error(message, field) from exc
    n_control = math.ceil(fixed.n_control * inflation)
    n_treatment = math.ceil(fixed.n_treatment * inflation)
    n_total = n_control + n_treatment
    warnings.extend(f"max_sample_size: {w}" for w in fixed.warnings)
    if max(n_control, n_treatment) > MAX_TRIALS:
        warnings.append(f"max_sample_size: more than {MAX_TRIALS:,} trials per group, the most the endpoints accept; "
                        "plan for a larger effect or fewer looks")
    return {
        "n_control": n_control,
        "n_treatment": n_treatment,
        "n_total": n_total,
        "fixed_n_control": fixed.n_control,
        "fixed_n_treatment": fixed.n_treatment,
        "fixed_n_total": fixed.n_total,
        # Rounded to 6 decimals before rounding up so that 0.6 * 1000 = 600.0000000000001 stays 600.
        "total_trials_at_looks": [math.ceil(round(t * n_total, 6)) for t in fractions],
        "baseline_rate": fixed.baseline_rate,
        "expected_rate": fixed.expected_rate,
        "absolute_effect": fixed.absolute_effect,
        "relative_effect": fixed.relative_effect,
        "allocation_ratio": fixed.allocation_ratio,
        "formula": f"{fixed.formula}, times the inflation factor of the design (Jennison & Turnbull 2000, ch. 2)",
    }


def _boundary(look, alternative: str) -> str:
    return "no boundary" if look.z_boundary is None else f"{_SIDE[alternative]}{look.z_boundary:.3f}"


def _plan_summary(plan: sequential.SequentialPlan, max_size: dict | None) -> str:
    k = len(plan.looks)
    sides = "two-sided" if plan.alternative == "two-sided" else f"one-sided ({plan.alternative})"
    head = f"{k} look{'s' if k > 1 else ''} with {plan.spending} spending at {sides} alpha = {plan.alpha:g}: "
    if k == 1:
        text = head + f"a single analysis that rejects when {_boundary(plan.looks[0], plan.alternative)}"
    else:
        first = plan.looks[0]
        opening = ("look 1 cannot reject (it spends almost no alpha)" if first.z_boundary is None
                   else f"reject at look 1 only when {_boundary(first, plan.alternative)}")
        text = (head + f"{opening}, at the last look when {_boundary(plan.looks[-1], plan.alternative)}; the "
                "maximum sample size is "
                f"{plan.inflation_factor:.3f} times that of a single analysis with {100 * plan.power:g}% power")
    if max_size is not None:
        text += (f" ({max_size['n_control']:,} control and {max_size['n_treatment']:,} treatment trials at most, "
                 f"against {max_size['fixed_n_control']:,} and {max_size['fixed_n_treatment']:,})")
    return text + "."


# ------------------------------------------------------------------------------------------------
# /v1/sequential/analyze


def run_sequential_analyze(data: dict) -> dict:
    """Run one validated /v1/sequential/analyze request."""
    looks = [(lk["treatment"]["successes"], lk["treatment"]["trials"], lk["control"]["successes"],
              lk["control"]["trials"]) for lk in data["looks"]]
    try:
        res = sequential.analyze(looks, data["max_trials"], data["alpha"], data["alternative"], data["spending"],
                                 spending_parameter(data))
    except ValueError as exc:
        raise _core_error(exc, "looks") from exc
    return {
        "looks": res.looks,
        "decision": res.decision,
        "stopped_at": res.stopped_at,
        "alpha": res.alpha,
        "alternative": res.alternative,
        "spending": res.spending,
        "rho": data.get("rho"),
        "gamma": data.get("gamma"),
        "max_trials": data["max_trials"],
        "warnings": list(res.warnings),
        "summary": res.summary,
    }


# ------------------------------------------------------------------------------------------------
# /v1/sequential/always-valid


def run_always_valid(data: dict) -> sequential.AlwaysValidResult:
    """Run one validated /v1/sequential/always-valid request."""
    t, c = data["treatment"], data["control"]
    try:
        return sequential.always_valid(t["successes"], t["trials"], c["successes"], c["trials"], alpha=data["alpha"],
                                       tuning=data["tuning"], null_value=data["null_value"])
    except ValueError as exc:
        raise _core_error(exc, "body") from exc
