"""POST /v1/sample-size over HTTP: every design and solve_for against the planning core, sweeps, bad input."""

from __future__ import annotations

import dataclasses
import math

import pytest

from proportio.api import create_app
from proportio.stats import planning

URL = "/v1/sample-size"
BASE = {"baseline_rate": 0.043}


@pytest.fixture(scope="module")
def client():
    # One app for the module: the endpoint is stateless, and building the app (its OpenAPI document) per
    # test would dominate the run time.
    return create_app({"TESTING": True}).test_client()


def core(**kwargs) -> dict:
    """The planning core's answer as the endpoint should serve it (the reference is the core itself)."""
    result = planning.plan(kwargs.pop("baseline_rate"), **kwargs)
    out = dataclasses.asdict(result)
    out["warnings"] = list(result.warnings)
    return out


def post(client, body: dict):
    return client.post(URL, json=body)


def assert_finite(point: dict) -> None:
    for name, value in point.items():
        if isinstance(value, float):
            assert math.isfinite(value), name
    for name in ("n_control", "n_treatment", "n_total"):
        assert isinstance(point[name], int) and not isinstance(point[name], bool)
        assert 1 <= point[name] <= 2 * planning.MAX_TRIALS


# ------------------------------------------------------------------------------------------------
# Agreement with the core, to the last bit

EFFECTS = {"sample-size": {"expected_rate": 0.049}, "power": {"absolute_effect": 0.004},
           "effect": {}}
SIZES = {"sample-size": {}, "power": {"n_control": 9630, "n_treatment": 9598}, "effect": {"n_control": 9630}}
DESIGNS = [
    {"design": "superiority"},
    {"design": "superiority", "alternative": "greater", "method": "z-unpooled"},
    {"design": "superiority", "alternative": "two-sided", "continuity_correction": True, "allocation_ratio": 1.5},
    {"design": "non-inferiority", "margin": 0.005, "alternative": "greater"},
    {"design": "non-inferiority", "margin": 0.01, "alternative": "less", "method": "z-unpooled", "alpha": 0.025},
    {"design": "non-inferiority", "margin": 0.005},  # two-sided is read as greater, with a warning
    {"design": "equivalence", "margin": 0.01, "power": 0.9},
    {"design": "equivalence", "margin": 0.012, "method": "z-unpooled", "continuity_correction": True},
]


@pytest.mark.parametrize("solve_for", ["sample-size", "power", "effect"])
@pytest.mark.parametrize("design", DESIGNS, ids=lambda d: "-".join(str(v) for v in d.values()))
def test_every_design_and_solve_for_equals_the_core(client, design, solve_for):
    effect = EFFECTS[solve_for]
    if solve_for == "power" and design.get("alternative") == "less":
        effect = {"absolute_effect": -0.004}
    sizes = dict(SIZES[solve_for])
    if "allocation_ratio" in design:
        sizes.pop("n_treatment", None)  # n_treatment then follows from the ratio
    body = {**BASE, **design, **effect, **sizes, "solve_for": solve_for}
    r = post(client, body)
    assert r.status_code == 200, r.get_json()
    got = r.get_json()
    assert got == core(**body)  # floats compared exactly: the service adds no rounding
    assert_finite(got)
    assert "curve" not in got and "sweep" not in got


def test_defaults_are_the_documented_ones(client):
    got = post(client, {**BASE, "expected_rate": 0.049}).get_json()
    assert (got["alpha"], got["target_power"], got["alternative"], got["allocation_ratio"], got["design"],
            got["method"], got["continuity_correction"], got["solve_for"], got["margin"]) == (
        0.05, 0.8, "two-sided", 1.0, "superiority", "z-pooled", False, "sample-size", None)
    assert got["n_total"] == got["n_control"] + got["n_treatment"]
    assert got["power"] >= 0.8 and got["formula"] and got["summary"].endswith(".")


@pytest.mark.parametrize("effect", [{"expected_rate": 0.049}, {"absolute_effect": 0.006},
                                    {"relative_effect": 0.006 / 0.043}])
def test_each_way_of_giving_the_effect(client, effect):
    got = post(client, {**BASE, **effect}).get_json()
    assert got == core(**BASE, **effect)
    assert got["expected_rate"] == pytest.approx(0.049, rel=1e-12)  # the same rate, three spellings


def test_null_effect_fields_count_as_not_given(client):
    body = {**BASE, "expected_rate": 0.049, "absolute_effect": None, "relative_effect": None, "margin": None,
            "n_control": None, "sweep": None}
    assert post(client, body).get_json() == core(**BASE, expected_rate=0.049)


# ------------------------------------------------------------------------------------------------
# Sweeps

SWEEPS = [
    ({"solve_for": "power", "expected_rate": 0.049}, "n_control", [1, 500, 9630, 40000, 10**12]),
    ({}, "expected_rate", [0.045, 0.049, 0.06, 0.03]),
    ({}, "absolute_effect", [0.002, -0.004, 0.01]),
    ({"design": "non-inferiority", "margin": 0.005}, "relative_effect", [-0.05, 0.0, 0.1]),
    ({"expected_rate": 0.049}, "power", [0.5, 0.8, 0.9, 0.99]),
    ({"solve_for": "effect", "n_control": 9630}, "alpha", [0.01, 0.05, 0.1, 0.5]),
    ({"expected_rate": 0.049}, "allocation_ratio", [0.5, 1.0, 2.0, 3.7]),
    ({"solve_for": "effect", "design": "equivalence", "margin": 0.01}, "n_control", [9630, 20000, 50000]),
]


@pytest.mark.parametrize(("extra", "parameter", "values"), SWEEPS, ids=[s[1] for s in SWEEPS])
def test_sweep_points_equal_single_calls(client, extra, parameter, values):
    body = {**BASE, **extra, "sweep": {"parameter": parameter, "values": values}}
    r = post(client, body)
    assert r.status_code == 200, r.get_json()
    got = r.get_json()
    assert got["sweep"] == {"parameter": parameter, "values": values}
    assert len(got["curve"]) == len(values)
    for value, point in zip(values, got["curve"], strict=True):
        single = post(client, {**BASE, **extra, parameter: value}).get_json()
        assert point == single
        assert_finite(point)
    # and each point is the core's sweep, exactly
    kwargs = {**BASE, **extra}
    expected = planning.sweep(parameter, values, **kwargs)
    assert got["curve"] == [{**dataclasses.asdict(p), "warnings": list(p.warnings)} for p in expected]
    assert set(got) == {"sweep", "curve", "summary", "warnings"}
    assert got["summary"].startswith(f"{len(values)} plans with {parameter} from ")


def test_sweep_summary_and_shared_warnings(client):
    # Non-inferiority sent as two-sided: every point carries the same warning, so the curve does too.
    body = {**BASE, "expected_rate": 0.043, "design": "non-inferiority", "margin": 0.005,
            "sweep": {"parameter": "power", "values": [0.8, 0.9]}}
    got = post(client, body).get_json()
    assert len(got["warnings"]) == 1 and "read as" in got["warnings"][0]
    assert all(got["warnings"][0] in p["warnings"] for p in got["curve"])
    assert "the total sample size goes from" in got["summary"]
    # A warning only some points carry stays with those points.
    body = {**BASE, "expected_rate": 0.049, "solve_for": "power", "sweep": {"parameter": "n_control",
                                                                           "values": [1, 100000]}}
    got = post(client, body).get_json()
    assert got["warnings"] == [] and got["curve"][0]["warnings"] and not got["curve"][1]["warnings"]


def test_sweep_limit_is_200_values(client):
    values = [0.044 + i * 1e-4 for i in range(200)]
    ok = post(client, {**BASE, "sweep": {"parameter": "expected_rate", "values": values}})
    assert ok.status_code == 200 and len(ok.get_json()["curve"]) == 200
    r = post(client, {**BASE, "sweep": {"parameter": "expected_rate", "values": [*values, 0.07]}})
    assert r.status_code == 422 and list(r.get_json()["errors"]) == ["sweep.values"]


# ------------------------------------------------------------------------------------------------
# Bad input: a 422 problem naming each offending field

SWEEP = {"parameter": "expected_rate", "values": [0.045, 0.05, 0.055, 0.06]}
BAD = [
    # rates outside (0, 1)
    ("baseline at 0", {"baseline_rate": 0, "expected_rate": 0.05}, ["baseline_rate"]),
    ("baseline at 1", {"baseline_rate": 1, "expected_rate": 0.05}, ["baseline_rate"]),
    ("baseline negative", {"baseline_rate": -0.1, "expected_rate": 0.05}, ["baseline_rate"]),
    ("baseline as string", {"baseline_rate": "0.043", "expected_rate": 0.05}, ["baseline_rate"]),
    ("baseline boolean", {"baseline_rate": True, "expected_rate": 0.05}, ["baseline_rate"]),
    ("baseline missing", {"expected_rate": 0.05}, ["baseline_rate"]),
    ("expected at 1", {**BASE, "expected_rate": 1.0}, ["expected_rate"]),
    ("expected at 0", {**BASE, "expected_rate": 0}, ["expected_rate"]),
    ("absolute effect leaves (0, 1)", {**BASE, "absolute_effect": 0.97}, ["absolute_effect"]),
    ("absolute effect below -1", {**BASE, "absolute_effect": -1.5}, ["absolute_effect"]),
    ("relative effect of -100%", {**BASE, "relative_effect": -1}, ["relative_effect"]),
    ("relative effect leaves (0, 1)", {**BASE, "relative_effect": 30}, ["relative_effect"]),
    # expected rate equal to the baseline
    ("expected equals baseline", {**BASE, "expected_rate": 0.043}, ["expected_rate"]),
    ("absolute effect zero", {**BASE, "absolute_effect": 0}, ["absolute_effect"]),
    ("relative effect zero", {**BASE, "relative_effect": 0.0}, ["relative_effect"]),
    # more than one effect: each named
    ("two effects", {**BASE, "expected_rate": 0.05, "absolute_effect": 0.007}, ["expected_rate", "absolute_effect"]),
    ("three effects", {**BASE, "expected_rate": 0.05, "absolute_effect": 0.007, "relative_effect": 0.1},
     ["expected_rate", "absolute_effect", "relative_effect"]),
    ("no effect", {**BASE}, ["expected_rate"]),
    ("effect given when solving for it", {**BASE, "solve_for": "effect", "n_control": 100, "relative_effect": 0.1},
     ["relative_effect"]),
    # power and alpha
    ("power zero", {**BASE, "expected_rate": 0.05, "power": 0}, ["power"]),
    ("power one", {**BASE, "expected_rate": 0.05, "power": 1}, ["power"]),
    ("power above one", {**BASE, "expected_rate": 0.05, "power": 1.2}, ["power"]),
    ("power as string", {**BASE, "expected_rate": 0.05, "power": "80%"}, ["power"]),
    ("power not above alpha", {**BASE, "expected_rate": 0.05, "power": 0.05, "alpha": 0.05}, ["power"]),
    ("alpha zero", {**BASE, "expected_rate": 0.05, "alpha": 0}, ["alpha"]),
    ("alpha above one half", {**BASE, "expected_rate": 0.05, "alpha": 0.6}, ["alpha"]),
    # margins
    ("non-inferiority without margin", {**BASE, "expected_rate": 0.043, "design": "non-inferiority"}, ["margin"]),
    ("equivalence without margin", {**BASE, "expected_rate": 0.043, "design": "equivalence"}, ["margin"]),
    ("margin with superiority", {**BASE, "expected_rate": 0.05, "margin": 0.01}, ["margin"]),
    ("margin zero", {**BASE, "expected_rate": 0.043, "design": "equivalence", "margin": 0}, ["margin"]),
    ("margin one", {**BASE, "expected_rate": 0.043, "design": "equivalence", "margin": 1}, ["margin"]),
    ("equivalence margin below the expected difference",
     {**BASE, "expected_rate": 0.049, "design": "equivalence", "margin": 0.005}, ["margin"]),
    ("equivalence margin equal to the expected difference",
     {"baseline_rate": 0.25, "expected_rate": 0.5, "design": "equivalence", "margin": 0.25}, ["margin"]),
    ("non-inferiority expected beyond the margin",
     {**BASE, "expected_rate": 0.035, "design": "non-inferiority", "margin": 0.005, "alternative": "greater"},
     ["margin"]),
    ("one-sided equivalence", {**BASE, "expected_rate": 0.043, "design": "equivalence", "margin": 0.01,
                               "alternative": "greater"}, ["alternative"]),
    ("expected below baseline but alternative greater", {**BASE, "expected_rate": 0.04, "alternative": "greater"},
     ["alternative"]),
    # sizes
    ("sizes missing for power", {**BASE, "expected_rate": 0.05, "solve_for": "power"}, ["n_control"]),
    ("sizes missing for effect", {**BASE, "solve_for": "effect", "n_treatment": 500}, ["n_control"]),
    ("size given when solving for it", {**BASE, "expected_rate": 0.05, "n_control": 100}, ["n_control"]),
    ("treatment size given when solving for it", {**BASE, "expected_rate": 0.05, "n_treatment": 100},
     ["n_treatment"]),
    ("size as decimal", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 1000.0}, ["n_control"]),
    ("size as string", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": "1000"}, ["n_control"]),
    ("size boolean", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": True}, ["n_control"]),
    ("size zero", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 0}, ["n_control"]),
    ("size above 10^12", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 10**12 + 1},
     ["n_control"]),
    ("huge size", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 10**30}, ["n_control"]),
    ("treatment size decimal", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 10,
                                "n_treatment": 2.5}, ["n_treatment"]),
    ("ratio disagrees with sizes", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 1000,
                                    "n_treatment": 2000, "allocation_ratio": 3}, ["allocation_ratio"]),
    ("ratio pushes treatment beyond 10^12", {**BASE, "expected_rate": 0.05, "solve_for": "power",
                                             "n_control": 10**12, "allocation_ratio": 2}, ["allocation_ratio"]),
    ("ratio zero", {**BASE, "expected_rate": 0.05, "allocation_ratio": 0}, ["allocation_ratio"]),
    # results beyond 10^12 trials, and effects no size can detect
    ("plan beyond 10^12 trials", {**BASE, "expected_rate": 0.0430001}, ["expected_rate"]),
    ("relative plan beyond 10^12 trials", {**BASE, "relative_effect": 1e-7}, ["relative_effect"]),
    ("equivalence beyond 10^12 trials", {**BASE, "expected_rate": 0.0439999999, "design": "equivalence",
                                         "margin": 0.001}, ["expected_rate"]),
    ("no detectable effect at one trial", {**BASE, "solve_for": "effect", "n_control": 1}, ["n_control"]),
    ("equivalence unreachable at these sizes", {**BASE, "solve_for": "effect", "n_control": 10,
                                                "design": "equivalence", "margin": 0.01}, ["n_control"]),
    # options
    ("unknown design", {**BASE, "expected_rate": 0.05, "design": "superior"}, ["design"]),
    ("unknown method", {**BASE, "expected_rate": 0.05, "method": "score"}, ["method"]),
    ("unknown solve_for", {**BASE, "expected_rate": 0.05, "solve_for": "n"}, ["solve_for"]),
    ("unknown alternative", {**BASE, "expected_rate": 0.05, "alternative": "bigger"}, ["alternative"]),
    ("continuity correction as string", {**BASE, "expected_rate": 0.05, "continuity_correction": "yes"},
     ["continuity_correction"]),
    ("unknown field", {**BASE, "expected_rate": 0.05, "lift": 0.1}, ["lift"]),
    # sweeps
    ("sweep bad value at 3", {**BASE, "sweep": {**SWEEP, "values": [0.045, 0.05, 0.055, 1.5]}}, ["sweep.values.3"]),
    ("sweep string value", {**BASE, "sweep": {**SWEEP, "values": [0.045, "0.05"]}}, ["sweep.values.1"]),
    ("sweep null value", {**BASE, "sweep": {**SWEEP, "values": [None, 0.05]}}, ["sweep.values.0"]),
    ("sweep several bad values", {**BASE, "sweep": {**SWEEP, "values": [0.05, True, 0.05, -2]}},
     ["sweep.values.1", "sweep.values.3"]),
    ("sweep size as decimal", {**BASE, "expected_rate": 0.05, "solve_for": "power",
                               "sweep": {"parameter": "n_control", "values": [100, 200, 300, 400.0]}},
     ["sweep.values.3"]),
    ("sweep value the core refuses", {**BASE, "design": "equivalence", "margin": 0.01,
                                      "sweep": {**SWEEP, "values": [0.045, 0.05, 0.052, 0.06]}}, ["sweep.values.3"]),
    ("sweep point beyond 10^12 trials", {**BASE, "sweep": {**SWEEP, "values": [0.05, 0.0430001]}},
     ["sweep.values.1"]),
    ("sweep power not above alpha", {**BASE, "expected_rate": 0.05, "alpha": 0.1,
                                     "sweep": {"parameter": "power", "values": [0.8, 0.1]}}, ["sweep.values.1"]),
    ("sweep alpha above one half", {**BASE, "expected_rate": 0.05,
                                    "sweep": {"parameter": "alpha", "values": [0.05, 0.7]}}, ["sweep.values.1"]),
    ("sweep unknown parameter", {**BASE, "expected_rate": 0.05, "sweep": {"parameter": "margin", "values": [0.1]}},
     ["sweep.parameter"]),
    ("sweep no values", {**BASE, "sweep": {**SWEEP, "values": []}}, ["sweep.values"]),
    ("sweep values missing", {**BASE, "sweep": {"parameter": "expected_rate"}}, ["sweep.values"]),
    ("sweep values not a list", {**BASE, "sweep": {**SWEEP, "values": 0.05}}, ["sweep.values"]),
    ("sweep unknown key", {**BASE, "sweep": {**SWEEP, "step": 0.01}}, ["sweep.step"]),
    ("sweep not an object", {**BASE, "sweep": [0.05]}, ["sweep"]),
    ("swept field also given", {**BASE, "expected_rate": 0.05, "sweep": SWEEP}, ["expected_rate"]),
    ("swept power also given", {**BASE, "expected_rate": 0.05, "power": 0.9,
                                "sweep": {"parameter": "power", "values": [0.8]}}, ["power"]),
    ("other effect beside a swept effect", {**BASE, "relative_effect": 0.1, "sweep": SWEEP}, ["relative_effect"]),
    ("sweeping a size that is solved for", {**BASE, "expected_rate": 0.05,
                                            "sweep": {"parameter": "n_control", "values": [100]}},
     ["sweep.parameter"]),
    ("sweeping an effect that is solved for", {**BASE, "solve_for": "effect", "n_control": 100, "sweep": SWEEP},
     ["sweep.parameter"]),
    ("sweeping power that is solved for", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 100,
                                           "sweep": {"parameter": "power", "values": [0.8]}}, ["sweep.parameter"]),
    ("sweeping the ratio with both sizes", {**BASE, "expected_rate": 0.05, "solve_for": "power", "n_control": 100,
                                            "n_treatment": 100, "sweep": {"parameter": "allocation_ratio",
                                                                          "values": [1, 2]}}, ["n_treatment"]),
]


@pytest.mark.parametrize(("body", "fields"), [(b, f) for _, b, f in BAD], ids=[name for name, _, _ in BAD])
def test_bad_input_is_a_422_naming_the_field(client, body, fields):
    r = post(client, body)
    assert r.status_code == 422, r.get_json()
    assert r.mimetype == "application/problem+json"
    problem = r.get_json()
    assert sorted(problem["errors"]) == sorted(fields), problem
    for name in fields:
        assert all(len(message) > 10 for message in problem["errors"][name]), problem
    assert "Traceback" not in r.get_data(as_text=True)


def test_problem_messages_say_what_to_change(client):
    def errors(body):
        return post(client, body).get_json()["errors"]

    assert "give only one of" in errors({**BASE, "expected_rate": 0.05, "absolute_effect": 0.007})["absolute_effect"][0]
    assert "wider margin" in errors({**BASE, "expected_rate": 0.049, "design": "equivalence",
                                     "margin": 0.005})["margin"][0]
    assert "required when design is" in errors({**BASE, "expected_rate": 0.043, "design": "equivalence"})["margin"][0]
    assert "1,000,000,000,000" in errors({**BASE, "expected_rate": 0.0430001})["expected_rate"][0]
    assert "larger effect" in errors({**BASE, "expected_rate": 0.0430001})["expected_rate"][0]
    assert 'use design "non-inferiority"' in errors({**BASE, "expected_rate": 0.043})["expected_rate"][0]
    assert 'required when solve_for is "power"' in errors({**BASE, "expected_rate": 0.05,
                                                           "solve_for": "power"})["n_control"][0]
    message = errors({**BASE, "design": "equivalence", "margin": 0.01,
                      "sweep": {**SWEEP, "values": [0.045, 0.05, 0.052, 0.06]}})["sweep.values.3"][0]
    assert message.startswith("sweep value 3 (expected_rate = 0.06): the equivalence margin")


# ------------------------------------------------------------------------------------------------
# Edge sizes and rates: answers, never NaN or a 500

EDGES = [
    {"expected_rate": 0.049, "solve_for": "power", "n_control": 1, "n_treatment": 1},
    {"expected_rate": 0.049, "solve_for": "power", "n_control": 10**12, "n_treatment": 10**12},
    {"expected_rate": 0.049, "solve_for": "power", "n_control": 1, "n_treatment": 10**12},
    {"solve_for": "effect", "n_control": 10**12},
    {"solve_for": "effect", "n_control": 10**12, "n_treatment": 1},
    {"expected_rate": 0.999999},
    {"expected_rate": 1e-9, "alternative": "less"},
    {"design": "non-inferiority", "margin": 0.999, "solve_for": "effect",
     "n_control": 10**12},
    {"absolute_effect": 1e-9, "design": "equivalence", "margin": 0.5, "solve_for": "power", "n_control": 1},
]


@pytest.mark.parametrize("extra", EDGES)
def test_edge_sizes_and_rates_never_nan(client, extra):
    body = {**BASE, **extra}
    r = post(client, body)
    assert r.status_code == 200, r.get_json()
    got = r.get_json()
    assert got == core(**body)
    assert_finite(got)
    assert 0.0 <= got["power"] <= 1.0


def test_tiny_baseline_answers(client):
    body = {"baseline_rate": 1e-12, "solve_for": "effect", "n_control": 1000}
    got = post(client, body).get_json()
    assert got == core(**body) and got["warnings"]
    assert_finite(got)


# ------------------------------------------------------------------------------------------------
# Catalogue and OpenAPI

PLANNING_METHODS = {"superiority-pooled", "superiority-unpooled", "fleiss-continuity-correction",
                    "non-inferiority-farrington-manning", "non-inferiority-unpooled", "equivalence-tost"}


def test_catalogue_lists_the_planning_formulas_with_the_module_references(client):
    methods = {m["name"]: m for m in client.get("/v1/methods").get_json()["methods"] if m["kind"] == "planning"}
    assert set(methods) == PLANNING_METHODS
    assert all(m["endpoint"] == URL and m["references"] for m in methods.values())
    refs = " ".join(r for m in methods.values() for r in m["references"])
    # The planning module's References section.
    for cited in ("Fleiss JL, Levin B, Paik MC (2003)", "Fleiss JL, Tytun A, Ury HK (1980)",
                  "Chow SC, Shao J, Wang H (2008)", "Farrington CP, Manning G (1990)", "Schuirmann DJ (1987)"):
        assert cited in refs and cited in planning.__doc__
    assert "Schuirmann" in " ".join(methods["equivalence-tost"]["references"])
    assert "Tytun" in " ".join(methods["fleiss-continuity-correction"]["references"])


def test_openapi_documents_the_request_and_the_curve(client):
    spec = client.get("/openapi.json").get_json()
    op = spec["paths"][URL]["post"]
    assert "422" in op["responses"] and op["requestBody"]["content"]["application/json"]["example"]
    schemas = spec["components"]["schemas"]
    request = schemas["SampleSizeRequest"]["properties"]
    assert {"baseline_rate", "expected_rate", "absolute_effect", "relative_effect", "alpha", "power",
            "alternative", "allocation_ratio", "design", "margin", "method", "continuity_correction", "solve_for",
            "n_control", "n_treatment", "sweep"} == set(request)
    assert request["n_control"]["type"] == ["integer", "null"]
    response = schemas["SampleSizeResponse"]["properties"]
    assert {"n_control", "n_treatment", "n_total", "power", "absolute_effect", "relative_effect", "formula",
            "summary", "warnings", "curve", "sweep"} <= set(response)
    example = op["requestBody"]["content"]["application/json"]["example"]
    assert post(client, example).status_code == 200
