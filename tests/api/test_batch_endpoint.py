"""POST /v1/batch over HTTP: equality with the single call, adjustments, the column loader, errors and limits."""

from __future__ import annotations

import copy
import gc
import itertools
import json

import numpy as np
import orjson
import pytest
from statsmodels.stats.multitest import multipletests

from proportio.operations.batch import OPTION_NAMES, columns_from_items
from proportio.schemas import TestRequestSchema as RequestSchema
from proportio.schemas.batch import MAX_LISTED_ERRORS, RULES, invalid_positions, load_columns
from proportio.stats import twogroup

GOOD = {"control": {"successes": 412, "trials": 9630}, "treatment": {"successes": 471, "trials": 9598}}
ADJUSTED = {"adjusted_p_value", "adjusted_reject_null"}
# Our name -> statsmodels 0.15 multipletests method name.
STATSMODELS_NAME = {"bonferroni": "bonferroni", "holm": "holm", "hochberg": "simes-hochberg",
                    "benjamini-hochberg": "fdr_bh", "benjamini-yekutieli": "fdr_by"}


def item(control, treatment, **options) -> dict:
    return {"control": {"successes": control[0], "trials": control[1]},
            "treatment": {"successes": treatment[0], "trials": treatment[1]}, **options}


def post_batch(client, comparisons, **extra):
    return client.post("/v1/batch", json={"comparisons": comparisons, **extra})


def no_nan_anywhere(text: str) -> bool:
    return "NaN" not in text and "Infinity" not in text


# ------------------------------------------------------------------------------------------------
# Every method and option mix: a batch item is the single /v1/tests answer to the last bit

LARGE = [((412, 9630), (471, 9598)), ((0, 50), (0, 60)), ((50, 50), (60, 60)), ((0, 1), (1, 1)),
         ((3, 10**12), (0, 10**12)), ((5 * 10**11, 10**12), (4 * 10**11, 10**12)), ((7, 40), (15, 42)),
         ((1210, 9630), (1175, 9598)), ((0, 200), (9, 210))]
SMALL = [((1, 12), (6, 11)), ((0, 5), (3, 6)), ((4, 4), (1, 7)), ((2, 9), (2, 9)), ((0, 1), (1, 1))]


def option_mixes():
    """Every method x alternative x effect that is valid, each with defaults, a non-default null value and alpha,
    and the continuity correction where they are allowed."""
    nulls = {"difference": (-0.02, 0.05), "ratio": (0.8, 1.25), "odds-ratio": (1.5, 0.7)}
    for k, (method, alternative, effect) in enumerate(itertools.product(
            twogroup.METHODS, ("two-sided", "greater", "less"), twogroup.EFFECTS)):
        variants = [{"null_value": None, "continuity_correction": False, "alpha": 0.05},
                    {"null_value": 0.0 if effect == "difference" else 1.0, "continuity_correction": False,
                     "alpha": 0.1},
                    {"null_value": nulls[effect][k % 2], "continuity_correction": False, "alpha": 0.01},
                    {"null_value": None, "continuity_correction": True, "alpha": 0.1}]
        for variant in variants:
            try:
                twogroup.check_options(method, alternative, variant["null_value"], effect, variant["alpha"],
                                       variant["continuity_correction"])
            except ValueError:
                continue
            yield {"method": method, "alternative": alternative, "effect": effect, **variant}


def mixed_items() -> list[dict]:
    items = []
    for k, options in enumerate(option_mixes()):
        if options["method"] in twogroup.EXACT_METHODS:
            pool = SMALL
        else:
            pool = SMALL if options["method"] == "auto" and k % 2 else LARGE
        # Options as a client would send them: defaults sometimes left out.
        sent = {name: value for name, value in options.items()
                if not (k % 2 and value == RequestSchema._declared_fields[name].load_default)}
        control, treatment = pool[k % len(pool)]
        items.append(item(control, treatment, **sent))
    return items


def test_option_mixes_cover_every_method_alternative_and_effect():
    combos = {(o["method"], o["alternative"], o["effect"]) for o in option_mixes()}
    assert {m for m, _, _ in combos} == set(twogroup.METHODS)
    assert {e for _, _, e in combos} == set(twogroup.EFFECTS)
    assert any(o["continuity_correction"] for o in option_mixes())


def test_every_item_equals_the_single_call_exactly(client):
    items = mixed_items()
    r = post_batch(client, items, adjustment="holm")
    assert r.status_code == 200, r.get_json()
    body = json.loads(r.get_data())  # the raw JSON, parsed once: floats exactly as sent
    assert body["count"] == len(items) == len(body["results"])
    for i, (sent, answer) in enumerate(zip(items, body["results"], strict=True)):
        single = client.post("/v1/tests", json=sent)
        assert single.status_code == 200, (i, single.get_json())
        expected = json.loads(single.get_data())
        got = {k: v for k, v in answer.items() if k not in ADJUSTED}
        assert got == expected, f"item {i}: {sent}"  # == on parsed JSON floats: equal to the last bit
        assert set(answer) == set(expected) | ADJUSTED


def test_item_order_is_request_order_across_option_groups(client):
    items = [item((i, 1000), (i + 3, 1000), alpha=0.05 if i % 2 else 0.1, method="z-unpooled") for i in range(40)]
    body = post_batch(client, items).get_json()
    rates = [res["estimate"]["control_rate"] for res in body["results"]]
    assert rates == [i / 1000 for i in range(40)]
    assert [res["alpha"] for res in body["results"]] == [0.05 if i % 2 else 0.1 for i in range(40)]


@pytest.mark.parametrize("counts", [
    ((0, 10), (0, 10)), ((10, 10), (10, 10)), ((0, 1), (1, 1)), ((1, 1), (0, 1)), ((0, 10**12), (0, 10**12)),
    ((10**12, 10**12), (0, 10**12)), ((3, 10**12), (0, 10**12)), ((0, 10**12), (10**12, 10**12)),
])
def test_edge_counts_never_give_nan_or_a_server_error(client, counts):
    control, treatment = counts
    items = [item(control, treatment, method=m) for m in ("auto", "z-pooled", "z-unpooled", "score", "chi-square")]
    items += [item(control, treatment, method="score", effect=e) for e in ("ratio", "odds-ratio")]
    r = post_batch(client, items, adjustment="benjamini-hochberg")
    assert r.status_code == 200, r.get_json()
    assert no_nan_anywhere(r.get_data(as_text=True))
    for res in r.get_json()["results"]:
        p, adj = res["p_value"], res["adjusted_p_value"]
        assert (p is None) == (adj is None)
        assert adj is None or p <= adj <= 1.0


# ------------------------------------------------------------------------------------------------
# Adjustments


@pytest.fixture
def no_forced_gc(monkeypatch):
    """statsmodels 0.15 multipletests("holm") runs gc.collect() on every call; it changes no number."""
    monkeypatch.setattr(gc, "collect", lambda *args, **kwargs: 0)


@pytest.mark.parametrize("adjustment", sorted(STATSMODELS_NAME))
def test_adjusted_p_values_match_statsmodels_multipletests(client, adjustment, no_forced_gc):
    rng = np.random.default_rng(7)
    n = rng.integers(200, 5000, 60)
    x_c = rng.binomial(n, 0.05)
    x_t = rng.binomial(n, rng.choice([0.05, 0.06, 0.08], 60))
    items = [item((int(a), int(b)), (int(c), int(b)), method="score") for a, b, c in zip(x_c, n, x_t, strict=True)]
    body = post_batch(client, items, adjustment=adjustment).get_json()
    assert body["adjustment"] == adjustment
    p = np.array([res["p_value"] for res in body["results"]])
    got = np.array([res["adjusted_p_value"] for res in body["results"]])
    # statsmodels 0.15 function stats.multitest.multipletests
    reject, ref, _, _ = multipletests(p, alpha=0.05, method=STATSMODELS_NAME[adjustment])
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=0)
    assert [res["adjusted_reject_null"] for res in body["results"]] == (got <= 0.05).tolist()
    if adjustment in ("bonferroni", "holm", "hochberg", "benjamini-hochberg"):
        assert [res["adjusted_reject_null"] for res in body["results"]] == reject.tolist()


def test_no_adjustment_by_default_and_undefined_p_values_are_left_out(client, no_forced_gc):
    items = [item((0, 10), (10, 10), method="z-unpooled"),  # Wald undefined: p is null
             item((40, 1000), (61, 1000), method="z-unpooled"),
             item((40, 1000), (52, 1000), method="z-unpooled")]
    plain = post_batch(client, items).get_json()
    assert plain["adjustment"] == "none"
    assert [r["adjusted_p_value"] for r in plain["results"]] == [r["p_value"] for r in plain["results"]]
    body = post_batch(client, items, adjustment="bonferroni").get_json()
    first, second, third = body["results"]
    assert first["p_value"] is None and first["adjusted_p_value"] is None and first["adjusted_reject_null"] is None
    # Bonferroni over the two defined p-values only (Dunn 1961): m = 2.
    assert second["adjusted_p_value"] == min(1.0, 2 * second["p_value"])
    assert third["adjusted_p_value"] == min(1.0, 2 * third["p_value"])
    assert any("left out of the adjustment" in w for w in body["warnings"])


# ------------------------------------------------------------------------------------------------
# The column loader agrees with TestRequestSchema


def set_path(body: dict, path: str, value) -> dict:
    body = copy.deepcopy(body)
    *parents, last = path.split(".")
    target = body
    for key in parents:
        target = target[key]
    if value is DELETE:
        del target[last]
    else:
        target[last] = value
    return body


DELETE = object()
BAD_ITEMS = [
    ("boolean successes", "control.successes", True),
    ("boolean trials", "treatment.trials", False),
    ("float successes", "treatment.successes", 471.0),
    ("float trials", "control.trials", 9630.5),
    ("string successes", "treatment.successes", "471"),
    ("null successes", "control.successes", None),
    ("list successes", "control.successes", [1]),
    ("negative successes", "control.successes", -1),
    ("successes above trials", "treatment.successes", 9599),
    ("zero trials", "control.trials", 0),
    ("trials above 10^12", "control.trials", 10**12 + 1),
    ("trials beyond 64 bits", "control.trials", 2**70),
    ("successes beyond 64 bits", "treatment.successes", -(2**70)),
    ("missing successes", "treatment.successes", DELETE),
    ("missing trials", "control.trials", DELETE),
    ("missing control", "control", DELETE),
    ("null treatment", "treatment", None),
    ("group is a list", "control", [412, 9630]),
    ("group is a number", "treatment", 5),
    ("unknown group field", "control.rate", 0.04),
    ("label not a string", "control.label", 5),
    ("null label", "treatment.label", None),
    ("long label", "control.label", "x" * 201),
    ("unknown top-level field", "colour", "blue"),
    ("unknown method", "method", "t-test"),
    ("method null", "method", None),
    ("method a list", "method", ["score"]),
    ("method a number", "method", 1),
    ("unknown alternative", "alternative", "bigger"),
    ("unknown effect", "effect", "lift"),
    ("alpha zero", "alpha", 0),
    ("alpha above one half", "alpha", 0.6),
    ("alpha string", "alpha", "0.05"),
    ("alpha boolean", "alpha", True),
    ("alpha null", "alpha", None),
    ("null value string", "null_value", "0"),
    ("null value boolean", "null_value", False),
    ("continuity correction string", "continuity_correction", "yes"),
    ("continuity correction number", "continuity_correction", 1),
    ("continuity correction null", "continuity_correction", None),
]
BAD_COMBINATIONS = [
    ("z-pooled with non-zero null", {"method": "z-pooled", "null_value": 0.01}),
    ("fisher with non-zero null", {"method": "fisher-exact", "null_value": 0.01}),
    ("difference null at 1", {"method": "score", "null_value": 1.0}),
    ("difference null below -1", {"method": "score", "null_value": -1.5}),
    ("ratio null negative", {"method": "score", "effect": "ratio", "null_value": -1}),
    ("odds ratio null zero", {"method": "score", "effect": "odds-ratio", "null_value": 0}),
    ("one-sided chi-square", {"method": "chi-square", "alternative": "less"}),
    ("z-unpooled on a ratio", {"method": "z-unpooled", "effect": "ratio"}),
    ("continuity correction on score", {"method": "score", "continuity_correction": True}),
    ("continuity correction on boschloo", {"method": "boschloo-exact", "continuity_correction": True}),
]
GOOD_VARIANTS = [
    ("defaults", {}),
    ("labels", {"control": {"successes": 412, "trials": 9630, "label": "current"},
                "treatment": {"successes": 471, "trials": 9598, "label": "x" * 200}}),
    ("empty label", {"control": {"successes": 412, "trials": 9630, "label": ""}}),
    ("every option", {"method": "score", "alternative": "greater", "null_value": -0.005, "effect": "difference",
                      "alpha": 0.025, "continuity_correction": False}),
    ("integer null value", {"method": "score", "effect": "ratio", "null_value": 2}),
    ("null value null", {"null_value": None}),
    ("alpha one half", {"alpha": 0.5}),
    ("continuity correction", {"method": "z-pooled", "continuity_correction": True}),
    ("extreme counts", {"control": {"successes": 0, "trials": 1}, "treatment": {"successes": 10**12,
                                                                                "trials": 10**12}}),
]


def bad_cases():
    for name, path, value in BAD_ITEMS:
        yield name, set_path(GOOD, path, value)
    for name, options in BAD_COMBINATIONS:
        yield name, {**GOOD, **options}
    yield "item is a list", [GOOD["control"], GOOD["treatment"]]
    yield "item is null", None
    yield "item is a string", "412/9630"


BAD_CASES = list(bad_cases())


def test_the_loader_reads_its_rules_from_the_schema():
    assert RULES is not None, "TestRequestSchema changed in a way schemas/batch.py does not understand"
    assert RULES.defaults == {name: RequestSchema._declared_fields[name].load_default for name in OPTION_NAMES}


@pytest.mark.parametrize(("name", "bad"), BAD_CASES, ids=[c[0] for c in BAD_CASES])
def test_column_loader_and_schema_both_refuse_and_the_errors_are_the_single_calls(client, name, bad):
    with pytest.raises(Exception):  # noqa: B017 - marshmallow's ValidationError; the point is it refuses
        RequestSchema().load(bad)
    assert load_columns([bad]) is None
    assert load_columns([GOOD, bad, GOOD]) is None
    assert invalid_positions([GOOD] * 20 + [bad] + [GOOD] * 30, limit=5) == [20]
    batch = post_batch(client, [GOOD] * 17 + [bad] + [GOOD] * 5)
    assert batch.status_code == 422
    assert batch.mimetype == "application/problem+json"
    errors = batch.get_json()["errors"]
    if not isinstance(bad, dict):
        # /v1/tests refuses a body that is not an object before its schema runs; in a batch the schema says so.
        assert list(errors) == ["comparisons.17"]
        return
    single = client.post("/v1/tests", json=bad)
    assert single.status_code == 422
    # The same paths, under comparisons.17, and the same messages.
    assert errors == {f"comparisons.17.{k}": v for k, v in single.get_json()["errors"].items()}


@pytest.mark.parametrize(("name", "options"), GOOD_VARIANTS, ids=[c[0] for c in GOOD_VARIANTS])
def test_column_loader_loads_what_the_schema_loads(name, options):
    good = {**copy.deepcopy(GOOD), **options}
    loaded = RequestSchema().load(good)
    fast = load_columns([good, GOOD])
    assert fast is not None
    slow = columns_from_items([loaded, RequestSchema().load(GOOD)])
    for column in ("treatment_successes", "treatment_trials", "control_successes", "control_trials"):
        assert getattr(fast, column).tolist() == getattr(slow, column).tolist()
    assert [(k, idx.tolist()) for k, idx in fast.groups] == [(k, idx.tolist()) for k, idx in slow.groups]


def test_column_loader_agrees_with_the_schema_on_random_option_mixes():
    rng = np.random.default_rng(3)
    values = {"method": list(twogroup.METHODS) + ["t-test"], "alternative": ["two-sided", "greater", "less", "up"],
              "effect": list(twogroup.EFFECTS), "null_value": [None, 0, 0.0, -0.01, 1.2, 2, "x"],
              "alpha": [0.05, 0.01, 0.5, 0, 1], "continuity_correction": [False, True, 0]}
    for _ in range(400):
        options = {k: v[int(rng.integers(len(v)))] for k, v in values.items() if rng.random() < 0.6}
        candidate = {**GOOD, **options}
        try:
            loaded = RequestSchema().load(candidate)
        except Exception:  # noqa: BLE001 - any refusal
            loaded = None
        fast = load_columns([candidate])
        assert (fast is None) == (loaded is None), candidate
        if loaded is not None:
            assert fast.groups[0][0] == tuple(loaded[name] for name in OPTION_NAMES)


def test_many_bad_items_list_the_first_fifty(client):
    items = [set_path(GOOD, "control.successes", -1) if i % 3 == 0 else GOOD for i in range(600)]
    body = post_batch(client, items).get_json()
    errors = body["errors"]
    listed = [k for k in errors if k != "comparisons"]
    assert len(listed) == MAX_LISTED_ERRORS
    assert listed[0] == "comparisons.0.control.successes" and "comparisons.3.control.successes" in errors
    assert "first 50" in errors["comparisons"][0]


def test_a_huge_integer_option_is_a_422_not_a_server_error(client):
    big = 10**400  # beyond a float: the standard JSON parser reads it as an integer
    r = client.post("/v1/batch", data='{"comparisons": [{"control": {"successes": 4, "trials": 10}, '
                    '"treatment": {"successes": 5, "trials": 10}, "alpha": ' + str(big) + "}]}",
                    content_type="application/json")
    assert r.status_code == 422
    assert "comparisons.0.alpha" in r.get_json()["errors"]


@pytest.mark.parametrize(("body", "field"), [
    ({}, "comparisons"),
    ({"comparisons": None}, "comparisons"),
    ({"comparisons": GOOD}, "comparisons"),
    ({"comparisons": "all of them"}, "comparisons"),
    ({"comparisons": []}, "comparisons"),
    ({"comparisons": [GOOD], "adjustment": "sidak"}, "adjustment"),
    ({"comparisons": [GOOD], "adjustment": None}, "adjustment"),
    ({"comparisons": [GOOD], "alpha": 0.05}, "alpha"),
])
def test_envelope_errors_name_the_field(client, body, field):
    r = client.post("/v1/batch", json=body)
    assert r.status_code == 422
    assert field in r.get_json()["errors"], r.get_json()


# ------------------------------------------------------------------------------------------------
# Limits


def test_the_largest_batch_is_configurable(client, monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_BATCH", "5")
    assert post_batch(client, [GOOD] * 5).status_code == 200
    r = post_batch(client, [GOOD] * 6)
    assert r.status_code == 422
    message = r.get_json()["errors"]["comparisons"][0]
    assert "at most 5 comparisons" in message and "split" in message


def test_a_body_over_the_limit_is_413_suggesting_a_split():
    from proportio.api import create_app

    small = create_app({"TESTING": True, "MAX_CONTENT_LENGTH": 2000}).test_client()
    r = small.post("/v1/batch", json={"comparisons": [GOOD] * 40})
    assert r.status_code == 413
    assert r.mimetype == "application/problem+json"
    assert "split" in r.get_json()["detail"]


def test_exact_tests_are_bounded_per_batch(client, monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_BATCH_EXACT", "3")
    small = item((1, 12), (6, 11))  # auto picks Boschloo's test (expected counts below 5)
    assert post_batch(client, [small] * 3).status_code == 200
    r = post_batch(client, [small] * 2 + [GOOD] + [item((1, 12), (6, 11), method="fisher-exact")] * 2)
    assert r.status_code == 422
    message = r.get_json()["errors"]["comparisons"][0]
    assert "4 comparisons need an exact test" in message and "at most 3" in message and "split" in message


def test_exact_unconditional_tests_are_bounded_by_table_cells(client):
    big = item((20, 2000), (35, 2000), method="boschloo-exact")  # 2001^2 = 4.0 million cells each
    r = post_batch(client, [big] * 6)
    assert r.status_code == 422
    assert "table cells" in r.get_json()["errors"]["comparisons"][0]


def test_distinct_option_sets_are_bounded(client):
    items = [item((40, 1000), (50, 1000), method="z-unpooled", alpha=0.01 + i * 0.001) for i in range(201)]
    r = post_batch(client, items)
    assert r.status_code == 422
    assert "at most 200" in r.get_json()["errors"]["comparisons"][0]


def test_the_documented_largest_batch_is_accepted(client):
    # 100,000 comparisons (the default limit) in one request; z-unpooled keeps the computation short.
    rng = np.random.default_rng(11)
    n = rng.integers(100, 10**6, 100_000)
    x = rng.binomial(n, 0.3)
    items = [{"control": {"successes": a, "trials": b}, "treatment": {"successes": b - a, "trials": b},
              "method": "z-unpooled"} for a, b in zip(x.tolist(), n.tolist(), strict=True)]
    r = client.post("/v1/batch", data=orjson.dumps({"comparisons": items, "adjustment": "benjamini-hochberg"}),
                    content_type="application/json")
    assert r.status_code == 200
    body = orjson.loads(r.get_data())
    assert body["count"] == 100_000 and len(body["results"]) == 100_000
    assert [res["estimate"]["control_rate"] for res in body["results"][:3]] == (x[:3] / n[:3]).tolist()
    assert body["results"][-1]["estimate"]["treatment_rate"] == (n[-1] - x[-1]) / n[-1]


def test_the_json_writer_and_the_dict_answer_agree_across_slices_and_option_groups():
    from proportio.operations.batch import batch_json, run_batch
    from proportio.schemas import BatchRequestSchema

    items = [item((i % 90, 1000), (i % 70 + 5, 1000), method="z-unpooled", alpha=(0.05, 0.01, 0.1)[i % 3])
             for i in range(12_001)]  # three slices of 5,000 items, three option groups interleaved
    data = BatchRequestSchema().load({"comparisons": items, "adjustment": "holm"})
    written = orjson.loads(batch_json(data))
    assert written == orjson.loads(orjson.dumps(run_batch(data)))
    assert [r["estimate"]["control_rate"] for r in written["results"]] == [(i % 90) / 1000 for i in range(12_001)]
    assert [r["alpha"] for r in written["results"][:6]] == [0.05, 0.01, 0.1, 0.05, 0.01, 0.1]
