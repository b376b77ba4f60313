"""Formula cells in an xlsx data file.

A measurement is a number someone read off a gauge; a formula cell holds a number some
program computed, and the value saved with it may not even be a result: xlsxwriter, for one,
saves 0 for every formula unless told otherwise, which would read as a measurement of 0.0.
So formula cells in the value columns (the characteristics' columns in the wide layout,
``data.value`` in the long layout) are an error naming the cells, unless the spec says
``data.formula_cells: saved-results``, when their saved results are used and a note (in the
JSON's ``data_notes`` and the audit trail) says how many and which. A formula cell with no saved
result at all is an error in any column: it would read as an empty cell, "not measured".
"""

from __future__ import annotations

from ..data.cells import _column_letter
from ..errors import DataError, DataIssue

MAX_REPORTED = 20
SAVED_RESULTS = "saved-results"


def check_formula_cells(raw: bytes, sheet, spec, shown: str) -> list[str]:
    """Refuse or note the formula cells of the sheet read into ``sheet`` (a ``data.cells._Sheet``).

    Returns
    -------
    list of str
        Notes for the run's record (formula cells whose saved results were used).

    Raises
    ------
    DataError
        Formula cells in value columns (unless ``data.formula_cells: saved-results``), and
        formula cells with no saved result, each naming row, column and cell.
    """
    from .xlsx_values import formula_cells, has_formulas

    if not has_formulas(raw):
        return []
    ds = spec.data
    formulas = formula_cells(raw, sheet.sheet)
    if not formulas:
        return []
    header = sheet.header
    names = ([c.column for c in spec.characteristics] if ds.layout == "wide" else [ds.value])
    value_cols = {j for j, h in enumerate(header) if h in names}
    position = {int(r): i for i, r in enumerate(sheet.rows)}
    unsaved, in_values = [], []
    for (r, j), text in sorted(formulas.items()):
        if r == 1:
            continue  # a header cell computed by a formula is still a column name
        i = position.get(r)
        value = None if i is None or j >= sheet.cells.shape[1] else sheet.cells.iat[i, j]
        if value is None or (isinstance(value, str) and not value.strip()):
            unsaved.append((r, j, text))
        elif j in value_cols:
            in_values.append((r, j, text, value))
    issues = [DataIssue(shown, f"cell {_cell(r, j)} holds the formula {text[:60]!r} with no "
                        "saved value: open the file in a spreadsheet program and save it, or "
                        "paste the values", row=r, column=_name(header, j))
              for r, j, text in unsaved[:MAX_REPORTED]]
    if in_values and ds.formula_cells != SAVED_RESULTS:
        room = max(MAX_REPORTED - len(issues), 1)
        for r, j, text, value in in_values[:room]:
            issues.append(DataIssue(
                shown, f"cell {_cell(r, j)} is a formula ({text[:60]!r}, saved result "
                f"{value!r}), not a measurement: a program that wrote the file may have saved a "
                "placeholder such as 0. Paste the measured values, or set data.formula_cells: "
                "saved-results to use the saved results knowingly", row=r,
                column=_name(header, j)))
        if len(in_values) > room:
            issues.append(DataIssue(shown, f"and {len(in_values) - room} more formula cells "
                                    "in value columns"))
    if issues:
        raise DataError(issues)
    if not in_values:
        return []
    cells = ", ".join(_cell(r, j) for r, j, _, _ in in_values[:10])
    more = f", ... ({len(in_values)} in all)" if len(in_values) > 10 else ""
    return [f"{shown}: {len(in_values)} formula cell{'s' if len(in_values) != 1 else ''} in "
            f"value columns read as their saved results (data.formula_cells: saved-results): "
            f"{cells}{more}"]


def _name(header: list[str], j: int) -> str | None:
    return header[j] if j < len(header) and header[j] else None


def _cell(row: int, col: int) -> str:
    return f"{_column_letter(col)}{row}"
