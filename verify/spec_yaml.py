"""Reading a spec's text and composing its YAML node tree (the first step of ``load_spec``).

The text is read through :mod:`verify.safe_open` (regular files, size limit, UTF-8), and
composed with :class:`SpecLoader`, a safe loader that resolves plain scalars as the YAML 1.2
core schema does. Every failure is a :class:`~verify.errors.SpecError` with its line.
"""

from __future__ import annotations

import re
from pathlib import Path

import yaml

from .errors import SpecError, SpecIssue


def read_text(path: Path) -> str:
    from .safe_open import MAX_SPEC_BYTES, FileRefused, read_regular

    file = str(path)
    if not path.exists() and not path.is_symlink():
        raise SpecError([SpecIssue(file, "", "spec file not found")])
    try:
        raw = read_regular(path, what="spec", max_bytes=MAX_SPEC_BYTES,
                           limit_hint=" (a spec is a few kilobytes of text)")
    except FileRefused as exc:
        raise SpecError([SpecIssue(file, "", exc.reason)]) from None
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise SpecError([SpecIssue(
            file, "", f"is not UTF-8 text (byte 0x{raw[exc.start]:02x}): save the spec as UTF-8",
            line, None)]) from None


MAX_LINE_LENGTH = 32_000


class SpecLoader(yaml.SafeLoader):
    """The safe loader, resolving plain scalars as the YAML 1.2 core schema does.

    PyYAML follows YAML 1.1, where ``1_0`` and ``0x0A`` are 10, ``1:30`` is 90, ``010`` is 8 and
    ``yes``/``no``/``on``/``off`` are booleans, while 6e-3 (no dot) is text: a typo must not
    become a number. Here a number is decimal (``12``, ``-0.5``, ``.5``, ``6e-3``, ``1.5E+3``,
    ``.inf``, ``.nan``), a boolean is ``true``/``false`` (any of their three spellings), null is
    ``null``, ``~`` or nothing; everything else is text. The 1.2 core schema also reads ``0x``
    and ``0o`` integers; a spec has no use for them, so they stay text too and fail validation
    with their line.
    """


def _yaml12_resolvers() -> dict:
    keep = {"tag:yaml.org,2002:merge"}  # '<<' keeps merging mappings
    table: dict = {}
    for first, entries in yaml.SafeLoader.yaml_implicit_resolvers.items():
        kept = [(tag, rx) for tag, rx in entries if tag in keep]
        if kept:
            table[first] = kept

    def add(tag: str, pattern: str, firsts) -> None:
        rx = re.compile(pattern)
        for ch in firsts:
            table.setdefault(ch, []).append((tag, rx))

    add("tag:yaml.org,2002:bool", r"^(?:true|True|TRUE|false|False|FALSE)$", "tTfF")
    add("tag:yaml.org,2002:null", r"^(?:~|null|Null|NULL|)$", ["~", "n", "N", ""])
    add("tag:yaml.org,2002:int", r"^[-+]?[0-9]+$", "-+0123456789")
    add("tag:yaml.org,2002:float",
        r"^(?:[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?"
        r"|[-+]?\.(?:inf|Inf|INF)|\.(?:nan|NaN|NAN))$", "-+0123456789.")
    return table


SpecLoader.yaml_implicit_resolvers = _yaml12_resolvers()


def compose(text: str, file: str) -> yaml.Node | None:
    try:
        return yaml.compose(text, Loader=SpecLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        problem = exc.problem or "invalid YAML"
        if exc.context:
            problem = f"{exc.context}, {problem}"
        line, col = (mark.line + 1, mark.column + 1) if mark else (None, None)
        raise SpecError([SpecIssue(file, "", f"YAML syntax error: {problem}", line, col)]) from None
    except yaml.reader.ReaderError as exc:
        line = text[: exc.position].count("\n") + 1
        raise SpecError([SpecIssue(
            file, "", f"YAML cannot contain the character {exc.character!r} "
            "(a control character)", line, None)]) from None
    except yaml.YAMLError as exc:
        raise SpecError([SpecIssue(file, "", f"YAML error: {exc}")]) from None
    except RecursionError:
        line = _deep_line(text)
        raise SpecError([SpecIssue(file, "", f"the YAML is nested too deeply (more than about "
                                   f"{MAX_NESTING} levels of lists or mappings): a spec needs "
                                   "a few levels", line, None)]) from None


MAX_NESTING = 100


def _deep_line(text: str) -> int | None:
    """The line at which the nesting of lists and mappings first exceeds :data:`MAX_NESTING`.

    Runs on the error path only: the YAML scanner reads tokens without recursion, so it can
    find the place where the (recursive) composer gave up.
    """
    opens = (yaml.FlowSequenceStartToken, yaml.FlowMappingStartToken,
             yaml.BlockSequenceStartToken, yaml.BlockMappingStartToken)
    closes = (yaml.FlowSequenceEndToken, yaml.FlowMappingEndToken, yaml.BlockEndToken)
    depth = 0
    try:
        for token in yaml.scan(text, Loader=SpecLoader):
            if isinstance(token, opens):
                depth += 1
                if depth > MAX_NESTING:
                    return token.start_mark.line + 1
            elif isinstance(token, closes):
                depth -= 1
    except (yaml.YAMLError, RecursionError):
        return None
    return None

