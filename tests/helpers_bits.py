"""Bit-for-bit comparison of frozen results, shared by the tests that hold a shortcut to the
plain route it replaces."""

from __future__ import annotations

import dataclasses


def field_bits(obj) -> list[tuple]:
    """Every field of a frozen result as (name, type, value), floats by their exact bits."""
    out = []
    for f in dataclasses.fields(obj):
        v = getattr(obj, f.name)
        out.append((f.name, type(v), v.hex() if isinstance(v, float) else v))
    return out
