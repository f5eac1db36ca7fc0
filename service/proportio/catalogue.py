"""The method catalogue served at /v1/methods: what each method is, when to use it, where it comes from."""

from __future__ import annotations

CAUTIONS = (
    "A p-value is not a decision: weigh the interval, the size of the effect that matters and the cost of "
    "being wrong, not only whether p is below alpha.",
    "Running many comparisons, or looking at a running experiment repeatedly, inflates false positives unless "
    "the analysis adjusts for it.",
    "The methods assume independent trials within and between groups; clustered or repeated observations "
    "(several visits by one user) need other methods.",
    "Where results bear on people's health or safety (clinical, safety or regulatory comparisons), follow the "
    "applicable local rules and have the analysis planned and reviewed by a qualified statistician.",
)

_MN = "Miettinen O, Nurminen M (1985). Comparative analysis of two rates. Statistics in Medicine 4:213-226."
_FM = ("Farrington CP, Manning G (1990). Test statistics and sample size formulae for comparative binomial trials "
       "with null hypothesis of non-zero risk difference or non-unity relative risk. Statistics in Medicine "
       "9:1447-1454.")
_NEWCOMBE_2 = ("Newcombe RG (1998). Interval estimation for the difference between independent proportions: "
               "comparison of eleven methods. Statistics in Medicine 17:873-890.")
_NEWCOMBE_1 = ("Newcombe RG (1998). Two-sided confidence intervals for the single proportion: comparison of seven "
               "methods. Statistics in Medicine 17:857-872.")
_BCD = ("Brown LD, Cai TT, DasGupta A (2001). Interval estimation for a binomial proportion. Statistical Science "
        "16:101-133.")

METHODS: list[dict] = [
    # ---- tests
    {"name": "auto", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Chooses a test: the pooled z-test when every expected count under the null is at least 5, "
                    "Boschloo's exact test when one is smaller (Fisher's where the table is too large for "
                    "Boschloo's), the score test when the null is not 'no effect'. method_reason says why.",
     "when_to_use": "The default when you do not have a reason to prefer a particular test.",
     "references": ["Expected-count threshold of 5: common practice, no published source."]},
    {"name": "z-pooled", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Normal test of no difference with the variance pooled under the null; its square is the "
                    "Pearson chi-square statistic. Optional continuity correction (its square is then Yates').",
     "when_to_use": "Large samples, null of no effect. Reported with the Farrington-Manning score interval, "
                    "which excludes the null exactly when the uncorrected test rejects.",
     "references": [_FM]},
    {"name": "z-unpooled", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference"],
     "description": "Wald test of p_t - p_c = null_value with the unpooled variance.",
     "when_to_use": "Large samples and a non-zero null difference when you need the textbook Wald test; the "
                    "score test is more accurate. Reported with the Wald interval (consistent with it).",
     "references": ["Agresti A (2013). Categorical Data Analysis, 3rd ed., Wiley, section 3.1."]},
    {"name": "score", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Miettinen-Nurminen score test of any null difference, ratio or odds ratio, with the "
                    "N/(N-1) variance factor (unbiased under the null).",
     "when_to_use": "Non-inferiority and other non-zero nulls; reported with the Miettinen-Nurminen interval.",
     "references": [_MN, _FM]},
    {"name": "chi-square", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Pearson's chi-square test of the 2x2 table, two-sided; Yates' correction on request.",
     "when_to_use": "Equivalent to the two-sided pooled z-test; offered for readers who expect it.",
     "references": ["Pearson K (1900). Philosophical Magazine 50:157-175.",
                    "Yates F (1934). Supplement to the JRSS 1:217-235."]},
    {"name": "fisher-exact", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Fisher's exact test conditional on both margins; conservative.",
     "when_to_use": "Small samples when a conditional test is required by a protocol; otherwise prefer "
                    "boschloo-exact, which is more powerful.",
     "references": ["Fisher RA (1935). The logic of inductive inference. JRSS 98:39-82."]},
    {"name": "boschloo-exact", "kind": "test", "endpoint": "/v1/tests",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Exact unconditional test ordered by Fisher's p-value, maximised over the nuisance rate.",
     "when_to_use": "Small samples (an expected count below 5); size limits apply, see /docs.",
     "references": ["Boschloo RD (1970). Raised conditional level of significance for the 2x2-table when testing "
                    "the equality of two probabilities. Statistica Neerlandica 24:1-9."]},
    {"name": "barnard-exact", "kind": "test", "endpoint": "/v1/tests", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Exact unconditional test ordered by the pooled z statistic, maximised over the nuisance rate.",
     "when_to_use": "Small samples, as an alternative to boschloo-exact.",
     "references": ["Barnard GA (1947). Significance tests for 2x2 tables. Biometrika 34:123-138."]},
    # ---- intervals, difference
    {"name": "newcombe", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["difference"],
     "description": "Hybrid score interval built from the Wilson intervals of each rate (Newcombe's method 10).",
     "when_to_use": "The default for a difference: good coverage, closed form, behaves at 0 and 1.",
     "references": [_NEWCOMBE_2]},
    {"name": "miettinen-nurminen", "kind": "interval", "endpoint": "/v1/intervals",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Inverts the Miettinen-Nurminen score test (with the N/(N-1) factor).",
     "when_to_use": "Reported with the score test; good coverage for all three effects.",
     "references": [_MN, _NEWCOMBE_2 + " (method 6)"]},
    {"name": "farrington-manning", "kind": "interval", "endpoint": "/v1/intervals",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Inverts the score test without the N/(N-1) factor; at no effect its statistic is the pooled z.",
     "when_to_use": "Reported with the pooled z-test and the chi-square test, with which it is consistent.",
     "references": [_FM]},
    {"name": "agresti-caffo", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["difference"],
     "description": "Wald interval after adding one success and one failure to each group.",
     "when_to_use": "A simple closed form with far better coverage than Wald.",
     "references": ["Agresti A, Caffo B (2000). The American Statistician 54:280-288."]},
    {"name": "wald", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["difference", "proportion"],
     "description": "Estimate plus or minus z standard errors (unpooled), clipped to the parameter range.",
     "when_to_use": "Large samples away from 0 and 1 only; reported with the unpooled z-test.",
     "references": [_NEWCOMBE_2 + " (method 1)", _BCD]},
    {"name": "wald-cc", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["difference"],
     "description": "Wald interval widened by the continuity correction (1/n_t + 1/n_c)/2.",
     "when_to_use": "Reported with the continuity-corrected unpooled z-test.",
     "references": [_NEWCOMBE_2 + " (method 2)"]},
    # ---- ratio and odds ratio
    {"name": "katz-log", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["ratio"],
     "description": "Normal interval for the log ratio; with a zero count 0.5 is added to each count (warned).",
     "when_to_use": "Moderate to large counts; prefer miettinen-nurminen with few successes.",
     "references": ["Katz D, Baptista J, Azen SP, Pike MC (1978). Biometrics 34:469-474."]},
    {"name": "woolf", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["odds-ratio"],
     "description": "Normal interval for the log odds ratio; with an empty cell 0.5 is added to every cell (warned).",
     "when_to_use": "Moderate to large counts.",
     "references": ["Woolf B (1955). Annals of Human Genetics 19:251-253."]},
    {"name": "conditional-exact", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["odds-ratio"],
     "description": "Cornfield's exact interval from the noncentral hypergeometric distribution.",
     "when_to_use": "Small samples; reported with Fisher's exact test for the odds ratio.",
     "references": ["Cornfield J (1956). Proc. Third Berkeley Symposium 4:135-148."]},
    # ---- one proportion
    {"name": "wilson", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["proportion"],
     "description": "Score interval for one proportion.",
     "when_to_use": "The default for one proportion.", "references": ["Wilson EB (1927). JASA 22:209-212.", _BCD]},
    {"name": "wilson-cc", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["proportion"],
     "description": "Score interval with continuity correction.",
     "when_to_use": "When coverage must rarely fall below nominal.", "references": [_NEWCOMBE_1 + " (method 4)"]},
    {"name": "clopper-pearson", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["proportion"],
     "description": "Exact interval from binomial tail areas; conservative.",
     "when_to_use": "When coverage must never fall below nominal.",
     "references": ["Clopper CJ, Pearson ES (1934). Biometrika 26:404-413."]},
    {"name": "jeffreys", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["proportion"],
     "description": "Equal-tailed Beta(x+1/2, n-x+1/2) interval, with limit 0 at x=0 and 1 at x=n.",
     "when_to_use": "Good average coverage, also for small n.", "references": [_BCD + " (section 4.1.2)"]},
    {"name": "agresti-coull", "kind": "interval", "endpoint": "/v1/intervals", "effects": ["proportion"],
     "description": "Wald interval after adding z^2/2 successes and failures.",
     "when_to_use": "A simple closed form for n above about 40.",
     "references": ["Agresti A, Coull BA (1998). The American Statistician 52:119-126."]},
]


def catalogue() -> dict:
    """Return the catalogue document."""
    return {"methods": METHODS, "cautions": list(CAUTIONS)}
