"""Command `arms`: several arms, an omnibus test and adjusted pairwise comparisons (POST /v1/arms)."""

from __future__ import annotations

import argparse
import json
import pathlib
import sys

from .common import UsageError, num


def add_parsers(sub, add_remote) -> None:
    p = sub.add_parser(
        "arms", help="compare several arms: omnibus test and adjusted pairwise comparisons",
        description="FILE holds a list of groups [{\"label\": ..., \"successes\": ..., \"trials\": ...}, ...] or a "
                    "whole /v1/arms request; the options below override it. Computed in-process unless --url "
                    "is given.")
    p.add_argument("--file", required=True, metavar="FILE", help="groups.json ('-': stdin)")
    p.add_argument("--control", help="label of the control arm (default: the first group)")
    p.add_argument("--comparisons", help="vs-control (default) or all-pairs")
    p.add_argument("--adjustment", help="holm (default), none, bonferroni, hochberg, benjamini-hochberg or "
                                        "benjamini-yekutieli")
    p.add_argument("--method", help="test of each pair (default auto)")
    p.add_argument("--effect", help="difference (default), ratio or odds-ratio")
    p.add_argument("--alternative", help="two-sided (default), greater or less")
    p.add_argument("--alpha", type=float, help="significance level (default 0.05)")
    p.add_argument("--no-simultaneous", action="store_true",
                   help="report unadjusted pairwise intervals instead of Bonferroni simultaneous ones")
    add_remote(p)


def _load(path: str):
    try:
        text = sys.stdin.read() if path == "-" else pathlib.Path(path).read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise UsageError(f"cannot read {path}: {exc.strerror or exc}") from exc
    try:
        return json.loads(text)
    except ValueError as exc:
        raise UsageError(f"the file is not valid JSON: {exc}") from exc


def _print(result: dict) -> None:
    print(result["summary"])
    o = result["omnibus"]
    print(f"  omnibus     chi-square {o['statistic']:.6g}, df {o['df']}, p {o['p_value']:.4g}")
    for item in result["comparisons"]:
        iv = item["interval"]
        est = item["estimate"]
        kind = "simultaneous " if iv["simultaneous"] else ""
        p = "undefined" if item["p_value"] is None else f"{item['p_value']:.4g}"
        adj = "undefined" if item["adjusted_p_value"] is None else f"{item['adjusted_p_value']:.4g}"
        print(f"  {item['treatment']} vs {item['control']}: {100 * est['treatment_rate']:.2f}% vs "
              f"{100 * est['control_rate']:.2f}%, {item['effect']} {kind}{iv['confidence']:.4g} interval "
              f"[{num(iv['lower'])}, {num(iv['upper'])}], p {p}, adjusted p {adj} ({item['method']})")
    for warning in result["warnings"]:
        print(f"  warning     {warning}")


def run_arms(args: argparse.Namespace, run):
    data = _load(args.file)
    body = {"groups": data} if isinstance(data, list) else data
    if not isinstance(body, dict):
        raise UsageError("the JSON file must hold a list of groups or a /v1/arms request")
    for name in ("control", "comparisons", "adjustment", "method", "effect", "alternative", "alpha"):
        value = getattr(args, name)
        if value is not None:
            body[name] = value
    if args.no_simultaneous:
        body["simultaneous_intervals"] = False
    return run("/v1/arms", body, args), _print


HANDLERS = {"arms": run_arms}
