"""Rules of the spec format that the schema cannot express (the third step of ``load_spec``).

:class:`Checker` reads only values that passed the schema (``Document.clean``) and reports
each problem with the file, line, column and key path. The rules of each kind of check live in
its ``spec`` hook (:meth:`verify.spec_kind.CheckSpec.check`); this module loops over them.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from . import spec_table
from .errors import SpecIssue
from .schema import Document
from .spec_kind import UNKNOWN, Facts, Semantics, check_specs, fmt
from .spec_model import TARGET_KEY

DATA_SUFFIXES = (".csv", ".tsv", ".xlsx", ".parquet")
DEFAULT_MISSING = ("", "NA")


class Checker:
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
            for other in check_specs("pass_fail"):
                if other.name in checks:
                    self.add(f"{path}.checks.{other.name}", f"a {other.name} check is for a "
                             f"pass-fail characteristic{label}: add kind: pass-fail, or remove "
                             "it", key=True)
        target = c.get(TARGET_KEY) if self.ok(c, TARGET_KEY, f"{path}.{TARGET_KEY}") else None
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
                self.add(f"{path}.{TARGET_KEY}", f"target {target} lies outside the limits "
                         f"[{fmt(lower)}, {fmt(upper)}]{label}")
        if TARGET_KEY in c and not self.doc.clean(f"{path}.{TARGET_KEY}"):
            target = UNKNOWN
        checks = c.get("checks")
        if "checks" in c and isinstance(checks, dict):
            if not checks and self.doc.clean(f"{path}.checks"):
                named = ", ".join(k.name for k in check_specs("measured") if k.suggested)
                self.add(f"{path}.checks", f"lists no check{label}: name at least one of "
                         f"{named}, or leave checks out for the defaults")
            self.check_checks(spec, data, c, checks, f"{path}.checks", target, limits, label,
                              "measured")

    def check_pass_fail(self, spec, data, c: dict, path: str, label: str) -> None:
        """A pass-fail characteristic: per-part texts (fail and pass) or per-lot counts."""
        for key, what in ((TARGET_KEY, "a target"), ("limits", "limits"), ("side", "a side")):
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
            own = check_specs("pass_fail")
            runs = " and ".join(k.name for k in own)
            if not checks and self.doc.clean(f"{path}.checks"):
                named = " or ".join(k.name for k in own if k.suggested)
                default = ", ".join(k.name for k in own if k.runs_by_default(Facts()))
                self.add(f"{path}.checks", f"lists no check{label}: name {named}, or leave "
                         f"checks out for the default ({default})")
            for other in check_specs("measured"):
                if other.suggested and other.name in checks:
                    self.add(f"{path}.checks.{other.name}", f"a {other.name} check needs "
                             f"measured values; a pass-fail characteristic{label} runs {runs}",
                             key=True)
            self.check_checks(spec, data, c, checks, f"{path}.checks", None, None, label,
                              "pass_fail")

    def check_checks(self, spec, data, c, checks, path, target, limits, label, measures
                     ) -> None:
        """Each listed check of the characteristic's own kind, by its ``spec`` hook."""
        has_limits = f"{path[: -len('.checks')]}.limits" in self.doc.key_marks
        ctx = Semantics(add=self.add, ok=self.ok, clean=self.doc.clean, spec=spec,
                        data=data if isinstance(data, dict) else None, characteristic=c,
                        target=target, limits=limits, has_limits=has_limits, label=label)
        for kind in check_specs(measures):
            if kind.name in checks:
                kind.check(checks[kind.name], f"{path}.{kind.name}", ctx)

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


def _text_list(value: Any) -> list[str]:
    items = value if isinstance(value, list) else [value]
    return [x if isinstance(x, str) else fmt(x) for x in items]


def _quoted(items) -> str:
    return ", ".join(repr(x) for x in sorted(items))
