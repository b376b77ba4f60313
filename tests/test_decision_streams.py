"""The decision page with data.stream (issue 16): a check's cell names the stream that makes it
worse than the pooled result, so a row decided HOLD by one cavity never reads as a pooled PASS.

The data are invented here (seeded): four cavities, C3 runs 0.08 mm off against a margin of
0.05 mm; the pooled shift stays inside the margin.
"""

from __future__ import annotations

import openpyxl
from stream_case import _data

from verify.data import load_measurements
from verify.evaluate import evaluate
from verify.report.decision_cells import cell_outcome, cell_text
from verify.runner import prepare, write_outputs


def _spec(tmp_path, off):
    return _data(tmp_path, off=off)


def _shift(ev):
    c = ev.characteristic("x")
    return c, next(r for r in c.checks if r.check == "shift")


def test_a_holding_stream_leads_the_cell_with_its_name_and_the_pooled_result_below(tmp_path):
    spec = _spec(tmp_path, off=0.08)
    ev = evaluate(spec, load_measurements(spec))
    c, shift = _shift(ev)
    stream_outcomes = {st.name: next(k.outcome for k in st.checks if k.check == "shift")
                       for st in c.streams}
    assert c.decision == "HOLD" and stream_outcomes["C3"] == "HOLD"
    assert shift.outcome == "PASS"  # the pooled shift alone would read PASS
    assert cell_outcome(c, shift) == ("HOLD", ("C3",))
    lines = cell_text(c, shift, ev, 3).split("\n")
    assert lines[:2] == ["HOLD (stream C3)", "pooled: PASS"]
    assert len(lines) > 2  # the pooled number that decided still follows


def test_without_a_worse_stream_the_cell_is_the_pooled_result(tmp_path):
    spec = _spec(tmp_path, off=0.0)
    ev = evaluate(spec, load_measurements(spec))
    c, shift = _shift(ev)
    assert c.decision == "PASS"
    assert cell_outcome(c, shift) == ("PASS", ())
    assert cell_text(c, shift, ev, 3).split("\n")[0] == "PASS"


def test_the_workbook_decision_page_names_the_stream_in_the_cell(tmp_path):
    _spec(tmp_path, off=0.08)
    ev = prepare(tmp_path / "s.yaml")
    write_outputs(ev, tmp_path / "s.xlsx", tmp_path / "s.json")
    ws = openpyxl.load_workbook(tmp_path / "s.xlsx").worksheets[0]
    cells = [cell for row in ws.iter_rows() for cell in row
             if isinstance(cell.value, str) and cell.value.startswith("HOLD (stream C3)")]
    assert len(cells) == 1
    assert "pooled: PASS" in cells[0].value
    # tinted as a HOLD, like the characteristic's decision
    pass_fill = [cell for row in ws.iter_rows() for cell in row
                 if isinstance(cell.value, str) and cell.value.startswith("PASS\n")]
    assert pass_fill and cells[0].fill.fgColor.rgb != pass_fill[0].fill.fgColor.rgb
