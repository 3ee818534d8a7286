"""The OpenAPI document says what every error looks like: RFC 9457 problem details, as ``problems.py`` sends.

FastAPI documents a 422 as its own ``HTTPValidationError`` in application/json, and the other error
answers the routes list (401, 404, 413, 503...) carry a description but no body. Every error this
service sends is ``application/problem+json`` in one shape, so each operation's error responses get
that media type and the ``Problem`` schema, and a ``default`` response covers the statuses an
operation does not list (a 413 on any body, a 503 when the pool is full, a 500).
"""

from __future__ import annotations

from typing import Any

from app.api.problems import PROBLEM_MEDIA_TYPE

PROBLEM_REF = {"$ref": "#/components/schemas/Problem"}
PROBLEM_SCHEMA: dict[str, Any] = {
    "title": "Problem",
    "description": "RFC 9457 problem details: what went wrong, where, and what to do about it.",
    "type": "object",
    "required": ["type", "title", "status", "detail"],
    "properties": {
        "type": {"type": "string", "description": "A path under /problems/ naming the kind of problem"},
        "title": {"type": "string"},
        "status": {"type": "integer"},
        "detail": {"type": "string", "description": "Where and what, in one sentence"},
        "instance": {"type": "string", "description": "The path that was asked for"},
        "where": {"type": "object", "description": "Where the fault is: row, column and/or field",
                  "properties": {"row": {"type": "integer"}, "column": {"type": "string"},
                                 "field": {"type": "string"}}},
        "fix": {"type": "string", "description": "What to change before sending again"},
        "errors": {"type": "array", "items": {"type": "object"}, "description": "Further faults, when several"},
    },
    "additionalProperties": True,
}
PROBLEM_CONTENT = {PROBLEM_MEDIA_TYPE: {"schema": PROBLEM_REF}}
HTTP_METHODS = ("get", "put", "post", "delete", "patch", "head", "options", "trace")


def _is_error(status: str) -> bool:
    return status == "default" or status[:1] in ("4", "5")


def document_problems(schema: dict[str, Any]) -> dict[str, Any]:
    """Gives every operation's error responses the problem media type, and adds a default one; in place."""
    schemas = schema.setdefault("components", {}).setdefault("schemas", {})
    schemas["Problem"] = PROBLEM_SCHEMA
    for path_item in schema.get("paths", {}).values():
        for method in HTTP_METHODS:
            operation = path_item.get(method)
            if operation is None:
                continue
            responses = operation.setdefault("responses", {})
            for status, response in responses.items():
                if _is_error(status):
                    response["content"] = dict(PROBLEM_CONTENT)
            responses.setdefault("default", {"description": "Any other error, as RFC 9457 problem details",
                                             "content": dict(PROBLEM_CONTENT)})
    for name in ("HTTPValidationError", "ValidationError"):
        if not _referenced(schema, f"#/components/schemas/{name}"):
            schemas.pop(name, None)
    return schema


def _referenced(node: Any, ref: str) -> bool:
    if isinstance(node, dict):
        return node.get("$ref") == ref or any(_referenced(v, ref) for k, v in node.items() if k != "components")
    if isinstance(node, list):
        return any(_referenced(v, ref) for v in node)
    return False
