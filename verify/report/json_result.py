"""Evaluation -> the JSON result (``format: verify-result/1``).

Floats are written at full precision (Python's shortest round-trip repr). JSON has no infinity:
an unbounded end of a one-sided interval is written as null. The document is documented in the
README ("The JSON result").
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from ..model import CheckResult, DiagnosticResult, Evaluation
from .hooks import report_hook
from .json_text import _string, dumps, with_key  # noqa: F401 - the result's text (json_text)

FORMAT = "verify-result/1"


def _num(x):
    if x is None or isinstance(x, (bool, np.bool_)):
        return None if x is None else bool(x)
    if isinstance(x, numbers.Integral):
        return int(x)
    if isinstance(x, numbers.Real):
        f = float(x)
        return f if math.isfinite(f) else None
    return str(x)


def _clean(obj):
    # the plain types first, by exact type (a result holds thousands of them); the general
    # rules below give the same for them
    t = type(obj)
    if t is str or obj is None or t is int or t is bool:
        return obj
    if t is float:
        return obj if math.isfinite(obj) else None
    if t is dict:
        return {k if type(k) is str else str(k): _clean(v) for k, v in obj.items()}
    if t is list or t is tuple:
        return [_clean(v) for v in obj]
    if isinstance(obj, Mapping):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, str):
        return obj
    return _num(obj)


def _margin(c: CheckResult) -> list | None:
    """[low, high]; a one-sided (non-inferiority) check tests one end only, the other is null."""
    if c.margin is None:
        return None
    low, high = c.margin
    if c.alternative == "greater":  # harmful side lower: only the low end is tested
        return [low, None]
    if c.alternative == "less":
        return [None, high]
    return [low, high]


def _check(c: CheckResult) -> dict:
    d = {
        "check": c.check,
        "method": c.method,
        "hypothesis": c.hypothesis,
        "design": c.design,
        "alternative": c.alternative,
        "margin": _margin(c),
        "estimate": c.estimate,
        "standard_error": c.standard_error,
        "statistic": c.statistic,
        "df": c.df,
        "p_value": c.p_value,
        "p_adjusted": c.p_adjusted,
        "ci_low": c.ci_low,
        "ci_high": c.ci_high,
        "ci_level": c.ci_level,
        "critical_value": c.critical_value,
        "outcome": c.outcome,
        "reason": c.reason,
    }
    # the kind's own fields (e.g. a criterion as declared), from its report hook
    d.update(report_hook(c.check, "json_fields", c, default={}))
    d.update(
        power=c.power,
        power_note=c.power_note,
        detectable_shift=c.detectable_shift,
        planned_n=c.planned_n,
        extra=c.details_mapping(),
    )
    return d


def _beyond(b) -> dict | None:
    """{below, above, expected_ppm, model, note}: part counts beyond the limits, the ppm the
    model (the characteristic's distribution) expects, or null with the note saying why."""
    if b is None:
        return None
    return {"below": b.below, "above": b.above, "expected_ppm": b.expected_ppm,
            "model": b.model, "note": b.note}


def _diag(g: DiagnosticResult) -> dict:
    return {
        "name": g.name,
        "method": g.method,
        "group": g.group,
        "statistic": g.statistic,
        "p_value": g.p_value,
        "flag": g.flag,
        "note": g.note,
        "extra": dict(g.extra),
    }


def _table(table) -> dict:
    """``characteristics_from``: the table's path, resolved path, sha256 and rows."""
    if table is None:
        return {}
    return {"characteristics_from": {"path": table.file_text, "resolved_path": str(table.file),
                                     "sha256": table.sha256, "rows": table.rows,
                                     "sheet": table.sheet}}


MAX_KEPT_VALUES = 200  # distinct values listed per kept column and process


def corrections(ev: Evaluation) -> list[dict]:
    """Every corrected cell: where, the original text, the value used, reason and name."""
    trace = ev.measurements.trace
    if trace is None or "correction" not in trace:
        return []
    t = ev.measurements.table
    out = []
    for i in trace.index[trace["correction"] != ""]:
        k = ev.spec.corrections[int(trace.at[i, "correction_id"])]
        out.append({
            "source_file": t.at[i, "source_file"], "source_row": int(t.at[i, "source_row"]),
            "part": trace.at[i, "part"] if "part" in trace else None,
            "characteristic": t.at[i, "characteristic"], "column": k.column,
            "original": trace.at[i, "original"], "value": float(t.at[i, "value"]),
            "reason": k.reason, "by": k.by,
        })
    return out


def traceability(ev: Evaluation) -> dict | None:
    """The part column and the kept columns, with the distinct values per process."""
    trace, ds = ev.measurements.trace, ev.spec.data
    if trace is None or (ds.part is None and not ds.keep):
        return None
    t = ev.measurements.table
    used = ~t["excluded"].to_numpy(dtype=bool)
    doc: dict = {"part": ds.part, "keep": {}}
    if ds.part is not None and "part" in trace:
        doc["parts"] = {p: int(trace.loc[used & (t["process"] == p).to_numpy(), "part"]
                               .nunique()) for p in ("old", "new")}
    for col in ds.keep:
        key = f"keep:{col}"
        if key not in trace:
            continue
        doc["keep"][col] = {
            p: [str(v) for v in dict.fromkeys(
                trace.loc[used & (t["process"] == p).to_numpy(), key])][:MAX_KEPT_VALUES]
            for p in ("old", "new")}
    return doc


def result_dict(ev: Evaluation, *, workbook: Mapping | None = None) -> dict:
    """The JSON result as a dict. ``workbook`` adds {path, sha256} of the workbook written."""
    return _clean(_document(ev, workbook))


def result_text(ev: Evaluation) -> str:
    """``dumps(result_dict(ev))``, written in one pass: the values are cleaned as they are
    written (:func:`_encode_clean`), without building the cleaned copy of the document."""
    out: list[str] = []
    _encode_clean(_document(ev, None), "\n", out)
    out.append("\n")
    return "".join(out)


def _encode_clean(o, nl: str, out: list[str]) -> None:
    """Append the text ``dumps`` writes for ``_clean(o)`` (the same rules, value by value)."""
    t = type(o)
    if t is str:
        out.append(_string(o))
    elif o is None:
        out.append("null")
    elif t is float:
        out.append(float.__repr__(o) if math.isfinite(o) else "null")
    elif t is int:
        out.append(int.__repr__(o))
    elif o is True:
        out.append("true")
    elif o is False:
        out.append("false")
    elif t is dict or isinstance(o, Mapping):
        if not o:
            out.append("{}")
            return
        mark = len(out)
        inner = nl + "  "
        sep = "{" + inner
        for k, v in o.items():
            if type(k) is not str:  # as _clean: keys made text, a later equal key wins
                del out[mark:]
                _encode_clean({str(k): v for k, v in o.items()}, nl, out)
                return
            out.append(sep)
            out.append(_string(k))
            out.append(": ")
            _encode_clean(v, inner, out)
            sep = "," + inner
        out.append(nl + "}")
    elif t is list or t is tuple or isinstance(o, (list, tuple)):
        if not o:
            out.append("[]")
            return
        inner = nl + "  "
        sep = "[" + inner
        for v in o:
            out.append(sep)
            _encode_clean(v, inner, out)
            sep = "," + inner
        out.append(nl + "]")
    elif isinstance(o, str):
        out.append(_string(o))
    else:
        _encode_clean(_num(o), nl, out)


def _document(ev: Evaluation, workbook: Mapping | None) -> dict:
    """The JSON result before :func:`_clean` (numpy numbers, tuples, non-finite floats)."""
    spec = ev.spec
    run = ev.run
    doc = {
        "format": FORMAT,
        "title": spec.title,
        "change_id": spec.change_id,
        "decision": ev.decision,
        "final": ev.final,
        "monitoring": ev.monitoring,
        "reasons": list(ev.reasons),
        "review": list(ev.review),
        "spec": {
            "path": str(spec.path),
            "resolved_path": str(Path(spec.path).resolve()),
            "sha256": spec.sha256,
            "text": spec.text,
            **_table(spec.characteristics_table),
        },
        "data_files": [
            {
                "path": f.path,
                "resolved_path": f.resolved_path,
                "sha256": f.sha256,
                "size": f.size,
                "encoding": f.encoding,
                "sheet": f.sheet,
                "rows_read": f.rows_read,
                "rows_used": f.rows_used,
                "rows_excluded": f.rows_excluded,
                "exclusions": [{"reason": r, "count": n} for r, n in f.exclusions],
                "snapshot": ev.snapshots.path_of(f.sha256) if ev.snapshots else None,
                "source": f.origin,
            }
            for f in ev.measurements.files
        ],
        "snapshots": None if ev.snapshots is None else {
            "kept": ev.snapshots.kept, "folder": ev.snapshots.folder,
            "note": ev.snapshots.note},
        "corrections": corrections(ev),
        "traceability": traceability(ev),
        "unassigned_lots": list(ev.measurements.unassigned_lots),
        "data_notes": list(ev.measurements.notes),
        "tool": {"name": "verify", "version": run.tool_version, "git_commit": run.git_commit},
        "versions": dict(run.versions),
        "run": {
            "id": run.run_id,
            "started": run.started,
            "finished": run.finished,
            "user": run.user,
            "host": run.host,
            "command": run.command,
        },
        "parameters": [
            {"key": k, "value": v, "default": bool(dflt)} for k, v, dflt in spec.resolved
        ],
        "multiplicity": {
            "method": spec.multiplicity,
            "family": list(ev.family),
            "family_size": len(ev.family),
            "left_out": list(ev.family_excluded),
        },
        "rules": list(ev.rules),
        "caution": ev.caution,
        "characteristics": [
            {
                "name": c.name,
                "unit": c.unit,
                "decision": c.decision,
                "reasons": list(c.reasons),
                "review": list(c.review),
                "target": c.spec.target,
                "limits": list(c.spec.limits) if c.spec.limits is not None else None,
                "side": c.spec.side,
                **({"kind": c.spec.kind} if c.spec.pass_fail else {}),
                "processes": {
                    p: {
                        "n": s.n,
                        "n_parts": s.n_parts,
                        "mean": s.mean,
                        "sd": s.sd,
                        "min": s.minimum,
                        "max": s.maximum,
                        "lots": list(s.lots),
                        "beyond_limits": _beyond(s.beyond_limits),
                        "sd_within_lot": s.sd_within_lot,
                        "sd_between_lot": s.sd_between_lot,
                        "between_lot_set_to_zero": s.between_lot_set_to_zero,
                        **({"failures": s.failures, "rate": s.rate,
                            "lot_counts": [{"lot": lot, "inspected": n, "failed": x}
                                           for lot, n, x in s.lot_counts]}
                           if c.spec.pass_fail else {}),
                    }
                    for p, s in c.processes.items()
                },
                "pairs": c.pairs,
                "unmatched_pairs": list(c.unmatched_pairs),
                "distribution": (dict(c.distribution) if c.distribution is not None
                                 else {"name": c.spec.distribution}),
                "checks": [_check(k) for k in c.checks],
                "streams": [
                    {"name": st.name, "n": st.n, "mean": st.mean, "sd": st.sd,
                     "decision": st.decision, "checks": [_check(k) for k in st.checks]}
                    for st in c.streams
                ],
                "diagnostics": [_diag(g) for g in c.diagnostics],
            }
            for c in ev.characteristics
        ],
    }
    if workbook is not None:
        doc["workbook"] = dict(workbook)
    return doc
