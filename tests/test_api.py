"""The Python API: ``import verify`` gives functions (not modules), specs from dicts,
measurements from DataFrames, ``Evaluation.to_frame()``, a short repr and an HTML view; the
README's API example runs as written."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import verify
from verify.errors import DataError, SpecError

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")

SPEC = {
    "format": "verify/1",
    "title": "API case",
    "data": {"lot": "lot", "process": "line", "old": "A", "new": "B"},
    "characteristics": [{"name": "x", "unit": "mm", "checks": {"shift": {"margin": 0.2}}}],
}
OLD = [10.0, 10.1, 9.9, 10.0, 10.05, 9.95, 10.02, 9.98]
NEW = [10.2, 10.1, 10.0, 10.1, 10.15, 10.05, 10.12, 10.08]


def frame() -> pd.DataFrame:
    return pd.DataFrame({"lot": ["L1"] * 8 + ["L2"] * 8, "line": ["A"] * 8 + ["B"] * 8,
                         "x": OLD + NEW})


def test_names_are_functions_even_after_the_submodules_load():
    import verify.data  # noqa: F401 - loading the submodules must not shadow the API
    import verify.evaluate  # noqa: F401
    import verify.spec  # noqa: F401
    from verify import evaluate, load_measurements, load_spec, write_workbook

    for f in (evaluate, load_spec, load_measurements, write_workbook):
        assert callable(f) and not isinstance(f, type(os)), f


def test_evaluate_a_dict_spec_on_a_dataframe_against_scipy():
    ev = verify.evaluate(SPEC, frame())
    row = ev.to_frame().iloc[0]
    # reference: scipy's Welch interval at 90% (the TOST interval at alpha = 0.05)
    ref = stats.ttest_ind(NEW, OLD, equal_var=False).confidence_interval(0.90)
    assert row["check"] == "shift" and row["design"] == "welch"
    assert row["estimate"] == pytest.approx(np.mean(NEW) - np.mean(OLD), rel=1e-12)
    assert row["ci_low"] == pytest.approx(ref.low, rel=1e-10)
    assert row["ci_high"] == pytest.approx(ref.high, rel=1e-10)
    assert (row["margin_low"], row["margin_high"]) == (-0.2, 0.2)
    assert row["outcome"] == ev.decision


def test_dataframe_and_file_routes_agree(tmp_path):
    frame().to_csv(tmp_path / "lots.csv", index=False)
    spec = {**SPEC, "data": {**SPEC["data"], "file": "lots.csv"}}
    from_file = verify.evaluate(verify.load_spec(spec, base=tmp_path, name="case"))
    from_frame = verify.evaluate(SPEC, frame())
    pd.testing.assert_frame_equal(from_file.to_frame(), from_frame.to_frame())
    assert from_frame.measurements.files[0].path == "<DataFrame>"


def test_to_frame_has_one_row_per_check_of_the_demo():
    ev = verify.evaluate(ROOT / "specs" / "bushing-supplier.yaml")
    t = ev.to_frame()
    assert len(t) == sum(len(c.checks) for c in ev.characteristics)
    assert list(t["characteristic"].unique()) == [c.name for c in ev.characteristics]
    for c in ev.characteristics:
        sub = t[t["characteristic"] == c.name]
        assert list(sub["check"]) == [k.check for k in c.checks]
        assert list(sub["outcome"]) == [k.outcome for k in c.checks]


def test_repr_is_short_and_html_escapes_text():
    ev = verify.evaluate({**SPEC, "title": "<b>x & y</b>"}, frame())
    assert len(repr(ev)) < 300 and ev.decision in repr(ev)
    html = ev._repr_html_()
    assert "&lt;b&gt;x &amp; y&lt;/b&gt;" in html and "<b>x & y</b>" not in html
    assert "never replace" in html
    assert len(repr(ev.spec)) < 200 and len(repr(ev.measurements)) < 200


def test_bad_input_through_the_api_is_typed():
    with pytest.raises(SpecError, match="alpha"):
        verify.load_spec({**SPEC, "alpha": 2})
    bad = frame().astype({"x": object})
    bad.loc[3, "x"] = "ten"
    with pytest.raises(DataError, match="row 5, column 'x'"):  # 4th frame row: CSV row 5
        verify.evaluate(SPEC, bad)
    with pytest.raises(DataError, match="pass it to verify.evaluate"):
        verify.evaluate(SPEC)  # a DataFrame spec without its frame
    with pytest.raises(TypeError, match="measurements must be"):
        verify.evaluate(SPEC, [1, 2, 3])


def test_readme_api_example_runs(tmp_path, monkeypatch):
    block = README.split("<!-- api-example")[1].split("<!-- /api-example -->")[0]
    code = block.split("```python\n", 1)[1].split("```", 1)[0]
    shutil.copytree(ROOT / "specs", tmp_path / "specs")
    shutil.copytree(ROOT / "sample_lots", tmp_path / "sample_lots")
    monkeypatch.chdir(tmp_path)
    scope: dict = {}
    exec(compile(code, "README.md (API example)", "exec"), scope)  # noqa: S102 - our own text
    assert scope["ev"].decision == "PASS"
    assert list(scope["table"]["check"]) == ["shift"]
    assert (tmp_path / "reports" / "bushing-from-python.xlsx").stat().st_size > 0
