"""What the browser needs to keep surveying offline: the field rules of a create schema.

The offline script checks a form before it queues it, with the same limits
the API applies (required fields, numeric ranges, lengths, patterns, the
listed choices). The limits are read here from the schema's JSON Schema, so
the page and the API cannot drift apart; the rules across fields live in
the script beside the schema's own validator and are tested against it.
"""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel

# JSON Schema keywords copied into a rule, under the name the script reads.
LIMIT_KEYWORDS = {
    "minimum": "ge",
    "exclusiveMinimum": "gt",
    "maximum": "le",
    "exclusiveMaximum": "lt",
    "minLength": "min_length",
    "maxLength": "max_length",
    "pattern": "pattern",
}


def _kind(option: dict[str, Any], defs: dict[str, Any]) -> tuple[str, dict[str, Any]]:
    """(kind, the schema option with a ``$ref`` resolved) of one field type."""
    ref = option.get("$ref")
    if isinstance(ref, str):
        option = defs[ref.rsplit("/", 1)[-1]]
    if "enum" in option:
        return "choice", option
    json_type = option.get("type")
    if json_type == "number":
        return "number", option
    if json_type == "integer":
        return "whole", option
    if json_type == "boolean":
        return "bool", option
    if json_type == "string" and option.get("format") == "date":
        return "date", option
    return "text", option


def field_rules(*, schema: type[BaseModel]) -> dict[str, dict[str, Any]]:
    """Per field of ``schema`` (the client id excepted): how it travels and what it accepts.

    Each rule has ``kind`` (text, number, whole, bool, date or choice),
    ``required``, ``nullable``, ``default`` (when there is one), the limits
    that apply (``ge``, ``gt``, ``le``, ``lt``, ``min_length``, ``max_length``,
    ``pattern``) and, for a choice, the accepted ``choices``.
    """
    document = schema.model_json_schema()
    defs = document.get("$defs", {})
    required = set(document.get("required", []))
    rules: dict[str, dict[str, Any]] = {}
    for name, prop in document["properties"].items():
        if name == "id":
            continue
        options = prop.get("anyOf", [prop])
        typed = [option for option in options if option.get("type") != "null"]
        kind, resolved = _kind(typed[0] if typed else {}, defs)
        rule: dict[str, Any] = {
            "kind": kind,
            "required": name in required,
            "nullable": len(typed) < len(options),
        }
        if "default" in prop:
            rule["default"] = prop["default"]
        for keyword, key in LIMIT_KEYWORDS.items():
            if keyword in resolved:
                rule[key] = resolved[keyword]
        if kind == "choice":
            rule["choices"] = list(resolved["enum"])
        rules[name] = rule
    return rules
