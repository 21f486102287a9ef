"""The published JSON Schema of interpretation content, and its errors in our own terms.

The schema file (``schemas/interpretation-content.v1.json``, JSON Schema
Draft 2020-12) is the one statement of the document's shape: the API serves
it, the OpenAPI description points to it, field apps and archives can read
it.  :func:`structural_errors` validates a document against it with the
``jsonschema`` library and turns each failure into the service's error
entries ``{field, code, message}``: the field as a path
(``phases[0].to_next.arrangement``) and a stable code taken from the
``x-codes`` annotation of the sub-schema that failed (keyword -> code).

Two departures from plain JSON Schema, both to keep the meaning the service
has always had: numbers must be finite (JSON Schema admits NaN where a
parser produces it), and an integer must be written as one (``5.0`` is not a
context id), so ids hash and compare as the integers they name.
"""

from __future__ import annotations

import json
import math
from functools import lru_cache
from importlib import resources

from jsonschema import Draft202012Validator, validators

__all__ = ["SCHEMA_VERSION", "schema", "structural_errors", "enum_of"]

SCHEMA_VERSION = 1
_SCHEMA_FILE = f"interpretation-content.v{SCHEMA_VERSION}.json"

# What a failed keyword means when its sub-schema names no code of its own.
_DEFAULT_CODES = {
    "type": "invalid-type",
    "enum": "invalid-choice",
    "const": "invalid-choice",
    "maxLength": "too-long",
    "pattern": "invalid-format",
    "minimum": "invalid-number",
    "maximum": "invalid-number",
    "required": "required",
    "additionalProperties": "unknown-field",
}


def _is_number(checker, value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _is_integer(checker, value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


_TYPES = Draft202012Validator.TYPE_CHECKER.redefine_many({"number": _is_number, "integer": _is_integer})
_Validator = validators.extend(Draft202012Validator, type_checker=_TYPES)


@lru_cache(maxsize=1)
def schema() -> dict:
    """The schema document, as published (read once per process)."""
    text = resources.files("chronology.interpretations").joinpath("schemas", _SCHEMA_FILE).read_text("utf-8")
    return json.loads(text)


@lru_cache(maxsize=1)
def _validator():
    return _Validator(schema())


def enum_of(definition: str) -> tuple[str, ...]:
    """The choices of one ``$defs`` entry (the schema is the one list of them)."""
    return tuple(schema()["$defs"][definition]["enum"])


def _path(parts) -> str:
    out = ""
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


def _join(base: str, name: str) -> str:
    return f"{base}.{name}" if base else name


def _resolve(sub: dict) -> dict:
    ref = sub.get("$ref", "")
    if ref.startswith("#/$defs/"):
        return schema()["$defs"][ref.removeprefix("#/$defs/")]
    return sub


def _code(sub: dict, keyword: str, instance=None) -> str:
    codes = _resolve(sub).get("x-codes", {})
    if isinstance(instance, str) and "string" in codes and keyword in ("type", "minimum"):
        return codes["string"]
    return codes.get(keyword, _DEFAULT_CODES.get(keyword, "invalid"))


def _message(error) -> str:
    keyword, value = error.validator, error.validator_value
    if keyword in ("enum", "const"):
        choices = value if keyword == "enum" else [value]
        return f"must be one of {', '.join(map(str, choices))}"
    if keyword == "maxLength":
        return f"at most {value} characters"
    if keyword == "pattern" and value == "\\S":
        return "this text is required"
    if keyword == "type":
        kinds = value if isinstance(value, list) else [value]
        return "must be " + " or ".join(k for k in kinds if k != "null") + (" or null" if "null" in kinds else "")
    if keyword in ("minimum", "maximum"):
        return f"must be {'at least' if keyword == 'minimum' else 'at most'} {value}"
    return error.message


def _entries(error) -> list[dict]:
    base = _path(error.absolute_path)
    keyword = error.validator
    if keyword == "required":
        properties = error.schema.get("properties", {})
        missing = [name for name in error.validator_value if name not in error.instance]
        return [{"field": _join(base, name), "code": _code(properties.get(name, {}), "required"),
                 "message": "this field is required"} for name in missing]
    if keyword == "additionalProperties":
        known = set(error.schema.get("properties", {}))
        return [{"field": _join(base, key), "code": "unknown-field", "message": f"{key!r} is not a field here"}
                for key in sorted(set(error.instance) - known)]
    return [{"field": base or "content", "code": _code(error.schema, keyword, error.instance),
             "message": _message(error)}]


def structural_errors(document) -> list[dict]:
    """Every place where ``document`` breaks the published schema, in document order.

    Returns
    -------
    list of dict
        ``{"field", "code", "message"}`` entries; empty when the shape is right.
    """
    errors = []
    for error in _validator().iter_errors(document):
        # A failed "if" of a question kind is how the schema picks the kind, not an error.
        if error.validator in ("if", "allOf"):
            continue
        errors.extend(_entries(error))
    return errors


def openapi_view() -> dict:
    """The schema as an OpenAPI 3.0 schema object, for the API's own description.

    OpenAPI 3.0 speaks an older dialect: ``nullable`` instead of a type list,
    no ``$defs`` or ``if``/``then``.  Definitions are written in place and the
    per-kind question rules become the kinds' list of fields in the
    description; the full rules stay in the published file.
    """
    defs = schema()["$defs"]

    def convert(node):
        if isinstance(node, list):
            return [convert(v) for v in node]
        if not isinstance(node, dict):
            return node
        if "$ref" in node:
            return convert(defs[node["$ref"].removeprefix("#/$defs/")])
        out = {}
        for key, value in node.items():
            if key.startswith("x-") or key in ("$schema", "$id", "$defs", "allOf"):
                continue
            if key == "type" and isinstance(value, list):
                kinds = [k for k in value if k != "null"]
                out["type"] = kinds[0]
                if "null" in value:
                    out["nullable"] = True
                continue
            out[key] = convert(value)
        return out

    view = convert(schema())
    kinds = "; ".join(f"{r['if']['properties']['kind']['const']}: {', '.join(r['then']['required'])}"
                      for r in defs["question"]["allOf"])
    view["properties"]["questions"]["items"]["description"] = f"Fields by kind: {kinds}; optional label."
    view["properties"]["questions"]["items"]["additionalProperties"] = True
    view["externalDocs"] = {"description": "The full JSON Schema (Draft 2020-12)",
                            "url": "/api/v1/schemas/interpretation/"}
    return view
