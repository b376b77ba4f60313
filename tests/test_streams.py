"""Streams of the new process (data.stream): each stream against the old process, the family,
the stream-effect diagnostic, the worst stream deciding with its name, JSON, workbook, check.

Expected numbers are recomputed here from the stream's rows with numpy/scipy (Welch standard
error and df; one-way ANOVA with scipy.stats.f_oneway).
"""

from __future__ import annotations

import json
import math

import openpyxl
import pytest
from scipy import stats
from stream_case import SPEC, _data

from verify.cli import main
from verify.data import load_measurements
from verify.errors import DataError, SpecError
from verify.evaluate import evaluate
from verify.report.json_result import result_dict
from verify.runner import prepare, write_outputs
from verify.spec import load_spec


def _eval(spec):
    m = load_measurements(spec)
    return evaluate(spec, m), m


def test_the_characteristic_holds_naming_the_cavity_that_runs_off(tmp_path):
    ev, _ = _eval(_data(tmp_path))
    c = ev.characteristic("x")
    assert c.decision == "HOLD" and ev.decision == "HOLD"
    assert c.reasons[0].startswith("stream C3: shift:")
    assert [st.decision for st in c.streams] == ["PASS", "PASS", "HOLD", "PASS"]
    assert ev.reasons[0].startswith("x: HOLD - stream C3")


def test_each_stream_is_compared_with_the_whole_old_process(tmp_path):
    ev, m = _eval(_data(tmp_path))
    t = m.table
    old = t[(t["process"] == "old")]["value"].to_numpy()
    for st in ev.characteristic("x").streams:
        new = t[(t["process"] == "new") & (t["stream"] == st.name)]["value"].to_numpy()
        shift = next(k for k in st.checks if k.check == "shift")
        assert st.n == new.size == 15
        assert st.mean == pytest.approx(new.mean(), rel=1e-12)
        assert shift.estimate == pytest.approx(new.mean() - old.mean(), rel=1e-9, abs=1e-12)
        va, vb = new.var(ddof=1) / new.size, old.var(ddof=1) / old.size
        assert shift.standard_error == pytest.approx(math.sqrt(va + vb), rel=1e-9)
        df = (va + vb) ** 2 / (va**2 / (new.size - 1) + vb**2 / (old.size - 1))
        assert shift.df == pytest.approx(df, rel=1e-9)  # Welch-Satterthwaite
        assert shift.hypothesis.startswith(f"stream {st.name}:")


def test_the_family_covers_every_stream(tmp_path):
    ev, _ = _eval(_data(tmp_path))
    assert set(ev.family) == {"x: spread"} | {f"x [stream C{i}]: spread" for i in range(1, 5)}
    spreads = [k for st in ev.characteristic("x").streams for k in st.checks
               if k.check == "spread"]
    assert all(k.p_adjusted is not None for k in spreads)  # holm across 5 tests


def test_stream_effect_diagnostic(tmp_path):
    ev, m = _eval(_data(tmp_path))
    g = next(d for d in ev.characteristic("x").diagnostics if d.name == "stream effect")
    t = m.table
    groups = [t[(t["process"] == "new") & (t["stream"] == f"C{i}")]["value"] for i in range(1, 5)]
    f, p = stats.f_oneway(*groups)
    assert g.statistic == pytest.approx(f, rel=1e-9)
    assert g.p_value == pytest.approx(p, rel=1e-6)
    assert g.flag and "stream C3" in g.note
    ev2, _ = _eval(_data(tmp_path, off=0.0))
    g2 = next(d for d in ev2.characteristic("x").diagnostics if d.name == "stream effect")
    assert ev2.characteristic("x").decision == "PASS"
    assert g2.p_value == pytest.approx(stats.f_oneway(*[
        load_measurements(load_spec(tmp_path / "s.yaml")).table.query(
            f"process == 'new' and stream == 'C{i}'")["value"] for i in range(1, 5)])[1],
        rel=1e-6)


def test_json_and_workbook_carry_the_streams(tmp_path):
    ev, _ = _eval(_data(tmp_path))
    j = result_dict(ev)["characteristics"][0]["streams"]
    assert [s["name"] for s in j] == ["C1", "C2", "C3", "C4"]
    assert set(j[0]) == {"name", "n", "mean", "sd", "decision", "checks"}
    assert j[2]["decision"] == "HOLD" and j[2]["checks"][0]["check"] == "shift"
    json.dumps(j)
    ev = prepare(tmp_path / "s.yaml")
    out = tmp_path / "out"
    out.mkdir()
    write_outputs(ev, out / "s.xlsx", out / "s.json")
    wb = openpyxl.load_workbook(out / "s.xlsx")
    texts = [c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row
             if isinstance(c.value, str)]
    assert "Streams of the new process (each against the old process)" in texts
    assert any(t.startswith("C3: HOLD - shift:") for t in texts)


def test_verify_check_shows_n_per_stream(tmp_path, capsys):
    _data(tmp_path)
    assert main(["check", str(tmp_path / "s.yaml")]) == 0
    assert "new streams (cavity): C1 n 15, C2 n 15, C3 n 15, C4 n 15" in capsys.readouterr().out


def test_a_new_row_without_its_stream_is_a_data_error(tmp_path):
    spec = _data(tmp_path, blank_row=5)
    with pytest.raises(DataError, match="empty stream") as err:
        load_measurements(spec)
    assert "row 47" in str(err.value) and "cavity" in str(err.value)


@pytest.mark.parametrize(("extra", "message"), [
    ("  pair: lot\n", "give one of the two"),
    ("unit_of_analysis: lot\n", "unit_of_analysis: lot"),
])
def test_spec_errors(tmp_path, extra, message):
    spec = SPEC.replace("  stream: cavity\n", "  stream: cavity\n" + extra) if extra.startswith(
        "  ") else SPEC.replace("multiplicity: holm\n", "multiplicity: holm\n" + extra)
    with pytest.raises(SpecError, match=message):
        _data(tmp_path, spec=spec)


def test_stream_values_are_the_pandas_selection_in_production_order(tmp_path):
    # reference: the pandas route stream_values replaced (select the characteristic's used new
    # rows, stable sort by order then source row, group by stream in order of appearance);
    # the rows are shuffled and orders tied so that the sort and its ties matter
    import numpy as np

    from verify.data import stream_values

    m = load_measurements(_data(tmp_path))
    t = m.table.sample(frac=1.0, random_state=3).reset_index(drop=True)
    t["order"] = t["order"] // 3
    m = type(m)(**{**m.__dict__, "table": t})
    sel = t[(t["characteristic"] == "x") & (t["process"] == "new") & ~t["excluded"]]
    sel = sel.sort_values(["order", "source_row"], kind="stable")
    expected = {name: sel.loc[sel["stream"].astype(str) == name, "value"].to_numpy(dtype=float)
                for name in dict.fromkeys(sel["stream"].astype(str))}
    got = stream_values(m, "x")
    assert list(got) == list(expected) == ["C1", "C2", "C3", "C4"]
    for name, values in expected.items():
        assert got[name].dtype == np.float64 and np.array_equal(got[name], values)
    assert stream_values(m, "no such characteristic") == {}
