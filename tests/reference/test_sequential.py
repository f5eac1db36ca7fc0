"""Reference checks for proportio.stats.sequential (group-sequential boundaries, always-valid inference).

Sources used here:

* Closed forms of the spending functions, re-evaluated with the standard library's
  ``statistics.NormalDist`` (no shared code path): Lan & DeMets (1983), Biometrika 70:659-663
  (O'Brien-Fleming-type and Pocock-type); Kim & DeMets (1987), Biometrika 74:149-154 (power
  family); Hwang, Shih & DeCani (1990), Statistics in Medicine 9:1439-1445.
* Jennison & Turnbull (2000), Group Sequential Methods with Applications to Clinical Trials, ch. 2
  tables of the Pocock constants C_P(K, alpha), O'Brien-Fleming constants C_B(K, alpha) and the
  inflation factors R_P, R_B (two-sided alpha = 0.05, equally spaced looks). The books were not
  opened: these values are recalled ("from memory"), the table numbers too, so tolerances follow the
  printed three decimals.
* Lan-DeMets spending boundaries for five equal looks, recalled ("from memory") as commonly
  tabulated; the source table was not opened.
* Monte Carlo simulation of Brownian motion at the information fractions, independent of the
  numerical integration (Armitage, McPherson & Rowe 1969, JRSS A 132:235-244; Jennison & Turnbull
  2000, ch. 19): first-crossing probabilities must match the spending increments within 4 standard
  errors; power and futility stopping probabilities likewise.
* statsmodels 0.15 ``proportions_ztest`` for the pooled two-sample z used by ``analyze``.
* The normal-mixture boundary of Howard, Ramdas, McAuliffe & Sekhon (2021), Annals of Statistics
  49:1055-1080, and the asymptotic confidence sequence of Waudby-Smith et al. (2024), Annals of
  Statistics 52:2613-2640, written out as recalled ("from memory"); the mixture likelihood ratio of
  Johari, Koomen, Pekelis & Walsh (2022), Operations Research 70:1806-1821, re-derived by numerical
  integration with ``scipy.integrate.quad``; and a simulation under the null with many looks.
"""

from __future__ import annotations

import math
from statistics import NormalDist

import numpy as np
import pytest
from scipy.integrate import quad
from statsmodels.stats.proportion import proportions_ztest

from proportio.stats import sequential as seq
from proportio.stats.sequential import (
    always_valid,
    analyze,
    classical_boundaries,
    confidence_sequence,
    inflation_factor,
    plan_boundaries,
    spending_function,
)

N01 = NormalDist()
K5 = [k / 5 for k in range(1, 6)]


def equal(k: int) -> list[float]:
    return [i / k for i in range(1, k + 1)]


def zs(plan) -> list[float]:
    return [look.z_boundary for look in plan.looks]


# ----------------------------------------------------------------------------------------------
# Spending functions
# ----------------------------------------------------------------------------------------------

T_GRID = [0.0, 0.01, 0.1, 0.2, 0.25, 1 / 3, 0.5, 0.75, 0.9, 1.0]


@pytest.mark.parametrize("alpha", [0.01, 0.025, 0.05, 0.1, 0.5])
def test_obrien_fleming_type_formula(alpha):
    # Lan & DeMets (1983): alpha(t) = 2 - 2 Phi(z_{alpha/2} / sqrt(t)).
    z = N01.inv_cdf(1 - alpha / 2)
    want = [0.0 if t == 0 else 2 - 2 * N01.cdf(z / math.sqrt(t)) for t in T_GRID]
    got = spending_function(np.array(T_GRID), alpha, "obrien-fleming-type")
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-15)


@pytest.mark.parametrize("alpha", [0.01, 0.05, 0.2])
def test_pocock_type_formula(alpha):
    # Lan & DeMets (1983): alpha(t) = alpha log(1 + (e - 1) t).
    want = [alpha * math.log(1 + (math.e - 1) * t) for t in T_GRID]
    np.testing.assert_allclose(spending_function(np.array(T_GRID), alpha, "pocock-type"), want, rtol=1e-12)


@pytest.mark.parametrize("rho", [0.5, 1.0, 2.0, 3.0])
def test_power_family_formula(rho):
    # Kim & DeMets (1987): alpha(t) = alpha t^rho.
    want = [0.05 * t**rho for t in T_GRID]
    got = spending_function(np.array(T_GRID), 0.05, "power-family", rho)
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-300)


@pytest.mark.parametrize("gamma", [-8.0, -4.0, -1.0, 0.0, 1.0, 2.0])
def test_hwang_shih_decani_formula(gamma):
    # Hwang, Shih & DeCani (1990): alpha (1 - exp(-gamma t)) / (1 - exp(-gamma)); linear at gamma = 0.
    if gamma == 0:
        want = [0.05 * t for t in T_GRID]
    else:
        want = [0.05 * (1 - math.exp(-gamma * t)) / (1 - math.exp(-gamma)) for t in T_GRID]
    got = spending_function(np.array(T_GRID), 0.05, "hwang-shih-decani", gamma)
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-300)


@pytest.mark.parametrize(
    ("spending", "parameter"),
    [
        ("obrien-fleming-type", None),
        ("pocock-type", None),
        ("power-family", 3.0),
        ("hwang-shih-decani", -400.0),
        ("hwang-shih-decani", 400.0),
    ],
)
def test_spending_is_a_distribution_function(spending, parameter):
    # Definition of a spending function (Lan & DeMets 1983): non-decreasing from 0 to alpha.
    t = np.linspace(0, 1.2, 601)
    a = spending_function(t, 0.05, spending, parameter)
    assert np.all(np.isfinite(a))
    assert a[0] == 0.0
    assert np.all(np.diff(a) >= -1e-18)
    assert abs(a[t >= 1] - 0.05).max() <= 1e-15


def test_spending_argument_errors():
    with pytest.raises(ValueError, match="spending"):
        spending_function(np.array([0.5]), 0.05, "linear")
    with pytest.raises(ValueError, match="parameter is required"):
        spending_function(np.array([0.5]), 0.05, "power-family")
    with pytest.raises(ValueError, match="rho"):
        spending_function(np.array([0.5]), 0.05, "power-family", -1.0)
    with pytest.raises(ValueError, match="parameter applies only"):
        spending_function(np.array([0.5]), 0.05, "pocock-type", 2.0)
    with pytest.raises(ValueError, match="alpha"):
        spending_function(np.array([0.5]), 0.6, "pocock-type")
    with pytest.raises(ValueError, match="t must"):
        spending_function(np.array([-0.1]), 0.05, "pocock-type")


# ----------------------------------------------------------------------------------------------
# Boundaries: exact cases and published tables
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("spending", ["obrien-fleming-type", "pocock-type"])
def test_single_look_is_fixed_sample_test(spending):
    # With one look at t = 1 all alpha is spent at once: the fixed-sample critical value
    # (scipy.stats.norm.ppf(0.975) = 1.959964..., ppf(0.95) = 1.644854...).
    assert plan_boundaries([1.0], 0.05, "two-sided", spending).looks[0].z_boundary == pytest.approx(
        N01.inv_cdf(0.975), abs=1e-6
    )
    assert plan_boundaries([1.0], 0.05, "greater", spending).looks[0].z_boundary == pytest.approx(
        N01.inv_cdf(0.95), abs=1e-6
    )
    assert plan_boundaries([1.0], 0.05, "less", spending).looks[0].z_boundary == pytest.approx(
        -N01.inv_cdf(0.95), abs=1e-6
    )


@pytest.mark.parametrize("t1", [0.1, 0.2, 0.5, 0.8])
def test_first_look_closed_form(t1):
    # Derived from the definitions (no table): at the first look P(|Z_1| >= c) = alpha(t_1), so the
    # O'Brien-Fleming-type two-sided boundary is z_{alpha/2} / sqrt(t_1) and the Pocock-type one is
    # z at upper tail alpha log(1 + (e-1) t_1) / 2.
    plan = plan_boundaries([t1, 1.0], 0.05, "two-sided", "obrien-fleming-type")
    assert plan.looks[0].z_boundary == pytest.approx(N01.inv_cdf(0.975) / math.sqrt(t1), abs=1e-6)
    plan = plan_boundaries([t1, 1.0], 0.05, "two-sided", "pocock-type")
    tail = 0.05 * math.log(1 + (math.e - 1) * t1) / 2
    assert plan.looks[0].z_boundary == pytest.approx(N01.inv_cdf(1 - tail), abs=1e-6)


def test_lan_demets_obrien_fleming_type_five_looks():
    # From memory: the commonly tabulated Lan-DeMets O'Brien-Fleming-type boundaries for five equal
    # looks, 4.877, 3.357, 2.680, 2.290, 2.031. They are the one-sided alpha = 0.025 design (what is
    # often called "two-sided 0.05" when alpha/2 is spent per side); printed to 3 decimals.
    plan = plan_boundaries(K5, 0.025, "greater", "obrien-fleming-type")
    np.testing.assert_allclose(zs(plan), [4.877, 3.357, 2.680, 2.290, 2.031], atol=1e-3)
    # "less" mirrors "greater".
    np.testing.assert_allclose(zs(plan_boundaries(K5, 0.025, "less")), -np.array(zs(plan)), atol=1e-12)


def test_lan_demets_pocock_type_five_looks():
    # From memory: Lan-DeMets Pocock-type boundaries for five equal looks at one-sided 0.025,
    # 2.438, 2.427, 2.410, 2.397, 2.386 (printed to 3 decimals). The two-sided 0.05 symmetric design
    # spends alpha/2 per side to within the chance of crossing both boundaries, which is negligible.
    np.testing.assert_allclose(
        zs(plan_boundaries(K5, 0.025, "greater", "pocock-type")),
        [2.438, 2.427, 2.410, 2.397, 2.386],
        atol=1e-3,
    )
    np.testing.assert_allclose(
        zs(plan_boundaries(K5, 0.05, "two-sided", "pocock-type")),
        [2.438, 2.427, 2.410, 2.397, 2.386],
        atol=1e-3,
    )


@pytest.mark.parametrize(
    ("k", "c_p"), [(1, 1.960), (2, 2.178), (3, 2.289), (4, 2.361), (5, 2.413), (10, 2.555)]
)
def test_pocock_constants(k, c_p):
    # Jennison & Turnbull (2000), ch. 2 table of Pocock constants C_P(K, alpha = 0.05), two-sided
    # (Table 2.1 from memory; values from memory, printed to 3 decimals).
    plan = classical_boundaries(equal(k), 0.05, "two-sided", "pocock")
    assert all(z == pytest.approx(c_p, abs=1e-3) for z in zs(plan))
    assert plan.looks[-1].cumulative_alpha == pytest.approx(0.05, abs=1e-8)


@pytest.mark.parametrize(
    ("k", "c_b"), [(1, 1.960), (2, 1.977), (3, 2.004), (4, 2.024), (5, 2.040), (10, 2.087)]
)
def test_obrien_fleming_constants(k, c_b):
    # Jennison & Turnbull (2000), ch. 2 table of O'Brien-Fleming constants C_B(K, alpha = 0.05),
    # two-sided, boundaries C_B sqrt(K / k) (Table 2.3 from memory; values from memory, 3 decimals).
    plan = classical_boundaries(equal(k), 0.05, "two-sided", "obrien-fleming")
    want = [c_b * math.sqrt(k / i) for i in range(1, k + 1)]
    np.testing.assert_allclose(zs(plan), want, atol=1e-3 * math.sqrt(k))
    assert plan.looks[-1].z_boundary == pytest.approx(c_b, abs=1e-3)


@pytest.mark.parametrize(
    ("shape", "power", "table"),
    [
        # Jennison & Turnbull (2000), ch. 2 tables of R_P(K, alpha = 0.05, beta) and R_B(K, alpha, beta)
        # for K = 2..5, two-sided (from memory, printed to 3 decimals).
        ("pocock", 0.8, [1.110, 1.166, 1.202, 1.229]),
        ("pocock", 0.9, [1.100, 1.151, 1.183, 1.207]),
        ("obrien-fleming", 0.8, [1.008, 1.017, 1.024, 1.028]),
        ("obrien-fleming", 0.9, [1.007, 1.016, 1.022, 1.026]),
    ],
)
def test_inflation_factors(shape, power, table):
    got = [
        classical_boundaries(equal(k), 0.05, "two-sided", shape, power=power).inflation_factor
        for k in (2, 3, 4, 5)
    ]
    # Printed to 3 decimals; allow rounding of a value sitting on a half.
    np.testing.assert_allclose(got, table, atol=1.5e-3)


def test_inflation_factor_function_and_plan_agree():
    # Internal consistency: the stand-alone function and the plan's field are the same quantity;
    # a single look needs no inflation (definition of R, Jennison & Turnbull 2000, ch. 2).
    r = inflation_factor(K5, 0.05, 0.9, "two-sided", "pocock-type")
    assert r == pytest.approx(
        plan_boundaries(K5, 0.05, "two-sided", "pocock-type", power=0.9).inflation_factor, rel=1e-12
    )
    assert inflation_factor([1.0], 0.05, 0.8) == pytest.approx(1.0, abs=1e-7)
    # More looks, or earlier spending, cost more sample size.
    assert 1.0 < inflation_factor(K5) < r


@pytest.mark.parametrize(
    ("spending", "parameter"),
    [
        ("obrien-fleming-type", None),
        ("pocock-type", None),
        ("power-family", 2.0),
        ("hwang-shih-decani", -4.0),
    ],
)
def test_grid_converged(spending, parameter):
    # Accuracy bar of 1e-4 in z: the default grid agrees with a four times finer one to far better.
    t = np.array([0.05, 0.2, 0.35, 0.5, 0.62, 0.8, 0.9, 1.0])
    cum = seq._spend(t, 0.05, spending, parameter)
    for two_sided in (True, False):
        coarse, _ = seq._efficacy_boundaries(t, cum, two_sided)
        fine, _ = seq._efficacy_boundaries(t, cum, two_sided, m=128)
        np.testing.assert_allclose(coarse, fine, atol=1e-6)


def test_plan_fields_and_warnings():
    plan = plan_boundaries([0.25, 0.5, 0.7], 0.05, "two-sided", "hwang-shih-decani", -4)
    cum = spending_function(np.array([0.25, 0.5, 0.7]), 0.05, "hwang-shih-decani", -4)
    np.testing.assert_allclose([lk.cumulative_alpha for lk in plan.looks], cum, rtol=1e-12)
    np.testing.assert_allclose([lk.alpha_spent for lk in plan.looks], np.diff(np.r_[0, cum]), rtol=1e-9)
    for look in plan.looks:
        assert look.nominal_p_value == pytest.approx(2 * (1 - N01.cdf(look.z_boundary)), rel=1e-9)
    # The spending function keeps 0.05 - alpha(0.7) for information never reached.
    assert any("unspent" in w for w in plan.warnings)
    assert plan_boundaries(K5).warnings == ()
    # Boundaries at early looks do not depend on later looks (spending-function property).
    assert zs(plan)[:2] == pytest.approx(
        zs(plan_boundaries([0.25, 0.5], 0.05, "two-sided", "hwang-shih-decani", -4)), abs=1e-12
    )


def test_tiny_early_increment_gives_no_boundary():
    plan = plan_boundaries([0.001, 0.5, 1.0])
    # alpha(0.001) = 2 - 2 Phi(62) underflows: that look cannot reject.
    assert plan.looks[0].z_boundary is None and plan.looks[0].nominal_p_value == 0.0
    assert any("cannot reject" in w for w in plan.warnings)
    assert plan.looks[1].z_boundary == pytest.approx(N01.inv_cdf(0.975) / math.sqrt(0.5), abs=1e-6)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"information_fractions": []}, "information_fractions"),
        ({"information_fractions": [0.5, 0.5, 1]}, "strictly increasing"),
        ({"information_fractions": [0, 1]}, r"\(0, 1\]"),
        ({"information_fractions": [0.5, 1.2]}, r"\(0, 1\]"),
        ({"information_fractions": [float("nan")]}, r"\(0, 1\]"),
        ({"information_fractions": list(np.linspace(0.01, 1, 51))}, "at most 50"),
        ({"information_fractions": K5, "alternative": "both"}, "alternative"),
        ({"information_fractions": K5, "alpha": 0}, "alpha"),
        ({"information_fractions": K5, "power": 1.0}, "power"),
        ({"information_fractions": K5, "spending": "hwang-shih-decani"}, "parameter"),
        ({"information_fractions": K5, "futility": "nope"}, "futility"),
        ({"information_fractions": K5, "futility_parameter": 2.0}, "futility_parameter"),
    ],
)
def test_plan_argument_errors(kwargs, match):
    with pytest.raises(ValueError, match=match):
        plan_boundaries(**kwargs)


# ----------------------------------------------------------------------------------------------
# Monte Carlo, independent of the integration
# ----------------------------------------------------------------------------------------------

N_PATHS = 200_000


def brownian_z(fractions, theta, seed):
    """Z_k = W(t_k) / sqrt(t_k) for W Brownian motion with drift theta, N_PATHS paths."""
    t = np.asarray(fractions)
    dt = np.diff(np.r_[0.0, t])
    rng = np.random.default_rng(seed)
    w = np.cumsum(rng.standard_normal((N_PATHS, t.size)) * np.sqrt(dt) + theta * dt, axis=1)
    return w / np.sqrt(t)


def first_true(mask):
    """Index of the first True per row, or -1."""
    idx = np.argmax(mask, axis=1)
    return np.where(mask.any(axis=1), idx, -1)


def assert_within_4se(observed_counts, probabilities):
    p = np.asarray(probabilities)
    se = np.sqrt(np.maximum(p * (1 - p), 1e-12) / N_PATHS)
    np.testing.assert_array_less(np.abs(observed_counts / N_PATHS - p), 4 * se + 1e-5)


@pytest.mark.parametrize(
    ("fractions", "alternative", "spending", "parameter", "seed"),
    [
        (K5, "two-sided", "obrien-fleming-type", None, 1),
        ([0.15, 0.4, 0.7, 1.0], "greater", "pocock-type", None, 2),
        ([0.3, 0.45, 0.6, 0.8, 0.9, 1.0], "less", "hwang-shih-decani", -2.0, 3),
        ([0.5, 0.75, 1.0], "two-sided", "power-family", 1.5, 4),
    ],
)
def test_monte_carlo_first_crossing_matches_spending(fractions, alternative, spending, parameter, seed):
    # Simulated Brownian motion under the null: the probability of first crossing at each look is
    # the spending increment (Lan & DeMets 1983), within 4 Monte Carlo standard errors.
    plan = plan_boundaries(fractions, 0.05, alternative, spending, parameter)
    z = brownian_z(fractions, 0.0, seed)
    b = np.array([lk.z_boundary for lk in plan.looks])
    cross = {"two-sided": np.abs(z) >= b, "greater": z >= b, "less": z <= b}[alternative]
    first = first_true(cross)
    counts = np.array([(first == k).sum() for k in range(len(fractions))])
    assert_within_4se(counts, [lk.alpha_spent for lk in plan.looks])


@pytest.mark.parametrize(
    ("spending", "alternative"), [("obrien-fleming-type", "two-sided"), ("pocock-type", "greater")]
)
def test_monte_carlo_power_matches_inflation_factor(spending, alternative):
    # At the drift implied by the inflation factor, theta = (z_{alpha*} + z_{1-beta}) sqrt(R), the
    # simulated design rejects in the right direction with probability 1 - beta (definition of R,
    # Jennison & Turnbull 2000, ch. 2).
    plan = plan_boundaries(K5, 0.05, alternative, spending, power=0.85)
    a_star = 0.025 if alternative == "two-sided" else 0.05
    theta = (N01.inv_cdf(1 - a_star) + N01.inv_cdf(0.85)) * math.sqrt(plan.inflation_factor)
    z = brownian_z(K5, theta, 5)
    b = np.array(zs(plan))
    upper = first_true(z >= b)
    if alternative == "two-sided":
        first_any = first_true(np.abs(z) >= b)
        rejected = (upper >= 0) & (upper == first_any)
    else:
        rejected = upper >= 0
    assert_within_4se(np.array([rejected.sum()]), [0.85])


@pytest.mark.parametrize("alternative", ["greater", "two-sided"])
def test_monte_carlo_futility_spending(alternative):
    # Non-binding futility by beta spending: efficacy boundaries unchanged; under the design
    # alternative the chance of stopping for futility at look k is the beta-spending increment and
    # the power is 1 - beta (simulation; spending from Lan & DeMets 1983 applied to beta).
    alpha = 0.025 if alternative == "greater" else 0.05
    with_f = plan_boundaries(K5, alpha, alternative, futility="hwang-shih-decani", futility_parameter=-2.0)
    without = plan_boundaries(K5, alpha, alternative)
    assert zs(with_f) == pytest.approx(zs(without), abs=1e-12)
    assert with_f.inflation_factor > without.inflation_factor
    fut = np.array([lk.futility_z for lk in with_f.looks])
    b = np.array(zs(with_f))
    assert np.all(fut <= b + 1e-12) and fut[-1] == pytest.approx(b[-1], abs=1e-12)
    a_star = alpha / 2 if alternative == "two-sided" else alpha
    theta = (N01.inv_cdf(1 - a_star) + N01.inv_cdf(0.8)) * math.sqrt(with_f.inflation_factor)
    z = brownian_z(K5, theta, 6)
    if alternative == "greater":
        eff, stop_f = z >= b, z < fut
    else:
        eff, stop_f = np.abs(z) >= b, np.abs(z) < fut
    stop_f[:, -1] = ~eff[:, -1]
    first = first_true(eff | stop_f)
    rows = np.arange(N_PATHS)
    futile = (first >= 0) & stop_f[rows, np.maximum(first, 0)]
    beta_inc = np.diff(np.r_[0, spending_function(np.array(K5), 0.2, "hwang-shih-decani", -2.0)])
    counts = np.array([(futile & (first == k)).sum() for k in range(4)])
    assert_within_4se(counts, beta_inc[:4])
    upper = (first >= 0) & ~futile & (z[rows, np.maximum(first, 0)] > 0)
    assert_within_4se(np.array([upper.sum()]), [0.8])


# ----------------------------------------------------------------------------------------------
# analyze
# ----------------------------------------------------------------------------------------------

LOOKS = [(52, 500, 40, 500), (118, 1000, 85, 1000), (190, 1500, 130, 1500), (230, 2000, 200, 2000)]


def test_analyze_pooled_z_matches_statsmodels():
    # statsmodels 0.15 proportions_ztest (pooled variance, two-sided p-value).
    res = analyze(LOOKS, 4000)
    for look, (x_t, n_t, x_c, n_c) in zip(res.looks, LOOKS, strict=True):
        z, p = proportions_ztest(np.array([x_t, x_c]), np.array([n_t, n_c]))
        assert look.z == pytest.approx(z, rel=1e-9)
        assert look.nominal_p_value == pytest.approx(p, rel=1e-9)


def test_analyze_recomputes_boundaries_at_reached_information():
    # Off-schedule looks: boundaries are those of a plan at the fractions actually reached.
    res = analyze(LOOKS, 4000, spending="pocock-type")
    plan = plan_boundaries([0.25, 0.5, 0.75, 1.0], 0.05, "two-sided", "pocock-type")
    assert [lk.z_boundary for lk in res.looks] == pytest.approx(zs(plan), abs=1e-10)
    res = analyze(LOOKS[:2], 3100)
    plan = plan_boundaries([1000 / 3100, 2000 / 3100])
    assert [lk.z_boundary for lk in res.looks] == pytest.approx(zs(plan), abs=1e-10)


def test_analyze_decisions():
    res = analyze(LOOKS, 4000)
    # Look 3: z = 3.55 >= 2.298 (first crossing); look 4 does not cross but the decision stands.
    assert [lk.crossed for lk in res.looks] == [False, False, True, False]
    assert res.decision == "reject-null" and res.stopped_at == 3
    assert "look 3" in res.summary
    assert analyze(LOOKS[:2], 4000).decision == "continue"
    null_looks = [(52, 500, 50, 500), (100, 1000, 101, 1000), (200, 2000, 199, 2000)]
    res = analyze(null_looks, 8000)
    assert res.decision == "continue" and not any(lk.crossed for lk in res.looks)
    # Reaching max_trials without a crossing ends the comparison.
    assert analyze(null_looks, 4000).decision == "no-difference-detected"
    res = analyze([*null_looks, (400, 4000, 405, 4000)], 8000)
    assert res.decision == "no-difference-detected" and res.stopped_at is None
    # One-sided in the wrong direction never crosses.
    assert analyze(LOOKS, 4000, alternative="less").decision == "no-difference-detected"
    assert all(lk.z_boundary < 0 for lk in analyze(LOOKS, 4000, alternative="less").looks)


def test_analyze_overrun_and_degenerate_counts():
    res = analyze([(10, 100, 10, 100), (60, 600, 30, 600)], 1000)
    assert res.looks[-1].information_fraction == 1.0
    assert any("capped at 1" in w for w in res.warnings)
    res = analyze([(0, 20, 0, 20)], 1000)
    assert res.looks[0].z == 0.0 and res.decision == "continue"
    assert any("same outcome" in w for w in res.warnings)


@pytest.mark.parametrize(
    ("looks", "max_trials", "match"),
    [
        ([], 100, "looks"),
        ([(1, 10, 1, 10), (1, 9, 2, 12)], 100, "cannot decrease"),
        ([(5, 10, 1, 10), (4, 12, 2, 12)], 100, "cannot decrease"),
        ([(1, 10, 1, 10), (1, 10, 1, 10)], 100, "adds no trials"),
        ([(1, 60, 1, 60), (2, 70, 2, 70)], 100, "final look"),
        ([(11, 10, 1, 10)], 100, "must not exceed"),
        ([(1, 0, 1, 10)], 100, "at least 1"),
        ([(1.5, 10, 1, 10)], 100, "whole number"),
        ([(True, 10, 1, 10)], 100, "whole number"),
        ([(1, 10, 1, 10)], 1, "max_trials"),
    ],
)
def test_analyze_argument_errors(looks, max_trials, match):
    with pytest.raises(ValueError, match=match):
        analyze(looks, max_trials)


# ----------------------------------------------------------------------------------------------
# Always-valid confidence sequence
# ----------------------------------------------------------------------------------------------


def test_boundary_is_the_published_normal_mixture():
    # Waudby-Smith et al. (2024), asymptotic confidence sequence, from memory:
    # mean +- sigma sqrt(2 (t rho^2 + 1) / (t^2 rho^2) log(sqrt(t rho^2 + 1) / alpha)) with
    # rho^2 = (-2 log alpha + log(-2 log alpha + 1)) / t*. Here t = n pairs, sigma^2 the variance of a
    # treatment-minus-control pair, estimated from (x + 1/2) / (n + 1) as documented.
    for x_t, x_c, n, alpha, t_star in [
        (130, 100, 1000, 0.05, 1000),
        (30, 12, 250, 0.1, 5000),
        (9, 4, 40, 0.01, 40),
    ]:
        res = always_valid(x_t, n, x_c, n, alpha=alpha, tuning=t_star)
        q_t, q_c = (x_t + 0.5) / (n + 1), (x_c + 0.5) / (n + 1)
        sigma = math.sqrt(q_t * (1 - q_t) + q_c * (1 - q_c))
        rho2 = (-2 * math.log(alpha) + math.log(-2 * math.log(alpha) + 1)) / t_star
        half = sigma * math.sqrt(
            2 * (n * rho2 + 1) / (n**2 * rho2) * math.log(math.sqrt(n * rho2 + 1) / alpha)
        )
        assert res.estimate == pytest.approx((x_t - x_c) / n, abs=1e-15)
        assert res.lower == pytest.approx(res.estimate - half, rel=1e-10)
        assert res.upper == pytest.approx(res.estimate + half, rel=1e-10)


def test_p_value_is_mixture_likelihood_ratio():
    # Johari et al. (2022) mixture SPRT / Robbins' normal mixture: Lambda = E_{h ~ N(0, tau^2)}
    # [exp(h S - h^2 I / 2)] with S = (d - null) I the score, I = 1 / V; re-derived with scipy quad.
    x_t, n_t, x_c, n_c = 160, 1200, 118, 1100
    res = always_valid(x_t, n_t, x_c, n_c, tuning=800)
    q_t, q_c = (x_t + 0.5) / (n_t + 1), (x_c + 0.5) / (n_c + 1)
    s_t, s_c = q_t * (1 - q_t), q_c * (1 - q_c)
    var = s_t / n_t + s_c / n_c
    info = 1 / var
    c_alpha = -2 * math.log(0.05) + math.log1p(-2 * math.log(0.05))
    # Mixing variance tau^2 = x V with x = t rho^2, t = (s_t + s_c) / V, rho^2 = c_alpha / tuning.
    tau2 = var * ((s_t + s_c) / var * c_alpha / 800)
    score = (x_t / n_t - x_c / n_c) * info
    lam, _ = quad(
        lambda h: math.exp(h * score - h * h * info / 2 - h * h / (2 * tau2)) / math.sqrt(2 * math.pi * tau2),
        -1.0,
        1.0,
        points=[score / (info + 1 / tau2)],
        epsabs=0,
        epsrel=1e-12,
        limit=200,
    )
    assert res.p_value == pytest.approx(min(1.0, 1 / lam), rel=1e-7)
    assert res.reject_null == (res.p_value <= 0.05)


def test_reject_iff_null_outside_sequence():
    # Duality of the test and the sequence (Howard et al. 2021): p <= alpha exactly when the null
    # value is outside the interval; at an endpoint the p-value equals alpha.
    rng = np.random.default_rng(11)
    n_t = rng.integers(20, 5000, 300)
    n_c = rng.integers(20, 5000, 300)
    x_t = rng.binomial(n_t, 0.3)
    x_c = rng.binomial(n_c, 0.25)
    nulls = rng.uniform(-0.1, 0.15, 300)
    for i in range(300):
        lo, hi, est, p, _ = confidence_sequence(x_t[i], n_t[i], x_c[i], n_c[i], null_value=nulls[i])
        assert (p[0] <= 0.05) == (nulls[i] < lo[0] or nulls[i] > hi[0])
        assert lo[0] <= est[0] <= hi[0]
    lo, hi, _, _, _ = confidence_sequence(150, 1000, 120, 1000)
    for end in (lo[0], hi[0]):
        assert confidence_sequence(150, 1000, 120, 1000, null_value=end)[3][0] == pytest.approx(
            0.05, rel=1e-9
        )


def test_tuning_puts_the_narrowest_point_at_the_planned_size():
    # Documented default and meaning of the tuning parameter (Waudby-Smith et al. 2024; Howard et
    # al. 2021 choose rho to be tight at t*): at n = tuning the sequence is narrower than with a
    # tuning ten times smaller or larger.
    for n in (200, 1000, 20000):
        width = {
            tun: always_valid(n // 10, n, n // 12, n, tuning=tun).upper
            - always_valid(n // 10, n, n // 12, n, tuning=tun).lower
            for tun in (n / 10, n, 10 * n)
        }
        assert width[n] < width[n / 10] and width[n] < width[10 * n]
    assert always_valid(100, 1000, 90, 1000).tuning == 1000.0
    # Wider than the fixed-sample interval, the price of validity at every look.
    res = always_valid(100, 1000, 90, 1000)
    assert res.z_boundary > N01.inv_cdf(0.975)


def test_always_valid_null_simulation_many_looks():
    # Simulation under the null (equal rates), 100 looks per path: the always-valid test's chance
    # of ever rejecting stays at or below alpha (+ 3 Monte Carlo standard errors), while repeating
    # the fixed-sample pooled z test at every look rejects far more often (Armitage, McPherson &
    # Rowe 1969 show the inflation of repeated significance tests).
    rng = np.random.default_rng(2024)
    reps, looks = 3000, 100
    for rate, step in ((0.1, 100), (0.03, 200)):
        x_t = np.cumsum(rng.binomial(step, rate, size=(reps, looks)), axis=1)
        x_c = np.cumsum(rng.binomial(step, rate, size=(reps, looks)), axis=1)
        n = np.broadcast_to(step * np.arange(1, looks + 1), (reps, looks))
        p_value = confidence_sequence(x_t, n, x_c, n, alpha=0.05)[3]
        always = np.mean(np.any(p_value <= 0.05, axis=1))
        p_bar = (x_t + x_c) / (2 * n)
        z = (x_t - x_c) / n / np.sqrt(p_bar * (1 - p_bar) * 2 / n)
        naive = np.mean(np.any(np.abs(z) >= N01.inv_cdf(0.975), axis=1))
        assert always <= 0.05 + 3 * math.sqrt(0.05 * 0.95 / reps)
        assert naive >= 0.2


def test_always_valid_edge_cases():
    for args in [(0, 1, 0, 1), (0, 10, 10, 10), (10**12, 10**12, 0, 10**12), (3, 10**12, 5, 10**12)]:
        res = always_valid(*args)
        values = [res.lower, res.upper, res.estimate, res.p_value, res.z_boundary]
        assert all(math.isfinite(v) for v in values)
        assert -1.0 <= res.lower <= res.estimate <= res.upper <= 1.0
        assert 0.0 <= res.p_value <= 1.0
    assert always_valid(10**12, 10**12, 0, 10**12).reject_null
    assert always_valid(0, 10, 0, 10).lower < 0 < always_valid(0, 10, 0, 10).upper
    assert always_valid(2, 10, 3, 10).warnings


@pytest.mark.parametrize(
    ("args", "kwargs", "match"),
    [
        ((11, 10, 1, 10), {}, "treatment.successes"),
        ((1, 10, 1, 0), {}, "control.trials"),
        ((1.5, 10, 1, 10), {}, "whole"),
        ((1, 10, 1, 10), {"alpha": 0.7}, "alpha"),
        ((1, 10, 1, 10), {"tuning": 0}, "tuning"),
        ((1, 10, 1, 10), {"null_value": 2.0}, "null_value"),
    ],
)
def test_always_valid_argument_errors(args, kwargs, match):
    with pytest.raises(ValueError, match=match):
        always_valid(*args, **kwargs)
