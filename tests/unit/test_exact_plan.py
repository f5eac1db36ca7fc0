"""exact_test_masks (what the batch cost limits count) agrees with planned_methods (what compare runs)."""

from __future__ import annotations

import numpy as np
import pytest

from proportio.stats import twogroup


@pytest.mark.parametrize("options", [
    dict(method="auto"), dict(method="auto", effect="ratio"), dict(method="auto", null_value=0.02),
    dict(method="boschloo-exact"), dict(method="fisher-exact", effect="odds-ratio"), dict(method="z-pooled"),
    dict(method="score", null_value=-0.1),
])
def test_exact_test_masks_are_the_exact_methods_compare_plans(options):
    rng = np.random.default_rng(5)
    size = 3_000
    # Trials from 1 to beyond the Boschloo and Fisher limits, so that auto picks each of its methods.
    n1 = rng.choice([3, 30, 300, 5_000, 20_000_000], size) + rng.integers(0, 3, size)
    n2 = rng.choice([3, 30, 300, 5_000, 20_000_000], size) + rng.integers(0, 3, size)
    x1 = rng.binomial(n1, rng.choice([1e-8, 0.001, 0.1, 0.5], size))
    x2 = rng.binomial(n2, rng.choice([1e-8, 0.001, 0.1, 0.5], size))
    opts = twogroup.check_options(**options)
    planned = np.array(twogroup.planned_methods(x1, n1, x2, n2, opts), dtype=object)
    masks = twogroup.exact_test_masks(x1, n1, x2, n2, opts)
    for name in twogroup.EXACT_METHODS:
        expected = planned == name
        assert np.array_equal(masks.get(name, np.zeros(size, dtype=bool)), expected), name
    if options == dict(method="auto"):
        # The data reach both of auto's exact choices and its score fallback.
        assert {"boschloo-exact", "fisher-exact", "score", "z-pooled"} <= set(planned.tolist())
