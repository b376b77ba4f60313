"""Load a spec file (format ``verify/1``) into the frozen model of :mod:`verify.spec_model`.

Loading runs in three steps, and every problem of every step is reported together in one
:class:`~verify.errors.SpecError`, each naming the file, line, column and key path:

1. YAML is composed with a safe loader (no object tags; syntax errors carry their position).
2. The node tree is checked against the JSON Schema (:mod:`verify.schema`).
3. Rules the schema cannot express are checked here: margins around 0, inverted limits, a
   target outside its limits, a paired design without ``data.pair``, a capability check
   without limits, a percent margin without a target, duplicate names, old/new declared
   twice or not at all, and so on.

Defaults are then made explicit and recorded in :attr:`Spec.resolved`.

Default checks, when a characteristic has no ``checks:`` key:

- ``target`` (no margin: a one-sample t-test) when a target is given;
- ``shift`` (no margin), design ``paired`` when ``data.pair`` is set, else ``welch``;
- ``spread`` with method ``f``, on the matched pairs (Pitman-Morgan) when ``data.pair`` is set;
- ``capability`` with ``{index: cpk, min: 1.33, judge: estimate}`` when limits are given.

When ``checks:`` is given, exactly the listed checks run; an empty entry (``spread:`` or
``spread: {}``) runs that check with its defaults.
"""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import yaml

from . import spec_table
from .errors import SpecError, SpecIssue, UsageError
from .schema import Document, child_path, forbidden_characters, validate
from .spec_model import (
    CapabilityCheck,
    Characteristic,
    Checks,
    ConformanceCheck,
    Correction,
    DataSpec,
    Exclusion,
    LotLists,
    Margin,
    PlanSettings,
    RateCheck,
    RateShiftCheck,
    ShiftCheck,
    Spec,
    SpreadCheck,
    TargetCheck,
)

DATA_SUFFIXES = (".csv", ".tsv", ".xlsx", ".parquet")
SPEC_SUFFIXES = (".yaml", ".yml")
CHECK_NAMES = ("target", "shift", "spread", "capability", "conformance")
DEFAULT_MISSING = ("", "NA")
DEFAULT_MIN_CPK = 1.33
_PERCENT = re.compile(r"^\s*([0-9]+(?:\.[0-9]+)?)\s*%\s*$")
_GLOB_CHARS = frozenset("*?[")


# -- finding spec files ---------------------------------------------------------------------


def find_specs(paths: Iterable[str | os.PathLike]) -> list[Path]:
    """The spec files named by ``paths``: files as given, ``*.yaml``/``*.yml`` under folders.

    Folders are searched recursively (hidden folders skipped) and their files sorted; a file
    named twice is listed once.

    Raises
    ------
    UsageError
        A path does not exist, or no spec file was found at all.

    Examples
    --------
    >>> find_specs(["specs/bushing-supplier.yaml"])  # doctest: +SKIP
    [PosixPath('specs/bushing-supplier.yaml')]
    """
    found: list[Path] = []
    problems: list[str] = []
    given = [Path(p) for p in paths]
    for p in given:
        if p.is_dir():
            hits = sorted(
                f for f in p.rglob("*")
                if f.suffix.lower() in SPEC_SUFFIXES and f.is_file()
                and not any(part.startswith(".") for part in f.relative_to(p).parts)
            )
            found.extend(hits)
        elif p.is_file():
            found.append(p)
        elif p.exists():
            from .safe_open import kind_of

            problems.append(f"{p}: is {kind_of(p.stat().st_mode)}, not a spec file or a folder "
                            "of specs")
        else:
            problems.append(f"{p}: no such file or folder")
    if problems:
        raise UsageError(problems)
    unique = list(dict.fromkeys(found))
    if not unique:
        names = ", ".join(str(p) for p in given) or "(no paths given)"
        raise UsageError(f"no spec files (*.yaml, *.yml) found in {names}")
    return unique


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


def _read_text(path: Path) -> str:
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


def _compose(text: str, file: str) -> yaml.Node | None:
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


# -- semantic checks --------------------------------------------------------------------------


class _Checker:
    """Rules beyond the schema; reads only values that passed the schema (``doc.clean``)."""

    def __init__(self, file: str, doc: Document):
        self.file = file
        self.doc = doc
        self.issues: list[SpecIssue] = []

    def add(self, path: str, message: str, *, key: bool = False) -> None:
        line, col = self.doc.where(path, key=key)
        self.issues.append(SpecIssue(self.file, path, message, line, col))

    def problems_from_schema(self) -> None:
        for p in self.doc.problems:
            self.issues.append(SpecIssue(self.file, p.path, p.message, p.line, p.column))

    def ok(self, mapping: Any, key: str, path: str) -> bool:
        return isinstance(mapping, dict) and key in mapping and self.doc.clean(path)

    def semantics(self, spec: dict) -> None:
        data = spec.get("data") if isinstance(spec.get("data"), dict) else None
        if data is not None:
            self.check_data(spec, data)
        self.check_lots(spec)
        if "characteristics" not in spec and "characteristics_from" not in spec and \
                self.doc.clean("characteristics_from"):
            self.add("characteristics", "missing required key 'characteristics': list the "
                     "characteristics, or name a table of them with characteristics_from",
                     key=True)
        if "defaults" in spec and "characteristics_from" not in spec:
            self.add("defaults", "defaults applies to the rows of characteristics_from: name "
                     "the table, or move these keys into each characteristic", key=True)
        if self.ok(spec, "characteristics_from", "characteristics_from"):
            suffix = Path(spec["characteristics_from"]).suffix.lower()
            if suffix not in spec_table.TABLE_SUFFIXES:
                self.add("characteristics_from", f"must end in .csv or .xlsx, not "
                         f"{suffix or 'no extension'!r}")
        chars = spec.get("characteristics")
        names: dict[str, int] = {}
        if isinstance(chars, list):
            for i, c in enumerate(chars):
                if isinstance(c, dict):
                    self.check_characteristic(spec, data, c, f"characteristics[{i}]", names)
        self.check_exclusions(spec, names)
        self.check_corrections(spec, names)

    def check_data(self, spec: dict, data: dict) -> None:
        has = {k: k in data for k in ("process", "old", "new")}
        given_lots = "lots" in spec
        if has["process"] or has["old"] or has["new"]:
            for k in ("process", "old", "new"):
                if not has[k]:
                    self.add(f"data.{k}", f"missing key '{k}' in `data`: data.process, "
                             "data.old and data.new go together")
            if given_lots:
                self.add("lots", "give either data.process with data.old/data.new, or lots: "
                         "not both", key=True)
        elif not given_lots:
            self.add("data", "tell old rows from new rows: give data.process with data.old "
                     "and data.new, or a top-level lots: with old and new lists", key=True)
        if self.ok(data, "old", "data.old") and self.ok(data, "new", "data.new"):
            both = set(_text_list(data["old"])) & set(_text_list(data["new"]))
            if both:
                self.add("data.new", f"{_quoted(both)} listed both as old and as new")
        has_char, has_value = "characteristic" in data, "value" in data
        if has_char != has_value:
            missing = "data.value" if has_char else "data.characteristic"
            given = "data.characteristic" if has_char else "data.value"
            self.add(given, f"the long layout needs data.characteristic and data.value "
                     f"together: add {missing}", key=True)
        if self.ok(data, "file", "data.file"):
            suffix = Path(data["file"]).suffix.lower()
            if suffix not in DATA_SUFFIXES:
                self.add("data.file", f"must end in .csv, .tsv, .xlsx or .parquet, not "
                         f"{suffix or 'no extension'!r}")
            elif "sheet" in data and suffix != ".xlsx":
                self.add("data.sheet", f"applies to .xlsx files only; {data['file']!r} is "
                         f"{suffix}", key=True)
        if "stream" in data:
            if "pair" in data:
                self.add("data.stream", "streams are compared as independent samples; with "
                         "data.pair the rows are paired: give one of the two", key=True)
            if spec.get("unit_of_analysis") == "lot":
                self.add("data.stream", "stream checks compare parts; they cannot run with "
                         "unit_of_analysis: lot", key=True)
            for other in ("lot", "pair", "order", "characteristic", "value", "process"):
                if data.get(other) == data["stream"] and self.ok(data, "stream", "data.stream"):
                    self.add("data.stream", f"data.stream and data.{other} name the same "
                             f"column {data['stream']!r}")
        from .sources.spec_keys import check as check_source_keys

        check_source_keys(data, self.add, self.ok)
        if (self.ok(data, "characteristic", "data.characteristic")
                and self.ok(data, "value", "data.value")
                and data["characteristic"] == data["value"]):
            self.add("data.value", f"data.characteristic and data.value name the same column "
                     f"{data['value']!r}")

    def check_lots(self, spec: dict) -> None:
        lots = spec.get("lots")
        if not isinstance(lots, dict):
            return
        if not (self.ok(lots, "old", "lots.old") and self.ok(lots, "new", "lots.new")):
            return
        old = _text_list(lots["old"])
        for i, item in enumerate(_text_list(lots["new"])):
            if item in old:
                p = f"lots.new[{i}]" if isinstance(lots["new"], list) else "lots.new"
                self.add(p, f"lot {item!r} is in both lots.old and lots.new")

    def check_characteristic(self, spec, data, c: dict, path: str, names: dict) -> None:
        name = c.get("name") if self.doc.clean(f"{path}.name") else None
        label = f" ({name})" if isinstance(name, str) else ""
        if isinstance(name, str):
            if name in names:
                self.add(f"{path}.name", f"duplicate characteristic name {name!r} (first on "
                         f"line {names[name]})")
            else:
                names[name] = self.doc.where(f"{path}.name")[0] or 0
        long = isinstance(data, dict) and "characteristic" in data
        if long and "column" in c:
            self.add(f"{path}.column", "column is for the wide layout; with "
                     "data.characteristic (long layout) use match", key=True)
        if not long and "match" in c:
            self.add(f"{path}.match", "match is for the long layout (data.characteristic and "
                     "data.value); in the wide layout use column", key=True)

        if c.get("kind") == "pass-fail" and self.doc.clean(f"{path}.kind"):
            self.check_pass_fail(spec, data, c, path, label)
            return
        for key in ("fail", "pass", "counts"):
            if key in c:
                self.add(f"{path}.{key}", f"{key} is for a pass-fail characteristic{label}: "
                         "add kind: pass-fail, or remove it", key=True)
        checks = c.get("checks")
        if isinstance(checks, dict):
            for key in ("rate", "rate_shift"):
                if key in checks:
                    self.add(f"{path}.checks.{key}", f"a {key} check is for a pass-fail "
                             f"characteristic{label}: add kind: pass-fail, or remove it",
                             key=True)
        target = c.get("target") if self.ok(c, "target", f"{path}.target") else None
        limits = c.get("limits") if self.ok(c, "limits", f"{path}.limits") else None
        if limits is not None:
            lower, upper = limits
            if lower is None and upper is None:
                self.add(f"{path}.limits", f"gives neither limit{label}: write at least one "
                         "number, or leave limits out")
            elif lower is not None and upper is not None and lower >= upper:
                self.add(f"{path}.limits", f"inverted limits{label}: lower {lower} must be "
                         f"below upper {upper}")
            elif target is not None and (
                (lower is not None and target < lower) or (upper is not None and target > upper)
            ):
                self.add(f"{path}.target", f"target {target} lies outside the limits "
                         f"[{_fmt(lower)}, {_fmt(upper)}]{label}")
        if "target" in c and not self.doc.clean(f"{path}.target"):
            target = _UNKNOWN
        checks = c.get("checks")
        if "checks" in c and isinstance(checks, dict):
            if not checks and self.doc.clean(f"{path}.checks"):
                self.add(f"{path}.checks", f"lists no check{label}: name at least one of "
                         "target, shift, spread, capability, or leave checks out for the "
                         "defaults")
            self.check_checks(spec, data, c, checks, f"{path}.checks", target, limits, label)

    def check_pass_fail(self, spec, data, c: dict, path: str, label: str) -> None:
        """A pass-fail characteristic: per-part texts (fail and pass) or per-lot counts."""
        for key, what in (("target", "a target"), ("limits", "limits"), ("side", "a side")):
            if key in c:
                self.add(f"{path}.{key}", f"a pass-fail characteristic has no {what}{label}: "
                         "its harmful direction is always a higher failure rate; remove "
                         f"{key}", key=True)
        if "counts" in c:
            for key in ("fail", "pass", "column"):
                if key in c:
                    self.add(f"{path}.{key}", f"counts reads the inspected and failed columns"
                             f"{label}: remove {key} (it is for per-part results)", key=True)
            counts = c["counts"]
            if (self.ok(c, "counts", f"{path}.counts") and isinstance(counts, dict)
                    and counts.get("inspected") == counts.get("failed")):
                self.add(f"{path}.counts.failed", f"counts.inspected and counts.failed name "
                         f"the same column {counts['failed']!r}{label}")
        else:
            for key in ("fail", "pass"):
                if key not in c:
                    self.add(path, f"a pass-fail characteristic{label} needs {key}: [texts] "
                             "(the results that mean a part "
                             f"{'failed' if key == 'fail' else 'passed'}), or counts: "
                             "{inspected: <column>, failed: <column>} for per-lot counts")
            fail = _text_list(c.get("fail", [])) if self.ok(c, "fail", f"{path}.fail") else []
            ok = _text_list(c.get("pass", [])) if self.ok(c, "pass", f"{path}.pass") else []
            both = set(fail) & set(ok)
            if both:
                self.add(f"{path}.pass", f"{_quoted(both)} listed both as fail and as pass"
                         f"{label}")
            if isinstance(data, dict):
                missing = set(_text_list(data.get("missing", list(DEFAULT_MISSING))))
                clash = (set(fail) | set(ok)) & missing
                if clash:
                    self.add(f"{path}.fail" if set(fail) & clash else f"{path}.pass",
                             f"{_quoted(clash)} is also a declared missing text "
                             f"(data.missing){label}: a result must be one or the other")
        checks = c.get("checks")
        if isinstance(checks, dict):
            if not checks and self.doc.clean(f"{path}.checks"):
                self.add(f"{path}.checks", f"lists no check{label}: name rate or rate_shift, "
                         "or leave checks out for the default (rate_shift)")
            for key in ("target", "shift", "spread", "capability"):
                if key in checks:
                    self.add(f"{path}.checks.{key}", f"a {key} check needs measured values; "
                             f"a pass-fail characteristic{label} runs rate and rate_shift",
                             key=True)

    def check_checks(self, spec, data, c, checks, path, target, limits, label) -> None:
        has_limits = f"{path[: -len('.checks')]}.limits" in self.doc.key_marks
        if "target" in checks and target is None:
            self.add(f"{path}.target", f"a target check needs the characteristic's target"
                     f"{label}: add target, or remove this check", key=True)
        if "capability" in checks and not has_limits:
            self.add(f"{path}.capability", f"a capability check needs limits{label}: add "
                     "limits: [lower, upper], or remove this check", key=True)
        if "conformance" in checks:
            self.check_conformance(c, checks.get("conformance"), f"{path}.conformance",
                                   has_limits, label)
        for check in ("target", "shift"):
            entry = checks.get(check)
            if isinstance(entry, dict) and "margin" in entry:
                self.check_margin(entry["margin"], f"{path}.{check}.margin", target, label)
        spread = checks.get("spread")
        if isinstance(spread, dict):
            has_pair = isinstance(data, dict) and "pair" in data
            lot_unit = spec.get("unit_of_analysis") == "lot"
            design = spread.get("design")
            if design == "paired" and not has_pair:
                self.add(f"{path}.spread.design", f"a paired spread test needs data.pair, the "
                         f"column that pairs an old row with a new row{label}")
            elif design == "paired" and lot_unit:
                self.add(f"{path}.spread.design", "a paired spread test pairs parts; it cannot "
                         "run with unit_of_analysis: lot (lot means carry no pair key)")
            paired = design == "paired" or (design is None and has_pair and not lot_unit)
            if paired and spread.get("method") == "brown-forsythe":
                self.add(f"{path}.spread.method", "brown-forsythe compares independent samples, "
                         f"but the spread is tested on the declared pairs{label}: remove "
                         "method, or write design: independent to ignore the pairs knowingly")
        dist = c.get("distribution", "normal")
        if "capability" in checks and dist == "any":
            self.add(f"{path}.capability", f"capability needs a distribution model{label}, "
                     "and distribution: any has none: use conformance (distribution-free "
                     "tolerance limits), or name the distribution", key=True)
        cap = checks.get("capability")
        if isinstance(cap, dict) and dist not in ("normal", "any"):
            if cap.get("judge") == "lower_bound":
                self.add(f"{path}.capability.judge", f"judge: lower_bound is defined for the "
                         f"normal model only{label}; with distribution: {dist} the percentile "
                         "index is judged on its estimate: remove judge, or use conformance")
            if "subgroup" in cap:
                self.add(f"{path}.capability.subgroup", f"subgroup sets the within-lot sigma "
                         f"of the normal model{label}; with distribution: {dist} the "
                         "percentile method uses the fitted distribution: remove subgroup")
        if isinstance(cap, dict):
            if "min_cpk" in cap and "min" in cap:
                self.add(f"{path}.capability.min_cpk", f"min_cpk is short for {{index: cpk, "
                         f"min: x}}; give min or min_cpk, not both{label}")
            elif "min_cpk" in cap and cap.get("index") == "ppk":
                self.add(f"{path}.capability.min_cpk", f"min_cpk applies to Cpk, but index is "
                         f"ppk{label}: write min: instead")
        shift = checks.get("shift")
        if isinstance(shift, dict) and shift.get("design") == "paired":
            if not (isinstance(data, dict) and "pair" in data):
                self.add(f"{path}.shift.design", f"a paired design needs data.pair, the column "
                         f"that pairs an old row with a new row{label}")
            if spec.get("unit_of_analysis") == "lot":
                self.add(f"{path}.shift.design", "a paired design pairs parts; it cannot run "
                         "with unit_of_analysis: lot (lot means carry no pair key)")

    def check_conformance(self, c, conf, path: str, has_limits: bool, label: str) -> None:
        if not has_limits:
            self.add(path, f"a conformance check needs limits{label}: add limits: [lower, "
                     "upper] (null for a side without a limit), or remove this check", key=True)
            return
        limits = c.get("limits")
        side = conf.get("side") if isinstance(conf, dict) else None
        if not (isinstance(limits, list) and len(limits) == 2) or side is None:
            return
        if side == "lower" and limits[0] is None:
            self.add(f"{path}.side", f"side: lower needs a lower limit{label}: the limits give "
                     "none; write side: upper, or add the lower limit")
        elif side == "upper" and limits[1] is None:
            self.add(f"{path}.side", f"side: upper needs an upper limit{label}: the limits give "
                     "none; write side: lower, or add the upper limit")

    def check_margin(self, margin, path: str, target, label: str) -> None:
        if not self.doc.clean(path):
            return
        if isinstance(margin, list):
            low, high = margin
            if not low < 0 < high:
                self.add(path, f"margin [{_fmt(low)}, {_fmt(high)}] must have low < 0 < high"
                         f"{label}")
        elif isinstance(margin, str):
            if target is _UNKNOWN:
                return
            if target is None:
                self.add(path, f"a percent margin ({margin.strip()}) is a percentage of the "
                         f"target, and there is no target{label}: add target or give the "
                         "margin as a number")
            elif float(_PERCENT.match(margin).group(1)) / 100.0 * abs(target) == 0:
                self.add(path, f"a percent margin ({margin.strip()}) of target {target} is 0: "
                         "give the margin as a number greater than 0")

    def check_exclusions(self, spec: dict, names: dict) -> None:
        items = spec.get("exclude")
        if not isinstance(items, list):
            return
        rows: dict[int, int] = {}
        for i, e in enumerate(items):
            if not isinstance(e, dict):
                continue
            p = f"exclude[{i}]"
            has_lot, has_row, has_part = "lot" in e, "row" in e, "part" in e
            named = has_lot + has_row + has_part
            if named != 1 and self.doc.clean(f"{p}.lot") and self.doc.clean(f"{p}.row"):
                self.add(p, "an exclusion names exactly one of lot, row or part" if named
                         else "an exclusion needs lot: <lot id>, row: <source row number> or "
                         "part: <part serial>")
            if has_part and not _has_part(spec):
                self.add(f"{p}.part", "an exclusion by part needs data.part (the column "
                         "holding the part serial)")
            if "characteristic" in e and self.doc.clean(f"{p}.characteristic") and names:
                if e["characteristic"] not in names:
                    self.add(f"{p}.characteristic", f"no characteristic named "
                             f"{e['characteristic']!r}; the names are {', '.join(names)}")
            if has_row and not has_lot and self.doc.clean(f"{p}.row"):
                key = e["row"]
                if key in rows and "characteristic" not in e:
                    self.add(f"{p}.row", f"row {key} is already excluded by exclude[{rows[key]}]")
                rows.setdefault(key, i)


    def check_corrections(self, spec: dict, names: dict) -> None:
        items = spec.get("corrections")
        if not isinstance(items, list):
            return
        for i, e in enumerate(items):
            if not isinstance(e, dict):
                continue
            p = f"corrections[{i}]"
            has_row, has_part = "row" in e, "part" in e
            if has_row == has_part:
                self.add(p, "a correction names exactly one of row or part" if has_row
                         else "a correction needs row: <source row number> or part: <part "
                         "serial>")
            if has_part and not _has_part(spec):
                self.add(f"{p}.part", "a correction by part needs data.part (the column "
                         "holding the part serial)")
            if "characteristic" in e and names and e["characteristic"] not in names:
                self.add(f"{p}.characteristic", f"no characteristic named "
                         f"{e['characteristic']!r}; the names are {', '.join(names)}")


def _has_part(spec: dict) -> bool:
    data = spec.get("data")
    return isinstance(data, dict) and isinstance(data.get("part"), str)


class _Unknown:
    """A value that failed the schema; semantic rules that need it are skipped."""


_UNKNOWN = _Unknown()


# -- building the model -----------------------------------------------------------------------


def _build(path: Path, text: str, doc: Document,
           expansion: spec_table.Expansion | None = None) -> Spec:
    v: dict = doc.value
    given = set(doc.marks)
    resolved: list[tuple[str, str, bool]] = []

    def rec(key: str, value: Any, *, default: bool | None = None) -> None:
        is_default = (key not in given) if default is None else default
        resolved.append((key, _fmt(value), is_default))

    rec("format", v["format"])
    rec("title", v["title"])
    if "change_id" in v:
        rec("change_id", _text(v["change_id"], doc, "change_id"))
    alpha = float(v.get("alpha", 0.05))
    rec("alpha", alpha)

    data = v["data"]
    data_spec = _build_data(path, data, doc, rec)
    lots = None
    if "lots" in v:
        lots = LotLists(old=_texts(v["lots"]["old"], doc, "lots.old"),
                        new=_texts(v["lots"]["new"], doc, "lots.new"))
        rec("lots.old", list(lots.old))
        rec("lots.new", list(lots.new))
    unit = v.get("unit_of_analysis", "part")
    rec("unit_of_analysis", unit)
    min_n = v.get("min_n")
    min_n_old = None
    if isinstance(min_n, dict):
        min_n_old, min_n = int(min_n["old"]), int(min_n["new"])
        rec("min_n.old", min_n_old)
        rec("min_n.new", min_n)
    elif min_n is not None:
        rec("min_n", min_n)
    multiplicity = v.get("multiplicity", "none")
    rec("multiplicity", multiplicity)

    exclusions = []
    for i, e in enumerate(v.get("exclude", [])):
        p = f"exclude[{i}]"
        lot = _text(e["lot"], doc, f"{p}.lot") if "lot" in e else None
        part = _text(e["part"], doc, f"{p}.part") if "part" in e else None
        exclusions.append(Exclusion(reason=e["reason"], by=e["by"], lot=lot, row=e.get("row"),
                                    characteristic=e.get("characteristic"),
                                    line=doc.where(p)[0], part=part))
        for k in ("lot", "row", "part", "characteristic", "reason", "by"):
            if k in e:
                rec(f"{p}.{k}", lot if k == "lot" else part if k == "part" else e[k])

    corrections = []
    for i, e in enumerate(v.get("corrections", [])):
        p = f"corrections[{i}]"
        part = _text(e["part"], doc, f"{p}.part") if "part" in e else None
        corrections.append(Correction(
            column=e["column"], value=float(e["value"]), reason=e["reason"], by=e["by"],
            row=e.get("row"), part=part, characteristic=e.get("characteristic"),
            line=doc.where(p)[0]))
        for k in ("row", "part", "column", "characteristic", "value", "reason", "by"):
            if k in e:
                rec(f"{p}.{k}", part if k == "part" else e[k])

    plan_v = v.get("plan", {})
    plan = PlanSettings(power=float(plan_v.get("power", 0.9)),
                        true_shift=float(plan_v.get("true_shift", 0.0)),
                        pair_correlation=(None if plan_v.get("pair_correlation") is None
                                          else float(plan_v["pair_correlation"])))
    rec("plan.power", plan.power)
    rec("plan.true_shift", plan.true_shift)
    rec("plan.pair_correlation", plan.pair_correlation)
    supersedes = v.get("supersedes_reason")
    if supersedes is not None:
        rec("supersedes_reason", supersedes)

    table = expansion.table if expansion is not None else None
    if table is not None:
        rec("characteristics_from", table.file_text)
        rec("characteristics_from.sha256", table.sha256, default=False)
        rec("characteristics_from.rows", table.rows, default=False)
        for key in ("unit", "side"):
            if key in v.get("defaults", {}):
                rec(f"defaults.{key}", v["defaults"][key])
    chars = tuple(
        _build_characteristic(c, f"characteristics[{i}]", data_spec, unit, doc, rec)
        for i, c in enumerate(v["characteristics"])
    )
    return Spec(
        path=path, text=text, sha256=hashlib.sha256(text.encode("utf-8")).hexdigest(),
        title=v["title"], data=data_spec, characteristics=chars, format=v["format"],
        change_id=_text(v["change_id"], doc, "change_id") if "change_id" in v else None,
        alpha=alpha, lots=lots, unit_of_analysis=unit, min_n=min_n, min_n_old=min_n_old,
        multiplicity=multiplicity,
        exclude=tuple(exclusions), corrections=tuple(corrections), plan=plan,
        supersedes_reason=supersedes,
        resolved=tuple(resolved), characteristics_table=table,
    )


def _build_data(spec_path: Path, d: dict, doc: Document, rec) -> DataSpec:
    from .sources.spec_keys import build as build_source
    from .sources.spec_keys import sql_url_path

    if d.get("source") == "sql":  # the rows come from a query; a sqlite file is its "file"
        db = sql_url_path(spec_path, d.get("url"))
        file_text = d.get("url") or f"${d.get('url_env')}"
        file = db if db is not None else Path(os.path.abspath(spec_path.parent))
    elif d.get("source") == "dataframe":  # the Python API passes the rows
        file_text, file = "<DataFrame>", Path(os.path.abspath(spec_path.parent))
    else:
        file_text = d["file"]
        file = Path(os.path.abspath(spec_path.parent / file_text))
        rec("data.file", file_text)
    if "sheet" in d:
        rec("data.sheet", d["sheet"])
    elif file.suffix.lower() == ".xlsx":
        rec("data.sheet", "(the first sheet)")
    rec("data.lot", d["lot"])
    old = new = ()
    if "process" in d:
        old, new = _texts(d["old"], doc, "data.old"), _texts(d["new"], doc, "data.new")
        rec("data.process", d["process"])
        rec("data.old", list(old))
        rec("data.new", list(new))
    for k in ("pair", "order", "characteristic", "value", "stream"):
        if k in d:
            rec(f"data.{k}", d[k])
    decimal = d.get("decimal", ".")
    rec("data.decimal", decimal)
    missing = _texts(d["missing"], doc, "data.missing") if "missing" in d else DEFAULT_MISSING
    rec("data.missing", list(missing))
    ignore_other = bool(d.get("ignore_other", False))
    rec("data.ignore_other", ignore_other)
    if "part" in d:
        rec("data.part", d["part"])
    keep = tuple(d.get("keep", ()))
    if keep:
        rec("data.keep", list(keep))
    source_fields = build_source(spec_path, d, rec)
    return DataSpec(
        file=file, file_text=file_text, lot=d["lot"], sheet=d.get("sheet"),
        process=d.get("process"), old=old, new=new, pair=d.get("pair"),
        characteristic=d.get("characteristic"), value=d.get("value"), order=d.get("order"),
        decimal=decimal, missing=missing, ignore_other=ignore_other, stream=d.get("stream"),
        part=d.get("part"), keep=keep, **source_fields,
    )


def _build_characteristic(c: dict, p: str, data: DataSpec, unit: str, doc: Document,
                          rec) -> Characteristic:
    name = c["name"]
    rec(f"{p}.name", name)
    column = match = None
    if data.layout == "wide":
        column = c.get("column", name)
        rec(f"{p}.column", column)
    else:
        match = _text(c["match"], doc, f"{p}.match") if "match" in c else name
        rec(f"{p}.match", match)
    rec(f"{p}.unit", c["unit"])
    if c.get("kind") == "pass-fail":
        return _build_pass_fail(c, p, data, doc, rec, column, match)
    target = float(c["target"]) if "target" in c else None
    if target is not None:
        rec(f"{p}.target", target)
    limits = None
    if "limits" in c:
        lo, hi = c["limits"]
        limits = (None if lo is None else float(lo), None if hi is None else float(hi))
        rec(f"{p}.limits", list(limits))
    side = c.get("side", "two-sided")
    rec(f"{p}.side", side)
    distribution = c.get("distribution", "normal")
    if "distribution" in c:  # recorded only when written: the default changes no old record
        rec(f"{p}.distribution", distribution)

    explicit = "checks" in c
    listed = c.get("checks", {})
    has_limits = limits is not None

    def wanted(check: str) -> tuple[bool, dict]:
        if explicit:
            return check in listed, listed.get(check) or {}
        default_on = {"target": target is not None, "shift": True, "spread": True,
                      "capability": has_limits and distribution != "any"}[check]
        return default_on, {}

    cp = f"{p}.checks"
    on, cfg = wanted("target")
    target_check = None
    if on:
        target_check = TargetCheck(margin=_margin(cfg.get("margin"), target),
                                   detect=_opt_float(cfg.get("detect")))
        _rec_margin(rec, f"{cp}.target.margin", target_check.margin)
        if target_check.detect is not None:
            rec(f"{cp}.target.detect", target_check.detect)
    else:
        rec(f"{cp}.target", _off(explicit, "no target"), default=not explicit)

    on, cfg = wanted("shift")
    shift_check = None
    if on:
        # lot means carry no pair key: with unit_of_analysis lot the default is welch
        paired_default = data.pair is not None and unit != "lot"
        design = cfg.get("design", "paired" if paired_default else "welch")
        shift_check = ShiftCheck(design=design, margin=_margin(cfg.get("margin"), target),
                                 detect=_opt_float(cfg.get("detect")))
        rec(f"{cp}.shift.design", design)
        _rec_margin(rec, f"{cp}.shift.margin", shift_check.margin)
        if shift_check.detect is not None:
            rec(f"{cp}.shift.detect", shift_check.detect)
    else:
        rec(f"{cp}.shift", _off(explicit, ""), default=False)

    on, cfg = wanted("spread")
    spread_check = None
    if on:
        # declared pairs decide the spread test whatever the shift design: the two variances
        # of paired data are correlated, and only a test on the pairs (Pitman-Morgan) is valid
        pairs_usable = data.pair is not None and unit != "lot"
        sp_design = cfg.get("design", "paired" if pairs_usable else "independent")
        spread_check = SpreadCheck(method=cfg.get("method", "f"), design=sp_design,
                                   design_given="design" in cfg)
        rec(f"{cp}.spread.method", spread_check.method)
        rec(f"{cp}.spread.design", sp_design)
    else:
        rec(f"{cp}.spread", _off(explicit, ""), default=False)

    on, cfg = wanted("capability")
    capability_check = None
    if on:
        # min_cpk: x is the short form of {index: cpk, min: x}
        minimum = cfg.get("min", cfg.get("min_cpk", DEFAULT_MIN_CPK))
        capability_check = CapabilityCheck(
            min_cpk=float(minimum), subgroup=cfg.get("subgroup"),
            index=cfg.get("index", "cpk"), judge=cfg.get("judge", "estimate"),
            confidence=float(cfg.get("confidence", 0.95)))
        rec(f"{cp}.capability.index", capability_check.index,
            default="index" not in cfg)
        rec(f"{cp}.capability.min", capability_check.min,
            default="min" not in cfg and "min_cpk" not in cfg)
        rec(f"{cp}.capability.judge", capability_check.judge, default="judge" not in cfg)
        rec(f"{cp}.capability.confidence", capability_check.confidence,
            default="confidence" not in cfg)
        rec(f"{cp}.capability.subgroup", capability_check.subgroup or "none (moving range)")
    else:
        rec(f"{cp}.capability", _off(explicit, "no limits"), default=not explicit)

    conformance_check = None
    if explicit and "conformance" in listed:  # runs only when listed
        cfg = listed.get("conformance") or {}
        lo, hi = limits if limits is not None else (None, None)
        c_side = cfg.get("side") or ("two-sided" if lo is not None and hi is not None
                                     else "lower" if lo is not None else "upper")
        conformance_check = ConformanceCheck(
            coverage=float(cfg.get("coverage", 0.99)),
            confidence=float(cfg.get("confidence", 0.95)), side=c_side)
        rec(f"{cp}.conformance.coverage", conformance_check.coverage,
            default="coverage" not in cfg)
        rec(f"{cp}.conformance.confidence", conformance_check.confidence,
            default="confidence" not in cfg)
        rec(f"{cp}.conformance.side", c_side, default="side" not in cfg)

    return Characteristic(
        name=name, unit=c["unit"], column=column, match=match, target=target, limits=limits,
        side=side, checks=Checks(target=target_check, shift=shift_check, spread=spread_check,
                                 capability=capability_check,
                                 conformance=conformance_check),
        line=_spec_line(doc.where(p)[0]), distribution=distribution,
    )


def _build_pass_fail(c: dict, p: str, data: DataSpec, doc: Document, rec, column, match
                     ) -> Characteristic:
    """A pass-fail characteristic: its results or counts, and the rate checks."""
    name = c["name"]
    rec(f"{p}.kind", "pass-fail", default=False)
    counts = None
    fail = ok = ()
    if "counts" in c:
        counts = (c["counts"]["inspected"], c["counts"]["failed"])
        rec(f"{p}.counts.inspected", counts[0])
        rec(f"{p}.counts.failed", counts[1])
        column = None  # long layout: the counts are read on the rows that match
    else:
        fail = _texts(c["fail"], doc, f"{p}.fail")
        ok = _texts(c["pass"], doc, f"{p}.pass")
        rec(f"{p}.fail", list(fail))
        rec(f"{p}.pass", list(ok))
    explicit = "checks" in c
    listed = c.get("checks", {}) if explicit else {"rate_shift": {}}
    cp = f"{p}.checks"
    rate = rate_shift = None
    if "rate" in listed:
        cfg = listed["rate"] or {}
        rate = RateCheck(max=float(cfg["max"]), confidence=float(cfg.get("confidence", 0.95)))
        rec(f"{cp}.rate.max", rate.max)
        rec(f"{cp}.rate.confidence", rate.confidence, default="confidence" not in cfg)
    else:
        rec(f"{cp}.rate", _off(explicit, "no max rate"), default=not explicit)
    if "rate_shift" in listed:
        cfg = listed["rate_shift"] or {}
        rate_shift = RateShiftCheck(
            margin=_opt_float(cfg.get("margin")), method=cfg.get("method", "newcombe"),
            test=cfg.get("test", "fisher"), detect=_opt_float(cfg.get("detect")))
        rec(f"{cp}.rate_shift.margin", rate_shift.margin if rate_shift.margin is not None
            else "none (exact test of a higher rate)", default="margin" not in cfg)
        if rate_shift.margin is not None:
            rec(f"{cp}.rate_shift.method", rate_shift.method, default="method" not in cfg)
        else:
            rec(f"{cp}.rate_shift.test", rate_shift.test, default="test" not in cfg)
        if rate_shift.detect is not None:
            rec(f"{cp}.rate_shift.detect", rate_shift.detect)
    else:
        rec(f"{cp}.rate_shift", _off(explicit, ""), default=False)
    return Characteristic(
        name=name, unit=c["unit"], column=column, match=match, target=None, limits=None,
        side="upper", checks=Checks(rate=rate, rate_shift=rate_shift),
        line=_spec_line(doc.where(p)[0]), kind="pass-fail", fail_texts=fail, pass_texts=ok,
        counts=counts,
    )


def _spec_line(line: int | None) -> int | None:
    """The spec line of a characteristic; None for a row of characteristics_from."""
    return None if line is None or line > spec_table.TABLE_LINE else line


def _off(explicit: bool, why_default: str) -> str:
    if explicit:
        return "off (not listed in checks)"
    return f"off ({why_default})" if why_default else "off"


def _margin(raw: Any, target: float | None) -> Margin | None:
    """Turn a margin as written (number, [low, high] or "p%") into a :class:`Margin`."""
    if raw is None:
        return None
    if isinstance(raw, list):
        low, high = float(raw[0]), float(raw[1])
        return Margin(low=low, high=high, text=f"[{_fmt(raw[0])}, {_fmt(raw[1])}]")
    if isinstance(raw, str):
        pct = float(_PERCENT.match(raw).group(1))
        m = pct / 100.0 * abs(float(target))  # target presence checked above
        return Margin(low=-m, high=m, text=raw.strip())
    m = float(raw)
    return Margin(low=-m, high=m, text=_fmt(raw))


def _rec_margin(rec, key: str, margin: Margin | None) -> None:
    if margin is None:
        rec(key, "none (difference test)", default=False)
        return
    shown = f"[{_fmt(margin.low)}, {_fmt(margin.high)}]"
    rec(key, shown if margin.text == shown else f"{margin.text} = {shown}", default=False)


def _opt_float(v: Any) -> float | None:
    return None if v is None else float(v)


def _text(value: Any, doc: Document, path: str) -> str:
    """A text-or-number value as text (the validator keeps numbers there as written)."""
    return value if isinstance(value, str) else _fmt(value)


def _texts(value: Any, doc: Document, path: str) -> tuple[str, ...]:
    if isinstance(value, list):
        return tuple(_text(x, doc, child_path(path, i)) for i, x in enumerate(value))
    return (_text(value, doc, path),)


def _text_list(value: Any) -> list[str]:
    items = value if isinstance(value, list) else [value]
    return [x if isinstance(x, str) else _fmt(x) for x in items]


def _quoted(items) -> str:
    return ", ".join(repr(x) for x in sorted(items))


def _fmt(value: Any) -> str:
    """A value as text for messages and :attr:`Spec.resolved` (floats at full precision)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_fmt_item(x) for x in value) + "]"
    return str(value)


def _fmt_item(x: Any) -> str:
    if isinstance(x, str):
        return '"' + x.replace("\\", "\\\\").replace('"', '\\"') + '"'
    return _fmt(x)
