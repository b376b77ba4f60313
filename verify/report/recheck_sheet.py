"""The recheck sheet's toolkit: the sheet writer, its cells, and what a recheck hook receives.

Every row of the recheck sheet has the columns of :data:`COLUMNS` (helper rows add the lot in
column G). A string starting with ``"="`` is a formula; all other cells are values or text (no
text cell starts with ``"="``). :meth:`Sheet.qty` writes a recomputed quantity beside the
engine's value, the difference and an agreement cell that is TRUE when
``|sheet - engine| <= tolerance * MAX(1, |engine|)``.

A kind of check writes its rows from its ``recheck`` hook (``verify/checks/<kind>/recheck.py``)
with :class:`Sheet`; it reads the numbers a check result keeps besides its common fields from
the result's typed details (``CheckResult.details``, the dataclasses of the kind's ``result``
hook) by attribute, and chooses its formulas from their type, the result's ``design`` or the
spec's settings, never from the method's text.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from .cells import XML_ILLEGAL

if TYPE_CHECKING:
    from ..model import CharacteristicResult, CheckResult, Evaluation
    from .layout import MeasurementLayout
    from .recheck_blocks import Pairs
    from .recheck_lookup import Table

TOLERANCE = 1e-9  # relative, on MAX(1, |engine|)
COLUMNS = (
    "Quantity",
    "Spreadsheet",
    "Engine",
    "Difference",
    "Agrees",
    "How the spreadsheet computes it",
)
TOLERANCE_CELL = "$B$3"
ALPHA_CELL = "$B$4"
SUMMARY_ROW = 5  # "rows that agree": COUNTIF over the Agrees column
HEADER_ROW = 7  # the column headings
FIRST_BODY_ROW = 8
# Largest number of helper rows (lot means, subgroup ranges, moving ranges) one block may add.
MAX_HELPER_ROWS = 5000


def as_number(x) -> float | int | None:
    """The engine's value as a cell value: None when absent or not a finite number."""
    if type(x) is float:  # the common case first (the general rules below agree)
        return x if math.isfinite(x) else None
    if x is None or isinstance(x, bool):
        return None
    if isinstance(x, int):
        return x
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def as_text(s: str) -> str | None:
    """A text cell (None when empty): never starts with '=', which would make it a formula."""
    hit = _TEXTS.get(s, _MISSING)
    if hit is not _MISSING:
        return hit
    out = XML_ILLEGAL.sub("", s)
    out = None if not out else out if not out.startswith("=") else " " + out
    if type(s) is str:
        if len(_TEXTS) >= 8192:
            _TEXTS.clear()
        _TEXTS[s] = out
    return out


# the labels and explanations repeat for every characteristic: each text made once
_TEXTS: dict[str, str | None] = {}
_MISSING = object()


class Sheet:
    """Rows of the recheck sheet with their Excel row numbers (body rows start at a fixed row)."""

    def __init__(self, first_row: int):
        self.first_row = first_row
        self.rows: list[list] = []
        self.compared = 0
        self.pairs: dict[str, Pairs | None] = {}  # paired-difference rows, once per characteristic
        self.current: tuple[str, str] = ("", "")  # (characteristic, check) being written
        self.family_p: dict[tuple[str, str], str] = {}  # p cells of the difference tests
        self.table: Table | None = None  # set when the formulas can read by key
        self.helpers: list[list] = []  # helper rows, appended after the body
        self.samples: dict = {}  # (characteristic, process) -> Helper of its used values

    @property
    def next_row(self) -> int:
        return self.first_row + len(self.rows)

    def add(self, *cells) -> int:
        self.rows.append(list(cells))
        return self.first_row + len(self.rows) - 1

    def blank(self) -> None:
        self.add()

    def heading(self, text: str) -> None:
        self.add(as_text(text))

    def note(self, text: str) -> None:
        self.add(None, None, None, None, None, as_text(text))

    def param(self, label: str, value: float, how: str) -> str:
        """A value the formulas take as given (a limit, a margin, a level)."""
        r = self.add(as_text(label), float(value), None, None, None, as_text(how))
        return f"$B${r}"

    def qty(self, label: str, formula: str, engine=None, how: str = "") -> str:
        """A recomputed quantity; compared with the engine's value when it has one."""
        rows = self.rows
        r = self.first_row + len(rows)
        eng = as_number(engine)
        if eng is None:
            rows.append([as_text(label), "=" + formula, None, None, None, as_text(how)])
        else:
            self.compared += 1
            rows.append([
                as_text(label),
                "=" + formula,
                eng,
                f"=B{r}-C{r}",
                f"=ABS(B{r}-C{r})<={TOLERANCE_CELL}*MAX(1,ABS(C{r}))",
                as_text(how),
            ])
        return f"$B${r}"

    def family_member(self, p_cell: str) -> str:
        """Register ``p_cell`` as the rebuilt p-value of the check being written, the one the
        multiplicity block adjusts when the check belongs to the family; returns the cell."""
        self.family_p[self.current] = p_cell
        return p_cell

    def unavailable(self, label: str, why: str) -> None:
        self.add(as_text(label), as_text(f"not available: {why}"))


@dataclass
class Subject:
    """What a kind's recheck hook receives besides the sheet and the check result: the
    characteristic being rechecked, with the evaluation and the measurements layout the formulas
    read, and the rows its kinds' ``prepare`` hooks wrote once for it (``prepared``, by key)."""

    evaluation: Evaluation
    layout: MeasurementLayout
    result: CharacteristicResult
    prepared: dict[str, Any] = field(default_factory=dict)

    @property
    def name(self) -> str:
        return self.result.name

    @property
    def spec(self):
        """The characteristic's spec (limits, target, side, its checks' settings)."""
        return self.result.spec


def computed_nothing(sh: Sheet, check: CheckResult, fields: tuple[str, ...]) -> bool:
    """True (and a note on the sheet) when the engine computed none of ``fields`` for the
    check, so there is nothing to recompute."""
    if any(getattr(check, f) is not None for f in fields):
        return False
    sh.note(f"the engine computed no numbers for this check: {check.reason}")
    return True


Prepare = Callable[[Sheet, Subject], None]
