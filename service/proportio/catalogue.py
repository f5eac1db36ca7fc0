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
_DUNN = "Dunn OJ (1961). Multiple comparisons among means. Journal of the American Statistical Association 56:52-64."
_HOLM = ("Holm S (1979). A simple sequentially rejective multiple test procedure. Scandinavian Journal of Statistics "
         "6:65-70.")
_BH = ("Benjamini Y, Hochberg Y (1995). Controlling the false discovery rate: a practical and powerful approach to "
       "multiple testing. Journal of the Royal Statistical Society, Series B 57:289-300.")
_BCD = ("Brown LD, Cai TT, DasGupta A (2001). Interval estimation for a binomial proportion. Statistical Science "
        "16:101-133.")
_FLP = "Fleiss JL, Levin B, Paik MC (2003). Statistical Methods for Rates and Proportions, 3rd ed. Wiley, ch. 4."
_FTU = ("Fleiss JL, Tytun A, Ury HK (1980). A simple approximation for calculating sample sizes for comparing "
        "independent proportions. Biometrics 36:343-346.")
_CSW = ("Chow SC, Shao J, Wang H (2008). Sample Size Calculations in Clinical Research, 2nd ed. Chapman & Hall/CRC, "
        "ch. 4.")
_SCHUIRMANN = ("Schuirmann DJ (1987). A comparison of the two one-sided tests procedure and the power approach for "
               "assessing the equivalence of average bioavailability. Journal of Pharmacokinetics and "
               "Biopharmaceutics 15:657-680.")

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
    # ---- planning (/v1/sample-size): sizes are searched on the integers, power is reported at the sizes
    {"name": "superiority-pooled", "kind": "planning", "endpoint": "/v1/sample-size", "effects": ["difference"],
     "options": {"design": "superiority", "method": "z-pooled"},
     "description": "Sample size, power or detectable effect for the test of equal rates with the variance pooled "
                    "under the null and the separate rates under the alternative; for equal groups the size is "
                    "the classic closed form rounded up.",
     "when_to_use": "The default plan for a pooled z-test or chi-square test of no difference.",
     "references": [_FLP]},
    {"name": "superiority-unpooled", "kind": "planning", "endpoint": "/v1/sample-size", "effects": ["difference"],
     "options": {"design": "superiority", "method": "z-unpooled"},
     "description": "As superiority-pooled, with the unpooled variance under the null as well (Wald test).",
     "when_to_use": "Plans for an unpooled z-test; with equal groups it never needs more than the pooled plan.",
     "references": [_CSW]},
    {"name": "fleiss-continuity-correction", "kind": "planning", "endpoint": "/v1/sample-size",
     "effects": ["difference"], "options": {"continuity_correction": True},
     "description": "Shifts the rejection boundary by (1/n_control + 1/n_treatment)/2; for superiority the size is "
                    "the Fleiss-Tytun-Ury closed form. For non-inferiority and equivalence the same shift is "
                    "applied to each one-sided boundary, an extension that the response warns about.",
     "when_to_use": "When the analysis will use a continuity-corrected test (Yates' chi-square, corrected z).",
     "references": [_FTU, _FLP]},
    {"name": "non-inferiority-farrington-manning", "kind": "planning", "endpoint": "/v1/sample-size",
     "effects": ["difference"], "options": {"design": "non-inferiority", "method": "z-pooled"},
     "description": "One-sided test against the margin, with the null variance at the rates that maximise the "
                    "likelihood under the margin (the score test without the N/(N-1) factor).",
     "when_to_use": "Plans for a score (Farrington-Manning) non-inferiority test; alternative greater when higher "
                    "rates are better, less when lower rates are better.",
     "references": [_FM, _MN]},
    {"name": "non-inferiority-unpooled", "kind": "planning", "endpoint": "/v1/sample-size",
     "effects": ["difference"], "options": {"design": "non-inferiority", "method": "z-unpooled"},
     "description": "One-sided test against the margin with the unpooled (Wald) variance.",
     "when_to_use": "Plans for a Wald non-inferiority test.",
     "references": [_CSW]},
    {"name": "equivalence-tost", "kind": "planning", "endpoint": "/v1/sample-size", "effects": ["difference"],
     "options": {"design": "equivalence"},
     "description": "Two one-sided tests, each at alpha, of a difference beyond +/- margin; the power is the "
                    "normal-approximation probability that both reject. method picks the null variance "
                    "(z-pooled: Farrington-Manning restricted rates; z-unpooled: Wald).",
     "when_to_use": "To show that two rates are within the margin of each other; the margin must exceed the "
                    "expected difference.",
     "references": [_SCHUIRMANN, _CSW, _FM]},
    # ---- sequential monitoring (/v1/sequential/plan, /v1/sequential/analyze, /v1/sequential/always-valid)
    {"name": "obrien-fleming-type", "kind": "spending-function", "endpoint": "/v1/sequential/plan",
     "effects": ["difference"],
     "description": "Lan-DeMets alpha spending 2 - 2 Phi(z_{alpha/2} / sqrt(t)): almost nothing early, most of "
                    "alpha at the end, so the last boundary is close to the fixed-sample one. Boundaries by "
                    "recursive numerical integration; also used by /v1/sequential/analyze.",
     "when_to_use": "The default: early stops only for overwhelming effects, little sample-size inflation.",
     "references": ["Lan KKG, DeMets DL (1983). Discrete sequential boundaries for clinical trials. Biometrika "
                    "70:659-663.",
                    "Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials. "
                    "Chapman & Hall/CRC, ch. 7 and 19."],
     "cautions": ["Where such a plan governs a clinical trial, the boundaries must be fixed before the data are "
                  "seen; the monitoring plan belongs to the trial's statisticians and its data monitoring "
                  "committee."]},
    {"name": "pocock-type", "kind": "spending-function", "endpoint": "/v1/sequential/plan", "effects": ["difference"],
     "description": "Lan-DeMets alpha spending alpha log(1 + (e - 1) t): nearly equal boundaries at every look.",
     "when_to_use": "When an early stop for a real effect matters more than a small final boundary; costs more "
                    "maximum sample size (see inflation_factor).",
     "references": ["Lan KKG, DeMets DL (1983). Discrete sequential boundaries for clinical trials. Biometrika "
                    "70:659-663.",
                    "Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials. "
                    "Chapman & Hall/CRC, ch. 2 and 7."],
     "cautions": ["Where such a plan governs a clinical trial, the boundaries must be fixed before the data are "
                  "seen; the monitoring plan belongs to the trial's statisticians and its data monitoring "
                  "committee."]},
    {"name": "power-family", "kind": "spending-function", "endpoint": "/v1/sequential/plan", "effects": ["difference"],
     "description": "Alpha spending alpha t^rho (rho > 0): rho = 1 spends linearly, rho near 3 resembles "
                    "O'Brien-Fleming-type. Needs rho.",
     "when_to_use": "To choose a shape between Pocock-type and O'Brien-Fleming-type with one parameter.",
     "references": ["Kim K, DeMets DL (1987). Design and analysis of group sequential tests based on the type I "
                    "error spending rate function. Biometrika 74:149-154.",
                    "Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials. "
                    "Chapman & Hall/CRC, ch. 7."],
     "cautions": ["Where such a plan governs a clinical trial, the boundaries must be fixed before the data are "
                  "seen; the monitoring plan belongs to the trial's statisticians and its data monitoring "
                  "committee."]},
    {"name": "hwang-shih-decani", "kind": "spending-function", "endpoint": "/v1/sequential/plan",
     "effects": ["difference"],
     "description": "Alpha spending alpha (1 - exp(-gamma t)) / (1 - exp(-gamma)), linear at gamma = 0: gamma "
                    "near -4 resembles O'Brien-Fleming-type, gamma = 1 Pocock-type. Needs gamma.",
     "when_to_use": "A one-parameter family for efficacy or (as futility) beta spending.",
     "references": ["Hwang IK, Shih WJ, DeCani JS (1990). Group sequential designs using a family of type I error "
                    "probability spending functions. Statistics in Medicine 9:1439-1445.",
                    "Jennison C, Turnbull BW (2000). Group Sequential Methods with Applications to Clinical Trials. "
                    "Chapman & Hall/CRC, ch. 7."],
     "cautions": ["Where such a plan governs a clinical trial, the boundaries must be fixed before the data are "
                  "seen; the monitoring plan belongs to the trial's statisticians and its data monitoring "
                  "committee."]},
    {"name": "asymptotic-confidence-sequence", "kind": "confidence-sequence", "endpoint": "/v1/sequential/always-valid",
     "effects": ["difference"],
     "description": "Normal-mixture confidence sequence for p_t - p_c and its always-valid p-value (the mixture "
                    "sequential probability ratio test): the chance that it ever excludes the true difference, "
                    "however often it is checked, is at most alpha (asymptotically). tuning (default 1000 trials "
                    "per group) is where it is tightest.",
     "when_to_use": "Continuous monitoring with no schedule of looks; wider than a group-sequential boundary at a "
                    "planned look, the price of checking at any time.",
     "references": ["Howard SR, Ramdas A, McAuliffe J, Sekhon J (2021). Time-uniform, nonparametric, "
                    "nonasymptotic confidence sequences. Annals of Statistics 49:1055-1080.",
                    "Waudby-Smith I, Arbour D, Sinha R, Kennedy EH, Ramdas A (2024). Time-uniform central limit "
                    "theory and asymptotic confidence sequences. Annals of Statistics 52:2613-2640.",
                    "Robbins H (1970). Statistical methods related to the law of the iterated logarithm. Annals "
                    "of Mathematical Statistics 41:1397-1409.",
                    "Johari R, Koomen P, Pekelis L, Walsh D (2022). Always valid inference: continuous monitoring "
                    "of A/B tests. Operations Research 70:1806-1821."],
     "cautions": ["Rests on a normal approximation: with fewer than about 5 successes or failures in a group it "
                  "may be anti-conservative (a warning says so).",
                  "Where it governs a clinical trial, the monitoring plan must be fixed before the data are seen "
                  "and belongs to the trial's statisticians and its data monitoring committee."]},
    # ---- guardrail (/v1/guardrail, proportio gate)
    {"name": "guardrail", "kind": "guardrail", "endpoint": "/v1/guardrail", "effects": ["difference", "ratio"],
     "description": "Non-inferiority verdict for a metric that must not get worse: pass when the one-sided "
                    "Miettinen-Nurminen score test at the margin shows the treatment no worse than the control by "
                    "more than the margin (absolute: on p_t - p_c; relative: on p_t / p_c), fail when the opposite "
                    "one-sided test shows it worse by more than the margin (the 1 - 2 alpha interval lies beyond "
                    "it), inconclusive otherwise, with the extra trials per group a non-inferiority plan at the "
                    "observed rates (power 0.8) asks for. Several metrics at once (proportio gate --file) use "
                    "multiplicity-adjusted p-values of both one-sided tests (Holm by default).",
     "when_to_use": "CI checks of an error, crash or success rate before a rollout: choose the margin (the "
                    "largest deterioration you accept) before looking at the data.",
     "references": [_FM, _MN,
                    "Holm S (1979). A simple sequentially rejective multiple test procedure. Scandinavian Journal "
                    "of Statistics 6:65-70."],
     "cautions": ["Not significantly worse is not the same as no worse: only pass shows the treatment within the "
                  "margin; an inconclusive verdict needs more data, not a rollout by default.",
                  "With few successes or failures (an expected count below 5) the normal approximation of the "
                  "score test may be poor; a warning says so."]},
    # ---- many comparisons (/v1/batch, /v1/arms) and traffic-split checks (/v1/allocation-check)
    {"name": "bonferroni", "kind": "adjustment", "endpoint": "/v1/batch",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Multiplies each p-value by the number of comparisons m (capped at 1): controls the family-wise "
                    "error rate (the chance of any false positive) under any dependence. Also offered by /v1/arms.",
     "when_to_use": "A few comparisons where any false positive is costly; Holm is uniformly more powerful.",
     "references": [_DUNN]},
    {"name": "holm", "kind": "adjustment", "endpoint": "/v1/batch", "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Step-down Bonferroni: the i-th smallest p-value is multiplied by m - i + 1, keeping the order. "
                    "Controls the family-wise error rate under any dependence and rejects at least what Bonferroni "
                    "rejects. The default of /v1/arms.",
     "when_to_use": "Several arms or metrics of one experiment when any false positive matters.",
     "references": [_HOLM]},
    {"name": "hochberg", "kind": "adjustment", "endpoint": "/v1/batch",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Step-up version of Holm: more powerful, family-wise error control for independent or positively "
                    "dependent tests.",
     "when_to_use": "As Holm, when the comparisons are independent or positively related.",
     "references": ["Hochberg Y (1988). A sharper Bonferroni procedure for multiple tests of significance. "
                    "Biometrika 75:800-802."]},
    {"name": "benjamini-hochberg", "kind": "adjustment", "endpoint": "/v1/batch",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Step-up false discovery rate control: the i-th smallest p-value is multiplied by m / i, then "
                    "made monotone. Among the comparisons declared significant, the expected share of false ones is "
                    "at most alpha (independent or positively dependent tests).",
     "when_to_use": "Screening many metrics or experiments (a nightly batch) where some false positives are "
                    "acceptable if their share is controlled.",
     "references": [_BH]},
    {"name": "benjamini-yekutieli", "kind": "adjustment", "endpoint": "/v1/batch",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "Benjamini-Hochberg with m replaced by m times the harmonic sum 1 + 1/2 + ... + 1/m: false "
                    "discovery rate control under any dependence, at a cost in power.",
     "when_to_use": "As Benjamini-Hochberg when the comparisons may be negatively dependent (shared controls).",
     "references": ["Benjamini Y, Yekutieli D (2001). The control of the false discovery rate in multiple testing "
                    "under dependency. The Annals of Statistics 29:1165-1188."]},
    {"name": "bonferroni-simultaneous-intervals", "kind": "interval-adjustment", "endpoint": "/v1/arms",
     "effects": ["difference", "ratio", "odds-ratio"],
     "description": "With m pairwise intervals, each is computed at confidence 1 - alpha/m, so that all m cover their "
                    "true effects together with probability at least 1 - alpha whatever their dependence. The "
                    "default of /v1/arms (interval.simultaneous, interval.family_confidence).",
     "when_to_use": "Reading several pairwise intervals side by side; send simultaneous_intervals false for the "
                    "intervals of single tests.",
     "references": [_DUNN]},
    {"name": "chi-square-homogeneity", "kind": "omnibus", "endpoint": "/v1/arms", "effects": ["difference"],
     "description": "Pearson's chi-square test of the k x 2 table of successes and failures: do all the arms share "
                    "one success rate? k - 1 degrees of freedom; for two arms it is the square of the pooled z.",
     "when_to_use": "Before the pairwise comparisons of several arms, as an overall check.",
     "references": ["Pearson K (1900). Philosophical Magazine, Series 5, 50:157-175.",
                    "Fisher RA (1922). On the interpretation of chi-square from contingency tables, and the "
                    "calculation of P. JRSS 85:87-94.",
                    "Expected-count threshold of 5 for the warning: common practice, no published source."],
     "cautions": ["It says whether the arms differ, not which ones: read the adjusted pairwise comparisons."]},
    {"name": "sample-ratio-mismatch", "kind": "allocation-check", "endpoint": "/v1/allocation-check",
     "effects": [],
     "description": "Pearson's chi-square goodness-of-fit test of the units assigned to each arm against the planned "
                    "split (k - 1 degrees of freedom). A mismatch means assignment or logging is broken somewhere, "
                    "so the experiment's other results should not be trusted until the cause is found.",
     "when_to_use": "On every experiment, before reading any other result.",
     "references": ["Pearson K (1900). Philosophical Magazine, Series 5, 50:157-175.",
                    "Mismatch threshold p < 0.001: common practice in online experimentation, no published source.",
                    "Expected-count threshold of 5 for the warning: common practice, no published source."],
     "cautions": ["A split consistent with the plan does not prove the assignment is sound; a mismatch does prove "
                  "it is not."]},
]


def catalogue() -> dict:
    """Return the catalogue document."""
    return {"methods": METHODS, "cautions": list(CAUTIONS)}
