"""The JSON Schema of the spec format, assembled from its parts.

The schema is the single source of the spec's structure: editors read it through the
``# yaml-language-server: $schema=...`` line, ``verify schema`` prints it, and
:func:`validate` (:mod:`verify.schema_walk`) applies it to the YAML node tree, so every
structural error carries the line and column of the offending node and its key path
(``characteristics[2].checks.shift``).

The file ``verify/spec.schema.json`` holds what belongs to no kind of check; each kind adds its
``checks.<name>`` sub-schema and the definitions it refers to from its ``spec`` hook
(:class:`verify.spec_kind.CheckSpec`), and its ``characteristics_from`` columns to that key's
description. ``specs/verify-spec.schema.json`` is the assembled schema as published (a test
compares them).

Only the schema keywords listed in :data:`SUPPORTED_KEYWORDS` are interpreted; a test keeps the
schema within them.
"""

from __future__ import annotations

import json
from functools import cache
from importlib import resources
from typing import Any

from . import schema_walk
from .schema_walk import (
    MAX_NODES,
    Document,
    Problem,
    child_path,
    forbidden_characters,
)

SCHEMA_RESOURCE = "spec.schema.json"
RESULT_SCHEMA_RESOURCE = "result.schema.json"

# Keywords the validator understands; annotations (description, default, ...) are ignored.
SUPPORTED_KEYWORDS = frozenset(
    {
        "type", "properties", "required", "additionalProperties", "enum", "const", "items",
        "minItems", "maxItems", "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum",
        "pattern", "minLength", "maxLength", "anyOf", "$ref",
    }
)
ANNOTATION_KEYWORDS = frozenset(
    {"$schema", "$id", "title", "description", "default", "examples", "definitions"}
)

__all__ = ["SCHEMA_RESOURCE", "RESULT_SCHEMA_RESOURCE", "SUPPORTED_KEYWORDS",
           "ANNOTATION_KEYWORDS", "MAX_NODES", "Document", "Problem", "child_path",
           "forbidden_characters", "validate", "schema_text", "result_schema_text",
           "load_schema", "base_schema", "assemble", "schema_keywords"]


def base_schema() -> dict:
    """The part of the schema that belongs to no kind of check (``verify/spec.schema.json``)."""
    return json.loads(resources.files("verify").joinpath(SCHEMA_RESOURCE).read_text(
        encoding="utf-8"))


def assemble(base: dict, specs) -> dict:
    """The whole schema: ``base`` with each kind's sub-schema, definitions and table columns.

    Parameters
    ----------
    base
        The schema without the kinds (:func:`base_schema`); not modified.
    specs
        The kinds' :class:`~verify.spec_kind.CheckSpec` objects, in registry order.
    """
    from .spec_kind import schema_position

    out = json.loads(json.dumps(base))  # a deep copy: the hooks' dicts stay untouched
    fresh = lambda d: json.loads(json.dumps(d))  # noqa: E731
    checks = out["definitions"]["checks"]
    if checks.get("properties"):
        raise ValueError("the base schema lists checks itself: they come from the kinds")
    checks["properties"] = {s.name: fresh(s.schema)
                            for s in sorted(specs, key=schema_position)}
    added: dict[str, Any] = {}
    for s in specs:
        for key, value in s.definitions.items():
            if key in out["definitions"] or (key in added and added[key] != value):
                raise ValueError(f"two parts of the spec schema define {key!r}")
            added[key] = fresh(value)
    definitions = {}
    for key, value in out["definitions"].items():
        definitions[key] = value
        if key == "checks":  # the kinds' definitions follow the checks they serve
            definitions.update(added)
    out["definitions"] = definitions
    checks["description"] = checks["description"].replace("{check_defaults}",
                                                          _defaults_words(specs))
    source = out["properties"]["characteristics_from"]
    columns = [c.column for s in specs for c in s.table_columns]
    source["description"] = source["description"].replace(
        "{check_columns}", "".join(f", {c}" for c in columns))
    return out


def _defaults_words(specs) -> str:
    """Which checks run when ``checks:`` is left out, for the description of ``checks``."""
    measured = [s for s in specs if _measures(s) == "measured"]
    pass_fail = [s for s in specs if _measures(s) == "pass_fail"]
    runs = [f"{s.name}{s.by_default}" for s in measured if s.by_default is not None]
    listed = [s.name for s in measured if s.by_default is None]
    text = "Left out: " + _series(runs, ", and ")
    if listed:
        text += (f"; {' and '.join(listed)} "
                 f"{'runs' if len(listed) == 1 else 'run'} only when listed")
    text += "."
    if pass_fail:
        left_out = ", ".join(s.name for s in pass_fail if s.by_default is not None)
        text += (f" A pass-fail characteristic runs {' and '.join(s.name for s in pass_fail)}"
                 f" (left out: {left_out}).")
    return text


def _measures(spec) -> str:
    from .checks import kind

    try:
        return kind(spec.name).measures
    except KeyError:  # a kind not registered (a test's): measured
        return "measured"


def _series(items: list[str], last: str) -> str:
    if len(items) <= 2:
        return " and ".join(items)
    return ", ".join(items[:-1]) + last + items[-1]


@cache
def schema_text() -> str:
    """The JSON Schema of the spec format, as the text that ``verify schema`` prints."""
    from .spec_kind import check_specs

    return json.dumps(assemble(base_schema(), check_specs()), indent=2,
                      ensure_ascii=False) + "\n"


@cache
def result_schema_text() -> str:
    """The JSON Schema of the result format verify-result/1 (``verify schema --result``)."""
    return resources.files("verify").joinpath(RESULT_SCHEMA_RESOURCE).read_text(
        encoding="utf-8")


@cache
def _schema() -> dict:
    return json.loads(schema_text())


def load_schema() -> dict:
    """The JSON Schema of the spec format as a fresh dict (callers may modify it)."""
    return json.loads(schema_text())


@cache
def _key_homes() -> dict[str, tuple[str, ...]]:
    """Every key of the schema -> the generic paths where it belongs (``checks.shift.margin``)."""
    root = _schema()
    homes: dict[str, list[str]] = {}

    def resolve(s: dict) -> dict:
        while "$ref" in s:
            target: Any = root
            for part in s["$ref"][2:].split("/"):
                target = target[part]
            s = target
        return s

    def visit(s: dict, path: str, depth: int) -> None:
        s = resolve(s)
        if depth > 12:
            return
        for key, sub in s.get("properties", {}).items():
            full = f"{path}.{key}" if path else key
            homes.setdefault(key, []).append(full)
            visit(sub, full, depth + 1)
        if isinstance(s.get("items"), dict):
            visit(s["items"], path + "[]", depth + 1)

    visit(root, "", 0)
    return {k: tuple(v) for k, v in homes.items()}


def validate(node, schema: dict | None = None) -> Document:
    """Check a composed YAML node tree against the spec schema (or ``schema``).

    Parameters
    ----------
    node
        The root node from ``yaml.compose`` (a safe loader).
    schema
        The schema to apply; default the spec schema.

    Returns
    -------
    Document
        Plain values (only those that passed), their marks and every problem found; an
        unknown key far from every key there is pointed to where it belongs in the spec schema.

    Examples
    --------
    >>> import yaml
    >>> doc = validate(yaml.compose("format: verify/1\\ntitle: x\\n", Loader=yaml.SafeLoader))
    >>> sorted(p.path for p in doc.problems)
    ['data']
    """
    return schema_walk.validate(node, schema if schema is not None else _schema(),
                                key_homes=_key_homes)


def schema_keywords(schema: dict) -> set[str]:
    """Every keyword used anywhere in ``schema`` (for the test that keeps it supported)."""
    found: set[str] = set()

    def visit(s: Any, in_props: bool = False) -> None:
        if isinstance(s, dict):
            for k, v in s.items():
                if in_props:
                    visit(v)
                    continue
                found.add(k)
                if k in ("properties", "definitions"):
                    visit(v, in_props=True)
                elif k in ("items", "additionalProperties") and isinstance(v, dict):
                    visit(v)
                elif k == "anyOf":
                    for b in v:
                        visit(b)

    visit(schema)
    return found
