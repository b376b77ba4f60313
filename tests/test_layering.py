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


def test_stats_imports_nothing_else_from_verify():
    for path in sorted((PKG / "stats").glob("*.py")):
        for name in _imports(path):
            assert not name.startswith(".."), f"{path.name} imports {name}"
            assert not name.startswith("verify.") or name.startswith("verify.stats"), (
                f"{path.name} imports {name}")


def test_report_never_calls_statistics():
    for path in sorted((PKG / "report").glob("*.py")):
        for name in _imports(path):
            assert "stats" not in name.split("."), f"report/{path.name} imports {name}"
            assert not name.startswith("verify.stats"), f"report/{path.name} imports {name}"
