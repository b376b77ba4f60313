"""Text made safe for every part of a workbook: cells, sheet names, charts, document properties.

XML 1.0, the format inside an .xlsx, cannot carry the control characters U+0000-U+0008,
U+000B, U+000C, U+000E-U+001F (not even as character references), UTF-16 surrogates, or the
non-characters U+FFFE and U+FFFF. A spec title or a lot id holding one (a spec may write
``"\\x01"`` as an escape; a data file may hold anything) must neither break the file nor vanish
without trace, so each is replaced *visibly*:

* a C0 control character by its Unicode control picture (U+0001 -> U+2401 "␁", ESC -> "␛"),
  and DEL (U+007F, legal XML but invisible and refused by some readers) by "␡";
* a surrogate, U+FFFE or U+FFFF by the replacement character U+FFFD "�".

Tab, line feed and carriage return are legal and kept. Only the workbook gets the replaced
text: the JSON result keeps the original (JSON can carry any character).

:func:`xml_safe_evaluation` gives the workbook writer a copy of an Evaluation with every text
replaced so, in one place, so that every sheet, chart and property written from it is safe.
The spec text itself is kept verbatim (replay hashes it); YAML cannot hold such characters
unescaped, so it never needs replacing.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Mapping
from pathlib import PurePath
from typing import Any

# What XML 1.0 cannot carry at all.
XML_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
# What the workbook replaces: the above plus DEL.
XML_UNSAFE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ud800-\udfff\ufffe\uffff]")
_PICTURES = {c: chr(0x2400 + c) for c in range(0x20) if c not in (0x09, 0x0A, 0x0D)}
_PICTURES[0x7F] = "\u2421"


def _picture(m: re.Match) -> str:
    return _PICTURES.get(ord(m.group()), "\ufffd")


def xml_safe(text: str) -> str:
    """``text`` with every character XML 1.0 cannot carry (and DEL) replaced visibly.

    Examples
    --------
    >>> xml_safe("bore\\x01 Ø\\x1b[0m")
    'bore␁ Ø␛[0m'
    >>> xml_safe("plain") == "plain"
    True
    """
    if not XML_UNSAFE.search(text):
        return text
    return XML_UNSAFE.sub(_picture, text)


def escape_json_for_xml(text: str) -> str:
    """JSON text whose DEL and non-characters U+FFFE/U+FFFF are written as ``\\u`` escapes.

    They can only stand inside JSON strings, where the escape reads back as the same
    character, so the JSON keeps its meaning exactly and is stored in a workbook cell
    unchanged. (``json.dumps`` already escapes the other control characters; surrogates
    cannot occur in a result.)
    """
    for ch, esc in (("\x7f", "\\u007f"), ("\ufffe", "\\ufffe"), ("\uffff", "\\uffff")):
        if ch in text:
            text = text.replace(ch, esc)
    return text


def xml_legal(text: str) -> str:
    """Like :func:`xml_safe`, but only for what XML 1.0 cannot carry (DEL is kept): for text
    that must stay verbatim where it is legal (the spec text, the embedded record)."""
    if not has_xml_illegal(text):
        return text
    return XML_ILLEGAL.sub(_picture, text)


# the characters of XML_ILLEGAL but the surrogates, each found by a substring search
_ILLEGAL_CHARS = tuple(chr(c) for c in range(0x20) if c not in (0x09, 0x0A, 0x0D)) + (
    "\ufffe", "\uffff")
_LONG = 2048


def has_xml_illegal(text: str) -> bool:
    """Whether ``text`` holds a character XML 1.0 cannot carry (``XML_ILLEGAL.search``).

    A long text (the embedded record is megabytes) is searched for each such character in
    turn, which runs at memory speed where the regular expression's character class does not
    (a few times faster), and for a surrogate by encoding it (UTF-8 refuses them)."""
    if len(text) < _LONG:
        return XML_ILLEGAL.search(text) is not None
    if any(ch in text for ch in _ILLEGAL_CHARS):
        return True
    if text.isascii():
        return False
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False


# --- the evaluation, for the workbook --------------------------------------------------------

_KEEP_VERBATIM = {("Spec", "text")}  # replay hashes it; YAML cannot hold such characters raw


def xml_safe_evaluation(ev):
    """A copy of an Evaluation whose every text is :func:`xml_safe` (the same object when
    nothing needs replacing, which is the normal case and costs one scan)."""
    return _Walker().walk(ev)


_ATOMS = frozenset({type(None), bool, int, float, complex, bytes})  # kept as they are
_UNSAFE_SEARCH = XML_UNSAFE.search  # (a text without a match is kept as it is)
_FIELDS: dict[type, tuple[str, ...] | None] = {}  # a dataclass's fields walked (None: no dataclass)


def _fields_walked(t: type) -> tuple[str, ...] | None:
    names = _FIELDS.get(t, False)
    if names is False:
        names = None
        if dataclasses.is_dataclass(t):
            names = tuple(f.name for f in dataclasses.fields(t)
                          if f.init and (t.__name__, f.name) not in _KEEP_VERBATIM)
        _FIELDS[t] = names
    return names


class _Walker:
    """Walks an object graph, copying only what holds a text to replace. Exact built-in types
    are told apart by a set lookup before any ``isinstance`` (the evaluation of a large layout
    holds about 150,000 values); each dataclass's fields are listed once per type."""

    def __init__(self) -> None:
        self.memo: dict[int, Any] = {}  # shared objects stay shared in the copy

    def walk(self, obj: Any) -> Any:
        t = type(obj)
        if t is str:
            if not _UNSAFE_SEARCH(obj):
                return obj
            return xml_safe(obj)
        if t in _ATOMS:
            return obj
        if isinstance(obj, str):
            return xml_safe(obj)
        if isinstance(obj, (bool, int, float, complex, bytes)):
            return obj
        key = id(obj)
        if key in self.memo:
            return self.memo[key]
        out = self._walk(obj)
        self.memo[key] = out
        return out

    def _items(self, obj) -> list:
        atoms, walk = _ATOMS, self.walk
        return [x if type(x) in atoms or (type(x) is str and not _UNSAFE_SEARCH(x)) else walk(x)
                for x in obj]

    def _walk(self, obj: Any) -> Any:
        t = type(obj)
        names = _fields_walked(t)
        if names is not None:
            changes = {}
            atoms, walk = _ATOMS, self.walk
            for name in names:
                old = getattr(obj, name)
                kind = type(old)
                if kind in atoms or (kind is str and not _UNSAFE_SEARCH(old)):
                    continue
                new = walk(old)
                if new is not old:
                    changes[name] = new
            return dataclasses.replace(obj, **changes) if changes else obj
        if isinstance(obj, PurePath):
            text = str(obj)
            safe = xml_safe(text)
            return obj if safe == text else type(obj)(safe)
        if isinstance(obj, tuple):
            items = self._items(obj)
            if all(a is b for a, b in zip(items, obj, strict=True)):
                return obj
            return type(obj)(*items) if hasattr(obj, "_fields") else tuple(items)
        if isinstance(obj, list):
            items = self._items(obj)
            return obj if all(a is b for a, b in zip(items, obj, strict=True)) else items
        if isinstance(obj, Mapping):
            items = {self.walk(k): self.walk(v) for k, v in obj.items()}
            same = len(items) == len(obj) and all(
                k in obj and items[k] is obj[k] for k in items)
            return obj if same else items
        if t.__name__ == "DataFrame":
            return _frame(obj)
        return obj


def _frame(frame):
    """A DataFrame whose text columns are :func:`xml_safe`; the same frame when all are."""
    from pandas.api.types import is_object_dtype, is_string_dtype

    changed = {}
    for col in frame.columns:
        s = frame[col]
        if not (is_object_dtype(s.dtype) or is_string_dtype(s.dtype)):
            continue
        uniques = [v for v in s.unique() if isinstance(v, str)]
        if not uniques or not XML_UNSAFE.search("\n".join(uniques)):
            continue
        changed[col] = s.map(lambda v: xml_safe(v) if isinstance(v, str) else v)
    if not changed:
        return frame
    out = frame.copy()
    for col, s in changed.items():
        out[col] = s
    return out
