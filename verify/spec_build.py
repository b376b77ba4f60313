"""Building the frozen spec model from a validated document (the last step of ``load_spec``).

Every default is made explicit here and recorded, key path by key path, in
:attr:`Spec.resolved` (the workbook's and the audit's parameter list). Each kind of check
builds its own settings in its ``spec`` hook (:meth:`verify.spec_kind.CheckSpec.build`).
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path
from typing import Any

from . import spec_table
from .schema import Document, child_path
from .spec_kind import Facts, check_specs, fmt, off_words
from .spec_model import (
    TARGET_KEY,
    Characteristic,
    Checks,
    Correction,
    DataSpec,
    Exclusion,
    LotLists,
    PlanSettings,
    Spec,
)
from .spec_semantics import DEFAULT_MISSING


def build(path: Path, text: str, doc: Document,
           expansion: spec_table.Expansion | None = None) -> Spec:
    v: dict = doc.value
    given = set(doc.marks)
    resolved: list[tuple[str, str, bool]] = []

    def rec(key: str, value: Any, *, default: bool | None = None) -> None:
        is_default = (key not in given) if default is None else default
        resolved.append((key, fmt(value), is_default))

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
        return _build_pass_fail(c, p, data, unit, doc, rec, column, match)
    target = float(c[TARGET_KEY]) if TARGET_KEY in c else None
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

    facts = Facts(target=target, limits=limits, side=side, distribution=distribution,
                  data=data, unit_of_analysis=unit)
    checks = _build_checks(c, p, "measured", facts, rec)
    return Characteristic(
        name=name, unit=c["unit"], column=column, match=match, target=target, limits=limits,
        side=side, checks=checks,
        line=_spec_line(doc.where(p)[0]), distribution=distribution,
    )


def _build_pass_fail(c: dict, p: str, data: DataSpec, unit: str, doc: Document, rec, column,
                     match) -> Characteristic:
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
    facts = Facts(side="upper", data=data, unit_of_analysis=unit)
    checks = _build_checks(c, p, "pass_fail", facts, rec)
    return Characteristic(
        name=name, unit=c["unit"], column=column, match=match, target=None, limits=None,
        side="upper", checks=checks,
        line=_spec_line(doc.where(p)[0]), kind="pass-fail", fail_texts=fail, pass_texts=ok,
        counts=counts,
    )


def _spec_line(line: int | None) -> int | None:
    """The spec line of a characteristic; None for a row of characteristics_from."""
    return None if line is None or line > spec_table.TABLE_LINE else line


def _build_checks(c: dict, p: str, measures: str, facts: Facts, rec) -> Checks:
    """The checks of one characteristic, each built by its kind's ``spec`` hook.

    Without ``checks:`` each kind decides whether it runs (:meth:`CheckSpec.runs_by_default`);
    with it, exactly the listed checks run (an empty entry with its defaults).
    """
    explicit = "checks" in c
    listed = c.get("checks", {})
    cp = f"{p}.checks"
    built: dict[str, object] = {}
    for kind in check_specs(measures):
        on = kind.name in listed if explicit else kind.runs_by_default(facts)
        if on:
            entry = (listed.get(kind.name) or {}) if explicit else {}
            built[kind.name] = kind.build(entry, facts, rec, f"{cp}.{kind.name}")
        elif kind.off_reason is not None:
            rec(f"{cp}.{kind.name}", off_words(explicit, kind.off_reason),
                default=(not explicit) if kind.off_reason else False)
    return Checks(**built)


def _text(value: Any, doc: Document, path: str) -> str:
    """A text-or-number value as text (the validator keeps numbers there as written)."""
    return value if isinstance(value, str) else fmt(value)


def _texts(value: Any, doc: Document, path: str) -> tuple[str, ...]:
    if isinstance(value, list):
        return tuple(_text(x, doc, child_path(path, i)) for i, x in enumerate(value))
    return (_text(value, doc, path),)
