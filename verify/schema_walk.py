"""A small validator of the spec's JSON Schema over composed YAML nodes.

:func:`validate` walks the YAML node tree, not the loaded values, so every structural error
carries the line and column of the offending node and its key path
(``characteristics[2].checks.shift``). Only the keywords of
:data:`verify.schema.SUPPORTED_KEYWORDS` are interpreted.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import yaml
from yaml.constructor import ConstructorError, SafeConstructor

_TAG = "tag:yaml.org,2002:"
_SCALAR_TAGS = {_TAG + t for t in ("str", "int", "float", "bool", "null", "timestamp")}
_TYPE_WORDS = {
    "string": "text",
    "number": "a number",
    "integer": "a whole number",
    "boolean": "true or false",
    "null": "empty",
    "array": "a list",
    "object": "a mapping of keys",
}
# Nodes visited per document; aliases can make a small file expand enormously.
MAX_NODES = 200_000

@dataclass(frozen=True)
class Problem:
    """One structural problem: key path, message and 1-based line/column."""

    path: str
    message: str
    line: int | None
    column: int | None


@dataclass
class Document:
    """A validated YAML document: plain values plus where each key path sits in the file.

    ``marks`` maps a key path to the (line, column) of its value node, ``key_marks`` to that of
    its key; ``bad`` holds every path at which a problem was found, so that semantic checks can
    skip values that are not what the schema says.
    """

    value: Any
    marks: dict[str, tuple[int, int]] = field(default_factory=dict)
    key_marks: dict[str, tuple[int, int]] = field(default_factory=dict)
    problems: list[Problem] = field(default_factory=list)
    bad: set[str] = field(default_factory=set)

    def clean(self, path: str) -> bool:
        """True when nothing at ``path`` or below it failed validation."""
        for b in self.bad:
            if b == path or b.startswith(path + ".") or b.startswith(path + "["):
                return False
            if path.startswith(b + ".") or path.startswith(b + "["):
                return False
        return True

    def where(self, path: str, *, key: bool = False) -> tuple[int | None, int | None]:
        """Line and column of the value (or the key) at ``path``, falling back to parents."""
        table = self.key_marks if key else self.marks
        p = path
        while True:
            if p in table:
                return table[p]
            if key and p in self.marks:
                return self.marks[p]
            if not p:
                return None, None
            p = _parent(p)


def _parent(path: str) -> str:
    cut = max(path.rfind("."), path.rfind("["))
    return path[:cut] if cut > 0 else ""


def child_path(path: str, key: str | int) -> str:
    """``a.b`` + ``c`` -> ``a.b.c``; ``a`` + 2 -> ``a[2]``."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


def _yaml12_int(text: str) -> int:
    """A YAML 1.2 core-schema decimal integer (``010`` is ten, not eight as in YAML 1.1)."""
    return int(text, 10)


def _yaml12_float(text: str) -> float:
    """A YAML 1.2 core-schema float: decimal with optional exponent, ``.inf``, ``.nan``."""
    low = text.lower()
    if low.lstrip("+-") == ".inf":
        return -math.inf if low.startswith("-") else math.inf
    if low == ".nan":
        return math.nan
    return float(text)


# Characters a spec value must not hold even through an escape ("\0", "\ud800"): a NUL and
# UTF-16 surrogates, which are no characters at all (a report could not store them, nor a
# file name contain them).
FORBIDDEN_IN_TEXT = re.compile("[\x00\ud800-\udfff]")


def forbidden_characters(root: yaml.Node) -> list[Problem]:
    """Every scalar (key or value) of the node tree holding a NUL or a surrogate.

    The walk is iterative (a hostile spec may nest deeply) and visits a shared (aliased) node
    once.
    """
    out: list[Problem] = []
    seen: set[int] = set()
    stack: list[tuple[yaml.Node, str]] = [(root, "")]
    while stack:
        node, path = stack.pop()
        if id(node) in seen:
            continue
        seen.add(id(node))
        if isinstance(node, yaml.ScalarNode):
            m = FORBIDDEN_IN_TEXT.search(node.value)
            if m:
                ch = m.group()
                what = ("a NUL character (\\0)" if ch == "\x00" else
                        f"a lone UTF-16 surrogate (\\u{ord(ch):04x})")
                hint = ("remove it" if ch == "\x00" else "write the character itself, or "
                        "escape it as \\U followed by 8 hex digits (\\U0001F600)")
                out.append(Problem(path, f"the text holds {what}, which no report or file "
                                   f"name can carry: {hint}", *_mark(node)))
        elif isinstance(node, yaml.SequenceNode):
            for i, child in enumerate(node.value):
                stack.append((child, child_path(path, i)))
        elif isinstance(node, yaml.MappingNode):
            for key, value in node.value:
                name = key.value if isinstance(key, yaml.ScalarNode) else "?"
                name = FORBIDDEN_IN_TEXT.sub("\ufffd", str(name))
                stack.append((key, child_path(path, name)))
                stack.append((value, child_path(path, name)))
    out.sort(key=lambda p: (p.line or 0, p.column or 0))
    return out


def _mark(node: yaml.Node) -> tuple[int, int]:
    return node.start_mark.line + 1, node.start_mark.column + 1


class _Validator:
    def __init__(self, root: dict, key_homes: Callable[[], dict] | None = None):
        self.root = root
        self.key_homes = key_homes
        self.doc = Document(value=None)
        self.nodes = 0
        self.constructor = SafeConstructor()

    # -- problems ---------------------------------------------------------------------------
    def problem(self, path: str, message: str, where: tuple[int, int] | None) -> None:
        line, column = where if where else (None, None)
        self.doc.problems.append(Problem(path, message, line, column))
        self.doc.bad.add(path)

    # -- node -> plain value ----------------------------------------------------------------
    def scalar(self, node: yaml.ScalarNode, path: str) -> tuple[bool, Any]:
        tag = node.tag
        try:
            if tag == _TAG + "str" or tag == _TAG + "timestamp":
                # dates are kept as the text written (JSON has no date type)
                return True, node.value
            if tag == _TAG + "int":
                return True, _yaml12_int(node.value)
            if tag == _TAG + "float":
                return True, _yaml12_float(node.value)
            if tag == _TAG + "bool":
                return True, self.constructor.construct_yaml_bool(node)
            if tag == _TAG + "null":
                return True, None
        except (ConstructorError, ValueError) as exc:
            self.problem(path, f"cannot read {node.value!r}: {exc}", _mark(node))
            return False, None
        self.problem(path, _tag_message(tag), _mark(node))
        return False, None

    def walk(self, node: yaml.Node, schema: dict, path: str) -> tuple[bool, Any]:
        """Validate ``node`` against ``schema``; return (ok, plain value)."""
        self.nodes += 1
        if self.nodes > MAX_NODES:
            if self.nodes == MAX_NODES + 1:
                self.problem(path, f"the spec expands to more than {MAX_NODES} values (aliases?)",
                             _mark(node))
            return False, None
        self.doc.marks.setdefault(path, _mark(node))
        schema = self.resolve(schema)
        if "anyOf" in schema:
            return self.any_of(node, schema, path)
        if isinstance(node, yaml.ScalarNode):
            ok, value = self.scalar(node, path)
            if not ok:
                return False, None
        elif isinstance(node, yaml.SequenceNode):
            if node.tag != _TAG + "seq":
                self.problem(path, _tag_message(node.tag), _mark(node))
                return False, None
            value = _SEQ
        elif isinstance(node, yaml.MappingNode):
            if node.tag != _TAG + "map":
                self.problem(path, _tag_message(node.tag), _mark(node))
                return False, None
            value = _MAP
        else:  # pragma: no cover - yaml has no other node kinds
            self.problem(path, "unreadable value", _mark(node))
            return False, None

        jtype = _json_type(value)
        if not self.check_type(node, schema, path, value, jtype):
            return False, None
        if value is _SEQ:
            return self.sequence(node, schema, path)
        if value is _MAP:
            return self.mapping(node, schema, path)
        return self.leaf(node, schema, path, value, jtype)

    def resolve(self, schema: dict) -> dict:
        while "$ref" in schema:
            ref = schema["$ref"]
            if not ref.startswith("#/"):
                raise ValueError(f"unsupported $ref {ref!r} in the spec schema")
            target: Any = self.root
            for part in ref[2:].split("/"):
                target = target[part]
            schema = target
        return schema

    def check_type(self, node, schema, path, value, jtype) -> bool:
        allowed = schema.get("type")
        if "const" in schema:
            const = schema["const"]
            if jtype in ("object", "array") or value != const or type(value) is not type(const):
                self.problem(path, f"must be {json.dumps(schema['const'])}, not "
                             f"{_show(node, value)}", _mark(node))
                return False
            return True
        if "enum" in schema and allowed is None:
            return self.check_enum(node, schema, path, value)
        if allowed is None:
            return True
        allowed = [allowed] if isinstance(allowed, str) else list(allowed)
        if _type_ok(jtype, value, allowed):
            return True
        self.problem(path, _type_message(node, value, jtype, allowed), _mark(node))
        return False

    def check_enum(self, node, schema, path, value) -> bool:
        options = schema["enum"]
        if any(value == o and type(value) is type(o) for o in options):
            return True
        shown = ", ".join(str(o) for o in options)
        msg = f"must be one of {shown}, not {_show(node, value)}"
        near = _nearest(str(value), [str(o) for o in options]) if isinstance(value, str) else None
        if near:
            msg += f"; did you mean {near!r}?"
        self.problem(path, msg, _mark(node))
        return False

    def leaf(self, node, schema, path, value, jtype) -> tuple[bool, Any]:
        ok = True
        if "enum" in schema and "type" in schema:
            ok = self.check_enum(node, schema, path, value)
        if jtype in ("number", "integer"):
            if isinstance(value, float) and not math.isfinite(value):
                self.problem(path, f"must be a finite number, not {node.value}", _mark(node))
                return False, None
            if jtype == "integer" and isinstance(value, float) and "integer" in _types(schema):
                value = int(value)
            ok = self.check_bounds(node, schema, path, value) and ok
            if "string" in _types(schema):
                # where text is allowed, a number is kept exactly as written ("01", "2.50")
                value = node.value
        if jtype == "string":
            ok = self.check_string(node, schema, path, value) and ok
        return ok, value if ok else None

    def check_bounds(self, node, schema, path, value) -> bool:
        checks = (
            ("minimum", lambda v, b: v >= b, "at least"),
            ("maximum", lambda v, b: v <= b, "at most"),
            ("exclusiveMinimum", lambda v, b: v > b, "greater than"),
            ("exclusiveMaximum", lambda v, b: v < b, "less than"),
        )
        for key, test, words in checks:
            if key in schema and not test(value, schema[key]):
                self.problem(path, f"must be {words} {schema[key]}, not {node.value}",
                             _mark(node))
                return False
        return True

    def check_string(self, node, schema, path, value: str) -> bool:
        if "minLength" in schema and len(value) < schema["minLength"]:
            self.problem(path, "must not be empty" if schema["minLength"] == 1
                         else f"must have at least {schema['minLength']} characters", _mark(node))
            return False
        if "maxLength" in schema and len(value) > schema["maxLength"]:
            self.problem(path, f"must have at most {schema['maxLength']} characters "
                         f"({len(value)} given)", _mark(node))
            return False
        if "pattern" in schema and not re.search(schema["pattern"], value):
            msg = f"{_show(node, value)} is not in the expected form"
            if schema.get("examples"):
                msg += f"; write it like {schema['examples'][0]!r}"
            if schema.get("description"):
                msg += f" ({schema['description']})"
            self.problem(path, msg, _mark(node))
            return False
        return True

    def sequence(self, node: yaml.SequenceNode, schema, path) -> tuple[bool, Any]:
        items = node.value
        ok = True
        if "minItems" in schema and len(items) < schema["minItems"]:
            n = schema["minItems"]
            self.problem(path, f"must have at least {n} item{'s' if n != 1 else ''} "
                         f"({len(items)} given)", _mark(node))
            ok = False
        if "maxItems" in schema and len(items) > schema["maxItems"]:
            n = schema["maxItems"]
            self.problem(path, f"must have at most {n} item{'s' if n != 1 else ''} "
                         f"({len(items)} given)", _mark(node))
            ok = False
        out = []
        item_schema = schema.get("items", {})
        for i, child in enumerate(items):
            c_ok, c_value = self.walk(child, item_schema, child_path(path, i))
            ok = ok and c_ok
            out.append(c_value)
        return ok, out

    def mapping(self, node: yaml.MappingNode, schema, path) -> tuple[bool, Any]:
        props = schema.get("properties", {})
        closed = schema.get("additionalProperties", True) is False
        out: dict[str, Any] = {}
        seen: dict[str, int] = {}
        ok = True
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode) or key_node.tag == _TAG + "merge":
                what = ("merge keys (<<) are not supported: write the keys out"
                        if key_node.tag == _TAG + "merge" else "a key must be plain text")
                self.problem(path, what, _mark(key_node))
                ok = False
                continue
            key = key_node.value
            kpath = child_path(path, key)
            if key in seen:
                self.problem(kpath, f"key '{key}' appears twice (first on line {seen[key]})",
                             _mark(key_node))
                ok = False
                continue
            seen[key] = _mark(key_node)[0]
            self.doc.key_marks[kpath] = _mark(key_node)
            if key not in props:
                if closed:
                    self.problem(kpath, _unknown_key_message(key, props, path, self.key_homes),
                                 _mark(key_node))
                    ok = False
                    continue
                sub = schema.get("additionalProperties", {})
                sub = sub if isinstance(sub, dict) else {}
            else:
                sub = props[key]
            c_ok, c_value = self.walk(value_node, sub, kpath)
            ok = ok and c_ok
            if c_ok or isinstance(c_value, dict | list):
                out[key] = c_value  # containers stay, partly valid; bad leaves are dropped
        for req in schema.get("required", ()):
            if req not in seen:
                where = f" in `{path}`" if path else ""
                self.problem(child_path(path, req), f"missing required key '{req}'{where}",
                             _mark(node))
                ok = False
        return ok, out

    def any_of(self, node, schema, path) -> tuple[bool, Any]:
        branches = [self.resolve(b) for b in schema["anyOf"]]
        kind = _node_kind(node)
        candidates = [b for b in branches if _branch_accepts_kind(b, node, kind)]
        if not candidates:
            options = "; or ".join(b.get("title", "/".join(_types(b))) for b in branches)
            self.problem(path, f"must be {options}", _mark(node))
            return False, None
        first_problems = None
        for branch in candidates:
            saved = (list(self.doc.problems), set(self.doc.bad))
            ok, value = self.walk_branch(node, branch, path)
            if ok:
                return True, value
            if first_problems is None:
                first_problems = (list(self.doc.problems), set(self.doc.bad))
            self.doc.problems, self.doc.bad = saved
        self.doc.problems, self.doc.bad = first_problems
        return False, None

    def walk_branch(self, node, branch, path):
        self.nodes -= 1  # the node is counted once, not once per branch
        return self.walk(node, branch, path)


_SEQ = object()
_MAP = object()


def _json_type(value: Any) -> str:
    if value is _SEQ:
        return "array"
    if value is _MAP:
        return "object"
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int):
        return "integer"
    if isinstance(value, float):
        return "integer" if math.isfinite(value) and value.is_integer() else "number"
    return "string"


def _types(schema: dict) -> list[str]:
    t = schema.get("type", [])
    return [t] if isinstance(t, str) else list(t)


def _type_ok(jtype: str, value: Any, allowed: list[str]) -> bool:
    if jtype in allowed:
        return True
    if jtype == "integer" and "number" in allowed:
        return True
    return False


def _node_kind(node: yaml.Node) -> str:
    if isinstance(node, yaml.SequenceNode):
        return "array"
    if isinstance(node, yaml.MappingNode):
        return "object"
    return "scalar"


def _branch_accepts_kind(branch: dict, node: yaml.Node, kind: str) -> bool:
    types = _types(branch)
    if kind != "scalar":
        return kind in types
    scalar_types = {
        _TAG + "str": ("string",), _TAG + "timestamp": ("string",),
        _TAG + "int": ("integer", "number"), _TAG + "float": ("number", "integer"),
        _TAG + "bool": ("boolean",), _TAG + "null": ("null",),
    }.get(node.tag, ())
    return any(t in types for t in scalar_types)


def _show(node: yaml.Node, value: Any) -> str:
    if isinstance(node, yaml.ScalarNode):
        if node.value == "":
            return "an empty value"
        text = node.value
        # a long value is cut: the message points at its line anyway
        return repr(text) if len(text) <= 80 else f"{text[:80]!r}… ({len(text):,} characters)"
    return "a list" if isinstance(node, yaml.SequenceNode) else "a mapping"


def _type_message(node: yaml.Node, value: Any, jtype: str, allowed: list[str]) -> str:
    words = [_TYPE_WORDS.get(t, t) for t in allowed if not (t == "integer" and "number" in allowed)]
    want = words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]
    if jtype == "null":
        return f"must be {want}, but it is empty"
    got = _TYPE_WORDS.get(jtype, jtype)
    if jtype == "integer" and "integer" not in allowed and "number" not in allowed:
        got = "a number"
    msg = f"must be {want}, not {got}"
    if isinstance(node, yaml.ScalarNode):
        msg += f" ({_show(node, value)})"
    if "string" in allowed and isinstance(node, yaml.ScalarNode) and node.style is None:
        msg += "; put it in quotes to make it text"
    return msg


def _nearest(word: str, options) -> str | None:
    import difflib  # only when a name is not found: not at start-up

    near = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return near[0] if near else None


def _unknown_key_message(key: str, props: dict, path: str,
                         key_homes: Callable[[], dict] | None) -> str:
    where = f"`{path}`" if path else "the top level"
    near = _nearest(key, props)
    if near:
        return f"unknown key '{key}' in {where}; did you mean '{near}'?"
    homes = key_homes().get(key) if key_homes is not None else None
    if homes:
        return f"unknown key '{key}' in {where}; it belongs in {' or '.join(homes)}"
    return f"unknown key '{key}' in {where}; valid keys there: {', '.join(props)}"


def _tag_message(tag: str) -> str:
    if "python" in tag:
        return (f"the tag {tag.replace(_TAG, '!!')} is refused: a spec holds plain data "
                "(text, numbers, true/false, lists, mappings), never objects or code")
    return (f"the tag {tag.replace(_TAG, '!!')} is not allowed in a spec: use plain text, "
            "numbers, true/false, lists and mappings")


def validate(node: yaml.Node, schema: dict, *,
             key_homes: Callable[[], dict[str, tuple[str, ...]]] | None = None) -> Document:
    """Check a composed YAML node tree against ``schema``.

    Parameters
    ----------
    node
        The root node from ``yaml.compose`` (a safe loader).
    schema
        The schema to apply (:func:`verify.schema.validate` applies the spec schema).
    key_homes
        Called when a key is unknown and no known key is near it: every key of the schema ->
        the paths where it belongs, so the message can point there.

    Returns
    -------
    Document
        Plain values (only those that passed), their marks and every problem found.

    Examples
    --------
    >>> import yaml
    >>> schema = {"type": "object", "additionalProperties": False, "required": ["title"],
    ...           "properties": {"title": {"type": "string"}}}
    >>> [p.path for p in validate(yaml.compose("x: 1"), schema).problems]
    ['x', 'title']
    """
    v = _Validator(schema, key_homes)
    _ok, v.doc.value = v.walk(node, schema, "")
    return v.doc
