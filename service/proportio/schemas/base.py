"""Shared schema pieces: strict base schema, groups, common fields, errors, compiled load and dump."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from marshmallow import EXCLUDE, RAISE, Schema, ValidationError, fields, missing, validate, validates_schema
from marshmallow.decorators import POST_DUMP, POST_LOAD, PRE_DUMP, PRE_LOAD, VALIDATES, VALIDATES_SCHEMA
from marshmallow.utils import ensure_text_type

from ..fields import Count, Number, Text
from ..stats._common import ALTERNATIVES, MAX_TRIALS

MAX_LABEL_LENGTH = 200


def flatten_errors(messages: Any, prefix: str = "") -> dict[str, list[str]]:
    """Turn marshmallow's nested error dict into ``{"a.b.c": [messages]}``."""
    flat: dict[str, list[str]] = {}
    if isinstance(messages, dict):
        for key, value in messages.items():
            path = str(key) if key != "_schema" else ""
            full = ".".join(part for part in (prefix, path) if part)
            for sub, msgs in flatten_errors(value, full).items():
                flat.setdefault(sub, []).extend(msgs)
    elif isinstance(messages, list) and all(isinstance(m, str) for m in messages):
        flat[prefix or "body"] = list(messages)
    elif isinstance(messages, list):
        for msgs in messages:
            for sub, items in flatten_errors(msgs, prefix).items():
                flat.setdefault(sub, []).extend(items)
    else:
        flat[prefix or "body"] = [str(messages)]
    return flat


class StrictSchema(Schema):
    class Meta:
        unknown = RAISE


def raise_for(exc: ValueError, candidates: tuple[str, ...], default: str) -> None:
    """Re-raise a core ValueError as a ValidationError on the field its message names first."""
    message = str(exc)
    field = next((name for name in candidates if name in message), default)
    raise ValidationError(message, field_name=field) from exc


# ------------------------------------------------------------------------------------------------
# Shared pieces


class GroupSchema(StrictSchema):
    """Successes out of trials for one group."""

    successes = Count(required=True, validate=validate.Range(min=0, max=MAX_TRIALS),
                      metadata={"description": "Number of successes, 0 <= successes <= trials."})
    trials = Count(required=True, validate=validate.Range(min=1, max=MAX_TRIALS),
                   metadata={"description": "Number of trials, 1 to 10^12."})
    label = Text(validate=validate.Length(max=MAX_LABEL_LENGTH), metadata={"description": "Optional name."})

    @validates_schema
    def _successes_within_trials(self, data, **kwargs):
        if "successes" in data and "trials" in data and data["successes"] > data["trials"]:
            raise ValidationError("must not exceed trials", field_name="successes")


def alpha_field():
    return Number(load_default=0.05, validate=validate.Range(min=0, max=0.5, min_inclusive=False),
                  metadata={"description": "Significance level in (0, 0.5]."})


def alternative_field():
    return Text(load_default="two-sided", validate=validate.OneOf(ALTERNATIVES),
                metadata={"description": "two-sided (default), greater (H1: effect > null value) or less."})


class ProblemSchema(Schema):
    """RFC 9457 problem details."""

    type = fields.String()
    title = fields.String()
    status = fields.Integer()
    detail = fields.String()
    errors = fields.Dict(keys=fields.String(), values=fields.List(fields.String()),
                         metadata={"description": "Dotted field path -> messages."})
    request_id = fields.String()


class HealthSchema(Schema):
    status = fields.String()
    version = fields.String()


# ------------------------------------------------------------------------------------------------
# Compiled load and dump
#
# Schema.load and Schema.dump walk the same generic machinery on every call (error stores, hook lookups,
# accessor indirection, a validator combinator built per value): for a small request that bookkeeping
# costs several times the work itself. ``compile_load`` and ``compile_dump`` read a schema instance once
# and return a function that does exactly what load or dump would do with that schema, field by field,
# with the fields' own conversion and validators. The schema stays the single definition: a schema or
# field using a feature the compiler does not reproduce (hooks other than schema validators, dotted
# attributes, partial loading, collections of schemas, overridden internals) is handed to marshmallow
# whole or field by field, and a load that meets any error is run again by Schema.load itself, so
# error messages are marshmallow's own. tests/unit/test_compiled_schemas.py checks that both agree.


class _Refused(Exception):
    """The compiled path found a value it does not accept: Schema.load decides (and words the error)."""


def _plain_field(f: fields.Field) -> bool:
    """True when ``f`` reads and writes its own name with marshmallow's generic Field machinery."""
    cls = type(f)
    return (f.attribute is None and f.data_key is None and not f.pre_load and not f.post_load
            and cls.deserialize is fields.Field.deserialize and cls._validate is fields.Field._validate
            and cls.serialize is fields.Field.serialize and cls.get_value is fields.Field.get_value
            and cls._validate_missing is fields.Field._validate_missing
            and cls._validate_all is fields.Field._validate_all)


def _compilable(schema: Schema) -> bool:
    cls = type(schema)
    return (not schema.many and schema.partial is None and schema.dict_class is dict
            and cls.load is Schema.load and cls._do_load is Schema._do_load
            and cls._deserialize is Schema._deserialize
            and cls._invoke_schema_validators is Schema._invoke_schema_validators
            and cls._run_validator is Schema._run_validator
            and cls.dump is Schema.dump and cls._serialize is Schema._serialize
            and cls.get_attribute is Schema.get_attribute)


def _nested_schema(f: fields.Field) -> Schema | None:
    """The schema of a Nested field that holds one object and could be compiled, else None."""
    if type(f) is not fields.Nested or f.many or not _plain_field(f):
        return None
    schema = f.schema
    return schema if _compilable(schema) and not schema.many else None


# Schema classes being compiled: a schema nested in itself (directly or not) is left to marshmallow there.
_COMPILING: set[type] = set()


def _guarded(build: Callable[[Schema], Any]) -> Callable[[Schema], Any]:
    def run(schema: Schema):
        cls = type(schema)
        if cls in _COMPILING:
            return None
        _COMPILING.add(cls)
        try:
            return build(schema)
        finally:
            _COMPILING.discard(cls)
    return run


def compile_load(schema: Schema) -> Callable[[Any], Any]:
    """Return a function that gives what ``schema.load(data)`` gives (result, or the same ValidationError)."""
    fast = _load_steps(schema)
    full = schema.load
    if fast is None:
        return full

    def load(data):
        try:
            return fast(data)
        except Exception:  # noqa: BLE001  (marshmallow runs it again and raises what it raises)
            return full(data)

    return load


@_guarded
def _load_steps(schema: Schema) -> Callable[[Any], dict] | None:
    """The compiled load of ``schema`` (raises on any error), or None when it cannot be compiled."""
    hooks = schema._hooks
    if (not _compilable(schema) or hooks[PRE_LOAD] or hooks[POST_LOAD] or hooks[VALIDATES]
            or schema.unknown not in (RAISE, EXCLUDE)):
        return None
    steps = []
    for name, f in schema.load_fields.items():
        source = name if f.data_key is None else f.data_key
        target = f.attribute or name
        if "." in target:
            return None
        steps.append((source, target, _load_field(f, source)))
    known = frozenset(source for source, _, _ in steps)
    check_unknown = schema.unknown == RAISE
    unknown = schema.unknown
    # Collection validators first, as Schema._do_load runs them; with many=False both see the one object.
    validators = [(getattr(schema, attr), kwargs.get("pass_original", False))
                  for want in (True, False) for attr, many, kwargs in hooks[VALIDATES_SCHEMA] if many is want]

    def load(data):
        if type(data) is not dict or (check_unknown and not known.issuperset(data)):
            raise _Refused
        out = {}
        get = data.get
        for source, target, step in steps:
            value = step(get(source, missing), data)
            if value is not missing:
                out[target] = value
        for validator, pass_original in validators:
            if pass_original:
                validator(out, data, partial=None, many=False, unknown=unknown)
            else:
                validator(out, partial=None, many=False, unknown=unknown)
        return out

    return load


def _load_field(f: fields.Field, name: str) -> Callable[[Any, dict], Any]:
    """What ``f.deserialize(value, name, data)`` does, raising on any error."""
    if not _plain_field(f):
        return lambda value, data: f.deserialize(value, name, data)
    required, allow_none, default = f.required, f.allow_none, f.load_default
    call_default = callable(default)
    validators = tuple(f.validators)
    nested = _nested_schema(f) if type(f) is fields.Nested and f.unknown is None and not validators else None
    nested_load = None if nested is None else _load_steps(nested)
    deserialize = f._deserialize

    # Field.deserialize: a missing value is refused or defaulted (unvalidated), None is refused or kept,
    # anything else is converted, then validated. Written out per case: this runs for every field.
    def absent():
        if required:
            raise _Refused
        return default() if call_default else default

    # Most absent fields take a constant default: no call for those.
    constant = not required and not call_default

    if nested_load is not None:
        def step(value, data):
            if value is missing:
                return default if constant else absent()
            if value is None:
                if allow_none:
                    return None
                raise _Refused
            return nested_load(value)
    elif validators:
        def step(value, data):
            if value is missing:
                return default if constant else absent()
            if value is None:
                if allow_none:
                    return None
                raise _Refused
            out = deserialize(value, name, data)
            for validator in validators:
                validator(out)
            return out
    else:
        def step(value, data):
            if value is missing:
                return default if constant else absent()
            if value is None:
                if allow_none:
                    return None
                raise _Refused
            return deserialize(value, name, data)

    return step


def compile_dump(schema: Schema) -> Callable[[Any], Any]:
    """Return a function that gives what ``schema.dump(obj)`` gives."""
    return _dump_steps(schema) or schema.dump


@_guarded
def _dump_steps(schema: Schema) -> Callable[[Any], dict] | None:
    hooks = schema._hooks
    if not _compilable(schema) or hooks[PRE_DUMP] or hooks[POST_DUMP]:
        return None
    steps = []
    for name, f in schema.dump_fields.items():
        plain = _plain_field(f) and f._CHECK_ATTRIBUTE and f.dump_default is missing
        convert = _dump_value(f) if plain else _GENERIC
        if convert is _GENERIC:
            steps.append((name, name if f.data_key is None else f.data_key, None, f))
        elif "." in name:  # a dotted name is a path into the object: the field's own accessor follows it
            steps.append((name, name, None, f))
        else:
            steps.append((name, name, convert, None))
    get_attribute = schema.get_attribute

    def dump(obj):
        out = {}
        # Schema.get_attribute (marshmallow.utils.get_value) tries obj[key] first on anything subscriptable.
        if hasattr(obj, "__getitem__"):
            def get(key, _missing=missing):
                try:
                    return obj[key]
                except (KeyError, IndexError, TypeError, AttributeError):
                    return getattr(obj, key, _missing)
        else:
            get = None
        for name, key, convert, field in steps:
            if field is not None:
                value = field.serialize(name, obj, accessor=get_attribute)
                if value is not missing:
                    out[key] = value
                continue
            value = getattr(obj, name, missing) if get is None else get(name)
            if value is missing:
                continue
            out[key] = value if convert is None or value is None else convert(value)
        return out

    return dump


_GENERIC = object()


def _dump_value(f: fields.Field) -> Any:
    """What ``f._serialize`` does to a value that is not None: a function, None for "unchanged", or _GENERIC.

    Only for the serializers of marshmallow's own field classes, which all send None to None; any other
    (``_GENERIC``) goes through the field's own ``serialize``.
    """
    method = type(f)._serialize
    if method is fields.Field._serialize:
        return None
    if (method is fields.Number._serialize and type(f)._format_num is fields.Number._format_num
            and not f.as_string):
        return f.num_type
    if method is fields.String._serialize:
        return _text
    if method is fields.Nested._serialize:
        nested = _nested_schema(f)
        nested_dump = None if nested is None else _dump_steps(nested)
        return _GENERIC if nested_dump is None else nested_dump
    if method is fields.List._serialize:
        item = _dump_value(f.inner)
        if item is None:
            return list
        if item is not _GENERIC:
            return lambda values: [None if v is None else item(v) for v in values]
    return _GENERIC


def _text(value: Any) -> str:
    return value if type(value) is str else ensure_text_type(value)
