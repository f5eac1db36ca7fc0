"""Command `gate`: a CI guardrail whose exit code is the verdict.

``proportio gate --control S/N --treatment S/N --margin M`` asks whether the treatment is no worse
than the control by more than ``M`` (see :mod:`proportio.stats.guardrail`) and exits with

====  ====================================================================================
code  meaning
====  ====================================================================================
0     pass: shown no worse than the control by more than the margin
1     fail: shown worse than the control by more than the margin
2     bad arguments, counts or file (one line on stderr); nothing was decided
3     inconclusive (``--on-inconclusive pass|fail`` turns it into 0 or 1)
4     the service failed or could not be reached (with ``--url``); nothing was decided
====  ====================================================================================

It computes in-process unless ``--url`` (or ``PROPORTIO_URL``) names a service; ``--local`` forces
in-process. Both paths give the same verdict and the same ``--json`` object (the one
``POST /v1/guardrail`` returns).

``--file`` gates several metrics together (a JSON list of objects, or a CSV file with a header,
columns ``name, control, treatment, margin, margin_type, direction``; ``control`` and
``treatment`` as ``successes/trials``; empty cells take the command-line defaults). Each metric
is computed as above (one call per metric), then the two one-sided p-values of every metric are
adjusted across the metrics (``--adjustment``, Holm by default) and each verdict is taken from its
adjusted p-values (:func:`proportio.stats.guardrail.adjust_verdicts`). The exit code is the worst
verdict (fail > inconclusive > pass). The adjustment and, for metrics left inconclusive, the extra
trials (planned at the strictest level of the adjustment) are computed in-process in both modes.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import sys
from collections.abc import Callable

from ..stats import guardrail as core
from ..stats.multiplicity import ADJUSTMENTS
from .common import UsageError, group_arg, problem_line

EXIT_PASS, EXIT_FAIL, EXIT_USAGE, EXIT_INCONCLUSIVE, EXIT_SERVICE = 0, 1, 2, 3, 4
VERDICT_EXIT = {"pass": EXIT_PASS, "fail": EXIT_FAIL, "inconclusive": EXIT_INCONCLUSIVE}
SEVERITY = {"pass": 0, "inconclusive": 1, "fail": 2}
# Problems that mean "your request is wrong" rather than "the service is broken or missing".
USAGE_STATUSES = (400, 401, 413, 415, 422)
FILE_COLUMNS = ("name", "control", "treatment", "margin", "margin_type", "direction")
MAX_METRICS = 10_000


class ServiceError(Exception):
    """The service failed or could not be reached: exit code 4."""


def add_parsers(sub, add_remote) -> None:
    gate = sub.add_parser(
        "gate", help="CI guardrail: pass / fail / inconclusive as the exit code (0 / 1 / 3)",
        description="Is the treatment no worse than the control by more than the margin? Exit codes: 0 pass, "
                    "1 fail, 2 bad arguments, 3 inconclusive, 4 service failure.")
    gate.add_argument("--control", type=group_arg, metavar="S/N", help="control successes/trials")
    gate.add_argument("--treatment", type=group_arg, metavar="S/N", help="treatment successes/trials")
    gate.add_argument("--margin", type=float, help="tolerated deterioration (default for --file rows)")
    gate.add_argument("--lower-is-better", action="store_true",
                      help="a lower rate is better (errors, crashes); default: higher is better")
    gate.add_argument("--relative", action="store_true",
                      help="margin is a fraction of the control rate (on the ratio); default: absolute difference")
    gate.add_argument("--alpha", type=float, default=0.05, help="level of each one-sided test (default 0.05)")
    gate.add_argument("--metric", default=None, help="name of the metric, for the summary")
    gate.add_argument("--file", default=None, metavar="METRICS.json|METRICS.csv",
                      help="gate several metrics together (name, control, treatment, margin, margin_type, "
                           "direction per row)")
    gate.add_argument("--adjustment", default="holm", choices=ADJUSTMENTS,
                      help="multiplicity adjustment across --file metrics (default holm)")
    gate.add_argument("--on-inconclusive", choices=("pass", "fail"), default=None,
                      help="exit as if an inconclusive verdict were this (default: exit 3)")
    where = gate.add_mutually_exclusive_group()
    where.add_argument("--url", default=None, help="call this service (default: $PROPORTIO_URL, else in-process)")
    where.add_argument("--local", action="store_true", help="compute in-process even if $PROPORTIO_URL is set")
    gate.add_argument("--token", default=os.environ.get("PROPORTIO_TOKEN"), help="bearer token for --url")
    gate.add_argument("--timeout", type=float, default=10.0, help="seconds per request with --url (default 10)")
    gate.add_argument("--json", action="store_true", help="print the JSON object instead of readable lines")
    _one_line_errors(gate)


def _one_line_errors(parser: argparse.ArgumentParser) -> None:
    """Make argument errors of ``gate`` one line on stderr with exit code 2 (no usage block)."""

    def error(message: str):
        print(f"proportio gate: {message}", file=sys.stderr)
        sys.exit(EXIT_USAGE)

    original = parser.parse_known_args

    def parse_known_args(args=None, namespace=None):
        namespace, extras = original(args, namespace)
        if extras:
            error("unrecognized arguments: " + " ".join(extras))
        return namespace, extras

    parser.error = error  # type: ignore[method-assign]
    parser.parse_known_args = parse_known_args  # type: ignore[method-assign]


# ------------------------------------------------------------------------------------------------
# Running


def run_gate(args: argparse.Namespace, run) -> int:
    """Run the gate and return its exit code (the verdict), printing the result."""
    try:
        url = _service_url(args)
        bodies = _file_bodies(args) if args.file else [_single_body(args)]
        with _Caller(url, args, run) as call:
            results = [call(body) for body in bodies]
        if args.file:
            report = _family_report(bodies, results, args)
            verdicts = [item["verdict"] for item in report["metrics"]]
        else:
            report = results[0]
            verdicts = [report["verdict"]]
    except UsageError as exc:
        print(f"proportio gate: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except ServiceError as exc:
        print(f"proportio gate: the service failed, nothing was decided: {exc}", file=sys.stderr)
        return EXIT_SERVICE
    except Exception as exc:  # an unexpected error must not read as a "fail" verdict (exit 1)
        print(f"proportio gate: error, nothing was decided: {exc!r}", file=sys.stderr)
        return EXIT_SERVICE
    if args.json:
        print(json.dumps(report, indent=2))
    elif args.file:
        _print_family(report)
    else:
        _print_single(report)
    return exit_code(verdicts, args.on_inconclusive)


# main() lets a handler with this flag return its own exit code.
run_gate.returns_exit_code = True  # type: ignore[attr-defined]
HANDLERS = {"gate": run_gate}


def exit_code(verdicts: list[str], on_inconclusive: str | None = None) -> int:
    """Return the exit code of the worst verdict (fail > inconclusive > pass)."""
    if on_inconclusive is not None:
        verdicts = [on_inconclusive if v == "inconclusive" else v for v in verdicts]
    return VERDICT_EXIT[max(verdicts, key=SEVERITY.__getitem__)]


def _service_url(args: argparse.Namespace) -> str | None:
    if args.local:
        return None
    return args.url or os.environ.get("PROPORTIO_URL") or None


class _Caller:
    """POST /v1/guardrail bodies to the service (one connection) or compute them in-process."""

    def __init__(self, url: str | None, args: argparse.Namespace, run) -> None:
        self.url = url
        self.args = args
        self.run = run
        self.client = None

    def __enter__(self) -> Callable[[dict], dict]:
        if self.url is None:
            local = argparse.Namespace(url=None, token=None)
            return lambda body: self._labelled(body, lambda: self.run("/v1/guardrail", body, local))
        from ..client import Client

        self.client = Client(self.url, token=self.args.token, timeout=self.args.timeout)
        return lambda body: self._labelled(body, lambda: self._remote(body))

    def __exit__(self, *exc) -> None:
        if self.client is not None:
            self.client.close()

    def _remote(self, body: dict) -> dict:
        from ..client import ProportioError

        try:
            return self.client.request("POST", "/v1/guardrail", body)  # type: ignore[union-attr]
        except ProportioError as exc:
            if exc.status in USAGE_STATUSES:
                raise UsageError(problem_line(exc.detail, exc.errors)) from exc
            raise ServiceError(str(exc)) from exc

    def _labelled(self, body: dict, fn: Callable[[], dict]) -> dict:
        try:
            return fn()
        except UsageError as exc:
            if self.args.file and body.get("metric"):
                raise UsageError(f'{self.args.file}: metric "{body["metric"]}": {exc}') from exc
            raise


# ------------------------------------------------------------------------------------------------
# Requests from arguments and files


def _options(args: argparse.Namespace) -> dict:
    return {"margin_type": "relative" if args.relative else "absolute",
            "direction": "lower-is-better" if args.lower_is_better else "higher-is-better"}


def _single_body(args: argparse.Namespace) -> dict:
    missing = [flag for flag, value in (("--control", args.control), ("--treatment", args.treatment),
                                        ("--margin", args.margin)) if value is None]
    if missing:
        verb = "is" if len(missing) == 1 else "are"
        raise UsageError(f"{', '.join(missing)} {verb} required (or give --file)")
    body = {"control": args.control, "treatment": args.treatment, "margin": args.margin, **_options(args),
            "alpha": args.alpha}
    if args.metric is not None:
        body["metric"] = args.metric
    return body


def _file_bodies(args: argparse.Namespace) -> list[dict]:
    given = [flag for flag, value in (("--control", args.control), ("--treatment", args.treatment),
                                      ("--metric", args.metric)) if value is not None]
    if given:
        raise UsageError(f"{', '.join(given)} cannot be combined with --file (give them per row)")
    path = args.file
    try:
        with open(path, encoding="utf-8", newline="") as fh:
            text = fh.read()
    except OSError as exc:
        raise UsageError(f"cannot read {path}: {exc.strerror or exc}") from exc
    rows = _csv_rows(path, text) if path.lower().endswith(".csv") else _json_rows(path, text)
    if not rows:
        raise UsageError(f"{path} holds no metrics")
    if len(rows) > MAX_METRICS:
        raise UsageError(f"{path} holds {len(rows):,} metrics; at most {MAX_METRICS:,} can be gated at once")
    defaults = _options(args)
    bodies, seen = [], set()
    for i, row in enumerate(rows, start=1):
        where = f"{path}: metric {i}"
        name = row.get("name")
        if not isinstance(name, str) or not name.strip():
            raise UsageError(f"{where}: name is required (a non-empty string)")
        if name in seen:
            raise UsageError(f'{where}: the name "{name}" is used twice')
        seen.add(name)
        where = f'{path}: metric "{name}"'
        body: dict = {"metric": name}
        for side in ("control", "treatment"):
            value = row.get(side)
            if value is None or value == "":
                raise UsageError(f"{where}: {side} is required (successes/trials)")
            if isinstance(value, str):
                try:
                    value = group_arg(value)
                except argparse.ArgumentTypeError as exc:
                    raise UsageError(f"{where}: {side}: {exc}") from exc
            body[side] = value
        margin = row.get("margin")
        body["margin"] = args.margin if margin is None or margin == "" else margin
        if body["margin"] is None:
            raise UsageError(f"{where}: margin is required (in the file or as --margin)")
        for key in ("margin_type", "direction"):
            value = row.get(key)
            body[key] = defaults[key] if value is None or value == "" else value
        body["alpha"] = args.alpha
        bodies.append(body)
    return bodies


def _json_rows(path: str, text: str) -> list[dict]:
    try:
        doc = json.loads(text)
    except ValueError as exc:
        raise UsageError(f"{path} is not valid JSON: {exc}") from exc
    if isinstance(doc, dict) and set(doc) == {"metrics"}:
        doc = doc["metrics"]
    if not isinstance(doc, list) or not all(isinstance(row, dict) for row in doc):
        raise UsageError(f'{path} must hold a list of metric objects (or {{"metrics": [...]}})')
    for i, row in enumerate(doc, start=1):
        unknown = sorted(set(row) - set(FILE_COLUMNS))
        if unknown:
            raise UsageError(f"{path}: metric {i}: unknown field {', '.join(unknown)}; use {', '.join(FILE_COLUMNS)}")
    return doc


def _csv_rows(path: str, text: str) -> list[dict]:
    reader = csv.DictReader(text.splitlines())
    header = reader.fieldnames or []
    unknown = [c for c in header if c not in FILE_COLUMNS]
    if unknown or not {"name", "control", "treatment"} <= set(header):
        raise UsageError(f"{path}: the header must name the columns {', '.join(FILE_COLUMNS)} "
                         "(margin, margin_type and direction may be left out)")
    rows = []
    for line, row in enumerate(reader, start=2):
        if None in row:
            raise UsageError(f"{path}: line {line} has more cells than the header")
        row = {k: (v.strip() if isinstance(v, str) else v) for k, v in row.items()}
        if row.get("margin"):
            try:
                row["margin"] = float(row["margin"])
            except ValueError as exc:
                raise UsageError(f'{path}: line {line}: margin must be a number, got "{row["margin"]}"') from exc
        rows.append(row)
    return rows


# ------------------------------------------------------------------------------------------------
# Several metrics


def _family_report(bodies: list[dict], results: list[dict], args: argparse.Namespace) -> dict:
    try:
        family = core.adjust_verdicts([r["test"]["p_value"] for r in results],
                                      [r["test"]["inferiority_p_value"] for r in results],
                                      alpha=args.alpha, adjustment=args.adjustment)
    except ValueError as exc:
        raise UsageError(str(exc)) from exc
    metrics = []
    for body, result, verdict, adj_p, adj_q in zip(bodies, results, family.verdicts, family.adjusted_p_values,
                                                   family.adjusted_inferiority_p_values, strict=True):
        extra, notes = None, []
        if verdict == "inconclusive":
            t, c = body["treatment"], body["control"]
            extra, notes = core.additional_trials(
                t["successes"], t["trials"], c["successes"], c["trials"], margin=result["margin"],
                margin_type=result["margin_type"], direction=result["direction"], alpha=family.planning_alpha)
        metrics.append({"metric": body["metric"], "verdict": verdict, "adjusted_p_value": adj_p,
                        "adjusted_inferiority_p_value": adj_q, "additional_trials_per_group": extra,
                        "warnings": notes, "result": result})
    worst = max(family.verdicts, key=SEVERITY.__getitem__)
    return {"verdict": worst, "adjustment": family.adjustment, "alpha": family.alpha,
            "planning_alpha": family.planning_alpha, "metrics": metrics}


# ------------------------------------------------------------------------------------------------
# Readable output


def _bound(effect: str, v: float | None) -> str:
    if v is None:
        return "unbounded"
    return f"{100.0 * v:+.3g}" if effect == "difference" else f"{v:.4g}"


def _interval_text(r: dict) -> str:
    iv = r["interval"]
    unit = " points" if iv["effect"] == "difference" else ""
    level = f"{round(100.0 * iv['confidence'], 10):g}%"
    return f"{iv['effect']} {level} [{_bound(iv['effect'], iv['lower'])}, {_bound(iv['effect'], iv['upper'])}]{unit}"


def _margin_text(r: dict) -> str:
    sign = "-" if r["direction"] == "higher-is-better" else "+"
    if r["margin_type"] == "absolute":
        return f"{sign}{100.0 * r['margin']:.6g} points"
    return f"{sign}{100.0 * r['margin']:.6g}% relative"


def _print_single(r: dict) -> None:
    print(f"{r['verdict'].upper()}  {r['summary']}")
    t = r["test"]
    stat = "undefined" if t["statistic"] is None else f"{t['statistic']:.4g}"
    print(f"  test        score at {t['effect']} {t['null_value']:.6g} ({t['alternative']}): z = {stat}, "
          f"p = {t['p_value']:.3g}, opposite tail p = {t['inferiority_p_value']:.3g}")
    print(f"  interval    {_interval_text(r)}, margin {_margin_text(r)}")
    if r["additional_trials_per_group"] is not None:
        print(f"  more        about {r['additional_trials_per_group']:,} trials per group")
    for warning in r["warnings"]:
        print(f"  warning     {warning}")


def _print_family(report: dict) -> None:
    width = max(len(m["metric"]) for m in report["metrics"])
    for m in report["metrics"]:
        r = m["result"]
        e = r["estimate"]
        more = ""
        if m["additional_trials_per_group"] is not None:
            more = f"; ~{m['additional_trials_per_group']:,} more per group"
        print(f"{m['verdict'].upper():<12} {m['metric']:<{width}}  treatment {100 * e['treatment_rate']:.3g}% vs "
              f"control {100 * e['control_rate']:.3g}%; {_interval_text(r)}, margin {_margin_text(r)}; adjusted p "
              f"{m['adjusted_p_value']:.3g} (no worse) / {m['adjusted_inferiority_p_value']:.3g} (worse){more}")
    counts = {v: sum(m["verdict"] == v for m in report["metrics"]) for v in ("pass", "fail", "inconclusive")}
    print(f"gate: {report['verdict']} ({counts['pass']} pass, {counts['fail']} fail, {counts['inconclusive']} "
          f"inconclusive; {_adjustment_text(report)} over {len(report['metrics'])} metrics at alpha "
          f"{report['alpha']:g})")


def _adjustment_text(report: dict) -> str:
    return "no adjustment" if report["adjustment"] == "none" else f"{report['adjustment']} adjustment"
