"""Reference tests for multiplicity adjustments (proportio.stats.multiplicity)."""

from __future__ import annotations

import gc

import numpy as np
import pytest
from statsmodels.stats.multitest import multipletests

from proportio.stats.multiplicity import ADJUSTMENTS, adjust_p_values, bonferroni_confidence

# Our method name -> statsmodels 0.15 multipletests method name.
STATSMODELS_NAME = {
    "bonferroni": "bonferroni",
    "holm": "holm",
    "hochberg": "simes-hochberg",
    "benjamini-hochberg": "fdr_bh",
    "benjamini-yekutieli": "fdr_by",
}
TOL = 1e-12


@pytest.fixture
def no_forced_gc(monkeypatch: pytest.MonkeyPatch) -> None:
    """Skip the gc.collect() that statsmodels 0.15 multipletests runs on every "holm" call.

    It changes no number but costs ~40 ms per call with a full interpreter, which would make
    thousands of reference calls take minutes.
    """
    monkeypatch.setattr(gc, "collect", lambda *args, **kwargs: 0)


def _random_p_vectors(rng: np.random.Generator, count: int) -> list[np.ndarray]:
    """Draw p-vectors of varied length and shape: uniform, near zero, ties, exact 0 and 1."""
    vectors = []
    for i in range(count):
        m = int(rng.integers(1, 60)) if i % 10 else int(rng.integers(1, 4))
        kind = i % 5
        if kind == 0:
            p = rng.uniform(size=m)
        elif kind == 1:
            p = rng.beta(0.2, 3.0, size=m)  # mass near 0, like a readout with real effects
        elif kind == 2:
            p = np.round(rng.uniform(size=m), 1)  # heavy ties, including 0.0 and 1.0
        elif kind == 3:
            p = rng.choice([0.0, 1.0, 0.01, 0.04, 0.5], size=m)  # exact zeros and ones, ties
        else:
            p = 10.0 ** -rng.uniform(0, 12, size=m)  # very small p-values
        vectors.append(p)
    return vectors


@pytest.mark.parametrize("method", sorted(STATSMODELS_NAME))
def test_matches_statsmodels_on_random_vectors(method: str, no_forced_gc: None) -> None:
    rng = np.random.default_rng(20240611)
    for p in _random_p_vectors(rng, 2000):
        ours = adjust_p_values(p, method)
        # statsmodels 0.15 function stats.multitest.multipletests
        ref = multipletests(p, alpha=0.05, method=STATSMODELS_NAME[method])[1]
        np.testing.assert_allclose(ours, ref, rtol=TOL, atol=TOL)


@pytest.mark.parametrize("method", sorted(STATSMODELS_NAME))
def test_matches_statsmodels_on_a_large_readout(method: str, no_forced_gc: None) -> None:
    rng = np.random.default_rng(7)
    p = np.concatenate([rng.uniform(size=90_000), rng.beta(0.1, 5.0, size=10_000)])
    rng.shuffle(p)
    ours = adjust_p_values(p, method)
    # statsmodels 0.15 function stats.multitest.multipletests
    ref = multipletests(p, alpha=0.05, method=STATSMODELS_NAME[method])[1]
    np.testing.assert_allclose(ours, ref, rtol=TOL, atol=TOL)


@pytest.mark.parametrize("method", ADJUSTMENTS)
def test_length_one_and_empty(method: str) -> None:
    # With a single hypothesis every adjustment is the identity (definitions in Holm 1979,
    # Benjamini & Hochberg 1995, Benjamini & Yekutieli 2001: m = 1, harmonic sum 1).
    for value in (0.0, 0.03, 1.0):
        np.testing.assert_allclose(adjust_p_values(np.array([value]), method), [value], rtol=0, atol=TOL)
    assert adjust_p_values(np.array([]), method).shape == (0,)


def test_none_returns_a_copy() -> None:
    p = np.array([0.2, 0.01])
    out = adjust_p_values(p, "none")
    np.testing.assert_array_equal(out, p)
    out[0] = 0.9
    assert p[0] == 0.2


def test_benjamini_hochberg_1995_worked_example() -> None:
    # Benjamini & Hochberg (1995), JRSS B 57:289-300, Section 4 example: 15 p-values from a
    # study of myocardial infarction treatment. Values and rejection counts are FROM MEMORY,
    # not read from the paper: at q = 0.05 the BH procedure rejects 4 hypotheses while the
    # Bonferroni-type procedure rejects 3.
    p = np.array(
        [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459,
         0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.0000]
    )  # fmt: skip
    assert int(np.sum(adjust_p_values(p, "benjamini-hochberg") <= 0.05)) == 4
    assert int(np.sum(adjust_p_values(p, "hochberg") <= 0.05)) == 3
    assert int(np.sum(adjust_p_values(p, "holm") <= 0.05)) == 3
    assert int(np.sum(adjust_p_values(p, "bonferroni") <= 0.05)) == 3
    # Hand computation of the 4th and 5th BH-adjusted values: the step-up minimum over
    # p_(j) * 15 / j for j >= 4 is attained at j = 4 (0.0095 * 15 / 4 = 0.035625), and for j = 5
    # at j = 5 itself (0.0201 * 3 = 0.0603, below 0.0278 * 15/6 = 0.0695 and the rest).
    bh = adjust_p_values(p, "benjamini-hochberg")
    assert bh[3] == pytest.approx(0.0095 * 15 / 4, rel=TOL, abs=TOL)
    assert bh[4] == pytest.approx(0.0201 * 15 / 5, rel=TOL, abs=TOL)


def test_hand_example_in_shuffled_order() -> None:
    # Hand example, computed here from the definitions (m = 4, sorted p = .01, .02, .03, .04):
    #   Bonferroni:  .04, .08, .12, .16
    #   Holm (step-down max of (m-j+1) p_(j)): .04, .06 (=.02*3), max(.06,.06)=.06, max(.06,.04)=.06
    #   Hochberg (step-up min of the same): min(.04,.06,.06,.04)=.04 for every rank
    #   BH (step-up min of m p_(j)/j): .04/1, .08/2, .12/3, .16/4 -> .04 everywhere
    #   BY: BH times the harmonic sum 1 + 1/2 + 1/3 + 1/4 = 25/12
    sorted_p = np.array([0.01, 0.02, 0.03, 0.04])
    expected = {
        "none": sorted_p,
        "bonferroni": np.array([0.04, 0.08, 0.12, 0.16]),
        "holm": np.array([0.04, 0.06, 0.06, 0.06]),
        "hochberg": np.array([0.04, 0.04, 0.04, 0.04]),
        "benjamini-hochberg": np.array([0.04, 0.04, 0.04, 0.04]),
        "benjamini-yekutieli": np.full(4, 0.04 * 25 / 12),
    }
    perm = np.array([2, 0, 3, 1])
    for method, want in expected.items():
        got = adjust_p_values(sorted_p[perm], method)
        np.testing.assert_allclose(got, want[perm], rtol=TOL, atol=TOL)


def _holm_rejections(p: np.ndarray, alpha: float) -> np.ndarray:
    # Holm (1979), Scand. J. Statist. 6:65-70: reject H_(1), H_(2), ... in order while
    # p_(i) <= alpha / (m - i + 1); stop at the first that fails.
    m = p.size
    order = np.argsort(p, kind="stable")
    reject = np.zeros(m, dtype=bool)
    for i, idx in enumerate(order):
        if p[idx] <= alpha / (m - i):
            reject[idx] = True
        else:
            break
    return reject


def _step_up_rejections(p: np.ndarray, alpha: float, critical) -> np.ndarray:
    # Hochberg (1988), Biometrika 75:800-802, and Benjamini & Hochberg (1995), JRSS B 57:289-300:
    # find the largest i with p_(i) <= c_i and reject H_(1) .. H_(i).
    m = p.size
    order = np.argsort(p, kind="stable")
    reject = np.zeros(m, dtype=bool)
    for i in range(m, 0, -1):
        if p[order[i - 1]] <= critical(i, m, alpha):
            reject[order[:i]] = True
            break
    return reject


def test_adjusted_p_values_reproduce_the_published_procedures() -> None:
    # Adjusted p-value <= alpha must be the same decision as running the procedure at alpha
    # (Wright 1992, Biometrics 48:1005-1013). The procedures are written out from their papers.
    rng = np.random.default_rng(99)
    procedures = {
        "holm": _holm_rejections,
        "hochberg": lambda p, a: _step_up_rejections(p, a, lambda i, m, al: al / (m - i + 1)),
        "benjamini-hochberg": lambda p, a: _step_up_rejections(p, a, lambda i, m, al: i * al / m),
        # Benjamini & Yekutieli (2001), Ann. Statist. 29:1165-1188: critical values i q / (m c(m)).
        "benjamini-yekutieli": lambda p, a: _step_up_rejections(
            p, a, lambda i, m, al: i * al / (m * np.sum(1.0 / np.arange(1, m + 1)))
        ),
    }
    # Alphas chosen off the grid of attainable critical values, so rounding cannot flip a decision.
    alphas = (0.0123, 0.0517, 0.1031, 0.2017)
    for _ in range(300):
        m = int(rng.integers(1, 30))
        p = rng.beta(0.3, 2.0, size=m)
        for method, procedure in procedures.items():
            adjusted = adjust_p_values(p, method)
            for alpha in alphas:
                np.testing.assert_array_equal(adjusted <= alpha, procedure(p, alpha), err_msg=method)


def test_ordering_properties() -> None:
    # Consequences of the definitions: p <= Hochberg <= Holm <= Bonferroni <= 1 (Hochberg 1988),
    # BH <= Hochberg since m/i <= m - i + 1, BH <= BY, and adjusted values keep the order of p.
    rng = np.random.default_rng(5)
    for _ in range(300):
        m = int(rng.integers(1, 100))
        p = rng.uniform(size=m) ** 3
        adj = {method: adjust_p_values(p, method) for method in ADJUSTMENTS}
        tol = 1e-15
        assert np.all(p <= adj["hochberg"] + tol)
        assert np.all(adj["hochberg"] <= adj["holm"] + tol)
        assert np.all(adj["holm"] <= adj["bonferroni"] + tol)
        assert np.all(adj["bonferroni"] <= 1.0)
        assert np.all(adj["benjamini-hochberg"] <= adj["hochberg"] + tol)
        assert np.all(adj["benjamini-hochberg"] <= adj["benjamini-yekutieli"] + tol)
        order = np.argsort(p)
        for method in ADJUSTMENTS:
            assert np.all(np.diff(adj[method][order]) >= -tol), method


def test_keeps_shape_and_accepts_lists() -> None:
    p = np.array([[0.01, 0.2], [0.03, 0.5]])
    out = adjust_p_values(p, "holm")
    assert out.shape == (2, 2)
    np.testing.assert_allclose(out.ravel(), adjust_p_values(p.ravel().tolist(), "holm"), rtol=0, atol=0)


def test_rejects_unknown_method() -> None:
    with pytest.raises(ValueError, match=r'adjustment "sidak" not recognized; use none, bonferroni'):
        adjust_p_values(np.array([0.1]), "sidak")
    with pytest.raises(ValueError, match="not recognized"):
        adjust_p_values(np.array([0.1]), None)  # type: ignore[arg-type]


@pytest.mark.parametrize("bad", [[0.1, np.nan], [-0.01], [1.0000001], [0.5, np.inf], ["a"]])
def test_rejects_bad_p(bad: list) -> None:
    with pytest.raises(ValueError, match="^p "):
        adjust_p_values(bad, "holm")


def test_bonferroni_confidence() -> None:
    # Dunn (1961), JASA 56:52-64: m intervals at 1 - (1 - c)/m cover jointly with probability >= c.
    assert bonferroni_confidence(0.95, 1) == pytest.approx(0.95, rel=0, abs=1e-15)
    assert bonferroni_confidence(0.95, 5) == pytest.approx(0.99, rel=0, abs=1e-15)
    assert bonferroni_confidence(0.9, 1000) == pytest.approx(0.9999, rel=0, abs=1e-15)
    # Consistency with the adjustment: an interval at this level excludes a value exactly when the
    # Bonferroni-adjusted p-value of the matching test is below 1 - confidence.
    assert 1 - bonferroni_confidence(0.95, 20) == pytest.approx(0.05 / 20, rel=1e-12, abs=0)
    for conf, m in [(0.0, 2), (1.0, 2), (0.95, 0), (0.95, 2.0), (True, 2), (0.95, True), (float("nan"), 3)]:
        with pytest.raises(ValueError):
            bonferroni_confidence(conf, m)  # type: ignore[arg-type]
