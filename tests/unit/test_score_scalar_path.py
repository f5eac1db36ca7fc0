"""The score interval of a few comparisons (floats, one at a time) equals the array code to the last bit.

A single request computes its difference interval in stats/score.py's scalar path; a batch of more than
``_SCALAR_LIMIT`` comparisons in the array code. A batch item and the single call must agree exactly, so
the two paths must too: any change to the restricted MLE, the statistic or the limit search (_scalar_limit,
_newton_limits) has to be made in both (the batch endpoint's own test groups items by options, so its
groups are small and never reach the array code).
"""

from __future__ import annotations

import numpy as np
import pytest

from proportio.stats import score


def tables(seed: int, size: int):
    rng = np.random.default_rng(seed)
    kind = rng.integers(0, 3, size)
    n1 = np.where(kind == 0, rng.integers(1, 40, size), np.where(kind == 1, rng.integers(1, 300_000, size),
                                                                   rng.integers(1, 10**12, size)))
    n2 = np.where(kind == 0, rng.integers(1, 40, size), np.where(kind == 1, rng.integers(1, 300_000, size),
                                                                   rng.integers(1, 10**12, size)))
    rate = rng.choice([1e-9, 1e-5, 1e-3, 0.02, 0.1, 0.5, 0.9, 0.999], size)
    x1 = rng.binomial(n1, np.clip(rate * rng.uniform(0.7, 1.4, size), 0.0, 1.0))
    x2 = rng.binomial(n2, rate)
    return tuple(a.astype(np.float64) for a in (x1, n1, x2, n2))


@pytest.mark.parametrize("correction", [True, False])
@pytest.mark.parametrize("z_lower, z_upper", [(1.959963984540054, 1.959963984540054),
                                              (1.6448536269514722, np.inf), (np.inf, 3.090232306167813)])
def test_scalar_path_equals_the_array_code_bit_for_bit(correction, z_lower, z_upper):
    x1, n1, x2, n2 = tables(int(np.isinf(z_lower)) + 2 * int(np.isinf(z_upper)) + 4 * correction, 400)
    zl, zu = np.full(x1.shape, z_lower), np.full(x1.shape, z_upper)
    arrays = score._difference_interval(x1, n1, x2, n2, zl, zu, correction)
    scalar = score._scalar_difference_interval(x1, n1, x2, n2, zl, zu, correction)
    for a, s in zip(arrays, scalar, strict=True):
        assert np.array_equal(a, s), np.flatnonzero(a != s)[:5]


def test_the_scalar_path_is_taken_for_ordinary_tables(monkeypatch):
    # Guard against a scalar path that declines everything (and so tests nothing above).
    declined = []
    original = score._difference_interval
    monkeypatch.setattr(score, "_difference_interval",
                        lambda x1, *a: declined.append(x1.size) or original(x1, *a))
    z = np.array([1.959963984540054])
    for x1, n1, x2, n2 in [(471, 9598, 412, 9630), (3, 40, 9, 41), (999_000, 10**6, 998_500, 10**6)]:
        score.score_interval([x1], [n1], [x2], [n2], z, z, "difference", True)
    assert declined == []
