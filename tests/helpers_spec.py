"""Inputs for the spec and data tests: a small valid spec and data file, and bad variants.

Each bad variant (a :class:`SpecCase` or :class:`DataCase`) says where its error must point:
the key path and the line for a spec, the row and column for data. The library tests assert
the message, the CLI tests assert exit status 2 and that nothing was written.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass, field
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
SPECS = REPO / "specs"
SAMPLE_SPECS = ("bracket-die-sql.yaml", "bushing-supplier.yaml", "closure-mould.yaml",
                "filler-paired.yaml",
                "housing-resin.yaml")

BASE_SPEC = """\
format: verify/1
title: Bracket supplier change
alpha: 0.05
data:
  file: lots.csv
  lot: lot
  process: supplier
  old: Old Co
  new: New Co
characteristics:
  - name: width
    unit: mm
    target: 10.0
    limits: [9.5, 10.5]
    checks:
      target: {margin: 0.2}
      shift: {margin: 0.1}
  - name: height
    column: height_mm
    unit: mm
"""

BASE_CSV = """\
lot,supplier,width,height_mm
A1,Old Co,10.01,5.20
A1,Old Co,9.98,5.22
A2,Old Co,10.03,5.19
A2,Old Co,10.00,5.21
B1,New Co,10.02,5.18
B1,New Co,9.99,5.20
B2,New Co,10.04,5.23
B2,New Co,10.00,5.17
"""


def write(tmp_path: Path, name: str, text: str | bytes) -> Path:
    """Write ``text`` (str as UTF-8, or bytes) to ``tmp_path / name`` and return the path."""
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_bytes(text.encode("utf-8"))
    return path


def write_spec(tmp_path: Path, text: str = BASE_SPEC, name: str = "spec.yaml") -> Path:
    return write(tmp_path, name, textwrap.dedent(text))


def write_case(tmp_path: Path, spec: str = BASE_SPEC, csv: str | bytes | None = BASE_CSV,
               data_name: str = "lots.csv") -> Path:
    """Write a spec and its data file; return the spec's path."""
    if csv is not None:
        write(tmp_path, data_name, csv)
    return write_spec(tmp_path, spec)


def write_xlsx(path: Path, rows: list[list], sheet: str = "Sheet1",
               extra_sheets: tuple[str, ...] = ()) -> Path:
    import openpyxl

    wb = openpyxl.Workbook()
    for name in extra_sheets:
        wb.create_sheet(name, 0)
    ws = wb.worksheets[len(extra_sheets)]
    ws.title = sheet
    for r in rows:
        ws.append(r)
    wb.save(path)
    return path


def line_of(text: str, fragment: str) -> int:
    """1-based line of the first line containing ``fragment``."""
    for i, line in enumerate(text.splitlines(), start=1):
        if fragment in line:
            return i
    raise LookupError(fragment)


def edit(text: str, old: str, new: str) -> str:
    """Replace exactly one occurrence of ``old`` (the edit must apply, or the case is wrong)."""
    if text.count(old) != 1:
        raise LookupError(f"{old!r} occurs {text.count(old)} times")
    return text.replace(old, new)


# -- bad specs --------------------------------------------------------------------------------


@dataclass(frozen=True)
class SpecCase:
    id: str
    text: str
    path: str  # expected key path of the (first matching) issue
    at: str | int | None  # the expected line, or a fragment on it; None: no line expected
    words: tuple[str, ...]  # fragments the message must contain

    @property
    def line(self) -> int | None:
        if self.at is None or isinstance(self.at, int):
            return self.at
        return line_of(self.text, self.at)


def _s(old: str, new: str) -> str:
    return edit(BASE_SPEC, old, new)


_NO_PROCESS = _s("  process: supplier\n  old: Old Co\n  new: New Co\n", "")
_HEIGHT = "    column: height_mm\n    unit: mm\n"
_LONG = _s("  new: New Co\n", "  new: New Co\n  characteristic: char\n  value: val\n")

SPEC_CASES = [
    SpecCase("unknown-top-key", _s("alpha: 0.05", "alhpa: 0.05"), "alhpa", "alhpa",
             ("unknown key 'alhpa'", "did you mean 'alpha'")),
    SpecCase("unknown-nested-key", _s("shift: {margin: 0.1}", "shift: {margn: 0.1}"),
             "characteristics[0].checks.shift.margn", "margn", ("did you mean 'margin'",)),
    SpecCase("unknown-check", _s("      shift: {margin: 0.1}", "      shfit: {margin: 0.1}"),
             "characteristics[0].checks.shfit", "shfit", ("did you mean 'shift'",)),
    SpecCase("misplaced-key", _s(_HEIGHT, _HEIGHT + "    margin: 0.1\n"),
             "characteristics[1].margin", "    margin: 0.1", ("belongs in",
                                                         "characteristics[].checks.shift.margin")),
    SpecCase("wrong-type", _s("alpha: 0.05", "alpha: five"), "alpha", "alpha",
             ("must be a number",)),
    SpecCase("text-expected", _s("title: Bracket supplier change", "title: 2024"), "title",
             "title", ("must be text", "quotes")),
    SpecCase("missing-key", _s("  lot: lot\n", ""), "data.lot", "file: lots.csv",
             ("missing required key 'lot'",)),
    SpecCase("missing-unit", _s(_HEIGHT, "    column: height_mm\n"),
             "characteristics[1].unit", "name: height", ("missing required key 'unit'",)),
    SpecCase("empty-required", _s(_HEIGHT, "    column: height_mm\n    unit:\n"),
             "characteristics[1].unit", 20, ("must be text", "empty")),
    SpecCase("alpha-too-large", _s("alpha: 0.05", "alpha: 0.25"), "alpha", "alpha",
             ("at most 0.2",)),
    SpecCase("alpha-zero", _s("alpha: 0.05", "alpha: 0"), "alpha", "alpha",
             ("greater than 0",)),
    SpecCase("alpha-infinite", _s("alpha: 0.05", "alpha: .inf"), "alpha", "alpha",
             ("finite",)),
    SpecCase("format", _s("format: verify/1", "format: verify/9"), "format", "format",
             ('must be "verify/1"',)),
    SpecCase("margin-zero", _s("target: {margin: 0.2}", "target: {margin: 0}"),
             "characteristics[0].checks.target.margin", "target: {margin", ("greater than 0",)),
    SpecCase("margin-negative", _s("target: {margin: 0.2}", "target: {margin: -0.2}"),
             "characteristics[0].checks.target.margin", "target: {margin", ("greater than 0",)),
    SpecCase("margin-low-high", _s("shift: {margin: 0.1}", "shift: {margin: [0.1, -0.1]}"),
             "characteristics[0].checks.shift.margin", "shift: {margin",
             ("low < 0 < high",)),
    SpecCase("margin-low-zero", _s("shift: {margin: 0.1}", "shift: {margin: [0, 0.1]}"),
             "characteristics[0].checks.shift.margin", "shift: {margin",
             ("low < 0 < high",)),
    SpecCase("margin-three-items", _s("shift: {margin: 0.1}", "shift: {margin: [-1, 0, 1]}"),
             "characteristics[0].checks.shift.margin", "shift: {margin", ("at most 2 items",)),
    SpecCase("margin-bad-text", _s("shift: {margin: 0.1}", "shift: {margin: ten}"),
             "characteristics[0].checks.shift.margin", "shift: {margin",
             ("'ten'", "'0.5%'")),
    SpecCase("margin-bool", _s("shift: {margin: 0.1}", "shift: {margin: true}"),
             "characteristics[0].checks.shift.margin", "shift: {margin",
             ("a number m", "percentage")),
    SpecCase("percent-no-target",
             _s(_HEIGHT, _HEIGHT + "    checks:\n      shift: {margin: 0.5%}\n"),
             "characteristics[1].checks.shift.margin", "0.5%", ("no target",)),
    SpecCase("percent-of-zero", _s("target: 10.0\n    limits: [9.5, 10.5]\n    checks:\n"
                                   "      target: {margin: 0.2}",
                                   "target: 0\n    checks:\n      target: {margin: 1%}"),
             "characteristics[0].checks.target.margin", "1%", ("is 0",)),
    SpecCase("inverted-limits", _s("[9.5, 10.5]", "[10.5, 9.5]"), "characteristics[0].limits",
             "limits", ("inverted limits", "10.5", "9.5")),
    SpecCase("limits-both-null", _s("[9.5, 10.5]", "[null, null]"),
             "characteristics[0].limits", "limits", ("neither limit",)),
    SpecCase("target-outside-limits", _s("target: 10.0", "target: 11.0"),
             "characteristics[0].target", "target: 11.0", ("outside the limits",)),
    SpecCase("target-nan", _s("target: 10.0", "target: .nan"), "characteristics[0].target",
             "target: .nan", ("finite",)),
    SpecCase("paired-without-pair", _s("shift: {margin: 0.1}",
                                       "shift: {margin: 0.1, design: paired}"),
             "characteristics[0].checks.shift.design", "design: paired", ("data.pair",)),
    SpecCase("paired-with-lot-unit",
             _s("alpha: 0.05\n", "alpha: 0.05\nunit_of_analysis: lot\n").replace(
                 "  new: New Co\n", "  new: New Co\n  pair: serial\n").replace(
                 "shift: {margin: 0.1}", "shift: {margin: 0.1, design: paired}"),
             "characteristics[0].checks.shift.design", "design: paired", ("unit_of_analysis",)),
    SpecCase("capability-without-limits",
             _s(_HEIGHT, _HEIGHT + "    checks:\n      capability: {}\n"),
             "characteristics[1].checks.capability", "capability", ("needs limits",)),
    SpecCase("target-check-without-target",
             _s(_HEIGHT, _HEIGHT + "    checks:\n      target: {margin: 1}\n"),
             "characteristics[1].checks.target", "target: {margin: 1}", ("needs the",
                                                                           "target")),
    SpecCase("checks-empty", _s(_HEIGHT, _HEIGHT + "    checks: {}\n"),
             "characteristics[1].checks", "checks: {}", ("lists no check",)),
    SpecCase("duplicate-name", _s("name: height", "name: width"), "characteristics[1].name",
             18, ("duplicate", "'width'", "first on line 11")),
    SpecCase("bad-name", _s("name: height", "name: 9 height"), "characteristics[1].name",
             "9 height", ("expected form",)),
    SpecCase("bad-side", _s(_HEIGHT, _HEIGHT + "    side: lowr\n"), "characteristics[1].side",
             "lowr", ("did you mean 'lower'",)),
    SpecCase("min-n", _s("alpha: 0.05\n", "alpha: 0.05\nmin_n: 1\n"), "min_n", "min_n",
             ("at least 2",)),
    SpecCase("spread-method", _s("shift: {margin: 0.1}",
                                 "shift: {margin: 0.1}\n      spread: {method: levene}"),
             "characteristics[0].checks.spread.method", "levene", ("f, brown-forsythe",)),
    SpecCase("capability-subgroup", _s("shift: {margin: 0.1}",
                                       "shift: {margin: 0.1}\n      capability: "
                                       "{subgroup: batch}"),
             "characteristics[0].checks.capability.subgroup", "subgroup", ("lot",)),
    SpecCase("detect-zero", _s("shift: {margin: 0.1}", "shift: {margin: 0.1, detect: 0}"),
             "characteristics[0].checks.shift.detect", "detect", ("greater than 0",)),
    SpecCase("plan-power", _s("alpha: 0.05\n", "alpha: 0.05\nplan: {power: 1.5}\n"),
             "plan.power", "plan:", ("less than 1",)),
    SpecCase("plan-correlation", _s("alpha: 0.05\n",
                                    "alpha: 0.05\nplan: {pair_correlation: 1}\n"),
             "plan.pair_correlation", "plan:", ("less than 1",)),
    SpecCase("process-and-lots", BASE_SPEC + "lots:\n  old: [A*]\n  new: [B*]\n", "lots",
             "lots:", ("not both",)),
    SpecCase("neither-process-nor-lots", _NO_PROCESS, "data", "data:",
             ("tell old rows from new rows",)),
    SpecCase("lot-in-both-lists", _NO_PROCESS + "lots:\n  old: [A1, B1]\n  new: [B1]\n",
             "lots.new[0]", "new: [B1]", ("'B1'", "both")),
    SpecCase("old-new-overlap", _s("new: New Co", "new: [New Co, Old Co]"), "data.new",
             "new: [New Co", ("'Old Co'", "both as old and as new")),
    SpecCase("process-without-new", _s("  new: New Co\n", ""), "data.new", "file: lots.csv",
             ("go together",)),
    SpecCase("sheet-with-csv", _s("  lot: lot\n", "  lot: lot\n  sheet: S1\n"), "data.sheet",
             "sheet: S1", ("xlsx files only",)),
    SpecCase("data-extension", _s("file: lots.csv", "file: lots.txt"), "data.file",
             "lots.txt", (".csv, .tsv, .xlsx or .parquet",)),
    SpecCase("long-without-value", _s("  new: New Co\n",
                                      "  new: New Co\n  characteristic: char\n"),
             "data.characteristic", "characteristic: char", ("add data.value",)),
    SpecCase("column-in-long-layout", _LONG, "characteristics[1].column", "column: height_mm",
             ("wide layout", "match")),
    SpecCase("match-in-wide-layout", _s(_HEIGHT, _HEIGHT + "    match: h\n"),
             "characteristics[1].match", "match: h", ("long layout",)),
    SpecCase("exclusion-without-target", BASE_SPEC + "exclude:\n  - {reason: r, by: me}\n",
             "exclude[0]", "reason: r", ("needs lot",)),
    SpecCase("exclusion-lot-and-row",
             BASE_SPEC + "exclude:\n  - {lot: A1, row: 3, reason: r, by: me}\n",
             "exclude[0]", "lot: A1", ("exactly one of lot, row or part",)),
    SpecCase("exclusion-without-reason", BASE_SPEC + "exclude:\n  - {lot: A1, by: me}\n",
             "exclude[0].reason", "lot: A1", ("missing required key 'reason'",)),
    SpecCase("exclusion-header-row", BASE_SPEC + "exclude:\n  - {row: 1, reason: r, by: me}\n",
             "exclude[0].row", "row: 1", ("at least 2",)),
    SpecCase("exclusion-unknown-characteristic",
             BASE_SPEC + "exclude:\n  - {lot: A1, characteristic: wdth, reason: r, by: me}\n",
             "exclude[0].characteristic", "wdth", ("no characteristic named 'wdth'",)),
    SpecCase("exclusion-twice", BASE_SPEC + "exclude:\n  - {row: 3, reason: r, by: me}\n"
             "  - {row: 3, reason: again, by: me}\n", "exclude[1].row", "again",
             ("already excluded",)),
    SpecCase("no-characteristics", BASE_SPEC.split("characteristics:")[0]
             + "characteristics: []\n", "characteristics", "characteristics",
             ("at least 1 item",)),
    SpecCase("duplicate-key", _s("alpha: 0.05\n", "alpha: 0.05\nalpha: 0.1\n"), "alpha",
             "alpha: 0.1", ("appears twice", "line 3")),
    SpecCase("object-tag", _s("title: Bracket supplier change",
                              "title: !!python/object/apply:os.system [echo hi]"),
             "title", "python/object", ("refused", "never objects or code")),
    SpecCase("custom-tag", _s("alpha: 0.05", "alpha: !fancy 0.05"), "alpha", "!fancy",
             ("not allowed",)),
    SpecCase("merge-key", _s("alpha: 0.05\n", "alpha: 0.05\n<<: {min_n: 3}\n"), "", "<<",
             ("merge keys",)),
    SpecCase("yaml-syntax", _s("title: Bracket supplier change", "title: [unclosed"), "",
             "alpha", ("YAML syntax error",)),
    SpecCase("yaml-tab-indent", _s("  lot: lot", "\tlot: lot"), "", "\tlot",
             ("YAML syntax error",)),
    SpecCase("root-not-mapping", "- just\n- a list\n", "", "- just", ("must be a mapping",)),
    SpecCase("empty-spec", "# nothing here\n", "", "# nothing", ("empty",)),
]


# -- bad data ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class DataCase:
    id: str
    csv: str | bytes | None
    row: int | None
    column: str | None
    words: tuple[str, ...]
    spec: str = BASE_SPEC
    data_name: str = "lots.csv"
    extra: dict = field(default_factory=dict)


def _c(old: str, new: str) -> str:
    return edit(BASE_CSV, old, new)


_PAIRED_SPEC = _s("  new: New Co\n", "  new: New Co\n  pair: serial\n")
_PAIRED_CSV = """\
lot,supplier,serial,width,height_mm
A1,Old Co,S1,10.01,5.20
A1,Old Co,S2,9.98,5.22
B1,New Co,S1,10.02,5.18
B1,New Co,S1,9.99,5.20
"""
_LONG_SPEC = _LONG.replace("    column: height_mm\n", "    match: height\n")
_LONG_CSV = """\
lot,supplier,char,val
A1,Old Co,width,10.01
A1,Old Co,height,5.20
B1,New Co,width,10.02
B1,New Co,height,5.18
"""
_SEMICOLON_CSV = """\
lot;supplier;width;height_mm
A1;Old Co;10,01;5,20
A1;Old Co;9,98;5.22
B1;New Co;10,02;5,18
B1;New Co;9,99;5,20
"""
_ORDER_CSV = """\
lot,supplier,width,height_mm,made
A1,Old Co,10.01,5.20,1
A1,Old Co,9.98,5.22,2
A2,Old Co,10.03,5.19,soon
B1,New Co,10.02,5.18,4
"""

DATA_CASES = [
    DataCase("missing-file", None, None, None, ("data file not found",
                                                 "relative to the spec's folder")),
    DataCase("missing-column", BASE_CSV, 1, "height_mn",
             ("no column 'height_mn'", "'lot', 'supplier', 'width', 'height_mm'",
              "did you mean 'height_mm'"),
             spec=_s("column: height_mm", "column: height_mn")),
    DataCase("missing-lot-column", BASE_CSV, 1, "Lot", ("no column 'Lot'", "did you mean 'lot'"),
             spec=_s("  lot: lot", "  lot: Lot")),
    DataCase("not-a-number", _c("A2,Old Co,10.03", "A2,Old Co,n/a"), 4, "width",
             ("'n/a' is not a number", "['', 'NA']", "add it to data.missing")),
    DataCase("decimal-comma", _c("A2,Old Co,10.03", 'A2,Old Co,"10,03"'), 4, "width",
             ("'10,03'", "decimal separator '.'", "data.decimal: ','")),
    DataCase("decimal-point", _SEMICOLON_CSV, 3, "height_mm",
             ("'5.22'", "decimal separator ','"),
             spec=_s("  new: New Co\n", "  new: New Co\n  decimal: ','\n")),
    DataCase("infinite", _c("B1,New Co,10.02", "B1,New Co,inf"), 6, "width",
             ("'inf' is an infinite value",)),
    DataCase("empty-not-declared", _c("A2,Old Co,10.03", "A2,Old Co,"), 4, "width",
             ("empty cell", "data.missing"),
             spec=_s("  new: New Co\n", "  new: New Co\n  missing: [NA]\n")),
    DataCase("process-neither", _c("B1,New Co,9.99", "B1,Newco,9.99"), 7, "supplier",
             ("'Newco' is neither old ('Old Co') nor new ('New Co')", "ignore_other")),
    DataCase("duplicate-pair", _PAIRED_CSV, 4, "serial", ("pair key 'S1'", "more than once",
                                                          "rows 4, 5"),
             spec=_PAIRED_SPEC),
    DataCase("empty-pair-key", _PAIRED_CSV.replace("B1,New Co,S1,9.99", "B1,New Co,,9.99"),
             5, "serial", ("empty pair key",), spec=_PAIRED_SPEC),
    DataCase("exclusion-row-beyond", BASE_CSV, 50, None, ("exclude[0]", "row 50",
                                                          "last data row is 9"),
             spec=BASE_SPEC + "exclude:\n  - {row: 50, reason: r, by: me}\n"),
    DataCase("exclusion-row-blank", _c("A2,Old Co,10.03,5.19\n", "\nA2,Old Co,10.03,5.19\n"),
             4, None, ("row 4", "blank"),
             spec=BASE_SPEC + "exclude:\n  - {row: 4, reason: r, by: me}\n"),
    DataCase("exclusion-lot-nothing", BASE_CSV, None, "lot", ("exclude[0]", "lot 'A3'",
                                                              "not in the file"),
             spec=BASE_SPEC + "exclude:\n  - {lot: A3, reason: r, by: me}\n"),
    DataCase("lot-in-both-lists", BASE_CSV, 8, "lot", ("lot 'B2'", "lots.old ('B2')",
                                                       "lots.new ('B*')"),
             spec=_NO_PROCESS + "lots:\n  old: [A*, B2]\n  new: [B*]\n"),
    DataCase("empty-lot", _c("B2,New Co,10.04", ",New Co,10.04"), 8, "lot", ("empty lot id",)),
    DataCase("too-many-cells", _c("B1,New Co,10.02,5.18", "B1,New Co,10.02,5.18,7"), 6, None,
             ("has 5 cells", "header has 4 columns")),
    DataCase("long-no-rows", _LONG_CSV, None, "char", ("no rows for characteristic 'height'",
                                                       "'Height'"),
             spec=_LONG_SPEC, extra={"csv_edit": ("height", "Height")}),
    DataCase("duplicate-header", _c("lot,supplier,width,height_mm",
                                    "lot,supplier,width,width"),
             1, "width", ("appears 2 times", "columns C, D")),
    DataCase("empty-file", "", 1, None, ("empty",)),
    DataCase("bad-order", _ORDER_CSV, 4, "made", ("'soon'", "neither a number nor a date"),
             spec=_s("  new: New Co\n", "  new: New Co\n  order: made\n")),
    DataCase("xlsx-missing-sheet", None, None, None, ("no sheet 'Lots'", "did you mean 'lots'"),
             spec=_s("file: lots.csv", "file: lots.xlsx\n  sheet: Lots"),
             data_name="lots.xlsx", extra={"xlsx_sheet": "lots"}),
    DataCase("xlsx-corrupt", b"PK\x03\x04 this is not a workbook", None, None,
             ("cannot be read as an .xlsx workbook",),
             spec=_s("file: lots.csv", "file: lots.xlsx"), data_name="lots.xlsx"),
    DataCase("xlsx-bad-cell", None, 3, "width", ("'about 10' is not a number",),
             spec=_s("file: lots.csv", "file: lots.xlsx"), data_name="lots.xlsx",
             extra={"xlsx_sheet": "Sheet1", "xlsx_bad": (3, 2, "about 10")}),
]


def xlsx_rows(csv_text: str = BASE_CSV) -> list[list]:
    """The rows of a CSV as spreadsheet values (numbers as numbers)."""
    out = []
    for i, line in enumerate(csv_text.strip("\n").split("\n")):
        cells: list = line.split(",")
        if i:
            cells = [_number_or_text(c) for c in cells]
        out.append(cells)
    return out


def _number_or_text(c: str):
    try:
        return float(c)
    except ValueError:
        return c


def write_data_case(tmp_path: Path, case: DataCase) -> Path:
    """Write a :class:`DataCase` (spec and data file) and return the spec's path."""
    csv = case.csv
    if "csv_edit" in case.extra and isinstance(csv, str):
        csv = csv.replace(*case.extra["csv_edit"])
    if "xlsx_sheet" in case.extra:
        rows = xlsx_rows()
        if "xlsx_bad" in case.extra:
            r, c, v = case.extra["xlsx_bad"]
            rows[r - 1][c] = v
        write_xlsx(tmp_path / case.data_name, rows, sheet=case.extra["xlsx_sheet"])
        csv = None
    return write_case(tmp_path, case.spec, csv, case.data_name)
