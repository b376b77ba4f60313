"""Check names appear only in their own modules (issue 12, "tests that hold the shape").

Outside a kind's own subpackage ``verify/checks/<package>/``, no code in ``verify/`` names a
check: no string constant equal to a registered check name, and no attribute
``<something>.checks.<name>``. Everything else (evaluate, the workbook, the recheck sheet, the
JSON writer, the spec loader, ``verify check``, ``verify plan``) loops over
``verify.checks.kinds()`` and reaches a kind through its hooks, so that adding a kind is one new
subpackage plus its tests.

Some words are both a check's name and something else: the characteristic's nominal value is
written ``target:`` and the target check is ``checks: {target: ...}``; a process's failure rate
is ``rate`` in the JSON. Those places are listed in :data:`NOT_A_CHECK`, each with what the word
means there; the test fails if an entry goes stale, so the list cannot grow quietly.
"""

from __future__ import annotations

import ast
from pathlib import Path

from verify import checks

PKG = Path(checks.__file__).resolve().parent.parent

# (module, word): what the word names there (not a check)
NOT_A_CHECK: dict[tuple[str, str], str] = {
    ("verify/spec_model.py", "target"): "TARGET_KEY: the key of the nominal value",
    ("verify/report/charts.py", "target"): "the characteristic's nominal value drawn as a line",
    ("verify/report/json_result.py", "target"): "the characteristic's nominal value in the JSON",
    ("verify/report/json_result.py", "rate"): "a process's observed failure rate in the JSON",
    ("verify/stats/ttests.py", "target"): "the name of the one-sample t-test's argument",
    ("verify/stats/capability.py", "target"): "the name of the capability function's argument",
    ("verify/stats/power_of_tests.py", "shift"): "the name of the power function's argument",
    ("verify/stats/sample_size.py", "shift"): "the name of the sample-size function's argument",
}


def _modules() -> list[Path]:
    return sorted(p for p in PKG.rglob("*.py") if "__pycache__" not in p.parts)


def _rel(p: Path) -> str:
    return p.relative_to(PKG.parent).as_posix()


def _own_package(path: Path) -> str | None:
    parts = path.relative_to(PKG).parts
    return parts[1] if len(parts) >= 3 and parts[0] == "checks" else None


def _docstring_nodes(tree: ast.AST) -> set[int]:
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Module | ast.ClassDef | ast.FunctionDef | ast.AsyncFunctionDef):
            body = node.body
            if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant):
                found.add(id(body[0].value))
    return found


def named_checks(path: Path, names: set[str]) -> list[tuple[int, str]]:
    """(line, word) of every place in ``path`` that names one of ``names`` as code."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    docs = _docstring_nodes(tree)
    hits = []
    for node in ast.walk(tree):
        if (isinstance(node, ast.Constant) and isinstance(node.value, str)
                and node.value in names and id(node) not in docs):
            hits.append((node.lineno, node.value))
        elif (isinstance(node, ast.Attribute) and node.attr in names
              and isinstance(node.value, ast.Attribute) and node.value.attr == "checks"):
            hits.append((node.lineno, node.attr))
    return sorted(hits)


def _foreign_names() -> dict[Path, set[str]]:
    by_package: dict[str, set[str]] = {}
    for k in checks.kinds():
        by_package.setdefault(k.package, set()).add(k.name)
    every = {k.name for k in checks.kinds()}
    return {p: every - by_package.get(_own_package(p), set()) for p in _modules()}


def test_check_names_appear_only_in_their_own_modules():
    found, allowed_seen = [], set()
    for path, names in _foreign_names().items():
        for line, word in named_checks(path, names):
            key = (_rel(path), word)
            if key in NOT_A_CHECK:
                allowed_seen.add(key)
            else:
                found.append(f"{_rel(path)}:{line}: {word!r}")
    assert not found, ("check names outside their kind's subpackage (loop over "
                       "verify.checks.kinds() and call a hook instead):\n" + "\n".join(found))
    stale = sorted(set(NOT_A_CHECK) - allowed_seen)
    assert not stale, f"NOT_A_CHECK entries that no longer occur (remove them): {stale}"


def test_the_detector_finds_a_check_named_as_code(tmp_path):
    """The test above would see a check named by a string or by ``.checks.<name>``."""
    name = checks.kinds()[0].name
    src = tmp_path / "m.py"
    src.write_text(f'"""{name} in a docstring is prose."""\n'
                   f'def f(c):\n    return c.check == "{name}" or c.spec.checks.{name}\n',
                   encoding="utf-8")
    assert named_checks(src, {name}) == [(3, name), (3, name)]


def test_every_kind_has_its_own_subpackage():
    for k in checks.kinds():
        assert (PKG / "checks" / k.package / "__init__.py").is_file(), k
