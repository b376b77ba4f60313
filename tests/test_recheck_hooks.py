"""The shape of the recheck sheet's code: one ``recheck`` hook per kind of check, a toolkit that
names no check, and a result's details read from its typed fields.

The sheet's cells themselves are checked in ``test_recheck.py`` (their shape) and
``test_recheck_libreoffice.py`` (their values, recalculated); here we check how the code that
writes them is put together (issue 12: a kind's formulas live in its own module, chosen from
typed information, never from method text).
"""

from __future__ import annotations

import ast
import dataclasses
from pathlib import Path

import pytest

from tests.factory import make_evaluation
from verify.checks import kinds, names
from verify.model import CheckResult
from verify.report import recheck
from verify.report.layout import measurement_layout
from verify.report.recheck_sheet import FIRST_BODY_ROW, Sheet, computed_nothing

PKG = Path(__file__).resolve().parents[1] / "verify"
TOOLKIT = sorted(PKG.glob("report/recheck*.py")) + [PKG / "report" / "formulas.py"]
HOOKS = sorted(PKG.glob("checks/*/recheck.py"))


def _strings(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    return {n.value for n in ast.walk(tree) if isinstance(n, ast.Constant)
            and isinstance(n.value, str)}


def test_every_kind_has_a_recheck_hook_with_the_protocol():
    # the hook protocol: recheck(sh, on, check), optionally prepare(sh, on) and NUMBERS
    for k in kinds():
        assert k.has_hook("recheck"), k.name
        mod = k.hook("recheck")
        assert callable(mod.recheck), k.name
        assert callable(getattr(mod, "prepare", None)), k.name
        numbers = getattr(mod, "NUMBERS", recheck.NUMBERS)
        assert numbers and all(hasattr(CheckResult, f) for f in numbers), k.name


def test_the_toolkit_names_no_check():
    every = set(names())
    for path in TOOLKIT:
        named = _strings(path) & every
        assert not named, f"{path.name} names the checks {sorted(named)}"


@pytest.mark.parametrize("path", TOOLKIT + HOOKS, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_details_are_typed_and_no_formula_is_chosen_by_method_text(path):
    # a result's details are read by attribute from its typed details: never through the
    # old untyped `extra` nor the string-keyed `details_mapping()`; and no module chooses
    # formulas by searching a method's text (`"pitman" in method`)
    tree = ast.parse(path.read_text(encoding="utf-8"))
    untyped = [ast.unparse(n) for n in ast.walk(tree)
               if isinstance(n, ast.Attribute) and n.attr in {"extra", "details_mapping"}]
    assert untyped == [], f"{path.name}: {untyped}"
    for node in ast.walk(tree):
        if isinstance(node, ast.Compare) and any(isinstance(op, ast.In | ast.NotIn)
                                                 for op in node.ops):
            right = ast.unparse(node.comparators[0])
            assert "method" not in right, f"{path.name}: {ast.unparse(node)}"
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
            assert not (node.func.attr == "startswith" and "method" in ast.unparse(node.func)), (
                f"{path.name}: {ast.unparse(node)}")


def test_computed_nothing_notes_the_reason_and_stops():
    ev = make_evaluation("welch")
    ch = ev.characteristics[0].checks[0]
    empty = dataclasses.replace(ch, estimate=None, p_value=None, statistic=None,
                                reason="too few parts")
    sh = Sheet(FIRST_BODY_ROW)
    assert computed_nothing(sh, empty, recheck.NUMBERS)
    assert sh.rows == [[None, None, None, None, None,
                        "the engine computed no numbers for this check: too few parts"]]
    sh = Sheet(FIRST_BODY_ROW)
    assert not computed_nothing(sh, ch, recheck.NUMBERS)
    assert sh.rows == []


def test_recheck_rows_calls_each_hook_of_the_kinds_of_the_checks(monkeypatch):
    # every check of a registered kind with numbers reaches its kind's hook once, in the
    # characteristic's order; a shared prepare hook runs once per characteristic
    ev = make_evaluation("all", multiplicity="holm")
    calls: list[tuple[str, str]] = []
    prepared: list[str] = []
    for mod in {id(m): m for m in (k.hook("recheck") for k in kinds())}.values():

        def spy(sh, on, check, _orig=mod.recheck):
            calls.append((on.name, check.check))
            return _orig(sh, on, check)

        monkeypatch.setattr(mod, "recheck", spy)
    orig_prepare = kinds()[0].hook("recheck").prepare

    def prepare_spy(sh, on):
        prepared.append(on.name)
        return orig_prepare(sh, on)

    for mod in {id(m): m for m in (k.hook("recheck") for k in kinds())}.values():
        if mod.prepare is orig_prepare:
            monkeypatch.setattr(mod, "prepare", prepare_spy)
    recheck.recheck_rows(ev, measurement_layout(ev))
    registered = set(names())
    expected = [(c.name, ch.check) for c in ev.characteristics for ch in c.checks
                if ch.check in registered
                and any(getattr(ch, f) is not None for f in recheck.NUMBERS)]
    assert calls == expected and expected
    assert prepared == [c.name for c in ev.characteristics]
