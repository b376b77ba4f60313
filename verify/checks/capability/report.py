"""How the capability check reads in the workbook and the JSON: its decision-page cell, its
JSON criterion fields, and its own block on the characteristic sheet (the deciding index with
its criterion and bound, then the other indices)."""

from __future__ import annotations

from ...report.cell_styles import merge, shared_alignment, shared_font
from ...report.cells import BOX, CPK_FORMAT, INK, NOTE_FONT, WRAP, header_row, put
from ...report.summary import decision_style

BLOCK_TITLE = "Capability of the new process"  # its own section below the table of tests


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return "Capability\n(new process)"


def _get(x, name: str):
    """A detail that exists for this model (None otherwise, or without details)."""
    return getattr(x, name, None)


def cell_text(kind, c, r, ev, d: int) -> str:
    """The decision page's cell: the index against its minimum (and the lower bound)."""
    if r.estimate is None:
        return ""
    x = r.details
    index = {"cpk": "Cpk", "ppk": "Ppk"}.get(str(_get(x, "index") or "cpk"), "Cpk")
    minimum = r.critical_value if x is None else x.min
    bound = r.ci_low if x is None else x.lower_bound
    judge = str(_get(x, "judge") or "estimate")
    if judge.startswith("lower") and bound is not None:
        text = f"{index} lower bound {bound:.2f}"
        if minimum is not None:
            text += f" vs minimum {minimum:.2f}"
        text += f"\n(estimate {r.estimate:.2f})"
        return text
    text = f"{index} {r.estimate:.2f}"
    if minimum is not None:
        text += f" vs minimum {minimum:.2f}"
    if bound is not None:
        text += f"\n(lower 95% bound {bound:.2f})"
    return text


def json_fields(kind, r) -> dict:
    """The criterion as declared and judged: index (cpk | ppk), judge (estimate |
    lower_bound), min, and the lower bound at the spec's confidence."""
    x = r.details
    if x is None:
        return {}
    return {"index": x.index, "judge": x.judge, "min": x.min, "confidence": x.confidence,
            "lower_bound": x.lower_bound}


def sheet_formats(kind, r, fmts: dict) -> dict:
    """An index has no unit."""
    return {"estimate": CPK_FORMAT, "statistic": CPK_FORMAT, "critical_value": CPK_FORMAT}


INDEX_NAMES = {"cpk": "Cpk", "ppk": "Ppk"}


def sigma_words(method: str | None) -> str:
    """How the within-process sd was estimated, in plain words."""
    m = (method or "").lower()
    if "moving range" in m:
        return "sd from the ranges of consecutive parts (average moving range / 1.128)"
    if "subgroup range" in m:
        return "sd from the ranges within each lot (subgroup ranges / d2)"
    return method or "within-process sd"


OVERALL_WORDS = "overall sd of all the new parts (n − 1)"


def write_block(kind, ws, row: int, c, r, last_col: int) -> int:
    """The deciding index first, with its criterion and bound; then the other indices."""
    x = r.details
    index_key = str(_get(x, "index") or "cpk")
    index = INDEX_NAMES.get(index_key, index_key)
    minimum = r.critical_value if x is None else x.min
    level = _get(x, "confidence") or r.ci_level or 0.95
    bound = r.ci_low if x is None else x.lower_bound
    on_bound = str(_get(x, "judge") or "estimate").startswith("lower")
    how = _get(x, "sigma_method") or r.method
    sigma_used = OVERALL_WORDS if index_key == "ppk" else sigma_words(how)
    criterion = (
        f"its lower {level:.0%} confidence bound at least {minimum:g}"
        if on_bound
        else f"the estimate at least {minimum:g}"
    ) if minimum is not None else "none declared"
    label = shared_font(bold=True, color=INK)
    rows = [
        ("Deciding index", f"{index} = {r.estimate:.2f}" if r.estimate is not None else "n/a"),
        ("Criterion", criterion),
        (f"Lower {level:.0%} confidence bound", None if bound is None else f"{bound:.2f}"),
        ("Spread behind it", sigma_used),
        ("What is shown", r.hypothesis),
        ("Method", r.method),
    ]
    for text, value in rows:
        put(ws, row, 1, text, font=label)
        put(ws, row, 2, "n/a" if value is None else value, align=WRAP)
        merge(ws, row, 2, row, last_col)
        row += 1
    put(ws, row, 1, "Outcome", font=label)
    f, fo = decision_style(r.outcome)
    put(ws, row, 2, r.outcome, fill=f, font=fo, align=shared_alignment(horizontal="center"))
    put(ws, row, 3, r.reason, align=WRAP)
    merge(ws, row, 3, row, last_col)
    row += 1
    others = [
        ("Cp", _get(x, "cp"), "within", "both limits, centring ignored"),
        ("Cpk", _get(x, "cpk"), "within", "the nearer limit"),
        ("Cpl", _get(x, "cpl"), "within", "the lower limit"),
        ("Cpu", _get(x, "cpu"), "within", "the upper limit"),
        ("Pp", _get(x, "pp"), "overall", "both limits, centring ignored"),
        ("Ppk", _get(x, "ppk"), "overall", "the nearer limit"),
        ("Cpm", _get(x, "cpm"), "about target", "both limits, distance from the target counted"),
    ]
    others = [o for o in others if o[1] is not None and o[0] != index]
    if not others:
        return row
    row += 1
    header_row(ws, row, 1, ["Other indices", "Value", "Against", "Spread used"])
    merge(ws, row, 4, row, last_col)
    row += 1
    spreads = {
        "within": sigma_words(how),
        "overall": OVERALL_WORDS,
        "about target": "root mean square distance of the parts from the target",
    }
    values = {"within": _get(x, "sigma_within"), "overall": _get(x, "sigma_overall")}
    for name, value, kind, against in others:
        put(ws, row, 1, name, border=BOX, font=label)
        put(ws, row, 2, value, fmt=CPK_FORMAT, border=BOX)
        put(ws, row, 3, against, border=BOX, align=WRAP)
        sd = values.get(kind)
        words = spreads[kind] + (f" = {sd:.6g}" if sd is not None else "")
        put(ws, row, 4, words, border=BOX, align=WRAP)
        merge(ws, row, 4, row, last_col)
        row += 1
    if _get(x, "n") is not None:
        put(ws, row, 1, f"From {x.n} new parts", font=NOTE_FONT)
        row += 1
    return row
