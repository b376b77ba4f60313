"""Cells -> the tidy table (:data:`~verify.model.MEASUREMENT_COLUMNS`): the columns the spec
names, the layout (wide: a column per characteristic; long: ``data.characteristic`` +
``data.value``; per-lot counts as two rows), the cells parsed as numbers or declared missing
texts, and every problem of the file collected before one :class:`~verify.errors.DataError`.

Which process a row belongs to, the production order, exclusions, corrections and duplicate
keys are in :mod:`verify.data.assign`; the pass-fail cells in :mod:`verify.data.pass_fail`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import DataError, DataIssue
from ..model import MEASUREMENT_COLUMNS
from ..spec_model import Spec
from .assign import _Assignment
from .cells import (
    MAX_ABS_VALUE,
    MAX_REPORTED,
    NOT_MEASURED,
    _cell_text,
    _column_letter,
    _near,
    _Sheet,
    _show,
    text_column,
)
from .pass_fail import _PassFailCells
from .values import built_with


def _with_stream(result, stream, rows):
    """Add the ``stream`` column to the assembled table, row for row (the table may have been
    re-sorted by production order: its ``source_row`` finds each row's stream)."""
    table, *rest = result
    by_row = dict(zip(rows.tolist(), stream.tolist(), strict=True))
    table = table.assign(stream=table["source_row"].map(by_row).fillna("").astype(str))
    return (table, *rest)


class _Tidy(_Assignment, _PassFailCells):
    """Turns a :class:`_Sheet` into the tidy table, collecting every problem of the file."""

    def __init__(self, spec: Spec, sheet: _Sheet, shown: str):
        self.spec = spec
        self.ds = spec.data
        self.sheet = sheet
        self.file = shown
        self.issues: list[DataIssue] = []
        self.notes: list[str] = []
        self.n = len(sheet.cells)
        self.unassigned: tuple[str, ...] = ()
        self.trace: pd.DataFrame | None = None  # part, process as written, corrections, keep

    # helpers
    def issue(self, message: str, row: int | None = None, column: str | None = None) -> None:
        self.issues.append(DataIssue(self.file, message, row=row, column=column))

    def fail_if_issues(self) -> None:
        if self.issues:
            raise DataError(self.issues)

    def text(self, idx: int) -> np.ndarray:
        col = self.sheet.cells[idx] if idx < self.sheet.cells.shape[1] else pd.Series(
            [""] * self.n, dtype=object)
        if self.sheet.typed:
            return np.array([_cell_text(v) for v in col], dtype=object)
        return col.to_numpy(dtype=object)

    def report_cells(self, mask: np.ndarray, column: str, message, rows: np.ndarray,
                     cells: np.ndarray) -> None:
        hits = np.flatnonzero(mask)
        for i in hits[:MAX_REPORTED]:
            self.issue(message(cells[i]), row=int(rows[i]), column=column)
        if len(hits) > MAX_REPORTED:
            self.issue(f"and {len(hits) - MAX_REPORTED} more cells like these", column=column)

    # steps
    def run(self) -> tuple[pd.DataFrame, list[str], tuple[str, ...]]:
        cols = self.columns()
        rows = self.sheet.rows
        lot = self.text(cols["data.lot"])
        empty_lot = lot == ""
        self.report_cells(empty_lot, self.ds.lot, lambda v: "empty lot id: every row needs "
                          "its lot", rows, lot)
        process, scope = self.processes(cols, lot)
        pair = self.text(cols["data.pair"]) if self.ds.pair is not None else np.full(
            self.n, "", dtype=object)
        order = self.production_order(cols, scope)
        self.part_text = (self.text(cols["data.part"]) if self.ds.part is not None
                          else np.full(self.n, "", dtype=object))
        self.process_text = (self.text(cols["data.process"]) if self.ds.process is not None
                             else None)
        self.keep_text = {name: self.text(cols[f"keep:{i}"])
                          for i, name in enumerate(self.ds.keep)}
        spec_reason, char_reasons = self.exclusions(lot)
        in_scope = (scope == "") & ~empty_lot
        if self.ds.pair is not None:
            self.report_cells(in_scope & (spec_reason == "") & (pair == ""), self.ds.pair,
                              lambda v: "empty pair key: a paired row needs its key (or "
                              "exclude the row in the spec)", rows, pair)
        stream = None
        if getattr(self.ds, "stream", None) is not None:
            stream = self.text(cols["data.stream"])
            # a new part must name its stream; old rows may leave it empty
            self.report_cells(in_scope & (spec_reason == "") & (process == "new")
                              & (stream == ""), self.ds.stream,
                              lambda v: "empty stream: a new-process row needs its stream "
                              "(cavity, spindle, machine), or exclude the row in the spec",
                              rows, stream)
        pos, char_idx, cells = self.measurement_cells(cols)
        # cell problems are collected too before failing: all of a file's problems at once
        table = self.assemble(rows, lot, process, pair, order, scope, spec_reason,
                              char_reasons, pos, char_idx, cells)
        if stream is not None:
            # an extra column, only when data.stream is declared (MEASUREMENT_COLUMNS stay)
            return _with_stream(table, stream, rows)
        return table

    def columns(self) -> dict[str, int]:
        header = self.sheet.header
        index: dict[str, list[int]] = {}
        for i, h in enumerate(header):
            index.setdefault(h, []).append(i)
        wanted: list[tuple[str, str]] = [("data.lot", self.ds.lot)]
        for key in ("process", "pair", "order", "characteristic", "value", "stream", "part"):
            name = getattr(self.ds, key, None)
            if name is not None:
                wanted.append((f"data.{key}", name))
        for i, name in enumerate(self.ds.keep):
            wanted.append((f"keep:{i}", name))
        for i, c in enumerate(self.spec.characteristics):
            if c.counts is not None:
                # per-lot counts: the failed column holds the characteristic's values and the
                # inspected column its own tidy rows (in either layout)
                wanted.append((f"char:{i}", c.counts[1]))
                wanted.append((f"insp:{i}", c.counts[0]))
            elif self.ds.layout == "wide":
                wanted.append((f"char:{i}", c.column))
        found: dict[str, int] = {}
        shown_cols = ", ".join(_show(h) for h in header if h) or "(none)"
        for role, name in wanted:
            where = (f"characteristics[{role[5:]}].column" if role.startswith("char:")
                     else f"characteristics[{role[5:]}].counts" if role.startswith("insp:")
                     else f"data.keep[{role[5:]}]" if role.startswith("keep:")
                     else role)
            if role.startswith("char:") and self.spec.characteristics[
                    int(role[5:])].counts is not None:
                where = f"characteristics[{role[5:]}].counts"
            hits = index.get(name, [])
            if len(hits) > 1:
                self.issue(f"column {name!r} ({where} in the spec) appears "
                           f"{len(hits)} times in the header (columns "
                           f"{', '.join(_column_letter(h) for h in hits)}): rename one",
                           row=1, column=name)
            elif not hits:
                msg = f"no column {name!r} ({where} in the spec); the columns are: {shown_cols}"
                near = _near(name, [h for h in header if h])
                if near:
                    msg += f"; did you mean {_show(near)}?"
                self.issue(msg, row=1, column=name)
            else:
                found[role] = hits[0]
        self.fail_if_issues()
        return found

    def measurement_cells(self, cols: dict[str, int]) -> tuple[np.ndarray, np.ndarray, list]:
        """Row positions, characteristic indices and the raw cells of every measurement."""
        chars = self.spec.characteristics
        cells = self.sheet.cells
        positions, indices, parts = [], [], []
        if self.ds.layout == "wide":
            for i in range(len(chars)):
                positions.append(np.arange(self.n))
                indices.append(np.full(self.n, i))
                parts.append(cells[cols[f"char:{i}"]].to_numpy(dtype=object))
                if chars[i].counts is not None:
                    positions.append(np.arange(self.n))
                    indices.append(np.full(self.n, len(chars) + i))
                    parts.append(cells[cols[f"insp:{i}"]].to_numpy(dtype=object))
        else:
            ctext = self.text(cols["data.characteristic"])
            values = cells[cols["data.value"]].to_numpy(dtype=object)
            matched = np.zeros(self.n, bool)
            present = [x for x in dict.fromkeys(ctext.tolist())]
            for i, c in enumerate(chars):
                mask = ctext == c.match
                matched |= mask
                if not mask.any():
                    shown = ", ".join(_show(x) for x in present[:15]) or "(none)"
                    msg = (f"no rows for characteristic {c.name!r}: column "
                           f"{self.ds.characteristic!r} has no value {c.match!r}; its values "
                           f"are: {shown}")
                    near = _near(c.match, [x for x in present if x])
                    if near:
                        msg += f"; did you mean {_show(near)}? (set match: in the spec)"
                    self.issue(msg, column=self.ds.characteristic)
                    continue
                where = np.flatnonzero(mask)
                positions.append(where)
                indices.append(np.full(len(where), i))
                if c.counts is not None:
                    parts.append(cells[cols[f"char:{i}"]].to_numpy(dtype=object)[where])
                    positions.append(where)
                    indices.append(np.full(len(where), len(chars) + i))
                    parts.append(cells[cols[f"insp:{i}"]].to_numpy(dtype=object)[where])
                else:
                    parts.append(values[where])
            other = ~matched
            if other.any():
                names = list(dict.fromkeys(ctext[other].tolist()))
                shown = ", ".join(_show(x) if x else "(empty)" for x in names[:10])
                self.notes.append(f"{int(other.sum())} rows measure characteristics the spec "
                                  f"does not name ({shown}{', ...' if len(names) > 10 else ''})"
                                  ": not used")
        if not positions:
            return np.zeros(0, np.int64), np.zeros(0, np.int64), []
        return np.concatenate(positions), np.concatenate(indices), parts

    def parse(self, parts: list, char_idx: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                 np.ndarray, np.ndarray]:
        """Values, missing mask, bad-cell mask and cell texts, vectorised."""
        cells = np.concatenate(parts) if parts else np.zeros(0, dtype=object)
        values = np.full(len(cells), np.nan)
        numeric = np.zeros(len(cells), bool)
        if self.sheet.typed:
            kinds = pd.Series(cells, dtype=object).map(type)
            numeric = kinds.isin([int, float]).to_numpy()
            values[numeric] = cells[numeric].astype(float)
            text = np.array([_cell_text(v) for v in cells], dtype=object)
        else:
            text = cells
        missing_texts = {m.strip() for m in self.ds.missing}
        s = pd.Series(text, dtype=object)
        missing = s.isin(missing_texts).to_numpy()
        is_text = ~numeric & ~missing
        wrong_sep = np.zeros(len(cells), bool)
        if is_text.any():
            t = s[is_text].astype(str)
            if self.ds.decimal == ",":
                wrong_sep[is_text] = t.str.contains(".", regex=False).to_numpy()
                t = t.str.replace(",", ".", regex=False)
            else:
                wrong_sep[is_text] = t.str.contains(",", regex=False).to_numpy()
            parsed = pd.to_numeric(t, errors="coerce").to_numpy(dtype=float)
            values[is_text] = np.where(wrong_sep[is_text], np.nan, parsed)
        values[missing] = np.nan  # a declared missing text, even a number such as -999
        bad = is_text & np.isnan(values)
        with np.errstate(invalid="ignore"):
            # beyond 1e100 squares and sums overflow; no gauge reads such a number
            infinite = np.isinf(values) | (np.abs(values) > MAX_ABS_VALUE)
        self.wrong_sep = wrong_sep
        self.infinite = infinite
        return values, missing, bad | infinite, text

    def assemble(self, rows, lot, process, pair, order, scope, spec_reason, char_reasons, pos,
                 char_idx, parts):
        chars = self.spec.characteristics
        values, missing, bad, text = self.parse(parts, char_idx)
        # index len(chars) + i holds the inspected counts of characteristic i (pass-fail)
        names = np.array([c.name for c in chars] + [c.inspected_name for c in chars],
                         dtype=object)
        owner = np.array([c.name for c in chars] * 2, dtype=object)
        char_names = names[char_idx] if len(char_idx) else np.zeros(0, dtype=object)
        if self.spec.corrections:  # corrected in place: writable copies
            values, missing, bad = (np.array(values, dtype=float), np.array(missing, bool),
                                    np.array(bad, bool))
        original, corrected = self.corrections(rows, pos, char_idx, char_names, values, missing,
                                               bad, text)
        owners = owner[char_idx] if len(char_idx) else np.zeros(0, dtype=object)
        reason = scope[pos].copy() if len(pos) else np.zeros(0, dtype=object)
        spec_r = spec_reason[pos]
        reason = np.where(reason == "", spec_r, reason)
        for name, per_row in char_reasons.items():
            sel = owners == name
            r = per_row[pos]
            reason = np.where(sel & (reason == ""), r, reason)
        checkable = (reason == "") & (lot[pos] != "")
        bad = self.pass_fail_cells(checkable, pos, char_idx, values, missing, bad, text, rows,
                                   lot, process)
        self.bad_cell_issues(checkable & bad, rows[pos], char_idx, text, values)
        reason = np.where((reason == "") & missing, NOT_MEASURED, reason)
        values = np.where(bad, np.nan, values)
        self.duplicate_pairs(pos, char_names, process, pair, scope, spec_r, rows)
        self.duplicate_parts(pos, char_names, process, reason, rows)
        self.fail_if_issues()

        # production order sorts the rows within each characteristic (a stable sort); the
        # arrays are put in that order before the frames are made from them
        at, correction_id, codes = pos, self.correction_id, char_idx
        if self.ds.order is not None:
            perm = np.lexsort((order[pos], char_idx))  # what sort_values(kind="stable") gave
            at = pos[perm]
            char_names, values, reason = char_names[perm], values[perm], reason[perm]
            original, corrected = original[perm], corrected[perm]
            correction_id = correction_id[perm]
            codes = char_idx[perm]
        columns = {
            "source_file": text_column(np.full(len(at), self.ds.file_text, dtype=object)),
            "source_row": rows[at].astype(np.int64),
            "order": order[at].astype(np.int64),
            "lot": text_column(lot[at]),
            "process": text_column(process[at]),
            "pair": text_column(pair[at]),
            "characteristic": text_column(char_names),
            "value": values.astype(float),
            "excluded": reason != "",
            "exclusion_reason": text_column(reason),
        }
        table = pd.DataFrame(columns, columns=list(MEASUREMENT_COLUMNS))
        if getattr(self.ds, "stream", None) is None:  # (a stream column makes a new table)
            self.lend_index_columns(table, columns, codes, names, lot, process, at)
        # traceability, beside the model's columns (the recheck reads those by position)
        extra: dict[str, np.ndarray] = {}
        if self.ds.part is not None:
            extra["part"] = self.part_text[at].astype(str)
        if self.process_text is not None:
            extra["process_value"] = self.process_text[at].astype(str)
        if self.spec.corrections:
            extra["original"] = original.astype(str)
            extra["correction"] = corrected.astype(str)
            extra["correction_id"] = correction_id  # the spec's corrections[i]
        for name, cells in self.keep_text.items():
            extra[f"keep:{name}"] = cells[at].astype(str)
        self.trace = pd.DataFrame(extra, columns=list(extra)) if extra else None
        for proc in ("old", "new"):
            if not (process[pos] == proc).any():
                self.notes.append(f"no rows for the {proc} process yet")
        return table, self.notes, self.unassigned

    @staticmethod
    def lend_index_columns(table, columns, char_codes, char_names, lot, process, at) -> None:
        """Give the evaluation's index (:func:`verify.data.values.built_with`) the arrays this
        table was just built from, with the codes of its text columns where they cost little
        here: the characteristics' numbers (``char_codes`` into ``char_names``, the table's
        own) and the lots and processes numbered per sheet row, each taken at the table's rows:
        for a wide layout of two characteristics or more (a sheet row per part, several
        measurements each). A long layout (a sheet row per measurement) would number its rows
        here as the index numbers the table's: it lends nothing, and the index reads the table.
        Only for pandas' pyarrow text storage, whose encoding the index's plain route reads."""
        if len(lot) * 2 > len(at):
            return
        text = pd.arrays.ArrowStringArray
        if not all(isinstance(columns[c], text) for c in ("lot", "process", "characteristic")):
            return
        lots: dict = {}  # each lot -> its number (by equality: a lot not text lends nothing)
        lot_codes = np.array([lots.setdefault(v, len(lots)) for v in lot.tolist()],
                             dtype=np.int64)
        procs: dict = {}
        proc_codes = np.array([procs.setdefault(v, len(procs)) for v in process.tolist()],
                              dtype=np.int64)
        built_with(table, excluded=columns["excluded"],
                   characteristic=(np.asarray(char_codes, dtype=np.int64), char_names),
                   process=(proc_codes[at], list(procs)), lot=(lot_codes[at], list(lots)),
                   order=columns["order"], source_row=columns["source_row"],
                   value=columns["value"])

    def bad_cell_issues(self, mask, rows, char_idx, text, values) -> None:
        chars = self.spec.characteristics
        hits = np.flatnonzero(mask)
        decimal = self.ds.decimal
        declared = list(self.ds.missing)
        for i in hits[:MAX_REPORTED]:
            c = chars[int(char_idx[i])]
            column = c.column if self.ds.layout == "wide" else self.ds.value
            v = text[i]
            if np.isinf(values[i]):
                msg = (f"{_show(v)} is an infinite value ({c.name}): a measurement must be a "
                       "finite number")
            elif abs(values[i]) > MAX_ABS_VALUE:
                msg = (f"{_show(v)} is outside the range verify computes with ({c.name}: |value| "
                       f"<= {MAX_ABS_VALUE:g}): correct the cell or its unit")
            elif self.wrong_sep[i]:
                other = "," if decimal == "." else "."
                msg = (f"{_show(v)} is not a number with the decimal separator {decimal!r} "
                       f"({c.name}): correct the cell, or set data.decimal: {other!r} if the "
                       f"whole file writes {other!r} for decimals")
            elif v == "":
                msg = (f"empty cell ({c.name}), and '' is not one of the declared missing texts "
                       f"{declared}: add '' to data.missing or fill in the cell")
            else:
                msg = (f"{_show(v)} is not a number and not one of the declared missing texts "
                       f"{declared} ({c.name}): add it to data.missing or correct the cell")
            self.issue(msg, row=int(rows[i]), column=column)
        if len(hits) > MAX_REPORTED:
            self.issue(f"and {len(hits) - MAX_REPORTED} more cells that are not numbers")
