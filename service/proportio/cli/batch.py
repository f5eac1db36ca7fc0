"""Command `batch`: many two-group tests from a CSV or JSON file (POST /v1/batch)."""

from __future__ import annotations

import argparse
import csv
import io
import json
import pathlib
import sys

from .common import UsageError, num

COUNT_COLUMNS = ("control_successes", "control_trials", "treatment_successes", "treatment_trials")
TEXT_OPTIONS = ("method", "alternative", "effect")
NUMBER_OPTIONS = ("null_value", "alpha")
# Columns that only name the row in the printed output.
NAME_COLUMNS = ("label", "name", "metric")


def add_parsers(sub, add_remote) -> None:
    p = sub.add_parser(
        "batch", help="many two-group tests at once, from a CSV or JSON file",
        description="Run every comparison of FILE as one /v1/batch request and print one line per comparison. "
                    "CSV columns: control_successes, control_trials, treatment_successes, treatment_trials, "
                    "optionally label (shown in the output), control_label, treatment_label and the /v1/tests "
                    "options method, alternative, null_value, effect, alpha, continuity_correction (an empty cell "
                    "means the default). JSON: a /v1/batch request, or a list of /v1/tests requests. "
                    "Computed in-process unless --url is given.")
    p.add_argument("--file", required=True, metavar="FILE", help="comparisons.csv or comparisons.json ('-': stdin)")
    p.add_argument("--format", choices=("csv", "json"), help="file format (default: from the file name)")
    p.add_argument("--adjustment", help="none (default), bonferroni, holm, hochberg, benjamini-hochberg or "
                                        "benjamini-yekutieli")
    add_remote(p)


def _read(path: str) -> str:
    if path == "-":
        return sys.stdin.read()
    try:
        return pathlib.Path(path).read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise UsageError(f"cannot read {path}: {exc.strerror or exc}") from exc


def _int_cell(value: str, where: str) -> int:
    try:
        return int(value.strip())
    except ValueError:
        raise UsageError(f"{where}: expected a whole number, got {value!r}") from None


def _float_cell(value: str, where: str) -> float:
    try:
        return float(value.strip())
    except ValueError:
        raise UsageError(f"{where}: expected a number, got {value!r}") from None


def _bool_cell(value: str, where: str) -> bool:
    text = value.strip().lower()
    if text in ("true", "yes", "1"):
        return True
    if text in ("false", "no", "0"):
        return False
    raise UsageError(f"{where}: expected true or false, got {value!r}")


def parse_csv(text: str) -> tuple[list[dict], list[str | None]]:
    """Return the /v1/tests requests of a CSV file and the name of each row (for the output)."""
    reader = csv.DictReader(io.StringIO(text))
    header = [h.strip() for h in (reader.fieldnames or [])]
    missing = [c for c in COUNT_COLUMNS if c not in header]
    if missing:
        raise UsageError(f"the CSV file needs the columns {', '.join(COUNT_COLUMNS)}; missing {', '.join(missing)}")
    known = set(COUNT_COLUMNS) | set(TEXT_OPTIONS) | set(NUMBER_OPTIONS) | set(NAME_COLUMNS) | {
        "continuity_correction", "control_label", "treatment_label"}
    unknown = [h for h in header if h not in known]
    if unknown:
        raise UsageError(f"unknown CSV column(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
    reader.fieldnames = header
    items, names = [], []
    for line, row in enumerate(reader, start=2):
        where = f"line {line}"
        if None in row:
            raise UsageError(f"{where}: more cells than columns")
        cells = {k: (v or "") for k, v in row.items()}
        item: dict = {
            "control": {"successes": _int_cell(cells["control_successes"], where),
                        "trials": _int_cell(cells["control_trials"], where)},
            "treatment": {"successes": _int_cell(cells["treatment_successes"], where),
                          "trials": _int_cell(cells["treatment_trials"], where)},
        }
        for group in ("control", "treatment"):
            if cells.get(f"{group}_label", "").strip():
                item[group]["label"] = cells[f"{group}_label"].strip()
        for name in TEXT_OPTIONS:
            if cells.get(name, "").strip():
                item[name] = cells[name].strip()
        for name in NUMBER_OPTIONS:
            if cells.get(name, "").strip():
                item[name] = _float_cell(cells[name], where)
        if cells.get("continuity_correction", "").strip():
            item["continuity_correction"] = _bool_cell(cells["continuity_correction"], where)
        items.append(item)
        names.append(next((cells[c].strip() for c in NAME_COLUMNS if cells.get(c, "").strip()), None))
    if not items:
        raise UsageError("the CSV file has no comparisons")
    return items, names


def parse_json(text: str) -> tuple[dict, list[str | None]]:
    """Return the /v1/batch body of a JSON file: a batch request, or a list of /v1/tests requests."""
    try:
        data = json.loads(text)
    except ValueError as exc:
        raise UsageError(f"the file is not valid JSON: {exc}") from exc
    body = {"comparisons": data} if isinstance(data, list) else data
    if not isinstance(body, dict):
        raise UsageError("the JSON file must hold a /v1/batch request or a list of /v1/tests requests")
    items = body.get("comparisons")
    names = [_treatment_label(item) for item in items] if isinstance(items, list) else []
    return body, names


def _treatment_label(item) -> str | None:
    group = item.get("treatment") if isinstance(item, dict) else None
    label = group.get("label") if isinstance(group, dict) else None
    return label if isinstance(label, str) else None


def _name(i: int, names: list[str | None]) -> str:
    name = names[i] if i < len(names) else None
    return name if name else f"#{i + 1}"


def _effect_text(item: dict) -> str:
    est, iv, effect = item["estimate"], item["interval"], item["effect"]
    if effect == "difference":
        def pts(v):
            return "unbounded" if v is None else f"{100 * v:+.2f}"
        value = f"diff {pts(est['difference'])} pts"
        bounds = f"[{pts(iv['lower'])}, {pts(iv['upper'])}]"
    else:
        ratio = est["odds_ratio"] if effect == "odds-ratio" else (
            None if est["relative_lift"] is None else est["relative_lift"] + 1.0)
        value = f"{effect} {num(ratio)}"
        bounds = f"[{num(iv['lower'])}, {num(iv['upper'])}]"
    return f"{value} {bounds}"


def _p_text(p) -> str:
    return "undefined" if p is None else f"{p:.3g}"


def _printer(names: list[str | None]):
    def show(result: dict) -> None:
        rows = result["results"]
        width = max(len(_name(i, names)) for i in range(len(rows)))
        for i, item in enumerate(rows):
            est = item["estimate"]
            mark = " *" if item["adjusted_reject_null"] else ""
            print(f"{_name(i, names):<{width}}  {100 * est['treatment_rate']:.2f}% vs {100 * est['control_rate']:.2f}%"
                  f"  {_effect_text(item)}  p {_p_text(item['p_value'])}  adjusted p "
                  f"{_p_text(item['adjusted_p_value'])}{mark}  {item['method']}")
        flagged = sum(1 for item in rows if item["adjusted_reject_null"])
        print(f"{result['count']} comparisons, adjustment {result['adjustment']}: {flagged} significant after "
              "adjustment (marked *)")
        for warning in result["warnings"]:
            print(f"warning  {warning}")
    return show


def run_batch(args: argparse.Namespace, run):
    text = _read(args.file)
    fmt = args.format or ("json" if args.file.lower().endswith(".json") else "csv")
    if fmt == "json":
        body, names = parse_json(text)
    else:
        items, names = parse_csv(text)
        body = {"comparisons": items}
    if args.adjustment is not None:
        body["adjustment"] = args.adjustment
    return run("/v1/batch", body, args), _printer(names)


HANDLERS = {"batch": run_batch}
