"""The characteristic charts' XML written as text is byte for byte what openpyxl's own route
(``tostring(chart._write())``, as openpyxl.writer.excel.ExcelWriter._write_charts writes a
chart part) writes for the same chart, and the saved workbook carries those bytes.

Two text routes are checked: verify.report.chart_model.ScatterPlan.xml (the characteristic
charts, kept as plain data) against openpyxl's serialisation of the equivalent ScatterChart
(ScatterPlan.to_openpyxl, built with chart_model.style_line / style_points / chart_title as the
charts always were), and verify.report.chart_xml.scatter_chart_xml (any ScatterChart) against
openpyxl's serialisation of that same object."""

from __future__ import annotations

import zipfile

import openpyxl
import pytest
from openpyxl.chart import BarChart, ScatterChart
from openpyxl.xml.functions import tostring

from tests.factory import make_evaluation
from verify.report import chart_xml
from verify.report.chart_model import ScatterPlan, cell_range, line, points
from verify.report.workbook import write_workbook


def _write_and_collect(tmp_path, monkeypatch, ev, name):
    seen = []
    real = chart_xml.scatter_chart_xml

    def both_ways(chart):
        fast = real(chart)
        seen.append((chart, fast))
        return fast

    monkeypatch.setattr(chart_xml, "scatter_chart_xml", both_ways)
    path = tmp_path / f"{name}.xlsx"
    write_workbook(ev, path)
    with zipfile.ZipFile(path) as z:
        parts = {n: z.read(n) for n in z.namelist() if n.startswith("xl/charts/")}
    return seen, parts


@pytest.mark.parametrize(
    "design,kw",
    [
        ("all", {"seed": 3}),
        ("paired", {"n_old": 12, "n_new": 12, "seed": 2}),
        ("welch", {"name": 'a<b & "c" − d'}),
    ],
)
def test_text_routes_equal_openpyxls_tree_route(tmp_path, monkeypatch, design, kw):
    ev = make_evaluation(design, **kw)
    seen, parts = _write_and_collect(tmp_path, monkeypatch, ev, design)
    plans = [(c, fast) for c, fast in seen if isinstance(c, ScatterPlan)]
    assert len(plans) >= 2, "the characteristic sheets have charts"
    for plan, fast in plans:
        assert fast is not None, "every characteristic chart takes the text route"
        same = plan.to_openpyxl()
        tree = tostring(same._write())
        assert fast == tree
        assert parts[plan.path[1:]] == tree  # what the workbook holds
        assert chart_xml.scatter_chart_xml(same) == tree  # the generic route agrees
    for chart, fast in seen:
        if isinstance(chart, ScatterChart) and fast is not None:
            assert fast == tostring(chart._write())


def test_characteristic_charts_read_back_as_charts(tmp_path, monkeypatch):
    """openpyxl reads the text-route parts back: titles, series names and ranges intact."""
    ev = make_evaluation("paired", n_old=12, n_new=12, seed=2)
    seen, _parts = _write_and_collect(tmp_path, monkeypatch, ev, "back")
    wb = openpyxl.load_workbook(tmp_path / "back.xlsx")
    read = [ch for ws in wb.worksheets for ch in ws._charts]
    plans = [c for c, _ in seen if isinstance(c, ScatterPlan)]
    assert len(read) >= len(plans)
    titles = {"".join(r.t for p in ch.title.tx.rich.p for r in (p.r or [])) for ch in read}
    assert {p.plan_title for p in plans} <= titles


def test_unknown_charts_keep_openpyxls_route():
    bar = BarChart()
    assert chart_xml.scatter_chart_xml(bar) is None
    odd = ScatterChart()
    odd.roundedCorners = True  # a field the text route does not write
    assert chart_xml.scatter_chart_xml(odd) is None
    ctrl = ScatterChart()
    ctrl.title = "two\nlines"  # a title openpyxl splits into paragraphs
    assert chart_xml.scatter_chart_xml(ctrl) is None


def test_a_plan_with_text_it_does_not_write_falls_back_to_openpyxl():
    ws = openpyxl.Workbook().active
    plan = ScatterPlan("title", 15.5, 9.0)
    plan.add("a", cell_range(ws, 1, 2, 2), cell_range(ws, 2, 2, 5), points("112233"))
    plan.add("b", cell_range(ws, 1, 2, 5), cell_range(ws, 2, 2, 5), line("445566", "dash"))
    plan.x.title, plan.y.title, plan.x.lo, plan.x.hi = "x", "y", 0, 1.5
    assert plan.xml() == tostring(plan.to_openpyxl()._write())
    assert "$A$2<" in plan.xml().decode()  # one cell: no range
    plan.y.title = "two\nlines"
    assert plan.xml() is None
    assert b"two" in tostring(plan._write())  # openpyxl's route still writes it
