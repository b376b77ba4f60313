"""Load a spec file (format ``verify/1``) into the frozen model of :mod:`verify.spec_model`.

Loading runs in three steps, and every problem of every step is reported together in one
:class:`~verify.errors.SpecError`, each naming the file, line, column and key path:

1. YAML is composed with a safe loader (no object tags; syntax errors carry their position).
2. The node tree is checked against the JSON Schema (:mod:`verify.schema`).
3. Rules the schema cannot express are checked (:mod:`verify.spec_semantics`, and each kind's
   ``spec`` hook for its own keys): margins around 0, inverted limits, a target outside its
   limits, a paired design without ``data.pair``, a capability check without limits,
   duplicate names, old/new declared twice or not at all, and so on.

Defaults are then made explicit and recorded in :attr:`Spec.resolved`
(:mod:`verify.spec_build`).

When a characteristic has no ``checks:`` key, each kind of check decides whether it runs
(``runs_by_default`` of its ``spec`` hook; see :mod:`verify.spec_kind`). When ``checks:`` is
given, exactly the listed checks run; an empty entry (``spread:`` or ``spread: {}``) runs that
check with its defaults.

The steps live in :mod:`verify.spec_yaml` (text and YAML), :mod:`verify.schema` (structure),
:mod:`verify.spec_semantics` (rules) and :mod:`verify.spec_build` (the model); this module
keeps the entry points.
"""

from __future__ import annotations

import os
from pathlib import Path

from . import spec_table
from .errors import SpecError, SpecIssue
from .schema import forbidden_characters, validate
from .spec_build import build as _build
from .spec_files import SPEC_SUFFIXES, find_specs
from .spec_kind import fmt as _fmt  # noqa: F401 - older callers import it from here
from .spec_model import Spec
from .spec_semantics import DATA_SUFFIXES, DEFAULT_MISSING
from .spec_semantics import Checker as _Checker
from .spec_yaml import MAX_LINE_LENGTH, MAX_NESTING, SpecLoader
from .spec_yaml import compose as _compose
from .spec_yaml import read_text as _read_text

__all__ = ["load_spec", "find_specs", "SpecLoader", "SPEC_SUFFIXES", "DATA_SUFFIXES",
           "DEFAULT_MISSING", "MAX_LINE_LENGTH", "MAX_NESTING"]


# -- load_spec ------------------------------------------------------------------------------


def load_spec(path: str | os.PathLike, *, text: str | None = None) -> Spec:
    """Read, validate and resolve one spec file.

    Parameters
    ----------
    path
        The spec file. ``data.file`` is resolved against its folder.
    text
        The spec's text, used instead of reading ``path`` (replaying a recorded run).

    Returns
    -------
    Spec
        The frozen spec with every default explicit; ``sha256`` is that of the text's UTF-8
        bytes (for a UTF-8 file, the same as the file's).

    Raises
    ------
    SpecError
        With every problem found, each naming file, line, column and key path.

    Examples
    --------
    >>> spec = load_spec("specs/bushing-supplier.yaml")  # doctest: +SKIP
    >>> spec.alpha  # doctest: +SKIP
    0.05
    """
    path = Path(path)
    file = str(path)
    if text is None:
        text = _read_text(path)
    body = text[1:] if text.startswith("\ufeff") else text
    long_lines = [i for i, line in enumerate(body.split("\n"), start=1)
                  if len(line) > MAX_LINE_LENGTH]
    if long_lines:
        # the workbook keeps the spec verbatim, a line per cell (at most 32,767 characters)
        raise SpecError([SpecIssue(file, "", f"line {i} is longer than {MAX_LINE_LENGTH:,} "
                                   "characters: break it up (a report cell cannot hold it)", i, 1)
                         for i in long_lines[:20]])
    root = _compose(body, file)
    if root is None:
        raise SpecError([SpecIssue(file, "", "the spec is empty", 1, 1)])
    # characteristics_from: the table's rows join the node tree as characteristic entries, so
    # every rule below applies to them; their problems are then named at the table's cells
    expansion = spec_table.expand(root, path, file)
    bad_text = forbidden_characters(root)
    if bad_text:
        raise SpecError(spec_table.relocate(
            [SpecIssue(file, p.path, p.message, p.line, p.column) for p in bad_text[:20]],
            expansion, file))
    doc = validate(root)
    checker = _Checker(file, doc)
    checker.problems_from_schema()
    if isinstance(doc.value, dict):
        checker.semantics(doc.value)
    if checker.issues:
        raise SpecError(spec_table.relocate(sorted(checker.issues, key=_issue_order),
                                            expansion, file))
    return _build(path, text, doc, expansion)


def _issue_order(issue: SpecIssue) -> tuple:
    return (issue.line or 0, issue.column or 0, issue.path)

