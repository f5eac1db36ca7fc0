"""Command `plan`: sample size, power or detectable effect (POST /v1/sample-size)."""

from __future__ import annotations

import argparse
import re

from .common import UsageError

_INTEGER = re.compile(r"[+-]?\d+")


def sweep_values(text: str) -> list[int | float]:
    """Parse "v1,v2,..." into numbers; whole numbers stay integers (sizes must be JSON integers)."""
    values: list[int | float] = []
    for item in text.split(","):
        item = item.strip()
        try:
            values.append(int(item) if _INTEGER.fullmatch(item) else float(item))
        except ValueError:
            raise argparse.ArgumentTypeError(
                f'expected numbers separated by commas such as 0.045,0.05, got "{text}"') from None
    return values


def add_parsers(sub, add_remote) -> None:
    p = sub.add_parser("plan", help="sample size, power or minimum detectable effect for comparing two rates",
                       description="Plan a comparison of two rates. Give the control rate and one of --expected, "
                                   "--absolute-effect or --relative-effect; add --solve-for power or effect with "
                                   "--n-control (and --n-treatment). Computed in-process unless --url is given.")
    p.add_argument("--baseline", type=float, required=True, metavar="RATE", help="control rate, in (0, 1)")
    p.add_argument("--expected", type=float, metavar="RATE", help="expected treatment rate")
    p.add_argument("--absolute-effect", type=float, metavar="D", help="expected rate - baseline")
    p.add_argument("--relative-effect", type=float, metavar="R", help="expected rate / baseline - 1")
    p.add_argument("--power", type=float, help="target power (default 0.8)")
    p.add_argument("--alpha", type=float, help="significance level (default 0.05)")
    p.add_argument("--alternative", help="two-sided (default), greater or less")
    p.add_argument("--allocation-ratio", type=float, metavar="R", help="n_treatment / n_control (default 1)")
    p.add_argument("--design", help="superiority (default), non-inferiority or equivalence")
    p.add_argument("--margin", type=float, help="margin on the difference of rates (non-inferiority, equivalence)")
    p.add_argument("--method", help="z-pooled (default) or z-unpooled")
    p.add_argument("--continuity-correction", action="store_true", help="apply the Fleiss continuity correction")
    p.add_argument("--solve-for", help="sample-size (default), power or effect")
    p.add_argument("--n-control", type=int, metavar="N", help="control trials (solving for power or effect)")
    p.add_argument("--n-treatment", type=int, metavar="N", help="treatment trials (default: allocation ratio)")
    p.add_argument("--sweep-parameter", metavar="FIELD",
                   help="answer a curve over n_control, expected_rate, absolute_effect, relative_effect, power, "
                        "alpha or allocation_ratio")
    p.add_argument("--sweep-values", type=sweep_values, metavar="V1,V2,...", help="1 to 200 values of the field")
    add_remote(p)


def _body(args: argparse.Namespace) -> dict:
    body = {
        "baseline_rate": args.baseline, "expected_rate": args.expected, "absolute_effect": args.absolute_effect,
        "relative_effect": args.relative_effect, "power": args.power, "alpha": args.alpha,
        "alternative": args.alternative, "allocation_ratio": args.allocation_ratio, "design": args.design,
        "margin": args.margin, "method": args.method,
        "continuity_correction": True if args.continuity_correction else None,
        "solve_for": args.solve_for, "n_control": args.n_control, "n_treatment": args.n_treatment,
    }
    if (args.sweep_parameter is None) != (args.sweep_values is None):
        raise UsageError("give --sweep-parameter and --sweep-values together")
    if args.sweep_parameter is not None:
        body["sweep"] = {"parameter": args.sweep_parameter, "values": args.sweep_values}
    return {key: value for key, value in body.items() if value is not None}


def _rate(x: float | None) -> str:
    return "none" if x is None else f"{x:.6g}"


def _print_point(result: dict) -> None:
    print(result["summary"])
    print(f"  n_control        {result['n_control']:,}")
    print(f"  n_treatment      {result['n_treatment']:,}")
    print(f"  n_total          {result['n_total']:,}")
    target = "" if result["target_power"] is None else f"  (target {result['target_power']:.6g})"
    print(f"  power            {result['power']:.6g}{target}")
    print(f"  baseline_rate    {_rate(result['baseline_rate'])}")
    print(f"  expected_rate    {_rate(result['expected_rate'])}")
    print(f"  absolute_effect  {result['absolute_effect']:+.6g}")
    print(f"  relative_effect  {result['relative_effect']:+.6g}")
    margin = "" if result["margin"] is None else f", margin {result['margin']:.6g}"
    cc = ", continuity-corrected" if result["continuity_correction"] else ""
    print(f"  design           {result['design']}{margin}, {result['alternative']}, alpha {result['alpha']:.6g}, "
          f"{result['method']}{cc}, allocation ratio {result['allocation_ratio']:.6g}")
    print(f"  formula          {result['formula']}")
    for warning in result["warnings"]:
        print(f"  warning          {warning}")


_COLUMNS = ("n_control", "n_treatment", "n_total", "power", "expected_rate", "absolute_effect", "relative_effect")


def _cell(name: str, value) -> str:
    if name.startswith("n_"):
        return f"{value:,}"
    return f"{value:.6g}"


def _print_curve(result: dict) -> None:
    print(result["summary"])
    parameter = result["sweep"]["parameter"]
    # A swept power is the target; the power column shows what each plan reaches.
    swept = "target_power" if parameter == "power" else parameter
    columns = (swept, *(c for c in _COLUMNS if c != swept))
    rows = [[_cell(c, point[c]) for c in columns] for point in result["curve"]]
    widths = [max(len(c), *(len(row[i]) for row in rows)) for i, c in enumerate(columns)]
    print("  " + "  ".join(c.rjust(w) for c, w in zip(columns, widths, strict=True)))
    for row in rows:
        print("  " + "  ".join(cell.rjust(w) for cell, w in zip(row, widths, strict=True)))
    for warning in result["warnings"]:
        print(f"  warning  {warning}")
    shared = set(result["warnings"])
    for i, point in enumerate(result["curve"]):
        for warning in point["warnings"]:
            if warning not in shared:
                print(f"  warning  point {i} ({parameter} {_cell(swept, point[swept])}): {warning}")


def _print(result: dict) -> None:
    if "curve" in result:
        _print_curve(result)
    else:
        _print_point(result)


def run_plan(args: argparse.Namespace, run):
    return run("/v1/sample-size", _body(args), args), _print


HANDLERS = {"plan": run_plan}
