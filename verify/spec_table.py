"""``characteristics_from:``: characteristics declared in a table (CSV or xlsx), one per row.

A dimensional layout lists hundreds of characteristics; as YAML blocks that is thousands of
lines no one reviews. A table holds them one per row:

========================  ============================================================
column                    meaning (an empty cell: not given)
========================  ============================================================
``name``                  the characteristic's name (required)
``column`` / ``match``    the data column (wide layout) or ``data.characteristic`` value
                          (long layout); default the name
``unit``                  unit of measure; default ``defaults.unit``
``target``                nominal value
``lower``, ``upper``      specification limits (either may be empty)
``side``                  two-sided, lower or upper; default ``defaults.side``
``target_margin``         margin of the target check (a number, or "p%" of the target)
``shift_margin``          margin of the shift check
``min_cpk``               the capability check's minimum Cpk
========================  ============================================================

The last three are the kinds' columns: each kind of check declares its own in its ``spec``
hook (:attr:`verify.spec_kind.CheckSpec.table_columns`). The spec's ``defaults:`` block gives
``unit``, ``side`` and ``checks`` for every row; a kind's column sets that key of that check
(running the check if ``defaults.checks`` does not list it). YAML ``characteristics:`` entries add
characteristics; an entry with the name of a table row overrides that row key by key.

The rows become ordinary characteristic entries *before* validation, so every rule of the
format applies to them unchanged; a problem in a value that came from the table is reported
at the table's file, row and column, one that came from ``defaults:`` at its line in the spec.
"""

from __future__ import annotations

import csv
import hashlib
import io
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import yaml
from yaml.error import Mark

from .errors import DataIssue, SpecError, SpecIssue
from .spec_kind import Facts, TableColumn, check_specs
from .spec_model import TARGET_KEY

TABLE_SUFFIXES = (".csv", ".xlsx")
TEXT_COLUMNS = ("name", "column", "match", "unit", "side")
# the characteristic's own columns; each kind of check adds its columns after them
# (verify.spec_kind.CheckSpec.table_columns: target_margin, shift_margin, min_cpk, ...)
OWN_COLUMNS = TEXT_COLUMNS[:4] + (TARGET_KEY, "lower", "upper", "side")
MAX_TABLE_BYTES = 50 * 1024 * 1024
MAX_ROWS = 20_000
_TAG = "tag:yaml.org,2002:"


@dataclass(frozen=True)
class CharacteristicsTable:
    """The table a spec's ``characteristics_from:`` names, as read."""

    file: Path  # resolved against the spec's folder
    file_text: str  # as written in the spec
    sha256: str
    rows: int  # characteristic rows read (blank rows not counted)
    sheet: str | None = None  # xlsx: the sheet read (the first)


@dataclass
class Expansion:
    """What expanding the table into the node tree produced."""

    table: CharacteristicsTable
    header: list[str]
    # index in the expanded characteristics list -> table row
    rows: dict[int, int] = field(default_factory=dict)


# -- reading the table ---------------------------------------------------------------------


def _issue(file: str, message: str, row: int | None = None, column: str | None = None):
    return DataIssue(file, message, row=row, column=column)


def read_table(path: Path, shown: str) -> tuple[list[str], list[tuple[int, list]], str,
                                                str | None]:
    """(header, [(row number, cells)], sha256, sheet) of a CSV or xlsx table.

    Rows are numbered as a spreadsheet user counts them (the header is row 1); blank rows are
    skipped. Cells are text (CSV) or the workbook's values (xlsx).
    """
    suffix = path.suffix.lower()
    if suffix not in TABLE_SUFFIXES:
        raise SpecError([_issue(shown, f"characteristics_from must name a .csv or .xlsx file, "
                                       f"not {suffix or 'a file without extension'!r}")])
    from .safe_open import FileRefused, check_xlsx_archive, read_regular

    if not os.path.lexists(path):
        raise SpecError([_issue(shown, "characteristics table file not found "
                                       "(characteristics_from is read relative to the spec's "
                                       "folder)")])
    hint = "split the table, or keep only characteristics in it"
    try:
        raw = read_regular(path, what="characteristics table", shown=shown,
                           max_bytes=MAX_TABLE_BYTES, limit_hint=hint)
        if suffix == ".xlsx":
            check_xlsx_archive(raw, shown, max_bytes=MAX_TABLE_BYTES,
                               what="characteristics table", limit_hint=hint)
    except FileRefused as exc:
        raise SpecError([_issue(shown, exc.reason)]) from None
    sha = hashlib.sha256(raw).hexdigest()
    if suffix == ".csv":
        header, rows = _read_csv(raw, shown)
        sheet = None
    else:
        header, rows, sheet = _read_xlsx(raw, shown)
    return header, rows, sha, sheet


def _read_csv(raw: bytes, shown: str) -> tuple[list[str], list[tuple[int, list]]]:
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        row = raw[: exc.start].count(b"\n") + 1
        raise SpecError([_issue(shown, f"is not UTF-8 text (byte 0x{raw[exc.start]:02x}): save "
                                       "the table as UTF-8 CSV", row=row)]) from None
    if "\x00" in text:
        raise SpecError([_issue(shown, "contains NUL bytes: this is not a CSV text table")])
    first = text.split("\n", 1)[0]
    delimiter = max((",", ";", "\t"), key=first.count) if any(
        d in first for d in ",;\t") else ","
    records = []
    try:
        for i, rec in enumerate(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter),
                                start=1):
            records.append((i, [c.strip() for c in rec]))
            if len(records) > MAX_ROWS + 1:
                raise SpecError([_issue(shown, f"has more than {MAX_ROWS:,} rows")])
    except csv.Error as exc:
        raise SpecError([_issue(shown, f"cannot be read as a CSV table: {exc}")]) from None
    if not records:
        raise SpecError([_issue(shown, "the characteristics table is empty: it needs a header "
                                       "row", row=1)])
    header = records[0][1]
    width = len(header)
    rows = []
    problems = []
    for i, cells in records[1:]:
        if not any(cells):
            continue
        if len(cells) > width and any(cells[width:]):
            problems.append(_issue(shown, f"has {len(cells)} cells but the header has {width} "
                                          "columns (a stray delimiter? text that needs "
                                          "quotes?)", row=i))
            continue
        rows.append((i, (cells + [""] * width)[:width]))
    if problems:
        raise SpecError(problems)
    return header, rows


def _read_xlsx(raw: bytes, shown: str) -> tuple[list[str], list[tuple[int, list]], str]:
    import openpyxl  # heavy: only for an xlsx table

    try:
        wb = openpyxl.load_workbook(io.BytesIO(raw), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds on a damaged file
        raise SpecError([_issue(shown, f"cannot be read as an .xlsx workbook "
                                       f"({type(exc).__name__}: {exc})")]) from None
    try:
        if not wb.sheetnames:
            raise SpecError([_issue(shown, "the workbook has no sheets")])
        sheet = wb.sheetnames[0]
        ws = wb[sheet]
        if not hasattr(ws, "iter_rows"):
            raise SpecError([_issue(shown, f"sheet {sheet!r} is a chart, not a table")])
        values = []
        try:
            for i, row in enumerate(ws.iter_rows(values_only=True), start=1):
                values.append((i, list(row)))
                if len(values) > MAX_ROWS + 1:
                    raise SpecError([_issue(shown, f"has more than {MAX_ROWS:,} rows")])
        except SpecError:
            raise
        except Exception as exc:  # damaged sheet XML
            raise SpecError([_issue(shown, f"sheet {sheet!r} cannot be read "
                                           f"({type(exc).__name__}: {exc})")]) from None
    finally:
        wb.close()
    if not values:
        raise SpecError([_issue(shown, "the characteristics table is empty: it needs a header "
                                       "row", row=1)])
    header = [_cell_text(v) for v in values[0][1]]
    while header and header[-1] == "":
        header.pop()
    width = len(header)
    rows = []
    for i, cells in values[1:]:
        cells = [None if (isinstance(v, str) and not v.strip()) else v for v in cells]
        if all(v is None for v in cells):
            continue
        rows.append((i, (cells + [None] * width)[:width]))
    return header, rows, sheet


def _cell_text(v) -> str:
    if v is None:
        return ""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v).strip()


# -- cells to YAML nodes -------------------------------------------------------------------


#: Nodes made from table cells carry the cell's position in their marks, moved past any real
#: spec line: line TABLE_LINE + row, column 2 + the column's index (1 for the whole row), so a
#: problem found in such a node can be reported at the table's row and column.
TABLE_LINE = 1_000_000_000


def _mark(row: int, col: int | None) -> Mark:
    return Mark("table", 0, TABLE_LINE + row - 1, 0 if col is None else col + 1, None, None)


def _scalar(tag: str, text: str, row: int, col: int | None) -> yaml.ScalarNode:
    m = _mark(row, col)
    return yaml.ScalarNode(_TAG + tag, text, start_mark=m, end_mark=m)


def _key(name: str, row: int, col: int | None) -> yaml.ScalarNode:
    return _scalar("str", name, row, col)


def _number_node(v, row: int, col: int, *, percent: bool):
    """A number cell as a YAML scalar node; text that is not a number stays text (the schema
    then names it), "p%" stays text for a margin."""
    if isinstance(v, bool):
        return _scalar("bool", "true" if v else "false", row, col)
    if isinstance(v, int):
        return _scalar("int", str(v), row, col)
    if isinstance(v, float):
        return _scalar("float", repr(v), row, col)
    text = str(v).strip()
    if percent and text.endswith("%"):
        return _scalar("str", text, row, col)
    try:
        number = float(text)
    except ValueError:
        return _scalar("str", text, row, col)
    if not (number == number and abs(number) != float("inf")):
        return _scalar("str", text, row, col)  # nan / inf: the schema refuses the text
    return _scalar("float", repr(number), row, col)


def _text_node(v, row: int, col: int) -> yaml.ScalarNode:
    if isinstance(v, float) and v.is_integer():
        v = int(v)
    return _scalar("str", str(v).strip() if isinstance(v, str) else str(v), row, col)


def _find(mapping: yaml.MappingNode | None, key: str):
    if not isinstance(mapping, yaml.MappingNode):
        return None
    for k, v in mapping.value:
        if isinstance(k, yaml.ScalarNode) and k.value == key:
            return v
    return None


def _set(mapping: yaml.MappingNode, key_node: yaml.ScalarNode, value: yaml.Node) -> None:
    for i, (k, _v) in enumerate(mapping.value):
        if isinstance(k, yaml.ScalarNode) and k.value == key_node.value:
            mapping.value[i] = (key_node, value)
            return
    mapping.value.append((key_node, value))


def _copy(node: yaml.Node) -> yaml.Node:
    """A structural copy (marks kept), so one row's changes do not touch another's."""
    if isinstance(node, yaml.MappingNode):
        return yaml.MappingNode(node.tag, [(_copy(k), _copy(v)) for k, v in node.value],
                                start_mark=node.start_mark, end_mark=node.end_mark,
                                flow_style=node.flow_style)
    if isinstance(node, yaml.SequenceNode):
        return yaml.SequenceNode(node.tag, [_copy(v) for v in node.value],
                                 start_mark=node.start_mark, end_mark=node.end_mark,
                                 flow_style=node.flow_style)
    return yaml.ScalarNode(node.tag, node.value, start_mark=node.start_mark,
                           end_mark=node.end_mark, style=node.style)


# -- expanding the spec ----------------------------------------------------------------------


def expand(root: yaml.Node, spec_path: Path, spec_file: str) -> Expansion | None:
    """Put the table's rows into ``root``'s ``characteristics`` (in place); None without a
    ``characteristics_from`` key.

    Raises
    ------
    SpecError
        The table cannot be read, a header is unknown or missing, a name is empty.
    """
    if not isinstance(root, yaml.MappingNode):
        return None
    source = _find(root, "characteristics_from")
    if source is None:
        return None
    if not (isinstance(source, yaml.ScalarNode) and source.tag == _TAG + "str"
            and source.value.strip()):
        return None  # the schema reports it
    file_text = source.value
    path = Path(os.path.abspath(spec_path.parent / file_text))
    shown = file_text
    header, rows, sha, sheet = read_table(path, shown)
    columns = _columns(header, shown)
    defaults = _find(root, "defaults")
    d_unit = _find(defaults, "unit")
    d_side = _find(defaults, "side")
    d_checks = _find(defaults, "checks")

    built: list[tuple[int, yaml.MappingNode]] = []
    problems = []
    for row, cells in rows:
        node, issue = _row_node(row, cells, columns, shown, d_unit, d_side, d_checks)
        if issue is not None:
            problems.append(issue)
            continue
        built.append((row, node))
    if problems:
        raise SpecError(problems)
    if not built:
        raise SpecError([_issue(shown, "the characteristics table has a header but no rows",
                                row=2)])

    # YAML entries: override a row of the same name key by key, or add a characteristic
    yaml_chars = _find(root, "characteristics")
    extra: list[yaml.Node] = []
    by_name: dict[str, int] = {}
    for i, (_row, node) in enumerate(built):
        by_name.setdefault(_find(node, "name").value, i)
    if isinstance(yaml_chars, yaml.SequenceNode):
        for entry in yaml_chars.value:
            name = _find(entry, "name")
            hit = by_name.get(name.value) if isinstance(name, yaml.ScalarNode) else None
            if hit is None or not isinstance(entry, yaml.MappingNode):
                extra.append(entry)
                continue
            for k, v in entry.value:
                if isinstance(k, yaml.ScalarNode):
                    _set(built[hit][1], k, v)
    items = [node for _row, node in built] + extra
    m = yaml_chars.start_mark if yaml_chars is not None else source.start_mark
    seq = yaml.SequenceNode(_TAG + "seq", items, start_mark=m, end_mark=m)
    _set(root, yaml.ScalarNode(_TAG + "str", "characteristics", start_mark=source.start_mark,
                               end_mark=source.start_mark), seq)
    table = CharacteristicsTable(file=path, file_text=file_text, sha256=sha, rows=len(built),
                                 sheet=sheet)
    return Expansion(table=table, header=[str(h) for h in header],
                     rows={i: row for i, (row, _node) in enumerate(built)})


def check_columns() -> tuple[tuple[str, TableColumn], ...]:
    """(check name, column) of every kind's table columns, in registry order."""
    return tuple((s.name, c) for s in check_specs("measured") for c in s.table_columns)


def columns() -> tuple[str, ...]:
    """Every column a characteristics table may have, in the order messages list them."""
    return OWN_COLUMNS + tuple(c.column for _name, c in check_columns())


def _columns(header: list[str], shown: str) -> dict[str, int]:
    known = columns()
    cols: dict[str, int] = {}
    problems = []
    for i, h in enumerate(header):
        key = str(h).strip().lower()
        if not key:
            continue
        if key not in known:
            import difflib

            near = difflib.get_close_matches(key, known, n=1, cutoff=0.6)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            problems.append(_issue(shown, f"unknown column {h!r}{hint} The columns are: "
                                          f"{', '.join(known)}", row=1, column=str(h)))
        elif key in cols:
            problems.append(_issue(shown, f"column {key!r} appears twice", row=1, column=str(h)))
        else:
            cols[key] = i
    if "name" not in cols and not problems:
        problems.append(_issue(shown, "the header has no 'name' column: every row names its "
                                      "characteristic", row=1))
    if "column" in cols and "match" in cols:
        problems.append(_issue(shown, "give either a 'column' column (wide layout) or a "
                                      "'match' column (long layout), not both", row=1,
                               column="match"))
    if problems:
        raise SpecError(problems)
    return cols


def _row_node(row, cells, columns, shown, d_unit, d_side, d_checks):
    """One row as a characteristic mapping node, or an issue."""

    def cell(name):
        i = columns.get(name)
        if i is None:
            return None, None
        v = cells[i]
        if v is None or (isinstance(v, str) and not v.strip()):
            return None, i
        return v, i

    pairs: list[tuple[yaml.ScalarNode, yaml.Node]] = []
    name, ci = cell("name")
    if name is None:
        return None, _issue(shown, "the name is empty: every row names its characteristic",
                            row=row, column="name")
    pairs.append((_key("name", row, ci), _text_node(name, row, ci)))
    for key in ("column", "match"):
        v, i = cell(key)
        if v is not None:
            pairs.append((_key(key, row, i), _text_node(v, row, i)))
    for key, default in (("unit", d_unit), ("side", d_side)):
        v, i = cell(key)
        if v is not None:
            pairs.append((_key(key, row, i), _text_node(v, row, i)))
        elif default is not None:
            pairs.append((_key(key, row, None), _copy(default)))
    v, i = cell(TARGET_KEY)
    if v is not None:
        pairs.append((_key(TARGET_KEY, row, i), _number_node(v, row, i, percent=False)))
    lo, li = cell("lower")
    hi, hi_i = cell("upper")
    if lo is not None or hi is not None:
        at = li if lo is not None else hi_i
        items = [
            _number_node(x, row, j, percent=False) if x is not None
            else _scalar("null", "", row, j if j is not None else at)
            for x, j in ((lo, li), (hi, hi_i))
        ]
        m = _mark(row, at)
        pairs.append((_key("limits", row, at),
                      yaml.SequenceNode(_TAG + "seq", items, start_mark=m, end_mark=m)))

    settings = []
    for check, col in check_columns():
        v, i = cell(col.column)
        if v is not None:
            settings.append((check, col.key, _number_node(v, row, i, percent=col.percent), i))
    if d_checks is not None or settings:
        if d_checks is not None:
            checks = _copy(d_checks)
        else:
            # no defaults.checks: the checks a characteristic runs by default, made explicit so
            # that a row's margin can join them
            m = _mark(row, None)
            checks = yaml.MappingNode(_TAG + "map", [], start_mark=m, end_mark=m)
            given = {k.value for k, _ in pairs}
            # only whether a target and limits are given matters here: stand-in values
            facts = Facts(target=0.0 if TARGET_KEY in given else None,
                          limits=(None, None) if "limits" in given else None)
            names = [s.name for s in check_specs("measured") if s.runs_by_default(facts)]
            for c in names:
                checks.value.append((_key(c, row, None), yaml.MappingNode(
                    _TAG + "map", [], start_mark=m, end_mark=m)))
        for check, key, node, i in settings:
            entry = _find(checks, check)
            if not isinstance(entry, yaml.MappingNode):
                m = _mark(row, i)
                entry = yaml.MappingNode(_TAG + "map", [], start_mark=m, end_mark=m)
                _set(checks, _key(check, row, i), entry)
            _set(entry, _key(key, row, i), node)
        pairs.append((yaml.ScalarNode(_TAG + "str", "checks", start_mark=checks.start_mark,
                                      end_mark=checks.start_mark), checks))
    m = _mark(row, None)
    return yaml.MappingNode(_TAG + "map", pairs, start_mark=m, end_mark=m), None


# -- problems back to the table --------------------------------------------------------------


def relocate(issues: list[SpecIssue], exp: Expansion | None, spec_file: str) -> list:
    """Issues found in values that came from the table, named at its row and column; issues
    in values copied from ``defaults:`` (or a YAML override) keep their spec line and say
    which table row they concern."""
    if exp is None:
        return list(issues)
    out = []
    for issue in issues:
        message = _LINE_REF.sub(lambda m: _line_words(int(m.group(1)), exp), issue.message)
        if message.startswith("missing required key 'unit'"):
            message = "no unit: fill in the row's unit, or give defaults.unit in the spec"
        if issue.line is not None and issue.line > TABLE_LINE:
            col = (issue.column or 0) - 2
            column = exp.header[col] if 0 <= col < len(exp.header) else None
            out.append(DataIssue(exp.table.file_text, f"{message} ({issue.path})",
                                 row=issue.line - TABLE_LINE, column=column))
            continue
        index = _char_index(issue.path)
        if index is not None and index in exp.rows:
            message += f" (for row {exp.rows[index]} of {exp.table.file_text})"
        out.append(SpecIssue(issue.file, issue.path, message, issue.line, issue.column))
    return out


_LINE_REF = re.compile(r"\bline (\d{10,})\b")


def _line_words(line: int, exp: Expansion) -> str:
    return f"row {line - TABLE_LINE} of {exp.table.file_text}" if line > TABLE_LINE else \
        f"line {line}"


def _char_index(path: str) -> int | None:
    if not path.startswith("characteristics["):
        return None
    try:
        return int(path[len("characteristics["): path.index("]")])
    except ValueError:
        return None
