"""The characteristic charts' XML written as text (verify.report.chart_xml) is byte for byte
what openpyxl's own route (``tostring(chart._write())``, openpyxl.writer.excel.ExcelWriter.
_write_charts) writes for the same chart object, and the saved workbook carries those bytes."""

from __future__ import annotations

import zipfile

import pytest
from openpyxl.chart import BarChart, ScatterChart
from openpyxl.xml.functions import tostring

from tests.factory import make_evaluation
from verify.report import chart_xml
from verify.report.workbook import write_workbook


def _write_and_compare(tmp_path, monkeypatch, ev, name):
    seen = []
    real = chart_xml.scatter_chart_xml

    def both_ways(chart):
        fast = real(chart)
        seen.append((chart, fast, tostring(chart._write())))
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
def test_text_route_equals_openpyxls_tree_route(tmp_path, monkeypatch, design, kw):
    ev = make_evaluation(design, **kw)
    seen, parts = _write_and_compare(tmp_path, monkeypatch, ev, design)
    scatter = [(c, fast, tree) for c, fast, tree in seen if isinstance(c, ScatterChart)]
    assert scatter, "the characteristic sheets have charts"
    for chart, fast, tree in scatter:
        assert fast is not None, "every characteristic chart takes the text route"
        assert fast == tree
        assert parts[chart.path[1:]] == tree  # what the workbook holds


def test_unknown_charts_keep_openpyxls_route():
    bar = BarChart()
    assert chart_xml.scatter_chart_xml(bar) is None
    odd = ScatterChart()
    odd.roundedCorners = True  # a field the text route does not write
    assert chart_xml.scatter_chart_xml(odd) is None
    ctrl = ScatterChart()
    ctrl.title = "two\nlines"  # a title openpyxl splits into paragraphs
    assert chart_xml.scatter_chart_xml(ctrl) is None
