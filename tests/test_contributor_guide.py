"""The contributor guide's example works as written (DEVELOPERS.md, "How to add a check").

The guide's six files of the ``all_within`` kind are copied out of DEVELOPERS.md into a
temporary folder put on ``verify.checks.__path__``, and ``verify check`` and ``verify run`` run
with them in a fresh interpreter. The expected counts are counted here from the data written
below: a part counts as beyond a limit when strictly below the lower or strictly above the
upper limit; a value on a limit is within it (common practice for drawing tolerances).
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import openpyxl
import pytest

ROOT = Path(__file__).resolve().parents[1]
GUIDE = ROOT / "DEVELOPERS.md"
BLOCK = re.compile(r"^#### `verify/checks/all_within/(\w+\.py)`\n.*?^```python\n(.*?)^```",
                   re.M | re.S)
RUNNER = ("import sys, verify.checks as c; c.__path__.append(sys.argv[1]); "
          "from verify.cli import main; sys.exit(main(sys.argv[2:]))")

OLD = [10.002, 9.995, 10.004, 9.998, 10.001, 9.997, 10.003, 9.999, 10.000, 10.002]
# one part on the upper limit (within it), one above it, one below the lower limit
NEW = [10.001, 10.030, 9.996, 10.031, 10.002, 9.969, 9.999, 10.000, 10.003, 9.998]
LIMITS = (9.97, 10.03)


def guide_files() -> dict[str, str]:
    return {name: code for name, code in BLOCK.findall(GUIDE.read_text(encoding="utf-8"))}


def test_the_guide_shows_every_file_of_the_kind():
    assert set(guide_files()) == {"__init__.py", "spec.py", "result.py", "rule.py",
                                  "compute.py", "report.py"}


@pytest.fixture
def kind_folder(tmp_path) -> Path:
    folder = tmp_path / "kinds"
    (folder / "all_within").mkdir(parents=True)
    for name, code in guide_files().items():
        (folder / "all_within" / name).write_text(code, encoding="utf-8")
    return folder


def _spec(tmp_path: Path, checks: str, limits: bool = True) -> Path:
    rows = ["lot,line,bore"]
    rows += [f"A{i // 5},A,{v}" for i, v in enumerate(OLD)]
    rows += [f"B{i // 5},B,{v}" for i, v in enumerate(NEW)]
    (tmp_path / "lots.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    spec = tmp_path / "bore.yaml"
    spec.write_text(
        "format: verify/1\n"
        "title: Bore after the boring-bar change\n"
        "data: {file: lots.csv, lot: lot, process: line, old: A, new: B}\n"
        "characteristics:\n"
        "  - name: bore\n"
        "    unit: mm\n"
        "    target: 10.0\n"
        + (f"    limits: [{LIMITS[0]}, {LIMITS[1]}]\n" if limits else "")
        + f"    checks:\n      all_within: {checks}\n",
        encoding="utf-8")
    return spec


def _verify(kinds: Path, *args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", RUNNER, str(kinds), *args], cwd=cwd,
                          capture_output=True, text=True, timeout=300)


@pytest.mark.slow
def test_the_guide_example_runs_as_written(tmp_path, kind_folder):
    spec = _spec(tmp_path, "{}")
    new = np.array(NEW)
    below, above = int((new < LIMITS[0]).sum()), int((new > LIMITS[1]).sum())
    assert (below, above) == (1, 1)  # the data above, counted by hand: 9.969 and 10.031

    checked = _verify(kind_folder, "check", str(spec), cwd=tmp_path)
    assert checked.returncode == 0, checked.stderr
    assert "check all_within: every new part within the limits (0 allowed beyond)" in (
        checked.stdout)

    ran = _verify(kind_folder, "run", str(spec), "--out", "out", cwd=tmp_path)
    assert ran.returncode == 1, ran.stderr  # HOLD
    result = json.loads((tmp_path / "out" / "bore.json").read_text(encoding="utf-8"))
    (check,) = [c for c in result["characteristics"][0]["checks"]
                if c["check"] == "all_within"]
    assert check["outcome"] == "HOLD"
    assert check["extra"] == {"n": len(NEW), "below": below, "above": above, "allowed": 0}
    assert check["estimate"] == below + above
    assert check["reason"].startswith(f"{below} below the lower limit, {above} above")

    wb = openpyxl.load_workbook(tmp_path / "out" / "bore.xlsx")
    cells = [v for row in wb["Decision"].iter_rows(values_only=True) for v in row
             if isinstance(v, str)]
    assert "All within\n(parts beyond)" in cells
    assert f"HOLD\n{below + above} of {len(NEW)} beyond\n(0 allowed)" in cells


@pytest.mark.slow
def test_the_guide_example_passes_within_its_allowance_and_refuses_a_spec_without_limits(
        tmp_path, kind_folder):
    spec = _spec(tmp_path, "{allowed: 2}")
    ran = _verify(kind_folder, "run", str(spec), "--out", "out", cwd=tmp_path)
    assert ran.returncode == 0, ran.stdout + ran.stderr  # PASS: 2 beyond, 2 allowed
    result = json.loads((tmp_path / "out" / "bore.json").read_text(encoding="utf-8"))
    assert result["characteristics"][0]["checks"][0]["outcome"] == "PASS"

    bad = _spec(tmp_path, "{}", limits=False)
    refused = _verify(kind_folder, "check", str(bad), cwd=tmp_path)
    assert refused.returncode == 2
    assert "bore.yaml:9:7" in refused.stdout + refused.stderr
    assert "an all_within check needs limits (bore)" in refused.stdout + refused.stderr
