"""POST /v1/batch in its columnar form: the same numbers as the items form, field selection, errors."""

from __future__ import annotations

import numpy as np
import pytest
from statsmodels.stats.multitest import multipletests

from proportio.operations.batch import COLUMN_NAMES

# Where each column lives in an item of the items form.
ITEM_PATH = {
    "interval_method": ("interval", "method"), "interval_lower": ("interval", "lower"),
    "interval_upper": ("interval", "upper"), "control_rate": ("estimate", "control_rate"),
    "treatment_rate": ("estimate", "treatment_rate"), "difference": ("estimate", "difference"),
    "relative_lift": ("estimate", "relative_lift"), "odds_ratio": ("estimate", "odds_ratio"),
    "min_expected_count": ("assumptions", "min_expected_count"),
    "normal_approximation_ok": ("assumptions", "normal_approximation_ok"),
}
OPTION_SETS = [
    {},
    {"method": "score", "null_value": -0.01, "alternative": "greater"},
    {"method": "z-unpooled", "continuity_correction": True, "alpha": 0.01},
    {"method": "fisher-exact", "effect": "odds-ratio", "alternative": "less"},
    {"method": "chi-square", "continuity_correction": True},
    {"method": "score", "effect": "ratio", "null_value": 0.9},
]


def item_value(item: dict, name: str):
    path = ITEM_PATH.get(name)
    return item[path[0]][path[1]] if path else item[name]


def tables(seed: int, size: int) -> np.ndarray:
    """Counts with the edges in: 0 successes, all successes, one trial, large and small groups."""
    rng = np.random.default_rng(seed)
    n_c = rng.choice([1, 2, 7, 40, 300, 5_000, 10**6], size)
    n_t = rng.choice([1, 3, 9, 55, 800, 6_000, 10**6], size)
    x_c = np.minimum(rng.binomial(n_c, rng.uniform(0, 1, size)), n_c)
    x_t = np.minimum(rng.binomial(n_t, rng.uniform(0, 1, size)), n_t)
    x_c[:3], x_t[:3] = (0, n_c[1], 0), (0, n_t[1], n_t[2])
    return np.stack([x_c, n_c, x_t, n_t], axis=1)


def columns_body(counts: np.ndarray, **options) -> dict:
    return {"control": {"successes": counts[:, 0].tolist(), "trials": counts[:, 1].tolist()},
            "treatment": {"successes": counts[:, 2].tolist(), "trials": counts[:, 3].tolist()}, **options}


def items_body(counts: np.ndarray, **options) -> list[dict]:
    return [{"control": {"successes": a, "trials": b}, "treatment": {"successes": c, "trials": d}, **options}
            for a, b, c, d in counts.tolist()]


@pytest.mark.parametrize("options", OPTION_SETS)
def test_every_column_equals_the_items_form_to_the_last_bit(client, options):
    counts = tables(len(options), 60)
    if options.get("method") == "fisher-exact":
        counts = counts[counts[:, 1] + counts[:, 3] < 20_000]
    items = client.post("/v1/batch", json={"comparisons": items_body(counts, **options), "adjustment": "holm"})
    cols = client.post("/v1/batch", json={"columns": columns_body(counts, **options), "adjustment": "holm"})
    assert items.status_code == 200 and cols.status_code == 200, (items.get_json(), cols.get_json())
    results, answer = items.get_json()["results"], cols.get_json()
    assert list(answer["columns"]) == list(COLUMN_NAMES)
    assert answer["count"] == len(results) == len(counts)
    for name, column in answer["columns"].items():
        assert column == [item_value(r, name) for r in results], name
    first = results[0]
    assert answer["options"] == {
        "method": options.get("method", "auto"), "alternative": first["alternative"],
        "null_value": first["null_value"], "effect": first["effect"], "alpha": first["alpha"],
        "continuity_correction": options.get("continuity_correction", False),
        "interval_confidence": first["interval"]["confidence"]}
    assert "NaN" not in cols.get_data(as_text=True) and "Infinity" not in cols.get_data(as_text=True)


def test_fields_pick_columns_and_leave_the_numbers_unchanged(client):
    counts = tables(7, 40)
    full = client.post("/v1/batch", json={"columns": columns_body(counts)}).get_json()
    picked = ["p_value", "statistic", "adjusted_p_value", "p_value"]
    some = client.post("/v1/batch", json={"columns": columns_body(counts), "fields": picked}).get_json()
    # Each column once, in the order of the full answer.
    assert list(some["columns"]) == ["statistic", "p_value", "adjusted_p_value"]
    for name, column in some["columns"].items():
        assert column == full["columns"][name]
    # The per-comparison warnings were not asked for: the answer says that some exist.
    assert any(full["columns"]["warnings"])
    assert any("add warnings to fields" in w for w in some["warnings"])


@pytest.mark.parametrize("adjustment,sm_name", [("bonferroni", "bonferroni"), ("holm", "holm"),
                                                ("benjamini-hochberg", "fdr_bh")])
def test_adjusted_p_values_match_statsmodels(client, adjustment, sm_name):
    counts = tables(11, 50)
    counts[:, 1] += 50  # groups large enough for the pooled z-test: every p-value defined
    counts[:, 3] += 50
    answer = client.post("/v1/batch", json={"columns": columns_body(counts, method="z-pooled"),
                                            "adjustment": adjustment,
                                            "fields": ["p_value", "adjusted_p_value"]}).get_json()
    p = np.array(answer["columns"]["p_value"])
    # statsmodels 0.15 stats.multitest.multipletests; Holm (1979) Scand J Statist 6:65-70;
    # Benjamini & Hochberg (1995) JRSS B 57:289-300.
    expected = multipletests(p, method=sm_name)[1]
    np.testing.assert_allclose(answer["columns"]["adjusted_p_value"], expected, rtol=1e-12, atol=0)


def test_client_turns_numpy_columns_into_json_lists():
    from proportio.client import _as_list

    assert _as_list(np.array([1, 2], dtype=np.int64)) == [1, 2]
    assert type(_as_list(np.array([1], dtype=np.int64))[0]) is int
    assert _as_list((3, 4)) == [3, 4]


GOOD = {"control": {"successes": [1, 2, 3], "trials": [10, 10, 10]},
        "treatment": {"successes": [4, 5, 6], "trials": [10, 10, 10]}}


@pytest.mark.parametrize("body,field,needle", [
    ({"columns": {**GOOD, "control": {"successes": [1, True, 2.0], "trials": [5, 5, 5]}}},
     "columns.control.successes.1", "boolean"),
    ({"columns": {**GOOD, "control": {"successes": [1, 2, 2.5], "trials": [5, 5, 5]}}},
     "columns.control.successes.2", "decimal"),
    ({"columns": {**GOOD, "treatment": {"successes": [4, 11, 6], "trials": [10, 10, 10]}}},
     "columns.treatment.successes.1", "exceed"),
    ({"columns": {**GOOD, "treatment": {"successes": [4, 5, 6], "trials": [10, 0, 10]}}},
     "columns.treatment.trials.1", "greater than or equal to 1"),
    ({"columns": {**GOOD, "treatment": {"successes": [4, 5, 6], "trials": [10, 10**13, 10]}}},
     "columns.treatment.trials.1", "less than or equal to"),
    ({"columns": {**GOOD, "treatment": {"successes": [4, 5], "trials": [10, 10]}}}, "columns.treatment", "holds"),
    ({"columns": {**GOOD, "control": {"successes": [1, 2], "trials": [10, 10, 10]}}},
     "columns.control.successes", "holds"),
    ({"columns": {**GOOD, "control": {"successes": "1,2,3", "trials": [10, 10, 10]}}},
     "columns.control.successes", "list"),
    ({"columns": {**GOOD, "control": {"successes": [], "trials": []}}}, "columns.control.successes", "at least"),
    ({"columns": {**GOOD, "method": "z-pooled", "null_value": 0.1}}, "columns.null_value", "z-pooled"),
    ({"columns": {**GOOD, "method": "wizard"}}, "columns.method", "one of"),
    ({"columns": {**GOOD, "label": "x"}}, "columns.label", "Unknown"),
    ({"columns": {**GOOD, "control": {"successes": [1, 2, 3], "trials": [10, 10, 3000]},
                  "method": "boschloo-exact"}}, "columns.method", "at most"),
    ({"columns": GOOD, "comparisons": [{"control": {"successes": 1, "trials": 2},
                                        "treatment": {"successes": 1, "trials": 2}}]}, "comparisons", "not both"),
    ({"adjustment": "holm"}, "comparisons", "or columns"),
    ({"columns": GOOD, "fields": ["p_value", "colour"]}, "fields.1", "one of"),
    ({"columns": GOOD, "fields": []}, "fields", "Shorter"),
    ({"comparisons": [{"control": {"successes": 1, "trials": 2}, "treatment": {"successes": 1, "trials": 2}}],
      "fields": ["p_value"]}, "fields", "columns"),
])
def test_bad_columnar_requests_name_the_field(client, body, field, needle):
    response = client.post("/v1/batch", json=body)
    assert response.status_code == 422, response.get_json()
    problem = response.get_json()
    assert response.mimetype == "application/problem+json"
    assert field in problem["errors"], problem["errors"]
    assert needle.lower() in " ".join(problem["errors"][field]).lower(), problem["errors"]


def test_columns_longer_than_the_batch_limit_are_refused(client, monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_BATCH", "2")
    response = client.post("/v1/batch", json={"columns": GOOD})
    assert response.status_code == 422
    assert "at most 2 comparisons" in " ".join(response.get_json()["errors"]["columns.control.successes"])


def test_exact_budget_names_the_method(client, monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_BATCH_EXACT", "2")
    response = client.post("/v1/batch", json={"columns": {**GOOD, "method": "fisher-exact"}})
    assert response.status_code == 422
    assert "columns.method" in response.get_json()["errors"]
