"""The JSON result's text: ``json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)``
written faster, and a top-level key added to such a text without reading it back.

Kept apart from :mod:`verify.report.json_result` (which builds the document from an
evaluation and imports numpy and the model) so that the nightly parent, which only adds the
ledger's anchor to a result, imports nothing heavy.
"""

from __future__ import annotations

import json


def dumps(doc: dict) -> str:
    """Serialise with full-precision floats; refuses NaN (a NaN must never reach a report).

    The text is exactly ``json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)``
    and a newline. A document of plain dicts, lists, strings, numbers, booleans and None (what
    :func:`verify.report.json_result.result_dict` gives) is written by :func:`_encode`,
    several times faster than the standard library's indenting encoder (which is pure Python);
    anything else goes to ``json.dumps`` itself, which also raises its own errors.
    """
    out: list[str] = []
    try:
        _encode(doc, "\n", out)
    except _NotPlain:
        return json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    out.append("\n")
    return "".join(out)


class _NotPlain(Exception):
    """A value :func:`_encode` leaves to ``json.dumps``."""


_string = json.encoder.encode_basestring  # the C function when available (as json.dumps uses)
_INF = float("inf")


def _encode(o, nl: str, out: list[str]) -> None:
    """Append the JSON text of ``o`` as ``json.dumps(indent=2, ensure_ascii=False)`` writes it
    (``nl``: a newline and the current indentation); raises :class:`_NotPlain` otherwise."""
    t = type(o)
    if t is str:
        out.append(_string(o))
    elif t is float:
        if o != o or o == _INF or o == -_INF:
            raise _NotPlain  # json.dumps refuses it (allow_nan=False) with its own message
        out.append(float.__repr__(o))
    elif t is int:
        out.append(int.__repr__(o))
    elif o is None:
        out.append("null")
    elif o is True:
        out.append("true")
    elif o is False:
        out.append("false")
    elif t is dict:
        if not o:
            out.append("{}")
            return
        inner = nl + "  "
        sep = "{" + inner
        for k, v in o.items():
            if type(k) is not str:
                raise _NotPlain
            out.append(sep)
            out.append(_string(k))
            out.append(": ")
            _encode(v, inner, out)
            sep = "," + inner
        out.append(nl + "}")
    elif t is list or t is tuple:
        if not o:
            out.append("[]")
            return
        inner = nl + "  "
        sep = "[" + inner
        for v in o:
            out.append(sep)
            _encode(v, inner, out)
            sep = "," + inner
        out.append(nl + "]")
    else:
        raise _NotPlain


def with_key(text: str, key: str, value) -> str:
    r"""``text`` (a document as :func:`dumps` wrote it) with ``key: value`` added at its end.

    The same text as serialising the document with the key added, without reading the text
    back: the result's ``workbook`` (known once the workbook is written) and the nightly run's
    ``ledger`` anchor are added this way. A document that already holds ``key`` at its top
    level (or is not an object), or a value that is not plain JSON data, is read back and
    written again.

    Examples
    --------
    >>> with_key(dumps({"a": 1}), "b", [2.5, None])
    '{\n  "a": 1,\n  "b": [\n    2.5,\n    null\n  ]\n}\n'
    """
    out = [text[:-3], ",\n  ", _string(key), ": "]
    try:
        if not text.endswith("\n}\n") or f'\n  {_string(key)}: ' in text:
            raise _NotPlain
        _encode(value, "\n  ", out)
    except _NotPlain:
        doc = json.loads(text)
        doc[key] = value
        return dumps(doc)
    out.append("\n}\n")
    return "".join(out)
