"""The gather on numpy indices (data.analysis_values / paired_values) against the pandas
selection it replaced, kept here as the reference route (select the used rows of one
characteristic and process, stable sort by production order then source row, lot means by
pandas groupby)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from verify.data import analysis_values, load_measurements, paired_values
from verify.spec import load_spec


def reference_values(meas, spec, name, process, unit):
    t = meas.table
    sel = t[(t["characteristic"] == name) & (t["process"] == process) & ~t["excluded"]]
    sel = sel.sort_values(["order", "source_row"], kind="stable")
    if unit == "lot":
        means = sel.groupby("lot", sort=False)["value"].mean()
        return means.to_numpy(dtype=float), tuple(str(x) for x in means.index), len(sel)
    return sel["value"].to_numpy(dtype=float), tuple(sel["lot"].astype(str)), len(sel)


def reference_pairs(meas, name):
    t = meas.table
    sel = t[(t["characteristic"] == name) & t["process"].isin(["old", "new"])
            & (t["pair"] != "") & ~t["excluded"]]
    sel = sel.sort_values(["order", "source_row"], kind="stable")
    old = sel[sel["process"] == "old"].drop_duplicates("pair").set_index("pair")
    new = sel[sel["process"] == "new"].drop_duplicates("pair").set_index("pair")
    first = sel.drop_duplicates("pair")["pair"].tolist()
    both = old.index.intersection(new.index)
    keys = [k for k in first if k in both]
    return (tuple(keys), old.loc[keys, "value"].to_numpy(dtype=float),
            new.loc[keys, "value"].to_numpy(dtype=float),
            tuple(k for k in first if k not in both))


@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired", "housing-resin"])
@pytest.mark.parametrize("unit", ["part", "lot"])
def test_gather_matches_pandas_selection_on_demo_specs(demo, name, unit):
    from dataclasses import replace

    spec = load_spec(demo / "specs" / f"{name}.yaml")
    spec = replace(spec, unit_of_analysis=unit)
    meas = load_measurements(spec)
    for ch in spec.characteristics:
        for process in ("old", "new"):
            got = analysis_values(meas, spec, ch.name, process)
            values, lots, n_parts = reference_values(meas, spec, ch.name, process, unit)
            assert got.lots == lots and got.n_parts == n_parts and got.unit == unit
            # part values are the same numbers; lot means are correctly rounded sums, pandas'
            # within an ulp or two
            np.testing.assert_allclose(got.values, values, rtol=1e-15 if unit == "lot" else 0,
                                       atol=0)
        if spec.data.pair is not None:
            pv = paired_values(meas, spec, ch.name)
            keys, old, new, unmatched = reference_pairs(meas, ch.name)
            assert pv.keys == keys and pv.unmatched == unmatched
            np.testing.assert_array_equal(pv.old, old)
            np.testing.assert_array_equal(pv.new, new)


def test_gather_in_production_order_with_exclusions_and_shuffled_rows(tmp_path):
    rng = np.random.default_rng(11)
    n = 80
    rows = pd.DataFrame({
        "lot": [f"L{i % 7}" for i in range(n)],
        "process": ["old" if i % 3 else "new" for i in range(n)],
        "when": rng.permutation(n),
        "a": np.round(rng.normal(5, 0.1, n), 3),
        "b": np.round(rng.normal(2, 0.1, n), 3),
    })
    rows.loc[rng.choice(n, 9, replace=False), "a"] = np.nan
    rows.to_csv(tmp_path / "d.csv", index=False, na_rep="NA")
    (tmp_path / "s.yaml").write_text(
        "format: verify/1\ntitle: gather\ndata:\n  file: d.csv\n  lot: lot\n  process: process\n"
        "  old: old\n  new: new\n  order: when\nexclude:\n  - lot: L3\n    reason: scrap\n"
        "    by: QE-1\n  - row: 5\n    characteristic: b\n    reason: dropped\n    by: QE-1\n"
        "characteristics:\n  - name: a\n    unit: mm\n  - name: b\n    unit: mm\n",
        encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    meas = load_measurements(spec)
    for ch in ("a", "b"):
        for process in ("old", "new"):
            got = analysis_values(meas, spec, ch, process)
            values, lots, n_parts = reference_values(meas, spec, ch, process, "part")
            np.testing.assert_array_equal(got.values, values)
            assert got.lots == lots and got.n_parts == n_parts


def test_lot_means_are_within_two_roundings_of_the_exact_mean(demo):
    from dataclasses import replace
    from fractions import Fraction

    spec = load_spec(demo / "specs" / "bushing-supplier.yaml")
    lot_spec = replace(spec, unit_of_analysis="lot")
    meas = load_measurements(spec)
    for ch in spec.characteristics:
        parts = analysis_values(meas, spec, ch.name, "new")
        means = analysis_values(meas, lot_spec, ch.name, "new")
        groups: dict[str, list[float]] = {}
        for v, lot in zip(parts.values.tolist(), parts.lots, strict=True):
            groups.setdefault(lot, []).append(v)
        assert means.lots == tuple(groups)
        for got, vs in zip(means.values.tolist(), groups.values(), strict=True):
            exact = sum(Fraction(v) for v in vs) / len(vs)  # the exact rational mean
            # a correctly rounded sum, then one division: two roundings of half an ulp each
            # (sum and quotient), so within an ulp of the sum's scale
            assert abs(Fraction(got) - exact) <= Fraction(float(np.spacing(2 * got)))


@pytest.mark.parametrize("text", ["str", "string[python]", "string[pyarrow]", object])
def test_gather_the_same_whatever_the_text_columns_storage(demo, text):
    # the index codes its text columns with their own array's factorize: pandas' text dtype
    # (pyarrow or Python storage), the string dtypes and plain object columns must all give
    # what the pandas selection (reference_values, reference_pairs) gives
    if "pyarrow" in str(text):
        pytest.importorskip("pyarrow", reason="pandas' pyarrow text storage needs pyarrow")
    from dataclasses import replace

    spec = load_spec(demo / "specs" / "filler-paired.yaml")
    meas = load_measurements(spec)
    t = meas.table.copy()
    for col in ("characteristic", "process", "lot", "pair"):
        t[col] = t[col].astype(text)
    t["excluded"] = t["excluded"].to_numpy(dtype=bool) | (np.arange(len(t)) % 7 == 3)
    meas = replace(meas, table=t)
    for ch in spec.characteristics:
        for process in ("old", "new"):
            got = analysis_values(meas, spec, ch.name, process)
            values, lots, n_parts = reference_values(meas, spec, ch.name, process, "part")
            np.testing.assert_array_equal(got.values, values)
            assert got.lots == lots and got.n_parts == n_parts
            assert all(type(x) is str for x in got.lots)
        pv = paired_values(meas, spec, ch.name)
        keys, old, new, unmatched = reference_pairs(meas, ch.name)
        assert pv.keys == keys and pv.unmatched == unmatched
        np.testing.assert_array_equal(pv.old, old)
        np.testing.assert_array_equal(pv.new, new)


@pytest.mark.parametrize("text", ["str", "string[python]", "string[pyarrow]", object])
@pytest.mark.parametrize("missing", [False, True])
def test_the_index_reads_a_text_column_as_its_to_numpy_objects(text, missing):
    # the index's lots: each distinct text made a str once for pyarrow storage (dictionary
    # encoding), else the column's own to_numpy(dtype=object), the plain route, for any storage
    if "pyarrow" in str(text):
        pytest.importorskip("pyarrow", reason="pandas' pyarrow text storage needs pyarrow")
    from verify.data.values import _text_objects

    cells = ["L2", "L1", "L2", "", "L10", "L1"] + ([None] if missing else [])
    column = pd.Series(cells, dtype=object).astype(text)
    got = _text_objects(column)
    plain = column.to_numpy(dtype=object)
    assert got.dtype == object and got.shape == plain.shape
    assert [type(x) for x in got] == [type(x) for x in plain]
    assert [x for x in got if isinstance(x, str)] == [x for x in plain if isinstance(x, str)]


def _table(lots: list) -> pd.DataFrame:
    """Two characteristics measured on the same parts of one process, lots as given."""
    n = len(lots)
    return pd.DataFrame({
        "source_file": "made.csv", "source_row": list(range(2 * n)),
        "order": list(range(n)) * 2, "lot": lots * 2, "process": "new", "pair": "",
        "characteristic": ["a"] * n + ["b"] * n, "value": np.arange(2.0 * n),
        "excluded": False, "exclusion_reason": ""})


@pytest.mark.parametrize("text", ["str", "string[pyarrow]", object])
def test_part_values_give_equal_text_lots_as_one_tuple(text):
    # the shortcut: part_values hands the streams of equal lots of text one tuple object; the
    # plain route is a tuple of its own per call, equal to it
    if "pyarrow" in str(text):
        pytest.importorskip("pyarrow", reason="pandas' pyarrow text storage needs pyarrow")
    from verify.data.values import part_values
    from verify.model import Measurements

    t = _table(["L2", "L1", "L2"])
    t["lot"] = t["lot"].astype(text)
    meas = Measurements(table=t, files=())
    (va, la), (vb, lb) = part_values(meas, "a", "new"), part_values(meas, "b", "new")
    assert la == lb == ("L2", "L1", "L2") and all(type(x) is str for x in la)
    np.testing.assert_array_equal(np.concatenate([va, vb]), np.arange(6.0))
    if isinstance(t["lot"].array, pd.arrays.ArrowStringArray):
        assert la is lb  # (text for certain: pyarrow's dictionary encoding)


def test_part_values_keep_lots_of_other_types_apart():
    # 1, 1.0 and True are equal but not the same text: such tuples are never shared
    from verify.data.values import part_values
    from verify.model import Measurements

    t = _table([1, 1, 2])
    t["lot"] = pd.Series([1, 1, 2, 1.0, True, 2.0], dtype=object)
    meas = Measurements(table=t, files=())
    la, lb = part_values(meas, "a", "new")[1], part_values(meas, "b", "new")[1]
    assert la == lb and la is not lb
    assert [type(x) for x in la] == [int] * 3 and [type(x) for x in lb] == [float, bool, float]
