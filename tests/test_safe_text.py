"""verify.report.safe_text.xml_safe_evaluation: every text of an object graph made XML-safe.

The rules (module docstring of verify.report.safe_text): XML 1.0 (section 2.2, Char) cannot
carry C0 controls other than tab, LF, CR, surrogates, U+FFFE or U+FFFF; each is replaced by its
Unicode control picture (U+2400 block) or U+FFFD, DEL by U+2421; the spec text is kept
verbatim. A graph with nothing to replace comes back as the same object.
"""

from __future__ import annotations

import dataclasses
from collections import namedtuple
from pathlib import PurePosixPath

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.safe_text import XML_ILLEGAL, has_xml_illegal, xml_safe_evaluation

Pair = namedtuple("Pair", "left right")


@dataclasses.dataclass(frozen=True)
class Leaf:
    name: str
    value: float
    count: int = 0
    derived: str = dataclasses.field(default="d\x01", init=False)  # not walked: not an init field


@dataclasses.dataclass(frozen=True)
class Spec:  # the name the verbatim rule keys on
    text: str
    title: str


@dataclasses.dataclass(frozen=True)
class Root:
    spec: Spec
    leaves: tuple
    pairs: list
    notes: dict
    path: PurePosixPath
    shared_a: Leaf
    shared_b: Leaf
    number: object


def _root(bad: str) -> Root:
    shared = Leaf(f"lot{bad}", 1.5)
    return Root(
        spec=Spec(text=f"title: x{bad}", title=f"T{bad}"),
        leaves=(Leaf("ok", 2.0, 3), shared),
        pairs=[Pair(f"a{bad}", 1), Pair("b", None)],
        notes={f"k{bad}": [f"v{bad}", 2.5, True], "plain": ("x", 1)},
        path=PurePosixPath(f"/data/f{bad}.csv"),
        shared_a=shared, shared_b=shared, number=np.float64(0.1))


def test_every_text_is_replaced_visibly_and_the_spec_text_kept():
    out = xml_safe_evaluation(_root("\x01\x7f\ufffe"))
    pic = "\u2401\u2421\ufffd"
    assert out.spec.text == "title: x\x01\x7f\ufffe"  # verbatim (replay hashes it)
    assert out.spec.title == f"T{pic}"
    assert out.leaves[0] == Leaf("ok", 2.0, 3)
    assert out.leaves[1].name == f"lot{pic}" and out.leaves[1].derived == "d\x01"
    assert out.pairs == [Pair(f"a{pic}", 1), Pair("b", None)]
    assert type(out.pairs[0]) is Pair
    assert out.notes == {f"k{pic}": [f"v{pic}", 2.5, True], "plain": ("x", 1)}
    assert out.path == PurePosixPath(f"/data/f{pic}.csv")
    assert out.shared_a is out.shared_b is out.leaves[1]  # shared objects stay shared
    assert out.number == np.float64(0.1)


def test_a_graph_with_nothing_to_replace_is_returned_as_it_is():
    root = _root("")
    assert xml_safe_evaluation(root) is root


@settings(max_examples=200, deadline=None)
@given(st.text(st.characters(codec=None), max_size=40), st.integers(0, 3000),
       st.sampled_from(["", "é", "\U0001f600", "\x01", "\x1f", "\ufffe", "\uffff", "\ud800",
                        "\udfff", "\t\n\r", "\x7f"]))
def test_has_xml_illegal_agrees_with_the_character_class(head, pad, tail):
    """has_xml_illegal (a substring search per character on long texts) against the regular
    expression XML_ILLEGAL (XML 1.0, section 2.2, Char), on short and long texts."""
    for text in (head + tail, head + "x" * pad + tail, "x" * pad + head + tail + "y" * pad):
        assert has_xml_illegal(text) == (XML_ILLEGAL.search(text) is not None)
