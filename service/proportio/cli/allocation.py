"""Command `allocation-check`: sample-ratio mismatch of an experiment's traffic (POST /v1/allocation-check)."""

from __future__ import annotations

import argparse


def _list_of(kind, example: str):
    def parse(text: str):
        try:
            return [kind(part.strip()) for part in text.split(",")]
        except ValueError:
            raise argparse.ArgumentTypeError(f'expected values separated by commas such as {example}, '
                                             f'got "{text}"') from None
    return parse


def add_parsers(sub, add_remote) -> None:
    p = sub.add_parser(
        "allocation-check", help="does the observed traffic split match the plan (sample-ratio mismatch)?",
        description="Chi-square goodness-of-fit test of the units per arm against the planned split. A mismatch "
                    "means the experiment's other results should not be trusted until its cause is found. "
                    "Computed in-process unless --url is given.")
    p.add_argument("--observed", type=_list_of(int, "5021,4979"), required=True, metavar="N1,N2,...",
                   help="units observed in each arm")
    p.add_argument("--weights", type=_list_of(float, "1,1"), metavar="W1,W2,...",
                   help="planned relative weights (default: an equal split)")
    p.add_argument("--threshold", type=float, help="p-value below which a mismatch is declared (default 0.001)")
    p.add_argument("--labels", type=_list_of(str, "control,treatment"), metavar="A,B,...", help="names of the arms")
    add_remote(p)


def _print(result: dict) -> None:
    print(result["summary"])
    for i, arm in enumerate(result["arms"], start=1):
        name = arm["label"] or f"arm {i}"
        print(f"  {name}: {arm['observed']:,} observed, {arm['expected']:,.1f} expected "
              f"({100 * arm['observed_share']:.2f}% vs {100 * arm['expected_share']:.2f}% planned), "
              f"residual {arm['standardized_residual']:+.3f}")
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def run_allocation_check(args: argparse.Namespace, run):
    body = {"observed": args.observed}
    if args.weights is not None:
        body["expected_weights"] = args.weights
    if args.threshold is not None:
        body["threshold"] = args.threshold
    if args.labels is not None:
        body["labels"] = args.labels
    return run("/v1/allocation-check", body, args), _print


HANDLERS = {"allocation-check": run_allocation_check}
