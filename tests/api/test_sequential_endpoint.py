"""POST /v1/sequential/plan, /v1/sequential/analyze and /v1/sequential/always-valid over HTTP.

The reference for every number is the tested core, proportio.stats.sequential (checked against published
tables and simulation in tests/reference/test_sequential.py) and proportio.stats.planning: the endpoints
must reproduce it bit for bit, so comparisons here are exact (==), not approximate.
"""

from __future__ import annotations

import dataclasses
import math

import pytest

from proportio.stats import planning, sequential

LOOKS3 = [
    {"control": {"successes": 169, "trials": 3974}, "treatment": {"successes": 192, "trials": 3969}},
    {"control": {"successes": 341, "trials": 7948}, "treatment": {"successes": 389, "trials": 7941}},
    {"control": {"successes": 510, "trials": 11917}, "treatment": {"successes": 588, "trials": 11911}},
]


def tuples(looks):
    return [(lk["treatment"]["successes"], lk["treatment"]["trials"], lk["control"]["successes"],
             lk["control"]["trials"]) for lk in looks]


def look_dicts(core_looks):
    return [dataclasses.asdict(lk) for lk in core_looks]


def assert_no_nan(text: str) -> None:
    assert "NaN" not in text and "Infinity" not in text


# ------------------------------------------------------------------------------------------------
# /v1/sequential/plan


@pytest.mark.parametrize(("extra", "fractions", "spending", "parameter"), [
    ({"looks": 5}, [k / 5 for k in range(1, 6)], "obrien-fleming-type", None),
    ({"looks": 1}, [1.0], "obrien-fleming-type", None),
    ({"looks": 4, "spending": "pocock-type", "alternative": "greater", "alpha": 0.025},
     [0.25, 0.5, 0.75, 1.0], "pocock-type", None),
    ({"information_fractions": [0.3, 0.45, 0.8, 1.0], "spending": "power-family", "rho": 2.5, "alternative": "less"},
     [0.3, 0.45, 0.8, 1.0], "power-family", 2.5),
    ({"information_fractions": [0.25, 0.5, 0.7], "spending": "hwang-shih-decani", "gamma": -4, "power": 0.9},
     [0.25, 0.5, 0.7], "hwang-shih-decani", -4.0),
])
def test_plan_matches_the_core_bit_for_bit(client, extra, fractions, spending, parameter):
    r = client.post("/v1/sequential/plan", json=extra)
    assert r.status_code == 200, r.get_json()
    body = r.get_json()
    core = sequential.plan_boundaries(fractions, extra.get("alpha", 0.05), extra.get("alternative", "two-sided"),
                                      spending, parameter, power=extra.get("power", 0.8))
    assert body["looks"] == look_dicts(core.looks)
    assert body["inflation_factor"] == core.inflation_factor
    assert body["warnings"] == list(core.warnings)
    assert (body["alpha"], body["alternative"], body["spending"], body["power"]) == (
        core.alpha, core.alternative, core.spending, core.power)
    assert body["max_sample_size"] is None and body["futility"] is None
    assert body["summary"].endswith(".") and body["summary"].count(". ") == 0


def test_plan_fields_and_equal_spacing(client):
    body = client.post("/v1/sequential/plan", json={"looks": 3}).get_json()
    assert set(body) == {"looks", "inflation_factor", "alpha", "alternative", "spending", "rho", "gamma", "power",
                         "futility", "max_sample_size", "warnings", "summary"}
    assert set(body["looks"][0]) == {"information_fraction", "z_boundary", "nominal_p_value", "cumulative_alpha",
                                     "alpha_spent", "futility_z"}
    assert [lk["information_fraction"] for lk in body["looks"]] == [1 / 3, 2 / 3, 1.0]
    assert body["spending"] == "obrien-fleming-type" and body["looks"][-1]["cumulative_alpha"] == 0.05


def test_plan_with_futility_matches_the_core(client):
    body = client.post("/v1/sequential/plan", json={
        "looks": 5, "alternative": "greater", "alpha": 0.025,
        "futility": {"spending": "hwang-shih-decani", "gamma": -2}}).get_json()
    core = sequential.plan_boundaries([k / 5 for k in range(1, 6)], 0.025, "greater", futility="hwang-shih-decani",
                                      futility_parameter=-2.0)
    assert body["looks"] == look_dicts(core.looks)
    assert body["inflation_factor"] == core.inflation_factor
    assert body["futility"] == {"spending": "hwang-shih-decani", "rho": None, "gamma": -2.0}
    assert all(lk["futility_z"] is not None for lk in body["looks"])


@pytest.mark.parametrize(("planning_fields", "alternative", "spending"), [
    ({"baseline_rate": 0.043, "expected_rate": 0.049}, "two-sided", "obrien-fleming-type"),
    ({"baseline_rate": 0.2, "absolute_effect": -0.03, "allocation_ratio": 2}, "less", "pocock-type"),
    ({"baseline_rate": 0.1, "relative_effect": 0.25, "power": 0.9}, "greater", "obrien-fleming-type"),
])
def test_max_sample_size_is_the_fixed_size_times_the_inflation_factor(client, planning_fields, alternative,
                                                                      spending):
    r = client.post("/v1/sequential/plan", json={"looks": 4, "alternative": alternative, "spending": spending,
                                                  **planning_fields})
    assert r.status_code == 200, r.get_json()
    body = r.get_json()
    power = planning_fields.get("power", 0.8)
    core = sequential.plan_boundaries([0.25, 0.5, 0.75, 1.0], 0.05, alternative, spending, power=power)
    effects = {k: v for k, v in planning_fields.items() if k not in ("baseline_rate", "power")}
    fixed = planning.plan(planning_fields["baseline_rate"], alpha=0.05, power=power, alternative=alternative,
                          **effects)
    size = body["max_sample_size"]
    assert size["fixed_n_control"] == fixed.n_control and size["fixed_n_treatment"] == fixed.n_treatment
    assert size["fixed_n_total"] == fixed.n_total
    assert size["n_control"] == math.ceil(fixed.n_control * core.inflation_factor)
    assert size["n_treatment"] == math.ceil(fixed.n_treatment * core.inflation_factor)
    assert size["n_total"] == size["n_control"] + size["n_treatment"]
    assert size["n_control"] > fixed.n_control  # four looks always cost something (R > 1)
    assert size["total_trials_at_looks"][-1] == size["n_total"]
    assert size["total_trials_at_looks"] == sorted(size["total_trials_at_looks"])
    assert size["expected_rate"] == fixed.expected_rate and size["allocation_ratio"] == fixed.allocation_ratio
    assert f"{size['n_control']:,}" in body["summary"]


def test_total_trials_at_looks_are_not_pushed_up_by_rounding_noise(client):
    # 3 / 5 * n_total is 0.6 * n in floating point; an exact multiple must not round up to the next trial.
    body = client.post("/v1/sequential/plan", json={"looks": 5, "spending": "pocock-type", "baseline_rate": 0.3,
                                                    "expected_rate": 0.4}).get_json()
    n = body["max_sample_size"]["n_total"]
    assert body["max_sample_size"]["total_trials_at_looks"] == [-(-k * n // 5) for k in range(1, 6)]


@pytest.mark.parametrize(("spending", "params"), [
    ("hwang-shih-decani", {"gamma": 1e300}), ("hwang-shih-decani", {"gamma": -1e300}),
    ("power-family", {"rho": 1e-300}), ("power-family", {"rho": 1e300}), ("hwang-shih-decani", {"gamma": 0}),
])
def test_extreme_spending_parameters_never_give_nan_or_a_server_error(client, spending, params):
    r = client.post("/v1/sequential/plan", json={"looks": 4, "spending": spending, **params})
    assert r.status_code == 200, r.get_json()
    assert_no_nan(r.get_data(as_text=True))


PLAN_BAD = [
    ("looks zero", {"looks": 0}, "looks"),
    ("looks 51", {"looks": 51}, "looks"),
    ("looks as float", {"looks": 5.0}, "looks"),
    ("looks as string", {"looks": "5"}, "looks"),
    ("neither looks nor fractions", {"spending": "pocock-type"}, "looks"),
    ("both looks and fractions", {"looks": 3, "information_fractions": [0.5, 1]}, "information_fractions"),
    ("fractions not increasing", {"information_fractions": [0.3, 0.6, 0.6, 1]}, "information_fractions.2"),
    ("fractions decreasing", {"information_fractions": [0.5, 0.4]}, "information_fractions.1"),
    ("fraction zero", {"information_fractions": [0, 1]}, "information_fractions.0"),
    ("fraction above one", {"information_fractions": [0.5, 1.2]}, "information_fractions.1"),
    ("fraction as string", {"information_fractions": ["0.5", 1]}, "information_fractions.0"),
    ("empty fractions", {"information_fractions": []}, "information_fractions"),
    ("51 fractions", {"information_fractions": [k / 51 for k in range(1, 52)]}, "information_fractions"),
    ("rho missing for power-family", {"looks": 3, "spending": "power-family"}, "rho"),
    ("rho not positive", {"looks": 3, "spending": "power-family", "rho": 0}, "rho"),
    ("rho with pocock", {"looks": 3, "spending": "pocock-type", "rho": 2}, "rho"),
    ("gamma missing for hwang-shih-decani", {"looks": 3, "spending": "hwang-shih-decani"}, "gamma"),
    ("gamma with power-family", {"looks": 3, "spending": "power-family", "rho": 2, "gamma": 1}, "gamma"),
    ("unknown spending", {"looks": 3, "spending": "linear"}, "spending"),
    ("unknown alternative", {"looks": 3, "alternative": "both"}, "alternative"),
    ("alpha above one half", {"looks": 3, "alpha": 0.6}, "alpha"),
    ("power one", {"looks": 3, "power": 1}, "power"),
    ("power below alpha", {"looks": 3, "power": 0.04}, "power"),
    ("unknown futility spending", {"looks": 3, "futility": {"spending": "nope"}}, "futility.spending"),
    ("futility gamma missing", {"looks": 3, "futility": {"spending": "hwang-shih-decani"}}, "futility.gamma"),
    ("futility as string", {"looks": 3, "futility": "pocock-type"}, "futility"),
    ("unknown futility field", {"looks": 3, "futility": {"spending": "pocock-type", "beta": 0.2}}, "futility.beta"),
    ("effect without baseline", {"looks": 3, "expected_rate": 0.05}, "baseline_rate"),
    ("allocation without baseline", {"looks": 3, "allocation_ratio": 2}, "baseline_rate"),
    ("baseline without effect", {"looks": 3, "baseline_rate": 0.05}, "expected_rate"),
    ("two effects", {"looks": 3, "baseline_rate": 0.05, "expected_rate": 0.06, "absolute_effect": 0.01},
     "absolute_effect"),
    ("baseline rate one", {"looks": 3, "baseline_rate": 1, "expected_rate": 0.5}, "baseline_rate"),
    ("allocation ratio zero", {"looks": 3, "baseline_rate": 0.1, "expected_rate": 0.2, "allocation_ratio": 0},
     "allocation_ratio"),
    ("no effect to detect", {"looks": 3, "baseline_rate": 0.1, "absolute_effect": 0}, "absolute_effect"),
    ("effect against the alternative", {"looks": 3, "alternative": "greater", "baseline_rate": 0.1,
                                        "expected_rate": 0.08}, "expected_rate"),
    ("relative effect beyond rate one", {"looks": 3, "baseline_rate": 0.6, "relative_effect": 1.0},
     "relative_effect"),
    ("unknown field", {"looks": 3, "beta": 0.2}, "beta"),
]


@pytest.mark.parametrize(("case", "body", "field"), PLAN_BAD, ids=[c[0] for c in PLAN_BAD])
def test_plan_bad_input_names_the_field(client, case, body, field):
    r = client.post("/v1/sequential/plan", json=body)
    assert r.status_code == 422, (case, r.get_json())
    problem = r.get_json()
    assert r.mimetype == "application/problem+json"
    assert field in problem["errors"], (case, problem["errors"])


# ------------------------------------------------------------------------------------------------
# /v1/sequential/analyze

NULLISH = [(52, 500, 50, 500), (100, 1000, 101, 1000), (200, 2000, 199, 2000)]
STRONG = [(52, 500, 40, 500), (118, 1000, 85, 1000), (190, 1500, 130, 1500), (230, 2000, 200, 2000)]


def as_looks(rows):
    return [{"control": {"successes": xc, "trials": nc}, "treatment": {"successes": xt, "trials": nt}}
            for xt, nt, xc, nc in rows]


@pytest.mark.parametrize(("looks", "max_trials", "options", "decision"), [
    (LOOKS3, 39714, {}, "continue"),
    (as_looks(STRONG), 4000, {}, "reject-null"),
    (as_looks(STRONG), 4000, {"alternative": "less"}, "no-difference-detected"),
    (as_looks(NULLISH), 4000, {"spending": "pocock-type"}, "no-difference-detected"),
    (as_looks(NULLISH), 8000, {"spending": "power-family", "rho": 3, "alternative": "greater"}, "continue"),
    (as_looks(STRONG[:2]), 3100, {"spending": "hwang-shih-decani", "gamma": 1, "alpha": 0.1}, "reject-null"),
])
def test_analyze_matches_the_core_bit_for_bit(client, looks, max_trials, options, decision):
    r = client.post("/v1/sequential/analyze", json={"looks": looks, "max_trials": max_trials, **options})
    assert r.status_code == 200, r.get_json()
    body = r.get_json()
    parameter = options.get("rho", options.get("gamma"))
    core = sequential.analyze(tuples(looks), max_trials, options.get("alpha", 0.05),
                              options.get("alternative", "two-sided"), options.get("spending", "obrien-fleming-type"),
                              None if parameter is None else float(parameter))
    assert body["looks"] == look_dicts(core.looks)
    assert body["decision"] == core.decision == decision
    assert body["stopped_at"] == core.stopped_at
    assert body["summary"] == core.summary
    assert body["warnings"] == list(core.warnings)
    assert body["max_trials"] == max_trials


def test_analyze_reports_the_first_crossing(client):
    body = client.post("/v1/sequential/analyze", json={"looks": as_looks(STRONG), "max_trials": 4000}).get_json()
    assert [lk["crossed"] for lk in body["looks"]] == [False, False, True, False]
    assert body["stopped_at"] == 3 and "look 3" in body["summary"]
    assert set(body["looks"][0]) == {"index", "information_fraction", "n_control", "n_treatment", "difference", "z",
                                     "z_boundary", "nominal_p_value", "boundary_p_value", "cumulative_alpha",
                                     "crossed"}


def test_analyze_final_look_may_overrun_max_trials_with_a_warning(client):
    body = client.post("/v1/sequential/analyze", json={
        "looks": as_looks([(10, 100, 10, 100), (60, 600, 30, 600)]), "max_trials": 1000}).get_json()
    assert body["looks"][-1]["information_fraction"] == 1.0
    assert any("capped at 1" in w for w in body["warnings"])


@pytest.mark.parametrize("rows", [
    [(0, 1, 0, 1)],
    [(0, 10, 0, 10), (0, 20, 0, 20)],
    [(10, 10, 10, 10), (20, 20, 20, 20)],
    [(1, 1, 0, 1), (2, 2, 0, 2)],
    [(0, 10**12, 0, 10**12)],
    [(10**12, 10**12, 0, 10**12)],
    [(3, 10**11, 0, 10**11), (5 * 10**11, 10**12, 4 * 10**11, 10**12)],
])
def test_analyze_edge_counts_never_give_nan_or_a_server_error(client, rows):
    r = client.post("/v1/sequential/analyze", json={"looks": as_looks(rows), "max_trials": 2 * 10**12})
    assert r.status_code == 200, r.get_json()
    assert_no_nan(r.get_data(as_text=True))
    body = r.get_json()
    assert all(math.isfinite(lk["z"]) for lk in body["looks"])


ANALYZE_BAD = [
    ("trials decrease", as_looks([(1, 10, 1, 10), (2, 20, 2, 20), (3, 30, 3, 19)]), 100, "looks.2.control.trials"),
    ("successes decrease", as_looks([(5, 10, 1, 10), (4, 12, 2, 12)]), 100, "looks.1.treatment.successes"),
    ("successes outgrow trials", as_looks([(1, 10, 1, 10), (8, 12, 2, 12)]), 100, "looks.1.treatment.successes"),
    ("look adds no trials", as_looks([(1, 10, 1, 10), (1, 10, 1, 10)]), 100, "looks.1"),
    ("max_trials below the counts reached", as_looks([(1, 60, 1, 60), (2, 70, 2, 70)]), 100, "max_trials"),
    ("successes above trials", as_looks([(1, 10, 11, 10)]), 100, "looks.0.control.successes"),
    ("zero trials", as_looks([(0, 0, 1, 10)]), 100, "looks.0.treatment.trials"),
    ("float successes", [{"control": {"successes": 1.0, "trials": 10}, "treatment": {"successes": 1, "trials": 10}}],
     100, "looks.0.control.successes"),
    ("missing treatment", [{"control": {"successes": 1, "trials": 10}}], 100, "looks.0.treatment"),
    ("look as list", [[1, 10, 1, 10]], 100, "looks.0"),
    ("no looks", [], 100, "looks"),
    ("51 looks", as_looks([(k, 10 * k, k, 10 * k) for k in range(1, 52)]), 2000, "looks"),
    ("max_trials one", as_looks([(1, 10, 1, 10)]), 1, "max_trials"),
    ("max_trials float", as_looks([(1, 10, 1, 10)]), 100.0, "max_trials"),
    ("max_trials beyond 2 x 10^12", as_looks([(1, 10, 1, 10)]), 2 * 10**12 + 1, "max_trials"),
]


@pytest.mark.parametrize(("case", "looks", "max_trials", "field"), ANALYZE_BAD, ids=[c[0] for c in ANALYZE_BAD])
def test_analyze_bad_input_names_the_field(client, case, looks, max_trials, field):
    r = client.post("/v1/sequential/analyze", json={"looks": looks, "max_trials": max_trials})
    assert r.status_code == 422, (case, r.get_json())
    assert field in r.get_json()["errors"], (case, r.get_json()["errors"])


@pytest.mark.parametrize(("options", "field"), [
    ({"spending": "power-family"}, "rho"),
    ({"spending": "hwang-shih-decani"}, "gamma"),
    ({"gamma": 1}, "gamma"),
    ({"alpha": 0}, "alpha"),
    ({"alternative": "bigger"}, "alternative"),
    ({"power": 0.9}, "power"),
])
def test_analyze_bad_options_name_the_field(client, options, field):
    r = client.post("/v1/sequential/analyze", json={"looks": LOOKS3, "max_trials": 39714, **options})
    assert r.status_code == 422 and field in r.get_json()["errors"]


def test_missing_max_trials(client):
    r = client.post("/v1/sequential/analyze", json={"looks": LOOKS3})
    assert r.status_code == 422 and "max_trials" in r.get_json()["errors"]


# ------------------------------------------------------------------------------------------------
# /v1/sequential/always-valid


@pytest.mark.parametrize("options", [{}, {"tuning": 19857, "alpha": 0.1}, {"null_value": -0.002, "tuning": 500.5},
                                     {"alpha": 0.01, "null_value": 0.01}])
def test_always_valid_matches_the_core_bit_for_bit(client, options):
    r = client.post("/v1/sequential/always-valid", json={"control": {"successes": 510, "trials": 11917},
                                                          "treatment": {"successes": 588, "trials": 11911}, **options})
    assert r.status_code == 200, r.get_json()
    core = sequential.always_valid(588, 11911, 510, 11917, alpha=options.get("alpha", 0.05),
                                   tuning=options.get("tuning"), null_value=options.get("null_value", 0.0))
    assert r.get_json() == {**dataclasses.asdict(core), "warnings": list(core.warnings)}


def test_always_valid_default_tuning_is_the_documented_one(client, app):
    body = client.post("/v1/sequential/always-valid", json={"control": {"successes": 40, "trials": 1000},
                                                             "treatment": {"successes": 55, "trials": 1000}}).get_json()
    assert body["tuning"] == 1000.0 == sequential.DEFAULT_TUNING_TRIALS
    spec = app.extensions["proportio"]["spec"]
    described = spec["components"]["schemas"]["AlwaysValidRequest"]["properties"]["tuning"]["description"]
    assert "default 1000" in described


@pytest.mark.parametrize("counts", [(0, 1, 0, 1), (0, 10, 10, 10), (10**12, 10**12, 0, 10**12),
                                    (3, 10**12, 5, 10**12), (1, 1, 1, 1)])
def test_always_valid_edge_counts_never_give_nan_or_a_server_error(client, counts):
    xt, nt, xc, nc = counts
    r = client.post("/v1/sequential/always-valid", json={"control": {"successes": xc, "trials": nc},
                                                          "treatment": {"successes": xt, "trials": nt}})
    assert r.status_code == 200, r.get_json()
    assert_no_nan(r.get_data(as_text=True))
    body = r.get_json()
    assert -1 <= body["lower"] <= body["estimate"] <= body["upper"] <= 1


@pytest.mark.parametrize(("change", "field"), [
    ({"tuning": 0}, "tuning"),
    ({"tuning": 1e13}, "tuning"),
    ({"tuning": "1000"}, "tuning"),
    ({"null_value": 2}, "null_value"),
    ({"alpha": 0.7}, "alpha"),
    ({"control": {"successes": 11, "trials": 10}}, "control.successes"),
    ({"treatment": {"successes": 1, "trials": 0}}, "treatment.trials"),
    ({"rho": 2}, "rho"),
])
def test_always_valid_bad_input_names_the_field(client, change, field):
    body = {"control": {"successes": 40, "trials": 1000}, "treatment": {"successes": 55, "trials": 1000}, **change}
    r = client.post("/v1/sequential/always-valid", json=body)
    assert r.status_code == 422 and field in r.get_json()["errors"], r.get_json()


# ------------------------------------------------------------------------------------------------
# Documentation


def test_openapi_and_catalogue_cover_the_sequential_endpoints(client, app):
    paths = app.extensions["proportio"]["spec"]["paths"]
    assert {"/v1/sequential/plan", "/v1/sequential/analyze", "/v1/sequential/always-valid"} <= set(paths)
    methods = {m["name"]: m for m in client.get("/v1/methods").get_json()["methods"]}
    for name in (*sequential.SPENDING_FUNCTIONS, "asymptotic-confidence-sequence"):
        entry = methods[name]
        assert entry["endpoint"].startswith("/v1/sequential/") and entry["references"]
        assert any("data monitoring committee" in c for c in entry["cautions"])
    refs = " ".join(r for name in sequential.SPENDING_FUNCTIONS for r in methods[name]["references"])
    assert "Biometrika 70:659-663" in refs and "Statistics in Medicine 9:1439-1445" in refs
    assert "Annals of Statistics 49:1055-1080" in " ".join(methods["asymptotic-confidence-sequence"]["references"])
