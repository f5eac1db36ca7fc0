"""Benchmark the exact unconditional tests against scipy.stats (run by hand, not by pytest).

    cd /work/main && PYTHONPATH=service /tmp/venv/bin/python benchmarks/bench_exact.py

For each size it times proportio's boschloo_exact (best of a few runs) and
scipy.stats.boschloo_exact with its default grid (one run: at 1,000 trials per group scipy
takes tens of seconds), and prints the ratio, the target and the p-value difference.
A positive difference means proportio found a larger supremum than scipy's grid search;
the script then evaluates the rejection probability at the nuisance value proportio
reports, showing that the larger value is attained. The tables are invented scenarios
(sign-ups per landing page variant, treatment against control).
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "service"))

import numpy as np  # noqa: E402
from scipy import stats  # noqa: E402
from scipy.special import gammaln  # noqa: E402

from proportio.stats import exact  # noqa: E402

# (trials per group, [(x_t, x_c), ...], target speed-up or None, scipy runs for this size)
CASES = [
    (50, [(15, 7), (9, 3)], None, 2),
    (300, [(52, 40), (25, 12)], 10.0, 2),
    (1000, [(170, 130), (512, 488)], 20.0, 1),
]


def best_time(func, args: tuple, repeat: int) -> tuple[float, object]:
    best, result = math.inf, None
    for _ in range(repeat):
        start = time.perf_counter()
        result = func(*args)
        best = min(best, time.perf_counter() - start)
    return best, result


def region_probability(x_t: int, n_t: int, x_c: int, n_c: int, side: str, pi: float) -> float:
    """P_pi of one side's Boschloo region, summed table by table (an independent check)."""
    upper = side == "greater"
    n = n_t + n_c
    tails = {}
    for s in range(n + 1):
        lo, hi = max(0, s - n_c), min(n_t, s)
        terms = [math.comb(n_t, a) * math.comb(n_c, s - a) for a in range(lo, hi + 1)]
        total = math.comb(n, s)
        running = 0
        order = range(len(terms) - 1, -1, -1) if upper else range(len(terms))
        for k in order:
            running += terms[k]
            tails[(lo + k, s - lo - k)] = (running / total, terms[k])
    cut = tails[(x_t, x_c)][0] * (1 + 1e-13)
    return sum(
        math.exp(math.log(weight) + (a + b) * math.log(pi) + (n - a - b) * math.log1p(-pi))
        for (a, b), (fisher_p, weight) in tails.items()
        if fisher_p <= cut
    )


def barnard_check(x_t: int, x_c: int, n: int, pi: float) -> tuple[list[tuple[int, int]], float]:
    """Explain a Barnard difference: exact ties scipy leaves out, and P(region) at ``pi``.

    With equal groups, z^2 = (a - b)^2 (2n) / (n s (2n - s)) with s = a + b, so
    |z| >= |z0| is decided exactly in integers by (a - b)^2 v0 >= (a0 - b0)^2 v with
    v = s (2n - s) (z = 0 where a = b). scipy.stats.barnard_exact compares rounded z values.
    """
    a = np.arange(n + 1, dtype=np.int64)[:, None]
    b = np.arange(n + 1, dtype=np.int64)[None, :]
    s = a + b
    v = s * (2 * n - s)
    s0 = x_t + x_c
    left, right = (a - b) ** 2 * (s0 * (2 * n - s0)), (x_t - x_c) ** 2 * v
    region = (left >= right) & (a != b) | (x_t == x_c)
    tied = (left == right) & (a != b)
    p1, p2 = a / n, b / n
    p = s / (2 * n)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (p1 - p2) / np.sqrt(p * (1 - p) * (2 / n))
    z[p1 == p2] = 0
    dropped = tied & ~(np.abs(z) >= abs(z[x_t, x_c]))
    log_binom = gammaln(n + 1.0) - gammaln(np.arange(n + 1) + 1.0) - gammaln(n - np.arange(n + 1) + 1.0)
    log_w = log_binom[:, None] + log_binom[None, :] + s * math.log(pi) + (2 * n - s) * math.log1p(-pi)
    probability = float(np.exp(log_w[region]).sum())
    return [(int(i), int(j)) for i, j in zip(*np.nonzero(dropped), strict=True)], probability


def main() -> None:
    print(
        f"limits per group: boschloo {exact.MAX_TRIALS_PER_GROUP_BOSCHLOO}, "
        f"barnard {exact.MAX_TRIALS_PER_GROUP_BARNARD}, fisher {exact.MAX_TRIALS_FISHER}"
    )
    header = (
        f"{'n/group':>7} {'table':>19} {'ours s':>8} {'scipy s':>8} {'ratio':>7} {'target':>7} "
        f"{'ours p':>13} {'scipy p':>13} {'ours-scipy':>11}"
    )
    print("boschloo_exact, two-sided, scipy.stats.boschloo_exact with its default n=32")
    print(header)
    for n, tables, target, scipy_runs in CASES:
        for i, (x_t, x_c) in enumerate(tables):
            ours_t, ours = best_time(exact.boschloo_exact, (x_t, n, x_c, n), 3)
            label = f"{x_t}/{n} v {x_c}/{n}"
            if i >= scipy_runs:
                print(f"{n:>7} {label:>19} {ours_t:8.3f} {'(skip)':>8} {'':>7} {'':>7} {ours.pvalue:13.10f}")
                continue
            table = [[x_t, x_c], [n - x_t, n - x_c]]
            scipy_t, ref = best_time(stats.boschloo_exact, (table,), 1)
            ratio = scipy_t / ours_t
            goal = f"{target:>6.0f}x" if target else f"{'-':>7}"
            diff = ours.pvalue - ref.pvalue
            print(
                f"{n:>7} {label:>19} {ours_t:8.3f} {scipy_t:8.2f} {ratio:6.1f}x {goal} "
                f"{ours.pvalue:13.10f} {ref.pvalue:13.10f} {diff:11.2e}"
            )
            if diff > 1e-6 and n <= 300:
                # Which side set the two-sided p-value, and the probability of its region at
                # the reported nuisance value, summed directly.
                side = min(("greater", "less"), key=lambda s: exact.boschloo_exact(x_t, n, x_c, n, s).pvalue)
                at = region_probability(x_t, n, x_c, n, side, ours.nuisance)
                print(
                    f"{'':>7} scipy's grid misses the maximum: 2 x P(region) at pi = {ours.nuisance:.6f} "
                    f"is {min(1.0, 2 * at):.10f}"
                )

    print()
    print("barnard_exact, two-sided pooled, scipy.stats.barnard_exact with its default n=32 (no target)")
    print(header)
    for n, tables, _, _ in CASES:
        x_t, x_c = tables[0]
        ours_t, ours = best_time(exact.barnard_exact, (x_t, n, x_c, n), 3)
        table = [[x_t, x_c], [n - x_t, n - x_c]]
        scipy_t, ref = best_time(stats.barnard_exact, (table,), 1)
        print(
            f"{n:>7} {f'{x_t}/{n} v {x_c}/{n}':>19} {ours_t:8.3f} {scipy_t:8.2f} {scipy_t / ours_t:6.1f}x "
            f"{'-':>7} {ours.pvalue:13.10f} {ref.pvalue:13.10f} {ours.pvalue - ref.pvalue:11.2e}"
        )
        if ours.pvalue - ref.pvalue > 1e-9:
            dropped, at = barnard_check(x_t, x_c, n, ours.nuisance)
            why = (
                f"scipy leaves out {len(dropped)} table(s) tied exactly with |z0|, e.g. {dropped[:2]}"
                if dropped
                else "same region; scipy's grid misses the maximum"
            )
            print(f"{'':>7} {why}; P(region) at pi = {ours.nuisance:.6f}, summed table by table: {at:.10f}")

    print()
    n = exact.MAX_TRIALS_PER_GROUP_BOSCHLOO
    print(f"at the limit ({n} per group), proportio only, one run each")
    for x_t, x_c in [(1000, 1000), (946, 1024), (300, 260), (1990, 1963)]:
        for name, func in (
            ("boschloo two-sided", exact.boschloo_exact),
            ("barnard two-sided", exact.barnard_exact),
        ):
            elapsed, res = best_time(func, (x_t, n, x_c, n), 1)
            print(f"{name:>19} {x_t}/{n} v {x_c}/{n}: {elapsed:6.3f} s  p = {res.pvalue:.6g}")
    big = 10**6
    elapsed, res = best_time(exact.fisher_exact, (500_300, big, 499_000, big), 3)
    print(f"{'fisher two-sided':>19} 500300/{big} v 499000/{big}: {elapsed:6.4f} s  p = {res.pvalue:.6g}")


if __name__ == "__main__":
    main()
