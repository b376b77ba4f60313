"""The architecture's one-way data flow (DEVELOPERS.md): the statistics layer is pure and the
report layer never computes statistics. Checked on the import statements of the source files."""

import ast
from pathlib import Path

PKG = Path(__file__).resolve().parents[1] / "verify"


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = "." * node.level + (node.module or "")
            out.add(base)
            sep = "" if base.endswith(".") else "."
            out.update(f"{base}{sep}{a.name}" for a in node.names)
    return out


def _stats_modules() -> list[Path]:
    # every module of the layer, in subpackages too (a subpackage's "..": still the layer)
    return sorted(p for p in (PKG / "stats").rglob("*.py") if "__pycache__" not in p.parts)


def _leaves_stats(path: Path, name: str) -> bool:
    """Whether the import ``name`` (as :func:`_imports` gives it) of a stats module reaches
    outside verify.stats: a relative import climbing above the layer, or an absolute one."""
    depth = len(path.relative_to(PKG / "stats").parts)  # 1 for stats/x.py
    dots = len(name) - len(name.lstrip("."))
    if dots:
        return dots > depth
    return name == "verify" or (name.startswith("verify.") and name != "verify.stats"
                                and not name.startswith("verify.stats."))


def test_stats_imports_nothing_else_from_verify():
    for path in _stats_modules():
        for name in _imports(path):
            assert not _leaves_stats(path, name), f"stats/{path.name} imports {name}"


def test_the_stats_check_sees_what_leaves_the_layer():
    # made-up imports of stats/core.py and of a module of a subpackage stats/sub/x.py
    core, deep = PKG / "stats" / "core.py", PKG / "stats" / "sub" / "x.py"
    for name in ("..errors", "..", "verify", "verify.model", "verify.statsx"):
        assert _leaves_stats(core, name), name
    for name in (".errors", ".", "verify.stats", "verify.stats.core", "numpy", "scipy.special"):
        assert not _leaves_stats(core, name), name
    assert not _leaves_stats(deep, "..core") and _leaves_stats(deep, "...model")
    assert len(_stats_modules()) > 10  # the layer is found (a wrong folder would pass vacuously)


def test_report_never_calls_statistics():
    for path in sorted((PKG / "report").glob("*.py")):
        for name in _imports(path):
            assert "stats" not in name.split("."), f"report/{path.name} imports {name}"
            assert not name.startswith("verify.stats"), f"report/{path.name} imports {name}"
