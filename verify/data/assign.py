"""Process assignment, as methods of :class:`~verify.data.tidy._Tidy` (a mixin: they use its
``spec``, ``ds``, ``sheet``, ``n``, ``issue`` and ``report_cells``): lots or a process column ->
old/new, the production order, the spec's exclusions and corrections, and keys (pair, part)
that must not repeat."""

from __future__ import annotations

from fnmatch import fnmatchcase

import numpy as np
import pandas as pd

from .cells import MAX_REPORTED, NEITHER_LIST, _cut, _list, _near, _show


class _Assignment:
    def processes(self, cols: dict[str, int], lot: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        ds, rows = self.ds, self.sheet.rows
        process = np.full(self.n, "", dtype=object)
        scope = np.full(self.n, "", dtype=object)
        if ds.process is not None:
            ptext = pd.Series(self.text(cols["data.process"]), dtype=object)
            # cells are compared trimmed, like every text cell
            is_old = ptext.isin([v.strip() for v in ds.old]).to_numpy()
            is_new = ptext.isin([v.strip() for v in ds.new]).to_numpy()
            process[is_old] = "old"
            process[is_new] = "new"
            other = ~(is_old | is_new) & (lot != "")
            if other.any():
                values = ptext[other]
                if ds.ignore_other:
                    reasons = {v: f"process value {_show(v)} is neither old nor new "
                                  "(data.ignore_other)" for v in values.unique()}
                    scope[other] = values.map(reasons).to_numpy(dtype=object)
                    counts = values.value_counts(sort=False)
                    self.notes.append("left out, process neither old nor new: " + ", ".join(
                        f"{_show(v)} ({n} rows)" for v, n in counts.items()))
                else:
                    self.other_process_issues(values, rows[other])
        else:
            lots = self.spec.lots
            uniq, first, inverse = np.unique(lot, return_index=True, return_inverse=True)
            proc_u = np.full(len(uniq), "", dtype=object)
            scope_u = np.full(len(uniq), "", dtype=object)
            for j in np.argsort(first, kind="stable"):  # in order of first appearance
                lot_id = uniq[j]
                if lot_id == "":
                    continue
                hit_old = [p for p in lots.old if fnmatchcase(lot_id, p)]
                hit_new = [p for p in lots.new if fnmatchcase(lot_id, p)]
                if hit_old and hit_new:
                    self.issue(f"lot {_show(lot_id)} matches lots.old ({hit_old[0]!r}) and "
                               f"lots.new ({hit_new[0]!r}): make the lists exclusive",
                               row=int(rows[first[j]]), column=self.ds.lot)
                elif hit_old:
                    proc_u[j] = "old"
                elif hit_new:
                    proc_u[j] = "new"
                else:
                    scope_u[j] = NEITHER_LIST
            process = proc_u[inverse]
            scope = scope_u[inverse]
            counts = np.bincount(inverse, minlength=len(uniq))
            left_out = [(str(uniq[j]), int(counts[j]))
                        for j in np.argsort(first, kind="stable") if scope_u[j]]
            self.unassigned = tuple(name for name, _ in left_out)
            if left_out:
                self.notes.append("lots in neither lots list, left out: " + ", ".join(
                    f"{_cut(k)} ({n} rows)" for k, n in left_out))
        return process, scope

    def other_process_issues(self, values: pd.Series, rows: np.ndarray) -> None:
        ds = self.ds
        groups: dict[str, list[int]] = {}
        for v, r in zip(values.tolist(), rows.tolist(), strict=True):
            groups.setdefault(v, []).append(r)
        for v, rs in list(groups.items())[:MAX_REPORTED]:
            shown = ", ".join(str(r) for r in rs[:5]) + (", ..." if len(rs) > 5 else "")
            what = "an empty process value" if v == "" else f"process value {_show(v)}"
            count = f"{len(rs)} rows (rows {shown})" if len(rs) > 1 else f"1 row (row {shown})"
            self.issue(f"{what} is neither old ({_list(ds.old)}) nor new ({_list(ds.new)}); "
                       f"{count}. Add it to data.old or data.new, or set data.ignore_other: "
                       "true to leave such rows out", row=rs[0], column=ds.process)
        if len(groups) > MAX_REPORTED:
            self.issue(f"and {len(groups) - MAX_REPORTED} more process values like these",
                       column=ds.process)

    def production_order(self, cols: dict[str, int], scope: np.ndarray) -> np.ndarray:
        if self.ds.order is None:
            return np.arange(self.n, dtype=np.int64)
        cells = self.text(cols["data.order"])
        s = pd.Series(cells, dtype=object)
        numbers = pd.to_numeric(s, errors="coerce").to_numpy(dtype=float)
        if np.isfinite(numbers).all():
            keys = numbers
        else:
            times = pd.to_datetime(s, errors="coerce", format="ISO8601")
            ok = times.notna().to_numpy()
            if ok.all():
                keys = times.to_numpy(dtype="datetime64[ns]").astype(np.int64).astype(float)
            else:
                use_numbers = np.isfinite(numbers).sum() >= ok.sum()
                bad = ~np.isfinite(numbers) if use_numbers else ~ok
                self.report_cells(bad & (scope == ""), self.ds.order,
                                  lambda v: f"{_show(v)} in the order column is neither a "
                                  "number nor a date-time (such as 2024-03-05 14:20)",
                                  self.sheet.rows,
                                  cells)
                keys = np.where(bad, np.inf, numbers if use_numbers else
                                times.to_numpy(dtype="datetime64[ns]").astype(np.int64))
        ranked = np.lexsort((self.sheet.rows, keys))
        order = np.empty(self.n, dtype=np.int64)
        order[ranked] = np.arange(self.n)
        return order

    def exclusions(self, lot: np.ndarray) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        rows = self.sheet.rows
        spec_reason = np.full(self.n, "", dtype=object)
        per_char: dict[str, np.ndarray] = {}
        lots_present = [x for x in dict.fromkeys(lot.tolist()) if x]
        for i, e in enumerate(self.spec.exclude):
            reason = f"excluded by spec: {e.reason} (by {e.by})"
            line = f" (line {e.line})" if e.line else ""
            if e.part is not None:
                mask = self.part_text == e.part
                if not mask.any():
                    parts = [x for x in dict.fromkeys(self.part_text.tolist()) if x]
                    msg = (f"exclude[{i}]{line} names part {e.part!r}, which is not in column "
                           f"{self.ds.part!r}")
                    near = _near(e.part, parts)
                    self.issue(msg + (f"; did you mean {near!r}?" if near else ""),
                               column=self.ds.part)
                    continue
            elif e.row is not None:
                mask = rows == e.row
                if not mask.any():
                    last = int(rows.max()) if len(rows) else 1
                    why = (f"the last data row is {last}" if e.row > last
                           else "that row is blank")
                    self.issue(f"exclude[{i}]{line} names row {e.row}, which holds no data: "
                               f"{why}", row=e.row)
                    continue
            else:
                pattern = str(e.lot)
                hit = {x for x in lots_present if fnmatchcase(x, pattern)}
                if not hit:
                    msg = (f"exclude[{i}]{line} names lot {pattern!r}, which is not in the "
                           f"file")
                    near = _near(pattern, lots_present)
                    msg += f"; did you mean {_show(near)}?" if near else (
                        f"; lots present: {', '.join(_cut(x) for x in lots_present[:15])}"
                        + (", ..." if len(lots_present) > 15 else ""))
                    self.issue(msg, column=self.ds.lot)
                    continue
                mask = pd.Series(lot, dtype=object).isin(hit).to_numpy()
            target = spec_reason if e.characteristic is None else per_char.setdefault(
                e.characteristic, np.full(self.n, "", dtype=object))
            target[mask & (target == "")] = reason
        return spec_reason, per_char

    def corrections(self, rows, pos, char_idx, char_names, values, missing, bad, text):
        """Apply the spec's corrections to the parsed cells (in place); return, per
        measurement, the original text of a corrected cell and the correction in words."""
        original = np.full(len(pos), "", dtype=object)
        corrected = np.full(len(pos), "", dtype=object)
        self.correction_id = np.full(len(pos), -1, dtype=np.int64)
        if not self.spec.corrections:
            return original, corrected
        chars = self.spec.characteristics
        long = self.ds.layout == "long"
        row_of, part_of = rows[pos], self.part_text[pos]
        for i, k in enumerate(self.spec.corrections):
            where = f"corrections[{i}]" + (f" (line {k.line})" if k.line else "")
            if long:
                if k.column != self.ds.value:
                    self.issue(f"{where}: column {k.column!r} is not the value column "
                               f"{self.ds.value!r} (data.value): name that column",
                               column=k.column)
                    continue
                col_sel = (char_names == k.characteristic if k.characteristic is not None
                           else np.ones(len(pos), bool))
            else:
                idx = [j for j, c in enumerate(chars) if c.column == k.column
                       and (k.characteristic is None or c.name == k.characteristic)]
                if not idx:
                    cols = ", ".join(repr(c.column) for c in chars)
                    self.issue(f"{where}: column {k.column!r} is no characteristic's column; "
                               f"the measured columns are {cols}", column=k.column)
                    continue
                col_sel = np.isin(char_idx, idx)
            row_sel = row_of == k.row if k.row is not None else part_of == k.part
            hits = np.flatnonzero(row_sel & col_sel)
            what = f"row {k.row}" if k.row is not None else f"part {k.part!r}"
            if len(hits) == 0:
                self.issue(f"{where} matches no measurement: {what} has no cell in column "
                           f"{k.column!r}; check the row, the part or the column",
                           row=k.row, column=k.column)
                continue
            if len(hits) > 1:
                at = ", ".join(str(int(r)) for r in sorted(set(row_of[hits].tolist())))
                self.issue(f"{where} matches {len(hits)} measurements ({what}, rows {at}): "
                           "name one (row:, or characteristic: in the long layout)",
                           row=k.row, column=k.column)
                continue
            j = int(hits[0])
            original[j] = str(text[j])
            values[j] = k.value
            missing[j] = False
            bad[j] = False  # a corrected cell is not checked as written
            corrected[j] = f"corrected to {k.value:g}: {k.reason} (by {k.by})"
            self.correction_id[j] = i
        return original, corrected

    def duplicate_parts(self, pos, char_names, process, reason, rows) -> None:
        """A part measured twice for one characteristic in one process, both used."""
        if self.ds.part is None or not len(pos):
            return
        frame = pd.DataFrame({"c": char_names, "p": process[pos], "k": self.part_text[pos],
                              "r": rows[pos]})
        live = (reason == "") & (frame["k"] != "").to_numpy()
        frame = frame[live]
        dup = frame[frame.duplicated(["c", "p", "k"], keep=False)]
        if dup.empty:
            return
        groups = dup.groupby(["c", "p", "k"], sort=False)
        for n, ((char, proc, part), g) in enumerate(groups):
            if n == MAX_REPORTED:
                self.issue(f"and {groups.ngroups - MAX_REPORTED} more parts measured twice",
                           column=self.ds.part)
                break
            rs = sorted(set(g["r"].tolist()))
            self.issue(f"part {part!r} is measured more than once for {char} in the {proc} "
                       f"process (rows {', '.join(str(r) for r in rs)}): exclude all but one "
                       "(exclude: with row: or part:, and the reason) or correct the part "
                       "serial", row=rs[0], column=self.ds.part)

    def duplicate_pairs(self, pos, char_names, process, pair, scope, spec_r, rows) -> None:
        if self.ds.pair is None or not len(pos):
            return
        frame = pd.DataFrame({"c": char_names, "p": process[pos], "k": pair[pos],
                              "r": rows[pos]})
        live = (scope[pos] == "") & (spec_r == "") & (frame["k"] != "").to_numpy()
        frame = frame[live]
        dup = frame[frame.duplicated(["c", "p", "k"], keep=False)]
        if dup.empty:
            return
        groups = dup.groupby(["p", "k"], sort=False)
        long = self.ds.layout == "long"
        for n, ((proc, key), g) in enumerate(groups):
            if n == MAX_REPORTED:
                self.issue(f"and {groups.ngroups - MAX_REPORTED} more duplicate pair keys",
                           column=self.ds.pair)
                break
            rs = sorted(set(g["r"].tolist()))
            what = f" ({', '.join(dict.fromkeys(g['c']))})" if long else ""
            self.issue(f"pair key {_show(key)} appears more than once for the {proc} process{what}"
                       f" (rows {', '.join(str(r) for r in rs)}): a key pairs one old row with "
                       "one new row", row=rs[0], column=self.ds.pair)
