"""Pass-fail cells, as a method of :class:`~verify.data.tidy._Tidy` (a mixin: it uses its
``spec``, ``ds``, ``issue`` and ``report_cells``): per-part results become 1.0 (failed) or 0.0
(passed); per-lot counts are checked (whole numbers, failed <= inspected, one row per lot)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .cells import _show


class _PassFailCells:
    def pass_fail_cells(self, checkable, pos, char_idx, values, missing, bad, text, rows,
                        lot, process) -> np.ndarray:
        """Pass-fail characteristics: per-part results become 1.0 (failed) or 0.0 (passed);
        per-lot counts must be whole numbers with failed <= inspected, both given or both
        missing, one row per lot. Reports their problems; returns ``bad`` without their cells
        (``values`` is changed in place)."""
        chars = self.spec.characteristics
        k = len(chars)
        if not any(c.pass_fail for c in chars):
            return bad
        bad = bad.copy()
        src = rows[pos]
        for i, c in enumerate(chars):
            if not c.pass_fail:
                continue
            sel = char_idx == i
            if c.counts is None:
                column = c.column if self.ds.layout == "wide" else self.ds.value
                t = pd.Series(text[sel], dtype=object).map(lambda v: str(v).strip())
                fail = t.isin([x.strip() for x in c.fail_texts]).to_numpy()
                ok = t.isin([x.strip() for x in c.pass_texts]).to_numpy()
                m = missing[sel]
                vals = np.where(fail, 1.0, np.where(ok, 0.0, np.nan))
                values[sel] = vals
                wrong = ~fail & ~ok & ~m & checkable[sel]
                bad[sel] = False
                declared = list(self.ds.missing)
                self.report_cells(
                    wrong, column, lambda v, c=c, d=declared: (
                        f"{_show(v)} is neither a fail result {list(c.fail_texts)} nor a pass "
                        f"result {list(c.pass_texts)} nor a declared missing text {d} "
                        f"({c.name}): correct the cell, or add the text to fail: or pass: in "
                        "the spec"), src[sel], t.to_numpy(dtype=object))
                continue
            inspected_col, failed_col = c.counts
            fsel, isel = np.flatnonzero(sel), np.flatnonzero(char_idx == k + i)
            # both lists follow the same row positions (built side by side)
            for where, column in ((fsel, failed_col), (isel, inspected_col)):
                v = values[where]
                notwhole = ~missing[where] & ~bad[where] & ~(
                    np.isfinite(v) & (v >= 0) & (np.floor(v) == v))
                self.report_cells(
                    (bad[where] | notwhole) & checkable[where], column,
                    lambda x, c=c: (f"{_show(x)} is not a whole number of parts >= 0 "
                                    f"({c.name}): correct the cell, or declare it missing"),
                    src[where], text[where])
                bad[where] = False
            f_miss, i_miss = missing[fsel], missing[isel]
            both = checkable[fsel]
            one = (f_miss != i_miss) & both
            self.report_cells(
                one, failed_col, lambda x, c=c: (
                    f"a lot row of {c.name} needs both counts (inspected and failed) or "
                    "neither: fill in the empty one, or exclude the row"), src[fsel],
                text[fsel])
            fv, iv = values[fsel], values[isel]
            with np.errstate(invalid="ignore"):
                over = both & ~f_miss & ~i_miss & (fv > iv)
            self.report_cells(
                over, failed_col, lambda x, c=c: (
                    f"{_show(x)} failed is more than the parts inspected in that lot "
                    f"({c.name}): correct the counts"), src[fsel], text[fsel])
            live = both & ~f_miss & ~i_miss
            seen: dict[tuple, int] = {}
            for j in np.flatnonzero(live):
                key = (lot[pos[fsel[j]]], process[pos[fsel[j]]])
                if key in seen:
                    self.issue(f"lot {_show(key[0])} has more than one row of counts for "
                               f"{c.name} (rows {seen[key]} and {int(src[fsel[j]])}): give "
                               "one row per lot (and process), or exclude one",
                               row=int(src[fsel[j]]), column=failed_col)
                else:
                    seen[key] = int(src[fsel[j]])
        return bad
