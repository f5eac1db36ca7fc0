"""Commands `test` and `interval`."""

from __future__ import annotations

import argparse

from .common import group_arg, num


def add_parsers(sub, add_remote) -> None:
    test = sub.add_parser("test", help="test whether two success rates differ")
    test.add_argument("--control", type=group_arg, required=True, metavar="S/N")
    test.add_argument("--treatment", type=group_arg, required=True, metavar="S/N")
    test.add_argument("--method", default="auto")
    test.add_argument("--alternative", default="two-sided")
    test.add_argument("--null-value", type=float, default=None)
    test.add_argument("--effect", default="difference")
    test.add_argument("--alpha", type=float, default=0.05)
    test.add_argument("--continuity-correction", action="store_true")
    add_remote(test)

    interval = sub.add_parser("interval", help="confidence interval for a proportion or a two-group effect")
    interval.add_argument("--effect", default="difference")
    interval.add_argument("--control", type=group_arg, metavar="S/N")
    interval.add_argument("--treatment", type=group_arg, metavar="S/N")
    interval.add_argument("--group", type=group_arg, metavar="S/N", help="the single group of --effect proportion")
    interval.add_argument("--method", default=None)
    interval.add_argument("--confidence", type=float, default=0.95)
    add_remote(interval)


def _print_test(result: dict) -> None:
    print(result["summary"])
    iv = result["interval"]
    reason = f"  ({result['method_reason']})" if result.get("method_reason") else ""
    print(f"  method      {result['method']}{reason}")
    stat = result["statistic"]
    print(f"  statistic   {stat:.6g}" if stat is not None else "  statistic   undefined")
    p = result["p_value"]
    print(f"  p-value     {p:.6g}" if p is not None else "  p-value     undefined")
    print(f"  interval    {iv['method']} {iv['confidence']:.3g}: [{num(iv['lower'])}, {num(iv['upper'])}]")
    for warning in result["warnings"]:
        print(f"  warning     {warning}")


def _print_interval(result: dict) -> None:
    print(f"{result['effect']} {num(result['estimate'])}, {result['method']} {result['confidence']:.3g} interval "
          f"[{num(result['lower'])}, {num(result['upper'])}]")
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def run_test(args: argparse.Namespace, run):
    body = {"control": args.control, "treatment": args.treatment, "method": args.method,
            "alternative": args.alternative, "null_value": args.null_value, "effect": args.effect,
            "alpha": args.alpha, "continuity_correction": args.continuity_correction}
    return run("/v1/tests", body, args), _print_test


def run_interval(args: argparse.Namespace, run):
    body = {"effect": args.effect, "method": args.method, "confidence": args.confidence}
    for name in ("control", "treatment", "group"):
        if getattr(args, name) is not None:
            body[name] = getattr(args, name)
    return run("/v1/intervals", body, args), _print_interval


HANDLERS = {"test": run_test, "interval": run_interval}
