"""The decision page's "Why" cell stays readable on a dimensional layout.

A cell is one row of one printed page: with 300 characteristics PENDING the cell held 300 lines
and ran off the page (seen rendering the 300-characteristic layout through LibreOffice). The
cell now shows at most ``WHY_LINES`` lines, HOLD before PENDING, and counts the rest; the
Reasons block below the table still lists every characteristic (one row each).
"""

from __future__ import annotations

from types import SimpleNamespace

from verify.report.summary import WHY_LINES, why_text


def _ev(decisions):
    chars = [SimpleNamespace(name=f"d{i:03d}", decision=d) for i, d in enumerate(decisions)]
    reasons = tuple(f"{c.name}: {c.decision} - why {c.name}" for c in chars
                    if c.decision != "PASS")
    return SimpleNamespace(characteristics=chars, reasons=reasons)


def test_every_characteristic_passed():
    assert why_text(_ev(["PASS"] * 5)) == "Every characteristic passed."


def test_up_to_the_limit_every_reason_is_shown_in_order():
    ev = _ev(["PASS", "HOLD"] + ["PENDING"] * (WHY_LINES - 1))
    assert why_text(ev) == "\n".join(ev.reasons)
    assert len(why_text(ev).splitlines()) == WHY_LINES


def test_beyond_the_limit_holds_come_first_and_the_rest_are_counted():
    decisions = ["PENDING"] * 300
    for i in (16, 30, 42, 299):
        decisions[i] = "HOLD"
    lines = why_text(_ev(decisions)).splitlines()
    assert len(lines) == WHY_LINES
    shown = [ln.split(":")[0] for ln in lines[:-1]]
    # every HOLD is shown, then the first PENDING ones, in the table's order
    assert {"d016", "d030", "d042", "d299"} <= set(shown)
    assert shown == sorted(shown)
    assert lines[-1] == (f"... and {300 - (WHY_LINES - 1)} more characteristics not passing "
                         f"({300 - (WHY_LINES - 1)} PENDING): every reason is listed under "
                         "Reasons below the table")


def test_more_holds_than_lines_counts_the_holds_left_first():
    decisions = ["HOLD"] * 20 + ["PENDING"] * 5 + ["PASS"] * 3
    lines = why_text(_ev(decisions)).splitlines()
    assert len(lines) == WHY_LINES
    assert all(": HOLD - " in ln for ln in lines[:-1])
    held_left = 20 - (WHY_LINES - 1)
    assert lines[-1] == (f"... and {held_left + 5} more characteristics not passing "
                         f"({held_left} HOLD, 5 PENDING): every reason is listed under "
                         "Reasons below the table")


def test_a_reason_line_without_its_characteristic_is_kept_and_counted():
    """An evaluation assembled by hand (the library allows it) may carry reason lines that
    name no characteristic: they are shown after the HOLDs and counted as "other"."""
    ev = _ev(["HOLD"] * 2 + ["PASS"] * 3)
    ev.reasons = ev.reasons + tuple(f"note {i}" for i in range(WHY_LINES + 3))
    lines = why_text(ev).splitlines()
    assert len(lines) == WHY_LINES
    assert lines[0].startswith("d000: HOLD") and lines[1].startswith("d001: HOLD")
    assert lines[-1].startswith("... and 6 more characteristics not passing (6 other)")
