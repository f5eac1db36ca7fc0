"""Commands `sequential plan`, `sequential analyze` and `sequential always-valid`."""

from __future__ import annotations

import argparse
import json
import sys

from .common import UsageError, group_arg, num


def _fractions(text: str) -> list[float]:
    try:
        return [float(part) for part in text.split(",") if part.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f'expected comma-separated numbers such as 0.25,0.5,1, got "{text}"') from None


def _design_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--alpha", type=float, default=None, help="total type I error (default 0.05)")
    p.add_argument("--alternative", default=None, help="two-sided (default), greater or less")
    p.add_argument("--spending", default=None,
                   help="obrien-fleming-type (default), pocock-type, power-family (--rho), hwang-shih-decani (--gamma)")
    p.add_argument("--rho", type=float, default=None, help="exponent of power-family spending")
    p.add_argument("--gamma", type=float, default=None, help="parameter of hwang-shih-decani spending")


def add_parsers(sub, add_remote) -> None:
    seq = sub.add_parser("sequential", help="monitor a running comparison: plan, analyze, always-valid")
    seq_sub = seq.add_subparsers(dest="sequential_command", required=True)

    plan = seq_sub.add_parser("plan", help="group-sequential boundaries from an alpha-spending function")
    when = plan.add_mutually_exclusive_group(required=True)
    when.add_argument("--looks", type=int, help="number of equally spaced looks (1 to 50)")
    when.add_argument("--information-fractions", type=_fractions, metavar="T1,T2,...",
                      help="increasing fractions of the maximum information, e.g. 0.3,0.6,1")
    _design_options(plan)
    plan.add_argument("--power", type=float, default=None, help="power for the inflation factor (default 0.8)")
    plan.add_argument("--futility", default=None, metavar="SPENDING",
                      help="add a non-binding futility boundary with this beta-spending function")
    plan.add_argument("--futility-rho", type=float, default=None)
    plan.add_argument("--futility-gamma", type=float, default=None)
    plan.add_argument("--baseline-rate", type=float, default=None, help="control rate, to size the design")
    effect = plan.add_mutually_exclusive_group()
    effect.add_argument("--expected-rate", type=float, default=None)
    effect.add_argument("--absolute-effect", type=float, default=None)
    effect.add_argument("--relative-effect", type=float, default=None)
    plan.add_argument("--allocation-ratio", type=float, default=None, help="n_treatment / n_control (default 1)")
    add_remote(plan)

    analyze = seq_sub.add_parser("analyze", help="judge the cumulative counts of every look so far")
    analyze.add_argument("--file", required=True, metavar="PATH",
                         help='JSON file ("-" for stdin): a list of looks [{"control": {"successes": .., "trials": '
                              '..}, "treatment": {..}}, ...] or a whole request object with "looks"')
    analyze.add_argument("--max-trials", type=int, default=None,
                         help="planned total trials (both groups) at the final look")
    _design_options(analyze)
    add_remote(analyze)

    always = seq_sub.add_parser("always-valid", help="always-valid confidence sequence for the difference")
    always.add_argument("--control", type=group_arg, required=True, metavar="S/N")
    always.add_argument("--treatment", type=group_arg, required=True, metavar="S/N")
    always.add_argument("--alpha", type=float, default=None)
    always.add_argument("--tuning", type=float, default=None,
                        help="trials per group where the sequence is tightest (default 1000)")
    always.add_argument("--null-value", type=float, default=None)
    add_remote(always)


def _given(args: argparse.Namespace, names: tuple[str, ...]) -> dict:
    """The options the user gave (None means "use the endpoint's default")."""
    return {name: getattr(args, name) for name in names if getattr(args, name) is not None}


def _print_plan(result: dict) -> None:
    print(result["summary"])
    print("  look  fraction   z boundary   nominal p   alpha spent   futility z")
    for i, lk in enumerate(result["looks"], 1):
        print(f"  {i:>4}  {lk['information_fraction']:8.4f}  {_z(lk['z_boundary']):>11}  {lk['nominal_p_value']:10.4g}"
              f"  {lk['alpha_spent']:12.4g}  {_z(lk['futility_z']):>11}")
    print(f"  inflation factor  {result['inflation_factor']:.6g}")
    size = result.get("max_sample_size")
    if size:
        print(f"  maximum trials    {size['n_control']:,} control, {size['n_treatment']:,} treatment "
              f"({size['n_total']:,} in all; a single analysis needs {size['fixed_n_total']:,})")
        print("  trials at looks   " + ", ".join(f"{n:,}" for n in size["total_trials_at_looks"]))
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def _print_analysis(result: dict) -> None:
    print(result["summary"])
    print("  look  fraction        z   z boundary  crossed")
    for lk in result["looks"]:
        print(f"  {lk['index']:>4}  {lk['information_fraction']:8.4f}  {lk['z']:7.3f}  {_z(lk['z_boundary']):>11}  "
              f"{'yes' if lk['crossed'] else 'no'}")
    print(f"  decision  {result['decision']}")
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def _print_always_valid(result: dict) -> None:
    print(result["summary"])
    print(f"  sequence  [{num(result['lower'])}, {num(result['upper'])}], estimate {num(result['estimate'])}")
    print(f"  p-value   {result['p_value']:.6g} (always valid; tuning {result['tuning']:g} trials per group)")
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def _z(value) -> str:
    return "-" if value is None else f"{value:.4f}"


def _read_looks(path: str):
    try:
        if path == "-":
            return json.load(sys.stdin)
        with open(path, encoding="utf-8") as fh:
            return json.load(fh)
    except OSError as exc:
        raise UsageError(f"cannot read --file {path}: {exc.strerror or exc}") from exc
    except ValueError as exc:
        raise UsageError(f"--file {path} is not valid JSON: {exc}") from exc


def run_plan(args: argparse.Namespace, run):
    body = _given(args, ("looks", "information_fractions", "alpha", "alternative", "spending", "rho", "gamma",
                         "power", "baseline_rate", "expected_rate", "absolute_effect", "relative_effect",
                         "allocation_ratio"))
    if args.futility is not None:
        body["futility"] = {"spending": args.futility, **{k: v for k, v in (("rho", args.futility_rho),
                                                                            ("gamma", args.futility_gamma))
                                                         if v is not None}}
    elif args.futility_rho is not None or args.futility_gamma is not None:
        raise UsageError("--futility-rho and --futility-gamma need --futility")
    return run("/v1/sequential/plan", body, args), _print_plan


def run_analyze(args: argparse.Namespace, run):
    content = _read_looks(args.file)
    if isinstance(content, list):
        body = {"looks": content}
    elif isinstance(content, dict):
        body = dict(content)
    else:
        raise UsageError(f"--file {args.file} must hold a list of looks or a request object")
    body.update(_given(args, ("max_trials", "alpha", "alternative", "spending", "rho", "gamma")))
    if "max_trials" not in body:
        raise UsageError("give --max-trials (the planned total trials at the final look)")
    return run("/v1/sequential/analyze", body, args), _print_analysis


def run_always_valid(args: argparse.Namespace, run):
    body = {"control": args.control, "treatment": args.treatment,
            **_given(args, ("alpha", "tuning", "null_value"))}
    return run("/v1/sequential/always-valid", body, args), _print_always_valid


_SUBCOMMANDS = {"plan": run_plan, "analyze": run_analyze, "always-valid": run_always_valid}


def run_sequential(args: argparse.Namespace, run):
    return _SUBCOMMANDS[args.sequential_command](args, run)


HANDLERS = {"sequential": run_sequential}
