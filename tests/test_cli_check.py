"""`verify check` and `verify schema`: plans on stdout, every problem on stderr, exit 2."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys

import pytest
from helpers_spec import (
    BASE_SPEC,
    DATA_CASES,
    REPO,
    SAMPLE_SPECS,
    SPEC_CASES,
    SPECS,
    write_case,
    write_data_case,
    write_spec,
)

from verify.cli import COMMANDS, build_parser, main


def files_under(folder):
    return sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*"))


def run_verify(*args, cwd=REPO):
    env = dict(os.environ, PYTHONPATH=str(REPO))
    return subprocess.run([sys.executable, "-m", "verify", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True, env=env, timeout=120)


# -- every error kind: exit 2, message on stderr, nothing written --------------------------


@pytest.mark.parametrize("case", SPEC_CASES, ids=lambda c: c.id)
def test_check_bad_spec_exits_2_and_writes_nothing(tmp_path, monkeypatch, capsys, case):
    spec = write_spec(tmp_path, case.text)
    (tmp_path / "lots.csv").write_text("lot,supplier,width,height_mm\n")
    monkeypatch.chdir(tmp_path)
    before = files_under(tmp_path)
    assert main(["check", spec.name]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert f"spec.yaml:{case.line}" in err
    if case.path:
        assert f"`{case.path}`" in err
    assert files_under(tmp_path) == before


@pytest.mark.parametrize("case", DATA_CASES, ids=lambda c: c.id)
def test_check_bad_data_exits_2_and_writes_nothing(tmp_path, monkeypatch, capsys, case):
    monkeypatch.chdir(tmp_path)
    spec = write_data_case(tmp_path, case)
    before = files_under(tmp_path)
    assert main(["check", spec.name]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert case.data_name in err
    if case.row is not None:
        assert f"row {case.row}" in err
    if case.column is not None:
        assert f"column '{case.column}'" in err
    assert files_under(tmp_path) == before


# -- the plan -------------------------------------------------------------------------------


def test_check_prints_the_plan(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    text = BASE_SPEC + "exclude:\n  - {row: 3, reason: gauge dropped, by: QE-11}\n"
    write_case(tmp_path, text)
    assert main(["check", "spec.yaml"]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    assert "spec.yaml: valid" in out
    assert "old/new by column 'supplier': old = 'Old Co', new = 'New Co'" in out
    assert "exclude row 3: gauge dropped (by QE-11); 2 measurements" in out
    assert "width [mm]: target 10, limits [9.5, 10.5]" in out
    assert "old: n 3 in 2 lots (A1, A2)" in out
    assert "new: n 4 in 2 lots (B1, B2)" in out
    assert "target: new mean within -0.2..+0.2 mm of 10 (equivalence, TOST)" in out
    assert "shift: new minus old within -0.1..+0.1 mm (equivalence, TOST, welch)" in out
    assert "shift: new against old (difference test, welch, two-sided)" in out  # height
    assert "1 spec valid" in out


def test_check_one_bad_spec_among_good_ones(tmp_path, capsys):
    good = tmp_path / "good"
    bad = tmp_path / "bad"
    for d in (good, bad):
        d.mkdir()
        write_case(d)
    write_spec(bad, BASE_SPEC.replace("alpha: 0.05", "alpha: 0.5"), "z.yaml")
    write_spec(bad, BASE_SPEC.replace("[9.5, 10.5]", "[10.5, 9.5]"), "y.yaml")
    assert main(["check", str(good), str(bad)]) == 2
    out, err = capsys.readouterr()
    assert out.count(": valid") == 2  # good/spec.yaml and bad/spec.yaml
    assert "z.yaml:3:8: `alpha`" in err and "y.yaml:14:13: `characteristics[0].limits`" in err
    assert "2 of 4 specs invalid (2 valid)" in err


def test_check_paired_prints_pairs(capsys):
    assert main(["check", str(SPECS / "filler-paired.yaml")]) == 0
    out = capsys.readouterr().out
    assert "pairs: 40 matched, 0 unmatched" in out
    assert "pairs: 39 matched, 1 unmatched (FB-0619/2)" in out


def test_check_names_the_method_a_fitted_model_is_judged_by(capsys):
    # the demo's gate_vestige declares distribution: lognormal, so capability is the
    # percentile Ppk (ISO 22514-2) and conformance uses the fitted model's limits
    assert main(["check", str(SPECS / "closure-mould.yaml")]) == 0
    out = capsys.readouterr().out
    assert ("check capability: new percentile Ppk (lognormal fit, ISO 22514-2) at least 1.33"
            in out)
    assert "coverage 0.99 at confidence 0.95 (lognormal fit, limits transformed back)" in out
    # cap_height is normal: its capability line keeps the sigma it is computed with
    assert "check capability: new Cpk at least 1.33 (moving-range sigma" in out


def test_check_missing_path_and_empty_folder(tmp_path, capsys):
    assert main(["check", str(tmp_path / "nope.yaml")]) == 2
    assert "no such file or folder" in capsys.readouterr().err
    assert main(["check", str(tmp_path)]) == 2
    assert "no spec files" in capsys.readouterr().err


# -- subprocess: the real entry point --------------------------------------------------------


@pytest.mark.slow
def test_check_sample_specs_exit_0():
    result = run_verify("check", "specs/")
    assert result.returncode == 0, result.stderr
    for name in SAMPLE_SPECS:
        assert f"specs/{name}: valid" in result.stdout
    for name in ("bore_diameter", "overall_length", "hardness", "fill_volume", "seal_strength",
                 "wall_thickness", "clip_force"):
        assert f"  {name} [" in result.stdout
    assert "new: n 12 in 2 lots (R24-001, R24-002); fewer than min_n 30" in result.stdout
    assert f"{len(SAMPLE_SPECS)} specs valid" in result.stdout


@pytest.mark.slow
def test_check_invalid_spec_subprocess(tmp_path):
    spec = write_case(tmp_path, BASE_SPEC.replace("margin: 0.1}", "margin: [0.1, 0.2]}"))
    before = files_under(tmp_path)
    result = run_verify("check", spec, cwd=tmp_path)
    assert result.returncode == 2
    assert result.stdout == ""
    assert "spec.yaml:17:23: `characteristics[0].checks.shift.margin`" in result.stderr
    assert "low < 0 < high" in result.stderr
    assert "Traceback" not in result.stderr
    assert files_under(tmp_path) == before


@pytest.mark.slow
def test_check_invalid_data_subprocess(tmp_path):
    csv = "lot,supplier,width,height_mm\nA1,Old Co,n/a,5\nB1,New Co,10,5\n"
    spec = write_case(tmp_path, csv=csv)
    result = run_verify("check", spec.name, cwd=tmp_path)
    assert result.returncode == 2
    assert "lots.csv, row 2, column 'width': 'n/a' is not a number" in result.stderr


@pytest.mark.slow
def test_schema_prints_the_committed_schema():
    result = run_verify("schema")
    assert result.returncode == 0
    assert result.stdout == (SPECS / "verify-spec.schema.json").read_text(encoding="utf-8")
    assert json.loads(result.stdout)["$schema"].startswith("http://json-schema.org/draft-07")


@pytest.mark.slow
def test_usage_errors_exit_2():
    assert run_verify().returncode == 2
    assert run_verify("check").returncode == 2
    assert run_verify("frobnicate").returncode == 2


@pytest.mark.slow
def test_help_does_not_import_heavy_libraries():
    code = ("import sys\nfrom verify.cli import main\n"
            "try:\n    main(['check', '--help'])\nexcept SystemExit:\n    pass\n"
            "heavy = [m for m in ('numpy', 'pandas', 'scipy', 'openpyxl') if m in sys.modules]\n"
            "print('HEAVY', heavy)\n")
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            cwd=REPO, env=dict(os.environ, PYTHONPATH=str(REPO)), timeout=60)
    assert "HEAVY []" in result.stdout, result.stdout + result.stderr


@pytest.mark.slow
def test_check_imports_neither_the_evaluation_nor_the_statistics_nor_the_reports(tmp_path):
    # verify check only validates and counts: the start-up cost of scipy (about 0.7 s, see
    # ../shared/NOTES.md), the evaluation and the workbook code is not its to pay. The one
    # statistics module it may load is stats._frozen (with the empty stats package): the
    # dependency-free decorator the result classes of verify.model are made with
    shutil.copytree(SPECS, tmp_path / "specs")
    shutil.copytree(REPO / "sample_lots", tmp_path / "sample_lots")
    code = ("import sys\nfrom verify.cli import main\n"
            "rc = main(['check', 'specs/'])\n"
            "loaded = [m for m in sys.modules if m in ('scipy', 'openpyxl', 'verify.evaluate', "
            "'verify.evaluate_pass_fail', 'verify.decide', 'verify.plan', 'verify.cli_run', "
            "'verify.cli_ledger') or "
            "(m.startswith(('verify.stats', 'verify.report')) "
            "and m not in ('verify.stats', 'verify.stats._frozen'))]\n"
            "print('RC', rc, 'LOADED', sorted(loaded))\n")
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            cwd=tmp_path, env=dict(os.environ, PYTHONPATH=str(REPO)),
                            timeout=120)
    assert "RC 0 LOADED []" in result.stdout, result.stdout + result.stderr


# -- help texts -----------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_each_command_help_ends_with_an_example(name, capsys):
    with pytest.raises(SystemExit) as info:
        build_parser().parse_args([name, "--help"])
    assert info.value.code == 0
    lines = capsys.readouterr().out.rstrip().splitlines()
    start = max(i for i, line in enumerate(lines) if line.strip() == "example:")
    examples = lines[start + 1:]
    assert examples and all(line.strip().startswith("verify ") for line in examples)


def test_main_help_ends_with_an_example(capsys):
    with pytest.raises(SystemExit):
        build_parser().parse_args(["--help"])
    assert capsys.readouterr().out.rstrip().endswith("verify check specs/")


def test_check_names_one_sided_margins(capsys):
    # the filler demo declares seal_strength side: lower with margin 1.0 (non-inferiority)
    assert main(["check", str(SPECS / "filler-paired.yaml")]) == 0
    out = capsys.readouterr().out
    assert ("shift: new minus old no lower than -1 N/15 mm (non-inferiority, harmful side "
            "lower, paired)") in out
