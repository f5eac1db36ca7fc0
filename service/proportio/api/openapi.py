"""Build the OpenAPI 3.1 document from the registered operations and their schemas."""

from __future__ import annotations

import html
import json

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin
from marshmallow import validate

from .. import __version__
from ..catalogue import CAUTIONS
from ..schemas import ProblemSchema
from .problems import PROBLEM_MEDIA_TYPE, TITLES
from .registry import OPERATIONS

DESCRIPTION = (
    "Compare success rates between groups: hypothesis tests, confidence intervals and planning. "
    "Errors are RFC 9457 problem documents whose `errors` member maps dotted field paths to messages.\n\n"
    "Cautions: " + " ".join(CAUTIONS)
)


def _exclusive_bounds(self, field, ret, **kwargs) -> dict:
    """Write open ends of marshmallow Range validators as OpenAPI 3.1 exclusiveMinimum/exclusiveMaximum.

    apispec 6 writes every bound as minimum/maximum, which would document 0 as a valid alpha.
    """
    out: dict = {}
    for validator in field.validators:
        if isinstance(validator, validate.Range):
            if validator.min is not None and not validator.min_inclusive:
                out["exclusiveMinimum"] = validator.min
                ret.pop("minimum", None)
            if validator.max is not None and not validator.max_inclusive:
                out["exclusiveMaximum"] = validator.max
                ret.pop("maximum", None)
    return out


def build_spec() -> dict:
    """Return the OpenAPI document as a plain dict (deterministic: same code, same document)."""
    plugin = MarshmallowPlugin()
    spec = APISpec(
        title="Proportio",
        version=__version__,
        openapi_version="3.1.0",
        plugins=[plugin],
        info={"description": DESCRIPTION, "license": {"name": "MIT", "identifier": "MIT"}},
    )
    plugin.converter.add_attribute_function(_exclusive_bounds)
    spec.components.schema("Problem", schema=ProblemSchema)
    spec.components.security_scheme("bearer", {"type": "http", "scheme": "bearer"})
    paths: dict[str, dict] = {}
    for op in OPERATIONS:
        entry: dict = {"summary": op.summary, "tags": [op.tag], "operationId": op.path.strip("/").replace("/", "_")
                       .replace("-", "_") + "_" + op.method}
        if op.description:
            entry["description"] = op.description
        if op.request is not None:
            media: dict = {"schema": op.request}
            if op.example:
                media["example"] = op.example
            entry["requestBody"] = {"required": True, "content": {"application/json": media}}
        responses: dict = {}
        if op.response is not None:
            responses["200"] = {"description": "OK", "content": {"application/json": {"schema": op.response}}}
        else:
            responses["200"] = {"description": "OK"}
        for status in op.errors:
            responses[str(status)] = {"description": TITLES[status],
                                      "content": {PROBLEM_MEDIA_TYPE: {"schema": "Problem"}}}
        if op.path.startswith("/v1/"):
            entry["security"] = [{}, {"bearer": []}]
            responses["401"] = {"description": TITLES[401], "content": {PROBLEM_MEDIA_TYPE: {"schema": "Problem"}}}
        entry["responses"] = responses
        paths.setdefault(op.path, {})[op.method] = entry
    for path in sorted(paths):
        spec.path(path=path, operations=paths[path])
    return spec.to_dict()


def spec_json(spec: dict) -> str:
    """Serialise the document the way it is committed under openapi/."""
    return json.dumps(spec, indent=2, sort_keys=True) + "\n"


def render_docs(spec: dict) -> str:
    """Render a readable HTML reference of the API (no scripts, no external assets)."""
    schemas = spec.get("components", {}).get("schemas", {})
    out = [
        "<!doctype html><html lang=en><head><meta charset=utf-8><title>Proportio API</title>",
        "<style>body{font:15px/1.5 system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#222}"
        "code,pre{background:#f4f4f4;padding:.1rem .3rem}pre{padding:.6rem;overflow:auto}"
        "table{border-collapse:collapse;margin:.5rem 0}td,th{border:1px solid #ccc;padding:.2rem .5rem;"
        "text-align:left;vertical-align:top}h2{border-top:1px solid #ddd;padding-top:1rem}</style></head><body>",
        f"<h1>Proportio API {html.escape(spec['info']['version'])}</h1>",
        f"<p>{html.escape(spec['info']['description'])}</p>",
        "<p>Machine-readable document: <a href='/openapi.json'>/openapi.json</a>. "
        "Method catalogue: <a href='/v1/methods'>/v1/methods</a>.</p>",
    ]
    for path, ops in spec["paths"].items():
        for method, op in ops.items():
            out.append(f"<h2 id='{html.escape(op['operationId'])}'><code>{method.upper()} {html.escape(path)}</code>"
                       f" &mdash; {html.escape(op.get('summary', ''))}</h2>")
            if op.get("description"):
                out.append(f"<p>{html.escape(op['description'])}</p>")
            body = op.get("requestBody", {}).get("content", {}).get("application/json")
            if body:
                out.append("<h3>Request</h3>")
                out.append(_schema_table(body["schema"], schemas))
                if "example" in body:
                    out.append("<p>Example:</p><pre>" + html.escape(json.dumps(body["example"], indent=2)) + "</pre>")
            ok = op["responses"].get("200", {}).get("content", {}).get("application/json")
            if ok:
                out.append("<h3>Response</h3>")
                out.append(_schema_table(ok["schema"], schemas))
            errors = [code for code in op["responses"] if code != "200"]
            if errors:
                out.append("<p>Errors (application/problem+json): " + ", ".join(errors) + "</p>")
    out.append("</body></html>")
    return "\n".join(out)


def _resolve(schema: dict, schemas: dict) -> dict:
    ref = schema.get("$ref")
    if ref:
        return schemas.get(ref.rsplit("/", 1)[-1], {})
    return schema


def _schema_table(schema: dict, schemas: dict, depth: int = 0) -> str:
    schema = _resolve(schema, schemas)
    rows = []
    required = set(schema.get("required", []))
    for name, prop in schema.get("properties", {}).items():
        target = _resolve(prop, schemas)
        kind = target.get("type", "object" if "properties" in target else "")
        if isinstance(kind, list):
            kind = " or ".join(kind)
        extra = []
        if "enum" in target:
            extra.append("one of " + ", ".join(str(v) for v in target["enum"] if v is not None))
        if "default" in prop:
            extra.append(f"default {json.dumps(prop['default'])}")
        for key, word in (("minimum", ">="), ("exclusiveMinimum", ">"), ("maximum", "<="), ("exclusiveMaximum", "<")):
            if key in target:
                extra.append(f"{word} {target[key]}")
        desc = html.escape(prop.get("description", target.get("description", "")))
        nested = ""
        if "properties" in target and depth < 2:
            nested = _schema_table(target, schemas, depth + 1)
        rows.append(f"<tr><td><code>{html.escape(name)}</code>{' (required)' if name in required else ''}</td>"
                    f"<td>{html.escape(kind)}</td><td>{desc} {html.escape('; '.join(extra))}{nested}</td></tr>")
    return "<table><tr><th>field</th><th>type</th><th>notes</th></tr>" + "".join(rows) + "</table>"


def main() -> None:
    """Write the document to openapi/openapi.json (or the path given as the first argument)."""
    import pathlib
    import sys

    target = pathlib.Path(sys.argv[1] if len(sys.argv) > 1 else "openapi/openapi.json")
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_text(spec_json(build_spec()))
    print(f"wrote {target}")

