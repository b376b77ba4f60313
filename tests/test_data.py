"""load_measurements and its helpers: the tidy table, strict reading, every data error."""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pandas as pd
import pytest
from helpers_spec import (
    BASE_CSV,
    BASE_SPEC,
    DATA_CASES,
    SAMPLE_SPECS,
    SPECS,
    edit,
    write,
    write_case,
    write_data_case,
    write_xlsx,
    xlsx_rows,
)

from verify.data import (
    MAX_REPORTED,
    analysis_values,
    load_measurements,
    paired_values,
    sniff_delimiter,
)
from verify.errors import DataError
from verify.model import MEASUREMENT_COLUMNS
from verify.spec import load_spec


def load(path):
    return load_measurements(load_spec(path))


def data_issues(path):
    with pytest.raises(DataError) as info:
        load(path)
    return info.value.issues


def used(m, name, process):
    return m.values(name, process).tolist()


# -- every error kind names file, row and column ---------------------------------------------


@pytest.mark.parametrize("case", DATA_CASES, ids=lambda c: c.id)
def test_bad_data_names_file_row_and_column(tmp_path, monkeypatch, case):
    monkeypatch.chdir(tmp_path)
    spec_path = write_data_case(tmp_path, case)
    issues = data_issues(spec_path)
    hits = [i for i in issues if all(w in i.message for w in case.words)]
    assert hits, "\n".join(str(i) for i in issues)
    issue = hits[0]
    assert issue.file == case.data_name
    assert issue.row == case.row
    assert issue.column == case.column
    text = str(issue)
    assert text.startswith(case.data_name)
    if case.row is not None:
        assert f"row {case.row}" in text
    if case.column is not None:
        assert f"column '{case.column}'" in text


def test_all_problems_of_a_file_come_together(tmp_path):
    csv = edit(BASE_CSV, "A2,Old Co,10.03,5.19", "A2,Old Co,n/a,5.19")
    csv = edit(csv, "B1,New Co,9.99,5.20", "B1,Newco,9.99,-")
    csv = edit(csv, "B2,New Co,10.04", "B2,New Co,inf")
    issues = data_issues(write_case(tmp_path, csv=csv))
    rows = {(i.row, i.column) for i in issues}
    assert {(4, "width"), (7, "supplier"), (8, "width")} <= rows


def test_reported_cells_are_capped(tmp_path):
    lines = ["lot,supplier,width,height_mm"]
    lines += [f"A{i},Old Co,bad{i},5.2" for i in range(30)]
    issues = data_issues(write_case(tmp_path, csv="\n".join(lines) + "\n"))
    assert len(issues) == MAX_REPORTED + 1
    assert issues[-1].message.startswith(f"and {30 - MAX_REPORTED} more")
    assert [i.row for i in issues[:3]] == [2, 3, 4]


# -- the tidy table --------------------------------------------------------------------------


def test_table_columns_rows_and_types(tmp_path):
    m = load(write_case(tmp_path))
    t = m.table
    assert tuple(t.columns) == MEASUREMENT_COLUMNS
    assert len(t) == 16  # 8 rows x 2 characteristics
    assert t["source_row"].tolist()[:8] == list(range(2, 10))  # header is row 1
    assert t["characteristic"].tolist() == ["width"] * 8 + ["height"] * 8
    assert t["source_file"].unique().tolist() == ["lots.csv"]
    assert t["process"].tolist()[:8] == ["old"] * 4 + ["new"] * 4
    assert t["value"].dtype == np.float64 and t["excluded"].dtype == bool
    assert t["order"].tolist()[:8] == list(range(8))
    assert not t["excluded"].any() and (t["exclusion_reason"] == "").all()
    assert used(m, "width", "old") == [10.01, 9.98, 10.03, 10.00]


def test_header_only_file_is_valid_and_empty(tmp_path):
    m = load(write_case(tmp_path, csv="lot,supplier,width,height_mm\n"))
    assert len(m.table) == 0 and tuple(m.table.columns) == MEASUREMENT_COLUMNS
    assert m.files[0].rows_read == 0
    assert "no rows for the new process yet" in m.notes


def test_file_info(tmp_path):
    spec_path = write_case(tmp_path)
    m = load(spec_path)
    (f,) = m.files
    raw = (tmp_path / "lots.csv").read_bytes()
    assert f.sha256 == hashlib.sha256(raw).hexdigest() and f.size == len(raw)
    assert (f.rows_read, f.rows_used, f.rows_excluded) == (8, 8, 0)
    assert f.encoding == "utf-8" and f.sheet is None and f.path == "lots.csv"
    assert f.resolved_path == str(tmp_path / "lots.csv")


HOSTILE_CELLS = ["a", "", " x ", None, np.nan, 1, 1.5, True, pd.NA, pd.NaT, "\x00", "\u00e9",
                 float("inf"), np.str_("np"), "\u3000wide\u3000"]


@pytest.mark.parametrize("storage", ["pyarrow", "python"])
def test_text_column_is_what_series_astype_str_holds(storage):
    # the tidy table's text columns are made by text_column; the route it replaced (and the
    # reference here) converted an object Series with astype(str) inside the frame; under
    # either text storage pandas may be set to (its dtype followed the first call's setting)
    from verify.data.cells import text_column

    if storage == "pyarrow":
        pytest.importorskip("pyarrow", reason="pandas' pyarrow text storage needs pyarrow")
    values = np.array(HOSTILE_CELLS, dtype=object)
    with pd.option_context("mode.string_storage", storage):
        made = pd.DataFrame({"c": text_column(values)})
        reference = pd.DataFrame({"c": values})
        reference["c"] = reference["c"].astype(str)
    pd.testing.assert_frame_equal(made, reference, check_exact=True)


def test_stripped_cells_are_what_fillna_and_str_strip_give():
    # _stripped fills a missing cell (a short row's padding) with empty text itself; the
    # reference is the earlier route: frame.fillna(""), then astype(str).str.strip() per column
    from verify.data.text import _stripped

    frame = pd.DataFrame({0: np.array(HOSTILE_CELLS, dtype=object),
                          1: np.array(HOSTILE_CELLS[::-1], dtype=object)}, dtype=object)
    filled = frame.fillna("")
    reference = np.column_stack([filled[c].astype(str).str.strip().to_numpy(dtype=object)
                                 for c in filled.columns])
    got = _stripped(frame)
    assert got.shape == reference.shape and got.tolist() == reference.tolist()


def test_production_order_sorts_each_characteristic_stably(tmp_path):
    # equal order keys keep the file's row order (the stable sort of the characteristic, then
    # the order column, that sort_values(kind="stable") gave before)
    csv = "lot,supplier,made,width,height_mm\n" + "\n".join([
        "A1,Old Co,2,1,5", "A1,Old Co,1,2,6", "B1,New Co,1,3,7", "B1,New Co,1,4,8",
    ]) + "\n"
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  order: made\n  part: lot\n")
    spec = edit(spec, "    limits: [9.5, 10.5]\n", "").replace("target: 10.0", "target: 2")
    with pytest.raises(DataError):  # part keys must not repeat: lot is no part serial
        load(write_case(tmp_path, spec, csv))
    spec = edit(spec, "  part: lot\n", "")
    m = load(write_case(tmp_path, spec, csv))
    t = m.table
    assert t["characteristic"].tolist() == ["width"] * 4 + ["height"] * 4
    assert t["source_row"].tolist() == [3, 4, 5, 2] * 2  # order 1, 1, 1 in row order, then 2
    assert t["value"].tolist() == [2.0, 3.0, 4.0, 1.0, 6.0, 7.0, 8.0, 5.0]
    assert t["order"].tolist() == [0, 1, 2, 3] * 2 and t.index.equals(pd.RangeIndex(8))
    assert m.trace is not None and m.trace["process_value"].tolist() == [
        "Old Co", "New Co", "New Co", "Old Co"] * 2


def test_missing_cells_are_excluded_and_counted_never_zero(tmp_path):
    csv = edit(BASE_CSV, "A2,Old Co,10.03,5.19", "A2,Old Co,NA,5.19")
    csv = edit(csv, "B1,New Co,9.99,5.20", "B1,New Co, ,5.20")
    m = load(write_case(tmp_path, csv=csv))
    t = m.table
    gone = t[t["excluded"]]
    assert gone["source_row"].tolist() == [4, 7]
    assert (gone["exclusion_reason"] == "not measured").all()
    assert gone["value"].isna().all()
    assert 0.0 not in used(m, "width", "old") + used(m, "width", "new")
    assert m.files[0].exclusions == (("not measured", 2),)
    assert m.files[0].rows_used == 8  # each row still has its height


def test_declared_missing_texts(tmp_path):
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  missing: ['-', n/a, -999]\n")
    csv = edit(BASE_CSV, "A2,Old Co,10.03", "A2,Old Co,n/a")
    csv = edit(csv, "B2,New Co,10.04", "B2,New Co,-999")
    m = load(write_case(tmp_path, spec, csv))
    assert m.table["excluded"].sum() == 2


def test_spec_exclusions_mark_rows_with_reason_and_name(tmp_path):
    spec = BASE_SPEC + ("exclude:\n  - {row: 3, reason: gauge dropped, by: QE-11}\n"
                        "  - {lot: B2, reason: wrong tool, by: PE-04}\n")
    m = load(write_case(tmp_path, spec))
    t = m.table
    reasons = dict(zip(t["source_row"], t["exclusion_reason"], strict=False))
    assert reasons[3] == "excluded by spec: gauge dropped (by QE-11)"
    assert reasons[8] == reasons[9] == "excluded by spec: wrong tool (by PE-04)"
    assert t["excluded"].sum() == 6
    assert m.files[0].rows_excluded == 3


def test_exclusion_of_one_characteristic(tmp_path):
    spec = BASE_SPEC + "exclude:\n  - {row: 3, characteristic: height, reason: r, by: me}\n"
    t = load(write_case(tmp_path, spec)).table
    row3 = t[t["source_row"] == 3].set_index("characteristic")["excluded"]
    assert row3.to_dict() == {"width": False, "height": True}


def test_bad_cell_in_an_excluded_row_is_no_error(tmp_path):
    spec = BASE_SPEC + "exclude:\n  - {row: 4, reason: gauge broken, by: me}\n"
    csv = edit(BASE_CSV, "A2,Old Co,10.03", "A2,Old Co,ERR")
    t = load(write_case(tmp_path, spec, csv)).table
    cell = t[(t["source_row"] == 4) & (t["characteristic"] == "width")].iloc[0]
    assert cell["excluded"] and math.isnan(cell["value"])


def test_ignore_other_leaves_rows_out_with_reason(tmp_path):
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  ignore_other: true\n")
    csv = edit(BASE_CSV, "B1,New Co,9.99", "B1,Trial Co,9.99")
    m = load(write_case(tmp_path, spec, csv))
    t = m.table
    row = t[t["source_row"] == 7]
    assert (row["process"] == "").all() and row["excluded"].all()
    assert row["exclusion_reason"].iloc[0] == (
        "process value 'Trial Co' is neither old nor new (data.ignore_other)")
    assert any("Trial Co" in n for n in m.notes)


def test_lots_lists_with_globs_and_unassigned_lots(tmp_path):
    spec = edit(BASE_SPEC, "  process: supplier\n  old: Old Co\n  new: New Co\n", "")
    spec += "lots:\n  old: ['A*']\n  new: [B1]\n"
    m = load(write_case(tmp_path, spec))
    t = m.table
    assert m.unassigned_lots == ("B2",)
    b2 = t[t["lot"] == "B2"]
    assert (b2["exclusion_reason"] == "lot in neither list").all() and (b2["process"] == "").all()
    assert set(t.loc[t["lot"].str.startswith("A"), "process"]) == {"old"}
    assert len(used(m, "width", "new")) == 2


def test_lots_arriving_later_join_without_an_edit(tmp_path):
    spec = edit(BASE_SPEC, "  process: supplier\n  old: Old Co\n  new: New Co\n", "")
    spec += "lots:\n  old: ['A*']\n  new: ['B*']\n"
    path = write_case(tmp_path, spec)
    before = len(used(load(path), "width", "new"))
    write(tmp_path, "lots.csv", BASE_CSV + "B3,New Co,10.01,5.19\n")
    assert len(used(load(path), "width", "new")) == before + 1


# -- reading files: encodings, delimiters, decimals, xlsx ---------------------------------------


@pytest.mark.parametrize("header", ["a,b;c", "a;b;c", "a\tb;c\td", "abc"])
def test_sniff_delimiter(header):
    expected = {"a,b;c": ";", "a;b;c": ";", "a\tb;c\td": "\t", "abc": ","}[header]
    # ties prefer tab, then semicolon (common practice: commas appear inside header text)
    assert sniff_delimiter(header) == expected


def test_semicolons_and_decimal_commas(tmp_path):
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  decimal: ','\n")
    csv = BASE_CSV.replace(",", ";").replace(".", ",")
    m = load(write_case(tmp_path, spec, csv))
    assert used(m, "width", "old") == [10.01, 9.98, 10.03, 10.00]


def test_tab_separated_file(tmp_path):
    spec = edit(BASE_SPEC, "file: lots.csv", "file: lots.tsv")
    m = load(write_case(tmp_path, spec, BASE_CSV.replace(",", "\t"), "lots.tsv"))
    assert used(m, "height", "new") == [5.18, 5.20, 5.23, 5.17]


def test_utf8_bom_and_latin1(tmp_path):
    csv = BASE_CSV.replace("Old Co", "Öld Co")
    spec = BASE_SPEC.replace("Old Co", "Öld Co")
    m = load(write_case(tmp_path, spec, b"\xef\xbb\xbf" + csv.encode("utf-8")))
    assert m.files[0].encoding == "utf-8-sig" and len(used(m, "width", "old")) == 4
    # Latin-1 bytes of "Ö" are valid Windows-1252 too (the two agree outside 0x80-0x9f),
    # so such a file is read as Windows-1252, the first single-byte encoding tried
    m = load(write_case(tmp_path, spec, csv.encode("latin-1")))
    assert m.files[0].encoding == "windows-1252"
    assert any("Windows-1252" in n for n in m.notes)
    assert len(used(m, "width", "old")) == 4
    # 0x81 is undefined in Windows-1252 (its code chart): only Latin-1 reads such a file
    m = load(write_case(tmp_path, spec, csv.replace("A1,", "A\u00811,").encode("latin-1")))
    assert m.files[0].encoding == "latin-1"
    assert any("Latin-1" in n for n in m.notes)


def test_utf16_with_bom(tmp_path):
    m = load(write_case(tmp_path, csv=BASE_CSV.replace(",", "\t").encode("utf-16")))
    assert m.files[0].encoding == "utf-16" and len(used(m, "width", "new")) == 4


def test_quoted_cells_and_crlf(tmp_path):
    csv = BASE_CSV.replace("Old Co", '"Old Co"').replace("\n", "\r\n")
    m = load(write_case(tmp_path, csv=csv))
    assert len(used(m, "width", "old")) == 4


def test_blank_rows_keep_spreadsheet_numbering(tmp_path):
    csv = edit(BASE_CSV, "A2,Old Co,10.03,5.19\n", "\n,,,\nA2,Old Co,10.03,5.19\n")
    m = load(write_case(tmp_path, csv=csv))
    t = m.table[m.table["characteristic"] == "width"]
    assert t["source_row"].tolist() == [2, 3, 6, 7, 8, 9, 10, 11]
    assert m.files[0].rows_read == 8


def test_xlsx_named_sheet_numbers_and_rows(tmp_path):
    rows = xlsx_rows()
    rows.insert(3, [None, None, None, None])  # a blank row 4
    write_xlsx(tmp_path / "lots.xlsx", rows, sheet="trial", extra_sheets=("cover",))
    spec = edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx\n  sheet: trial")
    m = load(write_case(tmp_path, spec, None))
    t = m.table[m.table["characteristic"] == "width"]
    assert t["source_row"].tolist() == [2, 3, 5, 6, 7, 8, 9, 10]
    assert used(m, "width", "old") == [10.01, 9.98, 10.03, 10.00]
    assert m.files[0].encoding == "xlsx" and m.files[0].sheet == "trial"


def test_xlsx_first_sheet_numeric_lots_and_text_numbers(tmp_path):
    rows = xlsx_rows()
    for r in rows[1:]:
        r[0] = 2301 if r[0].startswith("A") else 2302.0  # lot ids stored as numbers
    rows[2][2] = "9.98"  # a number stored as text is read like a CSV cell
    rows[3][2] = "NA"
    write_xlsx(tmp_path / "lots.xlsx", rows, sheet="first", extra_sheets=())
    spec = edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx")
    m = load(write_case(tmp_path, spec, None))
    assert set(m.table["lot"]) == {"2301", "2302"}
    assert used(m, "width", "old") == [10.01, 9.98, 10.00]
    assert m.files[0].sheet == "first"


def test_xlsx_boolean_cell_is_not_a_number(tmp_path):
    rows = xlsx_rows()
    rows[4][2] = True
    write_xlsx(tmp_path / "lots.xlsx", rows)
    spec = edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx")
    issues = data_issues(write_case(tmp_path, spec, None))
    assert (issues[0].row, issues[0].column) == (5, "width")
    assert "'TRUE' is not a number" in issues[0].message


# -- long layout, two routes -------------------------------------------------------------------


def _long_from_wide(csv: str) -> str:
    lines = csv.strip().split("\n")
    out = ["lot,supplier,char,val"]
    for name, j in (("width", 2), ("height", 3)):
        for line in lines[1:]:
            cells = line.split(",")
            out.append(f"{cells[0]},{cells[1]},{name},{cells[j]}")
    return "\n".join(out) + "\n"


def test_long_and_wide_layouts_agree(tmp_path):
    wide = load(write_case(tmp_path))
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  characteristic: char\n"
                "  value: val\n")
    spec = edit(spec, "    column: height_mm\n", "")
    (tmp_path / "long").mkdir()
    long = load(write_case(tmp_path / "long", spec, _long_from_wide(BASE_CSV)))
    for name in ("width", "height"):
        for proc in ("old", "new"):
            assert used(wide, name, proc) == used(long, name, proc)


def test_long_layout_notes_other_characteristics(tmp_path):
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  characteristic: char\n"
                "  value: val\n")
    spec = edit(spec, "    column: height_mm\n", "")
    csv = _long_from_wide(BASE_CSV) + "A1,Old Co,gloss,61.2\n"
    m = load(write_case(tmp_path, spec, csv))
    assert any("'gloss'" in n and "not used" in n for n in m.notes)
    assert set(m.table["characteristic"]) == {"width", "height"}


# -- order, analysis values, pairs -----------------------------------------------------------


def test_production_order_from_a_date_column(tmp_path):
    csv = "lot,supplier,made,width,height_mm\n" + "\n".join([
        "A1,Old Co,2024-03-05 10:00,1,1",
        "A1,Old Co,2024-03-05 08:00,2,2",
        "B1,New Co,2024-03-06 09:00,3,3",
        "B1,New Co,2024-03-06 07:30,4,4",
    ]) + "\n"
    spec = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  order: made\n")
    spec = edit(spec, "    limits: [9.5, 10.5]\n", "").replace("target: 10.0", "target: 2")
    m = load(write_case(tmp_path, spec, csv))
    assert used(m, "width", "old") == [2.0, 1.0]
    assert used(m, "width", "new") == [4.0, 3.0]
    t = m.table[m.table["characteristic"] == "width"]
    assert t["order"].tolist() == [0, 1, 2, 3] and t["source_row"].tolist() == [3, 2, 5, 4]


def test_analysis_values_parts_and_lot_means(tmp_path):
    path = write_case(tmp_path)
    spec = load_spec(path)
    m = load_measurements(spec)
    av = analysis_values(m, spec, "width", "new")
    assert av.unit == "part" and av.values.tolist() == [10.02, 9.99, 10.04, 10.00]
    assert av.lots == ("B1", "B1", "B2", "B2") and av.n_parts == 4
    text = BASE_SPEC.replace("alpha: 0.05", "alpha: 0.05\nunit_of_analysis: lot")
    spec = load_spec(write_case(tmp_path, text))
    av = analysis_values(load_measurements(spec), spec, "width", "old")
    assert av.unit == "lot" and av.lots == ("A1", "A2") and av.n_parts == 4
    assert av.values == pytest.approx([(10.01 + 9.98) / 2, (10.03 + 10.00) / 2], rel=1e-15)


def test_analysis_values_rejects_unknown_names(tmp_path):
    spec = load_spec(write_case(tmp_path))
    m = load_measurements(spec)
    with pytest.raises(ValueError, match="no characteristic"):
        analysis_values(m, spec, "depth", "old")
    with pytest.raises(ValueError, match="'old' or 'new'"):
        analysis_values(m, spec, "width", "both")


def test_paired_values_align_by_key_and_list_unmatched(tmp_path):
    spec_text = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  pair: serial\n")
    csv = "lot,supplier,serial,width,height_mm\n" + "\n".join([
        "A1,Old Co,S1,10.0,5.0",
        "A1,Old Co,S2,10.1,5.1",
        "A1,Old Co,S3,10.2,NA",
        "A1,Old Co,S4,10.3,5.3",
        "B1,New Co,S2,10.6,5.6",
        "B1,New Co,S1,10.5,5.5",
        "B1,New Co,S3,10.7,5.7",
    ]) + "\n"
    spec = load_spec(write_case(tmp_path, spec_text, csv))
    m = load_measurements(spec)
    pv = paired_values(m, spec, "width")
    assert pv.keys == ("S1", "S2", "S3")
    assert pv.old.tolist() == [10.0, 10.1, 10.2] and pv.new.tolist() == [10.5, 10.6, 10.7]
    assert pv.unmatched == ("S4",)
    pv = paired_values(m, spec, "height")
    # S3's old side is not measured: its first used measurement is the new one, after S4
    assert pv.keys == ("S1", "S2") and pv.unmatched == ("S4", "S3")
    assert (pv.new - pv.old).tolist() == pytest.approx([0.5, 0.5])


def test_paired_values_need_a_pair_column(tmp_path):
    spec = load_spec(write_case(tmp_path))
    with pytest.raises(ValueError, match="data.pair"):
        paired_values(load_measurements(spec), spec, "width")


# -- the sample data --------------------------------------------------------------------------


@pytest.mark.parametrize("name", SAMPLE_SPECS)
def test_sample_data_load(name):
    spec = load_spec(SPECS / name)
    m = load_measurements(spec)
    # a spec with data.stream adds its stream column (only then)
    extra = ("stream",) if spec.data.stream is not None else ()
    assert tuple(m.table.columns) == MEASUREMENT_COLUMNS + extra
    for c in spec.characteristics:
        if c.counts is not None:  # per-lot counts: one row per lot and process
            assert len(m.values(c.name, "old")) >= 8
            assert m.values(c.inspected_name, "old").sum() >= 1000
            continue
        assert len(m.values(c.name, "old")) >= 30
        assert len(m.values(c.name, "new")) >= 12


def test_sample_housing_is_short_of_min_n():
    spec = load_spec(SPECS / "housing-resin.yaml")
    m = load_measurements(spec)
    assert m.unassigned_lots == ("QC-TRIAL-07",)
    for c in spec.characteristics:
        assert len(analysis_values(m, spec, c.name, "new").values) == 12 < spec.min_n


def test_sample_filler_has_one_unmatched_pair():
    spec = load_spec(SPECS / "filler-paired.yaml")
    m = load_measurements(spec)
    assert len(paired_values(m, spec, "seal_strength").unmatched) == 1
    assert paired_values(m, spec, "fill_volume").unmatched == ()


def test_large_wide_file_loads(tmp_path):
    # 20,000 rows x 2 characteristics through the vectorised path, with bad-cell detection
    rng = np.random.default_rng(7)
    n = 20_000
    frame = pd.DataFrame({
        "lot": [f"A{i // 100}" if i < n // 2 else f"B{i // 100}" for i in range(n)],
        "supplier": ["Old Co"] * (n // 2) + ["New Co"] * (n // 2),
        "width": np.round(rng.normal(10, 0.1, n), 3),
        "height_mm": np.round(rng.normal(5, 0.1, n), 3),
    })
    frame.loc[::1000, "width"] = np.nan
    (tmp_path / "lots.csv").write_text(frame.to_csv(index=False, na_rep="NA"))
    spec = load_spec(write_case(tmp_path, csv=None))
    m = load_measurements(spec)
    assert len(m.table) == 2 * n
    assert m.files[0].exclusions == (("not measured", n // 1000),)
    assert len(m.values("width", "old")) + len(m.values("width", "new")) == n - n // 1000
