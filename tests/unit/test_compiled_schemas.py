"""Compiled load and dump (schemas.base.compile_load / compile_dump) give exactly what marshmallow gives.

The reference is marshmallow 4 itself: ``Schema.load`` and ``Schema.dump`` of the same schema instance.
Every comparison is exact (results equal key for key and in the same order, errors equal message for
message), because the compiled functions replace those calls on every request.
"""

from __future__ import annotations

import copy
import dataclasses
import datetime as dt
import decimal

import numpy as np
import orjson
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from marshmallow import (
    EXCLUDE,
    INCLUDE,
    Schema,
    ValidationError,
    fields,
    post_dump,
    post_load,
    pre_dump,
    pre_load,
    validate,
    validates,
    validates_schema,
)

from proportio.api import create_app
from proportio.api.registry import OPERATIONS
from proportio.schemas import TestRequestSchema as RequestSchema
from proportio.schemas.base import compile_dump, compile_load

# Values a client may send in place of any field: every JSON type, edge numbers, wrong shapes.
ODD_VALUES = [None, True, False, 0, -1, 1, 7, 10**12, 10**12 + 1, 10**30, 0.5, 1.0, -0.0, 1e308, "", "x",
              "5", "two-sided", "auto", [], [1], {}, {"successes": 1, "trials": 2}]


def _outcome(func, payload):
    """``("ok", result)`` or ``("error", messages, valid_data)`` of ``func(payload)``, comparable with ==."""
    try:
        result = func(copy.deepcopy(payload))
    except ValidationError as exc:
        return "error", _normal(exc.messages), _normal(exc.valid_data)
    return "ok", _normal(result)


def _normal(value):
    """``value`` as nested tuples that compare equal only when types, key order and values all agree."""
    if isinstance(value, dict):
        return "dict", tuple((key, _normal(item)) for key, item in value.items())
    if isinstance(value, list | tuple):
        return type(value).__name__, tuple(_normal(item) for item in value)
    if isinstance(value, np.ndarray):
        return "array", str(value.dtype), _normal(value.tolist())
    if dataclasses.is_dataclass(value):
        members = {f.name: getattr(value, f.name) for f in dataclasses.fields(value)}
        return type(value).__name__, _normal(members)
    return type(value).__name__, repr(value)


def _key_order(value):
    if isinstance(value, dict):
        return [(key, _key_order(item)) for key, item in value.items()]
    if isinstance(value, list):
        return [_key_order(item) for item in value]
    return None


def _assert_same_load(schema: Schema, payload) -> None:
    assert _outcome(compile_load(schema), payload) == _outcome(schema.load, payload), payload


def _mutations(payload: dict):
    """The payload with each field (at any depth) removed or replaced by each odd value, plus unknown keys."""
    yield payload
    yield {**payload, "unexpected": 1}
    for key, value in payload.items():
        yield {k: v for k, v in payload.items() if k != key}
        for odd in ODD_VALUES:
            yield {**payload, key: odd}
        if isinstance(value, dict):
            for inner in _mutations(value):
                yield {**payload, key: inner}


def _request_operations():
    return [op for op in OPERATIONS if op.request is not None and op.example is not None]


@pytest.mark.parametrize("op", _request_operations(), ids=lambda op: op.path)
def test_compiled_load_matches_marshmallow_on_every_endpoint_example_and_its_mutations(op):
    schema = op.request()
    checked = 0
    for payload in _mutations(op.example):
        _assert_same_load(schema, payload)
        checked += 1
    assert checked > 10


def test_compiled_load_matches_marshmallow_on_non_objects():
    schema = RequestSchema()
    for payload in ([], [1], "x", 1, None, {"control": []}):
        _assert_same_load(schema, payload)


_GROUP = st.fixed_dictionaries(
    {"successes": st.one_of(st.integers(-2, 30), st.sampled_from(ODD_VALUES)),
     "trials": st.one_of(st.integers(-2, 30), st.sampled_from(ODD_VALUES))},
    optional={"label": st.one_of(st.text(max_size=3), st.sampled_from(ODD_VALUES), st.just("x" * 201))},
)
_OPTIONS = {
    "method": st.sampled_from(["auto", "z-pooled", "z-unpooled", "score", "fisher-exact", "boschloo-exact",
                               "chi-square", "nope", None, 3]),
    "alternative": st.sampled_from(["two-sided", "greater", "less", "both", None]),
    "null_value": st.one_of(st.none(), st.floats(-2, 2), st.sampled_from([0, 1, "0", True])),
    "effect": st.sampled_from(["difference", "ratio", "odds-ratio", "lift", None]),
    "alpha": st.one_of(st.floats(-0.1, 0.7), st.sampled_from([0, 0.5, "0.05", None, True])),
    "continuity_correction": st.sampled_from([True, False, None, 0, "yes"]),
}


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.fixed_dictionaries({}, optional={"control": _GROUP, "treatment": _GROUP, **_OPTIONS,
                                           "extra": st.just(1)}))
def test_compiled_load_matches_marshmallow_on_random_test_requests(payload):
    _assert_same_load(RequestSchema(), payload)


def test_compiled_load_accepts_the_worked_example_without_falling_back(monkeypatch):
    """The compiled path itself answers a valid request (marshmallow's load is not called)."""
    schema = RequestSchema()
    load = compile_load(schema)
    example = next(op.example for op in OPERATIONS if op.path == "/v1/tests")
    expected = schema.load(example)

    def refuse(*args, **kwargs):
        raise AssertionError("fell back to Schema.load")

    monkeypatch.setattr(type(schema), "load", refuse)
    monkeypatch.setattr(type(schema), "_do_load", refuse)
    assert load(example) == expected


# ------------------------------------------------------------------------------------------------
# Dump: every endpoint's real result through its response schema


def _endpoint_results():
    app = create_app({"TESTING": True})
    cases = []
    for op in OPERATIONS:
        if op.response is None or (op.request is not None and op.example is None):
            continue
        view = next(v for rule in app.url_map.iter_rules() if rule.rule == op.path
                    for v in [app.view_functions[rule.endpoint]])
        fn = view.__wrapped__
        with app.test_request_context(op.path, method=op.method.upper(), json=op.example):
            result = fn() if op.request is None else fn(op.request().load(op.example))
        if not hasattr(result, "status_code"):  # views answering a ready Response have nothing to dump
            cases.append((op.path, op.response, result))
    return cases


@pytest.mark.parametrize("case", _endpoint_results(), ids=lambda case: case[0])
def test_compiled_dump_matches_marshmallow_on_every_endpoint_result(case):
    _, response_schema, result = case
    schema = response_schema()
    compiled = compile_dump(schema)(result)
    reference = schema.dump(result)
    assert compiled == reference
    # Same keys in the same order, same types: the JSON text is identical.
    assert orjson.dumps(compiled) == orjson.dumps(reference)
    assert _key_order(compiled) == _key_order(reference)


def test_compiled_dump_matches_marshmallow_on_test_results_with_nulls():
    """A /v1/tests answer with undefined quantities (0 successes in the control) dumps the same."""
    from proportio import operations
    from proportio.schemas import TestResponseSchema as ResponseSchema

    for control, treatment in (((0, 10), (3, 10)), ((10, 10), (10, 10)), ((0, 1), (0, 1))):
        data = RequestSchema().load({"control": {"successes": control[0], "trials": control[1]},
                                         "treatment": {"successes": treatment[0], "trials": treatment[1]},
                                         "effect": "ratio", "method": "score"})
        result = operations.run_test(data)
        schema = ResponseSchema()
        assert orjson.dumps(compile_dump(schema)(result)) == orjson.dumps(schema.dump(result))


# ------------------------------------------------------------------------------------------------
# Schemas using features the compiler hands to marshmallow (whole or field by field)


class _Leaf(Schema):
    n = fields.Integer()
    s = fields.String(allow_none=True)


class _Tree(Schema):
    name = fields.String(required=True, validate=validate.Length(min=1, max=5))
    renamed = fields.Integer(data_key="renamedKey", load_default=3)
    stored = fields.Float(attribute="stored_as", allow_none=True)
    nested_attr = fields.Integer(attribute="inner.value")
    leaf = fields.Nested(_Leaf, allow_none=True)
    leaves = fields.List(fields.Nested(_Leaf))
    many_leaves = fields.Nested(_Leaf, many=True)
    only_n = fields.Nested(_Leaf, only=("n",))
    tags = fields.List(fields.String())
    raw = fields.Raw()
    flag = fields.Boolean(load_default=lambda: False)
    when = fields.Date()
    amount = fields.Decimal(as_string=True)
    text_number = fields.Integer(as_string=True)
    default_dump = fields.String(dump_default="none given")
    computed = fields.Method("_computed")
    constant = fields.Constant("k")
    child = fields.Nested(lambda: _Tree(), allow_none=True)

    def _computed(self, obj):
        return "computed"

    @validates_schema(pass_original=True)
    def _original(self, data, original, **kwargs):
        if isinstance(original, dict) and original.get("name") == "bad":
            raise ValidationError("bad name", field_name="name")


class _Hooked(Schema):
    a = fields.Integer()

    @pre_load
    def _pre(self, data, **kwargs):
        return {**data, "a": 1} if isinstance(data, dict) else data

    @post_load
    def _post(self, data, **kwargs):
        return {**data, "loaded": True}

    @validates("a")
    def _a(self, value, **kwargs):
        if value > 10:
            raise ValidationError("too big")

    @pre_dump
    def _pre_dump(self, obj, **kwargs):
        return {"a": 2}

    @post_dump
    def _post_dump(self, data, **kwargs):
        return {**data, "dumped": True}


class _Exclude(Schema):
    class Meta:
        unknown = EXCLUDE

    a = fields.Integer()


class _Include(Schema):
    class Meta:
        unknown = INCLUDE

    a = fields.Integer()


class _Obj:
    def __init__(self, **values):
        self.__dict__.update(values)


TREE_INPUTS = [
    {"name": "a"},
    {"name": "abc", "renamedKey": 4, "stored": 1.5, "leaf": {"n": 1, "s": None}, "leaves": [{"n": 2}],
     "many_leaves": [{"n": 3}], "only_n": {"n": 4}, "tags": ["x", "y"], "raw": {"any": [1]}, "flag": True,
     "when": "2024-02-29", "amount": "1.25", "text_number": 5, "child": {"name": "kid"}},
    {"name": "abc", "renamed": 4},
    {"name": "bad"},
    {"name": ""},
    {"name": "abcdef"},
    {"name": "a", "leaf": None, "child": None},
    {"name": "a", "leaf": {"n": "x"}},
    {"name": "a", "leaves": [{"n": 1}, {"n": "y"}]},
    {"name": "a", "nested_attr": 3},
    {"name": "a", "when": "not a date"},
    {"renamedKey": "x"},
]


def _undotted_tree():
    return _Tree(exclude=("nested_attr",))


def test_compiler_takes_what_it_reproduces_and_leaves_the_rest_to_marshmallow():
    for schema in (RequestSchema(), _undotted_tree(), _Exclude(), _Leaf()):
        assert compile_load(schema) != schema.load
    for schema in (_Tree(), _Hooked(), _Include(), _Tree(partial=True), _Tree(many=True)):
        assert compile_load(schema) == schema.load  # a dotted attribute, hooks, INCLUDE, partial, many
    for schema in (_Tree(), _undotted_tree(), _Exclude(), _Leaf()):
        assert compile_dump(schema) != schema.dump
    for schema in (_Hooked(), _Tree(many=True)):
        assert compile_dump(schema) == schema.dump


@pytest.mark.parametrize("schema", [_Tree(), _undotted_tree(), _Hooked(), _Exclude(), _Include(), _Leaf(),
                                    _Tree(partial=True), _Tree(many=True)], ids=lambda s: type(s).__name__)
def test_compiled_load_matches_marshmallow_on_schemas_with_other_features(schema):
    inputs = TREE_INPUTS + [{"a": 1}, {"a": 11}, {"a": 1, "b": 2}, {"n": 1, "s": "t", "x": 0}, [], "x"]
    if schema.many:
        inputs = [[item] for item in inputs if isinstance(item, dict)]
    for payload in inputs:
        _assert_same_load(schema, payload)


TREE_OBJECTS = [
    {"name": "n", "renamed": 4, "stored_as": 2, "inner": {"value": 9}, "leaf": {"n": 1.0, "s": 5},
     "leaves": [{"n": 2, "s": b"bytes"}], "many_leaves": [{"n": 3}], "only_n": {"n": 4, "s": "hidden"},
     "tags": ["a", None, 3], "raw": (1, 2), "flag": 1, "when": dt.date(2024, 2, 29),
     "amount": decimal.Decimal("1.50"), "text_number": 7, "child": {"name": "kid", "leaf": None}},
    {"name": None, "leaf": None, "leaves": None, "tags": None, "stored_as": None, "child": None},
    {},
    _Obj(name="obj", renamed=1, stored_as=0.25, leaf=_Obj(n=True, s="s"), tags=("t",), flag=False,
         child=_Obj(name="kid")),
    _Obj(),
]


@pytest.mark.parametrize("schema", [_Tree(), _undotted_tree(), _Hooked(), _Exclude(), _Leaf(),
                                    _Tree(many=True)], ids=lambda s: type(s).__name__)
def test_compiled_dump_matches_marshmallow_on_schemas_with_other_features(schema):
    for obj in TREE_OBJECTS:
        value = [obj, obj] if schema.many else obj
        compiled = compile_dump(schema)(value)
        reference = schema.dump(value)
        assert compiled == reference
        assert _key_order(compiled) == _key_order(reference)
        assert [type(v) for v in (compiled if schema.many else [compiled])] == \
               [type(v) for v in (reference if schema.many else [reference])]


def test_compiled_dump_keeps_value_types():
    """Float fields turn integers into floats, Integer fields floats into integers, as marshmallow does."""
    class Numbers(Schema):
        f = fields.Float()
        i = fields.Integer()
        b = fields.Boolean()

    schema = Numbers()
    for obj in ({"f": 1, "i": 2.7, "b": 1}, {"f": True, "i": False, "b": "yes"}):
        compiled = compile_dump(schema)(obj)
        reference = schema.dump(obj)
        assert [(k, type(v), v) for k, v in compiled.items()] == \
               [(k, type(v), v) for k, v in reference.items()]
