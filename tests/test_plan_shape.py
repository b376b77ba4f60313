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


# --- a new kind plans by adding its hooks alone ----------------------------------------------

FAKE_PLAN = '''
from verify.plan.model import PlanPart


def plans(ch):
    return True


def plan_spec(ctx, kinds):
    (kind,) = kinds
    rows = tuple((ch.name, kind.name, len(ch.name)) for ch in ctx.characteristics)
    return PlanPart("fake", rows, inputs=(("fake input", "1", "test"),),
                    method=("Fake: a row per characteristic.",))


def lines(plan, part):
    return ["", *(f"  {name}, {check}: {n} letters" for name, check, n in part.rows)]
'''

FAKE_SHEET = '''
def add_sheets(wb, plan, part, new_sheet):
    ws = new_sheet("Fake plan")
    for i, (name, check, n) in enumerate(part.rows, start=1):
        ws.cell(i, 1, name)
        ws.cell(i, 2, n)
'''


@pytest.fixture
def fake_kind(monkeypatch):
    """A kind package ``verify.checks.fake`` with a plan and a plan_sheet hook, registered
    after the real kinds (as a new subpackage would be)."""
    import importlib.machinery
    import sys
    import types

    import verify.checks
    import verify.plan.compute as compute
    from verify.checks import CheckKind

    for name, code in (("verify.checks.fake", ""), ("verify.checks.fake.plan", FAKE_PLAN),
                       ("verify.checks.fake.plan_sheet", FAKE_SHEET)):
        mod = types.ModuleType(name)
        mod.__spec__ = importlib.machinery.ModuleSpec(name, None)
        exec(compile(code, name, "exec"), mod.__dict__)
        monkeypatch.setitem(sys.modules, name, mod)
    fake = CheckKind(name="fake_check", package="fake", order=99)
    real = verify.checks.kinds()
    monkeypatch.setattr(compute, "kinds", lambda: (*real, fake))
    return fake


def test_a_new_kind_is_planned_printed_and_laid_out_through_its_hooks(fake_kind, tmp_path):
    """plan_spec, the printed table and the workbook reach the new kind through the registry:
    its part comes after the real ones, its words and its sheet are its own."""
    import openpyxl

    from verify.data import load_measurements
    from verify.plan import format_table, plan_spec
    from verify.report.plan_workbook import write_plan_workbook
    from verify.spec import load_spec

    spec = load_spec(ROOT.parent / "specs" / "bushing-supplier.yaml")
    plan = plan_spec(spec, load_measurements(spec))
    assert [p.package for p in plan.parts] == ["location", "conformance", "fake"]
    names_ = [c.name for c in spec.characteristics]
    assert plan.rows_of("fake") == tuple((n, "fake_check", len(n)) for n in names_)
    assert plan.inputs[-1] == ("fake input", "1", "test")
    assert plan.method[-1] == "Fake: a row per characteristic."
    text = format_table(plan)
    assert text.endswith("\n".join(f"  {n}, fake_check: {len(n)} letters" for n in names_))
    write_plan_workbook(plan, tmp_path / "p.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "p.xlsx")
    assert wb.sheetnames == ["Plan", "Power curves", "Fake plan"]
    assert [c.value for c in wb["Fake plan"]["A"]] == names_
