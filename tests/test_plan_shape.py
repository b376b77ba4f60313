"""The shape of ``verify plan`` (issue 12): every kind's planning sits in its ``plan`` hook, the
plan code loops over the registry and names no check, the workbook does not import the plan's
computation when it is imported, and the hooks follow the protocol of :mod:`verify.plan`.

The expected kinds with a plan come from the README's section on ``verify plan`` (the target
and shift checks, conformance, the pass-fail rate checks); spread and capability are not
planned.
"""

from __future__ import annotations

import ast
import inspect
from pathlib import Path

import pytest

from verify.checks import kinds, names
from verify.plan.compute import plan_hooks

ROOT = Path(__file__).resolve().parents[1] / "verify"
GENERIC = [ROOT / "plan" / "__init__.py", ROOT / "plan" / "model.py",
           ROOT / "plan" / "compute.py", ROOT / "plan" / "words.py", ROOT / "cli_plan.py",
           ROOT / "report" / "plan_workbook.py"]


def test_the_packages_with_a_plan_hook():
    planned = [k.name for _, ks in plan_hooks() for k in ks]
    assert planned == ["target", "shift", "conformance", "rate", "rate_shift"]
    assert not any(k.has_hook("plan") for k in kinds() if k.name in ("spread", "capability"))


@pytest.mark.parametrize("hook", [h for h, _ in plan_hooks()], ids=lambda h: h.__name__)
def test_every_plan_hook_follows_the_protocol(hook):
    assert list(inspect.signature(hook.plans).parameters) == ["ch"]
    assert list(inspect.signature(hook.plan_spec).parameters) == ["ctx", "kinds"]
    assert list(inspect.signature(hook.lines).parameters) == ["plan", "part"]
    if hasattr(hook, "standalone"):
        assert list(inspect.signature(hook.standalone).parameters) == ["args"]
        assert hasattr(hook, "STANDALONE_OPTION")


def test_exactly_one_default_standalone_form():
    forms = [h for h, _ in plan_hooks() if hasattr(h, "standalone")]
    assert [h.__name__ for h in forms if h.STANDALONE_OPTION is None] == [
        "verify.checks.location.plan"]
    options = [h.STANDALONE_OPTION for h in forms if h.STANDALONE_OPTION is not None]
    assert len(set(options)) == len(options) >= 1


@pytest.mark.parametrize("path", GENERIC, ids=lambda p: p.name)
def test_the_plan_code_names_no_check(path):
    """No string literal equal to a check's name outside the kinds' own packages."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = [n.value for n in ast.walk(tree)
             if isinstance(n, ast.Constant) and isinstance(n.value, str) and n.value in names()]
    assert found == []


def _module_level_imports(path: Path, deferred: bool = False) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = set()
    for node in (ast.walk(tree) if deferred else tree.body):
        if isinstance(node, ast.ImportFrom):
            out.add("." * node.level + (node.module or ""))
    return out


def test_the_workbook_and_the_plan_do_not_import_each_other():
    """The plan workbook needs only the plan's model; the plan imports no report module."""
    assert _module_level_imports(ROOT / "report" / "plan_workbook.py") & {
        "..plan", "..plan.compute", "..plan.words"} == set()
    for p in (ROOT / "plan").glob("*.py"):
        assert not any("report" in m for m in _module_level_imports(p, deferred=True)), p


def test_every_plan_module_is_short():
    mods = [*GENERIC, *(ROOT / "checks").glob("*/plan*.py"), *(ROOT / "stats").glob("power*.py"),
            ROOT / "stats" / "sample_size.py", ROOT / "stats" / "noncentral.py"]
    lengths = {p.name: len(p.read_text(encoding="utf-8").splitlines()) for p in mods}
    assert {name: n for name, n in lengths.items() if n >= 600} == {}
