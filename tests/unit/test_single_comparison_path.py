"""One comparison computed with floats (twogroup._one_values) equals the array code to the last bit.

A single /v1/tests call takes the float path for the common cases; the same comparison inside a batch takes
the array code. The contract says they are the same numbers, so every field must be identical: the floats
by their repr (which tells -0.0 from 0.0 and shows every bit), the texts character for character. The
batches compared against hold 2 comparisons (the score interval's float solver per item) and over 100 (its
array solver), so both halves of the array code are covered.
"""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest

from proportio.stats import twogroup


def interior_tables(seed: int, size: int) -> list[tuple[int, int, int, int]]:
    """Tables with 0 < successes < trials in both groups, from tiny to 10**12 trials, rates near 0 to near 1."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(size):
        scale = rng.choice([3, 40, 1_000, 300_000, 10**9, 10**12])
        n1, n2 = (int(rng.integers(2, scale + 1)) for _ in range(2))
        rate = rng.choice([1e-9, 1e-5, 1e-3, 0.02, 0.1, 0.5, 0.9, 0.999, 1 - 1e-7])
        x1 = int(rng.binomial(n1, min(rate * rng.uniform(0.6, 1.5), 1.0)))
        x2 = int(rng.binomial(n2, rate))
        out.append((min(max(x1, 1), n1 - 1), n1, min(max(x2, 1), n2 - 1), n2))
    # Hand-picked: the smallest tables, one success or one failure, the largest counts, a p-value that
    # underflows, identical rates, and the README's example.
    out += [(1, 2, 1, 2), (1, 2, 1, 3), (1, 10**12, 1, 10**12), (10**12 - 1, 10**12, 1, 10**12),
            (5 * 10**11, 10**12, 4 * 10**11, 10**12), (300, 1000, 300, 1000), (471, 9598, 412, 9630),
            (2, 7, 5, 6), (999_999, 10**6, 1, 10**6)]
    return out


OPTION_SETS = [
    dict(method=m, alternative=a, continuity_correction=cc, alpha=alpha)
    for m, a, cc, alpha in itertools.product(("auto", "z-pooled", "z-unpooled"), ("two-sided", "greater", "less"),
                                             (False, True), (0.05, 0.001))
] + [
    dict(method="chi-square", continuity_correction=cc, alpha=alpha) for cc in (False, True) for alpha in (0.05, 0.2)
] + [
    dict(method="z-unpooled", null_value=null, alternative=a, continuity_correction=cc)
    for null in (0.01, -0.3, 1e-13) for a in ("two-sided", "greater") for cc in (False, True)
]
PARTS = [twogroup.OPTIONAL_PARTS, frozenset(), frozenset({"interval"}), frozenset({"reason"}),
         frozenset({"summary"})]


def fields(cols: twogroup.TestColumns, i: int) -> dict:
    """Every value comparison ``i`` carries, floats as repr, so that equal means equal to the last bit."""
    out = {}
    for f in dataclasses.fields(cols):
        value = getattr(cols, f.name)
        if f.name == "p_values":
            value = float(value[i])
        elif isinstance(value, list):
            value = value[i]
        out[f.name] = repr(value)
    return out


def compare_single_and_batch(tables, options, parts, interval_alpha=None):
    counts = [np.array(column, dtype=np.int64) for column in zip(*tables, strict=True)]
    kwargs = dict(options, parts=parts, interval_alpha=interval_alpha)
    batch = twogroup.compare_columns(*counts, **kwargs)
    pairs = [twogroup.compare_columns(*(c[i:i + 2] for c in counts), **kwargs) for i in range(0, len(tables) - 1, 2)]
    taken = 0
    for i, (x1, n1, x2, n2) in enumerate(tables):
        opts = twogroup.check_options(**options)
        taken += twogroup._compare_one(float(x1), float(n1), float(x2), float(n2), opts, interval_alpha,
                                       parts) is not None
        single = twogroup.compare_columns([x1], [n1], [x2], [n2], **kwargs)
        expected = fields(single, 0)
        assert fields(batch, i) == expected, (tables[i], options)
        if i < 2 * len(pairs):
            assert fields(pairs[i // 2], i % 2) == expected, (tables[i], options)
    return taken


@pytest.mark.parametrize("options", OPTION_SETS, ids=lambda o: "-".join(f"{v}" for v in o.values()))
def test_a_single_comparison_equals_the_same_comparison_in_a_batch(options):
    tables = interior_tables(len(str(options)), 120)
    taken = compare_single_and_batch(tables, options, twogroup.OPTIONAL_PARTS)
    # The float path must actually run (else this test compares the array code with itself). auto leaves
    # the tables with an expected count below 5 to an exact test, and the score interval's float solver
    # declines rates within ~1e-9 of 0 or 1 at 10**8 trials and more (about 1 table in 10 of these).
    counts = [np.array(column) for column in zip(*tables, strict=True)]
    chosen = "z-pooled" if options["method"] == "auto" else options["method"]
    normal = twogroup.planned_methods(*counts, twogroup.check_options(**options)).count(chosen)
    assert taken >= 0.8 * normal > 0.3 * len(tables)


@pytest.mark.parametrize("parts", PARTS, ids=lambda p: "+".join(sorted(p)) or "none")
@pytest.mark.parametrize("interval_alpha", [None, 0.05 / 3])
def test_parts_and_interval_levels_give_the_same_values_on_both_paths(parts, interval_alpha):
    tables = interior_tables(7, 60)
    for options in (dict(method="auto"), dict(method="z-unpooled", alternative="less", continuity_correction=True)):
        assert compare_single_and_batch(tables, options, parts, interval_alpha) > 0


@pytest.mark.parametrize("table", [(0, 10, 3, 10), (10, 10, 3, 10), (0, 5, 0, 5), (4, 4, 4, 4), (2, 30, 1, 25)])
def test_tables_the_float_path_declines_go_to_the_array_code(table):
    # A count of 0 or all has branches only the array code has; auto with small expected counts is an exact
    # test. Declining is not an error: the answer is the array code's.
    opts = twogroup.check_options("auto")
    assert twogroup._compare_one(*map(float, table), opts, None, twogroup.OPTIONAL_PARTS) is None
    compare_single_and_batch([table, (471, 9598, 412, 9630)], {"method": "auto"}, twogroup.OPTIONAL_PARTS)


def test_effects_and_methods_the_float_path_does_not_handle_are_declined():
    for options in (dict(method="score"), dict(method="auto", effect="ratio"), dict(method="auto", null_value=0.01),
                    dict(method="fisher-exact")):
        opts = twogroup.check_options(**options)
        assert twogroup._compare_one(471.0, 9598.0, 412.0, 9630.0, opts, None, twogroup.OPTIONAL_PARTS) is None


@pytest.mark.parametrize("options", [
    dict(method="auto"), dict(method="z-unpooled", null_value=0.01, alternative="less"),
    dict(method="chi-square", continuity_correction=True), dict(method="score"),
    dict(method="auto", effect="odds-ratio"),
])
def test_compare_one_is_compare_of_a_batch_of_one(options):
    # compare_one is what /v1/tests runs; /v1/batch runs compare_columns. Every table, including the ones
    # compare_one hands to compare (edges, small tables, other methods), must give the same result.
    for table in interior_tables(11, 25) + [(0, 10, 3, 10), (10, 10, 3, 10), (0, 5, 0, 5), (2, 30, 1, 25)]:
        one = twogroup.compare_one(*table, **options)
        [expected] = twogroup.compare(*([c] for c in table), **options)
        assert repr(one) == repr(expected), table


@pytest.mark.parametrize("counts, message", [
    ((True, 10, 3, 10), "treatment.successes must be whole numbers"),
    ((3, 0, 3, 10), "treatment.trials must be between 1 and 10**12"),
    ((3, 10, 3, 10**12 + 1), "control.trials must be between 1 and 10**12"),
    ((3, 10, 11, 10), "control.successes must not exceed control.trials"),
    ((-1, 10, 3, 10), "treatment.successes must not be negative"),
])
def test_compare_one_refuses_what_compare_refuses(counts, message):
    with pytest.raises(ValueError, match=message.replace("*", r"\*")):
        twogroup.compare_one(*counts)


def test_compare_one_takes_numpy_and_integral_float_counts_as_compare_does():
    assert repr(twogroup.compare_one(np.int64(471), 9598.0, 412, np.uint32(9630))) == repr(
        twogroup.compare([471], [9598], [412], [9630])[0])


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_the_float_normal_tail_equals_the_array_one_bit_for_bit(alternative):
    from proportio.stats._common import normal_p_value, normal_p_value_float

    rng = np.random.default_rng(3)
    zs = np.concatenate([rng.normal(0, 3, 2_000), rng.uniform(-45, 45, 2_000), 10.0 ** rng.uniform(-320, 2, 500),
                         [0.0, -0.0, 1e-300, -5e-324, 37.5, -37.5, 38.5, 40.0, -40.0, 1e4, np.inf, -np.inf, np.nan]])
    p, log10p = normal_p_value(zs, alternative)
    for z, expected_p, expected_log in zip(zs.tolist(), p.tolist(), log10p.tolist(), strict=True):
        assert repr(normal_p_value_float(z, alternative)) == repr((expected_p, expected_log)), z
