"""Operations of /v1/arms: an omnibus test across the arms and adjusted pairwise comparisons."""

from __future__ import annotations

import numpy as np

from ..stats import homogeneity, multiplicity
from ..stats._common import significant_digits
from .batch import ComparisonColumns, check_exact_budget, item_dicts, run_columns


def arm_pairs(labels: list[str], control: str, comparison_set: str) -> list[tuple[int, int]]:
    """Return (treatment, control) index pairs: every arm against the control, or every pair in input order.

    In ``all-pairs`` the control arm is the control of each of its pairs and otherwise the earlier arm is.
    """
    c = labels.index(control)
    if comparison_set == "vs-control":
        return [(i, c) for i in range(len(labels)) if i != c]
    pairs = []
    for i in range(len(labels)):
        for j in range(i + 1, len(labels)):
            pairs.append((i, j) if j == c else (j, i))
    return pairs


def _format_p(p: float, log10p: float | None) -> str:
    if p >= 0.001:
        return f"{p:.3g}"
    if p > 0:
        return f"{p:.2e}"
    return f"10^{log10p:.1f}" if log10p is not None else "0"


def _level(fraction: float) -> str:
    value = 100 * fraction
    return f"{value:.0f}%" if abs(value - round(value)) < 1e-9 else f"{value:.1f}%"


def run_arms(data: dict) -> dict:
    """Run one validated /v1/arms request."""
    groups = data["groups"]
    labels = [g["label"] for g in groups]
    control = data["control"] if data["control"] is not None else labels[0]
    alpha = data["alpha"]
    adjustment = data["adjustment"]
    successes = [g["successes"] for g in groups]
    trials = [g["trials"] for g in groups]

    omnibus = homogeneity.homogeneity_test(successes, trials)

    pairs = arm_pairs(labels, control, data["comparisons"])
    m = len(pairs)
    t_idx = np.array([t for t, _ in pairs])
    c_idx = np.array([c for _, c in pairs])
    x = np.array(successes, dtype=np.int64)
    n = np.array(trials, dtype=np.int64)
    key = (data["method"], data["alternative"], None, data["effect"], alpha, False)
    cols = ComparisonColumns(x[t_idx], n[t_idx], x[c_idx], n[c_idx], ((key, np.arange(m)),))
    check_exact_budget(cols, field="groups", what="pairs")
    simultaneous = bool(data["simultaneous_intervals"]) and m > 1
    # Bonferroni (Dunn 1961): m intervals each at 1 - alpha/m cover together with probability >= 1 - alpha.
    interval_alpha = alpha / m if simultaneous else None
    [(_, part)] = run_columns(cols, interval_alpha=interval_alpha)

    p = part.p_values
    defined = ~np.isnan(p)
    adjusted = np.full(p.shape, np.nan)
    adjusted[defined] = multiplicity.adjust_p_values(p[defined], adjustment)
    adjusted_list = [None if np.isnan(v) else v for v in adjusted.tolist()]
    items = item_dicts(part, adjusted_list)

    level = _level(alpha)
    comparisons = []
    for (t, c), item in zip(pairs, items, strict=True):
        item["interval"]["simultaneous"] = simultaneous
        item["interval"]["family_confidence"] = 1.0 - alpha if simultaneous else item["interval"]["confidence"]
        adj = item["adjusted_p_value"]
        if adjustment != "none" and adj is not None:
            # Differs from the single-test verdict only through the adjustment; say which way it went.
            outcome = "significant" if item["adjusted_reject_null"] else "not significant"
            adj_text = f"p = {_format_p(adj, None)}" if adj > 0 else "p < 1e-300"
            item["summary"] += (f" Adjusted for {m} comparisons ({adjustment}), {adj_text}: {outcome} at the "
                                f"{level} level.")
        comparisons.append({"treatment": labels[t], "control": labels[c], **item})

    warnings = list(omnibus.warnings)
    undefined = int((~defined).sum())
    if undefined:
        warnings.append(f"{undefined} pair(s) have no p-value (the test is undefined for their counts); they are "
                        "left out of the adjustment")
    if simultaneous:
        interval_text = (f"the {m} intervals are Bonferroni-adjusted (each at {_level(1.0 - alpha / m)}) so that "
                         f"they cover together with probability at least {_level(1.0 - alpha)}")
    else:
        interval_text = "each interval has its own level and they are not adjusted for simultaneous coverage"
    p_text = _format_p(omnibus.p_value, omnibus.log10_p_value)
    pair_text = (f"{m} comparison(s) against control \"{control}\"" if data["comparisons"] == "vs-control"
                 else f"all {m} pair(s)")
    verdict = ("The data show that the success rates of the {k} arms are not all equal" if omnibus.p_value <= alpha
               else "The data do not show that the success rates of the {k} arms differ").format(k=len(groups))
    summary = (f"{verdict} at the {level} level (chi-square = "
               f"{significant_digits(omnibus.statistic)}, df = {omnibus.df}, p = {p_text}); {pair_text} with "
               f"{adjustment}-adjusted p-values; {interval_text}.")
    return {
        "omnibus": {"statistic": omnibus.statistic, "df": omnibus.df, "p_value": omnibus.p_value,
                    "log10_p_value": omnibus.log10_p_value, "min_expected_count": omnibus.min_expected_count,
                    "warnings": list(omnibus.warnings)},
        "comparisons": comparisons,
        "control": control,
        "comparison_set": data["comparisons"],
        "adjustment": adjustment,
        "simultaneous_intervals": simultaneous,
        "family_confidence": 1.0 - alpha,
        "warnings": warnings,
        "summary": summary,
    }

