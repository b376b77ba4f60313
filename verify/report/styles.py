"""Style ids for streamed cells.

A streamed sheet writes ``s="N"`` itself, where N indexes the workbook's cell formats
(``cellXfs``). :class:`StyleBook` obtains each N from openpyxl by styling a cell on a scratch
sheet and asking for its ``style_id``; openpyxl keeps every style it has handed out and writes
them all, in that order, so the index stays valid after the scratch sheet is removed.
"""

from __future__ import annotations

from openpyxl.styles import Alignment

from .cell_styles import shared_font, style
from .cells import MUTED

_EXCLUDED_FONT = shared_font(italic=True, color=MUTED)
_TOP = Alignment(vertical="top")
_TOP_WRAP = Alignment(vertical="top", wrap_text=True)


class StyleBook:
    """Hands out cellXfs indices for the few styles the streamed sheets use."""

    def __init__(self, wb):
        self._wb = wb
        self._ws = wb.create_sheet("_styles_scratch")
        self._cache: dict[tuple, int] = {}
        self._next_row = 1

    def _get(self, key: tuple, *, fmt=None, font=None, align=None) -> int:
        if key in self._cache:
            return self._cache[key]
        if self._ws is None:
            # a style first asked for after the save would point past the saved cellXfs
            raise RuntimeError(f"style {key} was not registered before the workbook was saved")
        cell = self._ws.cell(row=self._next_row, column=1)
        self._next_row += 1
        style(cell, fmt=fmt, font=font, align=align)
        sid = int(cell.style_id)
        self._cache[key] = sid
        return sid

    def text(self, excluded: bool = False) -> int:
        return self._get(("text", excluded), font=_EXCLUDED_FONT if excluded else None)

    def number(self, fmt: str, excluded: bool = False) -> int:
        return self._get(
            ("number", fmt, excluded), fmt=fmt, font=_EXCLUDED_FONT if excluded else None
        )

    def boolean(self, excluded: bool = False) -> int:
        return self._get(
            ("bool", excluded),
            font=_EXCLUDED_FONT if excluded else None,
            align=Alignment(horizontal="center"),
        )

    def top(self, *, fmt: str | None = None, wrap: bool = False) -> int:
        """Read from the top of a tall row (text wrapped if ``wrap``); ``fmt`` for a number."""
        return self._get(("top", fmt, wrap), fmt=fmt, align=_TOP_WRAP if wrap else _TOP)

    def mono(self) -> int:
        return self._get(("mono",), font=shared_font(name="Courier New"))

    def close(self) -> None:
        """Remove the scratch sheet (the style ids it produced stay valid)."""
        if self._ws is not None:
            self._wb.remove(self._ws)
            self._ws._cells = {}  # (each cell points back to the sheet: no cycle left behind)
            self._ws = None
