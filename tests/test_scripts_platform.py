"""Scripts and platforms: the CLI without fcntl (as on Windows), --quiet, --json lines, a
reader that closes the pipe, the published JSON Schema of the result, shell completion."""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
RESULT_SCHEMA = ROOT / "verify" / "result.schema.json"

# A sitecustomize that makes `import fcntl` fail, as it does on Windows.
NO_FCNTL = "import sys\nsys.modules['fcntl'] = None\n"


def run(args, cwd=ROOT, env_extra=None, **kw):
    env = dict(os.environ)
    env.update(env_extra or {})
    return subprocess.run([sys.executable, "-m", "verify", *args], cwd=cwd, capture_output=True,
                          text=True, env=env, timeout=300, **kw)


@pytest.fixture()
def no_fcntl(tmp_path) -> dict:
    site = tmp_path / "site"
    site.mkdir()
    (site / "sitecustomize.py").write_text(NO_FCNTL, encoding="utf-8")
    return {"PYTHONPATH": os.pathsep.join([str(site), str(ROOT)])}


# -- no fcntl -----------------------------------------------------------------------------------


def test_cli_runs_without_fcntl(demo, no_fcntl):
    probe = subprocess.run([sys.executable, "-c", "import fcntl"], capture_output=True,
                           env={**os.environ, **no_fcntl})
    assert probe.returncode != 0  # the sitecustomize works: fcntl cannot be imported
    assert run(["--help"], env_extra=no_fcntl).returncode == 0
    r = run(["check", "specs/"], cwd=demo, env_extra=no_fcntl)
    assert r.returncode == 0, r.stderr
    r = run(["nightly", "specs/", "--out", "nightly"], cwd=demo, env_extra=no_fcntl)
    assert r.returncode == 1, r.stderr  # the demo's HOLD, not a failure
    n = len(list((demo / "specs").glob("*.yaml")))  # every demo spec
    assert f"{n} ran, 0 unchanged, 0 error(s)" in r.stdout


def test_every_module_imports_without_fcntl(no_fcntl):
    code = textwrap.dedent("""
        import pkgutil, importlib, verify
        for m in pkgutil.walk_packages(verify.__path__, "verify."):
            if m.name != "verify.__main__":  # that one runs the CLI
                importlib.import_module(m.name)
        print("ok")
    """)
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       env={**os.environ, **no_fcntl}, cwd=ROOT, timeout=300)
    assert r.returncode == 0 and r.stdout.strip() == "ok", r.stderr


def test_marker_file_lock_excludes_a_second_holder_and_takes_over_a_dead_one(tmp_path,
                                                                             no_fcntl):
    code = textwrap.dedent(f"""
        import json, os, subprocess, sys
        from verify import oslock
        from verify.ledger import LedgerBusyError, LedgerLock
        assert oslock.lock_method() == "marker-file", oslock.lock_method()
        path = {str(tmp_path / "ledger.sqlite")!r}
        with LedgerLock(path, timeout=5, started="t0", run_id="one"):
            try:
                LedgerLock(path, timeout=0.2, started="t1").acquire()
            except LedgerBusyError as exc:
                print("busy:", "run one" in str(exc))
        # a holder that died without releasing: its marker names a process that is gone
        dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                              capture_output=True, text=True).stdout.strip()
        import socket
        with open(path + ".lock.held", "w") as f:
            json.dump({{"pid": int(dead), "host": socket.gethostname()}}, f)
        with LedgerLock(path, timeout=2, started="t2"):
            print("taken over")
    """)
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       env={**os.environ, **no_fcntl}, cwd=ROOT, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.split() == ["busy:", "True", "taken", "over"]


def test_flock_is_used_where_fcntl_exists():
    pytest.importorskip("fcntl", reason="POSIX only")
    from verify import oslock

    assert oslock.lock_method() == "flock"


# -- --quiet, --json, closed pipes --------------------------------------------------------------


def test_quiet_prints_nothing_and_keeps_the_exit_status(demo):
    r = run(["run", "specs/", "--quiet"], cwd=demo)
    assert r.returncode == 1 and r.stdout == "" and r.stderr == ""
    assert run(["check", "-q", "specs/"], cwd=demo).stdout == ""


def test_json_lines_for_run_check_replay_and_nightly(demo):
    r = run(["run", "specs/", "--json"], cwd=demo)
    lines = [json.loads(x) for x in r.stdout.splitlines()]
    assert [Path(x["spec"]).name for x in lines] == sorted(
        p.name for p in (demo / "specs").glob("*.yaml"))
    by = {Path(x["spec"]).stem: x for x in lines}
    assert by["filler-paired"]["decision"] == "HOLD"
    assert by["filler-paired"]["characteristics"]["seal_strength"] == "HOLD"
    assert by["housing-resin"]["decision"] == "PENDING"
    assert Path(demo, by["bushing-supplier"]["result"]).is_file()
    c = [json.loads(x) for x in run(["check", "specs/", "--json"], cwd=demo).stdout.splitlines()]
    assert all(x["valid"] for x in c) and len(c) == len(lines)
    rp = run(["replay", "reports/bushing-supplier.json", "--json"], cwd=demo)
    assert json.loads(rp.stdout)["reproduced"] is True and rp.returncode == 0
    n = run(["nightly", "specs/", "--out", "nightly", "--json"], cwd=demo)
    rows = [json.loads(x) for x in n.stdout.splitlines()]
    assert {x["state"] for x in rows} == {"RUN"} and len(rows) == len(lines)


def test_json_line_for_an_invalid_spec(tmp_path):
    (tmp_path / "bad.yaml").write_text("format: verify/1\ntitle: x\n", encoding="utf-8")
    r = run(["check", str(tmp_path), "--json"])
    line = json.loads(r.stdout)
    assert r.returncode == 2 and line["valid"] is False and line["errors"]


@pytest.mark.skipif(shutil.which("bash") is None or shutil.which("head") is None,
                    reason="needs bash and head")
def test_closed_pipe_is_no_failure(demo):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    r = subprocess.run(["bash", "-c", f"set -o pipefail; {sys.executable} -m verify check "
                        "specs/ | head -2"], cwd=demo, capture_output=True, text=True, env=env,
                       timeout=300)
    assert r.returncode == 0, r.stderr
    assert "invalid" not in r.stderr and "Error" not in r.stderr
    assert len(r.stdout.splitlines()) == 2


# -- the result's JSON Schema ------------------------------------------------------------------


def test_schema_result_prints_the_file():
    r = run(["schema", "--result"])
    assert r.returncode == 0 and r.stdout == RESULT_SCHEMA.read_text(encoding="utf-8")


def test_demo_results_validate_against_the_result_schema(demo):
    jsonschema = pytest.importorskip("jsonschema", reason="jsonschema (test extra) missing")
    schema = json.loads(RESULT_SCHEMA.read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    assert run(["run", "specs/", "--out", "reports"], cwd=demo).returncode == 1
    results = sorted((demo / "reports").glob("*.json"))
    assert len(results) == len(list((demo / "specs").glob("*.yaml")))
    for path in results:
        doc = json.loads(path.read_text(encoding="utf-8"))
        errors = [f"{list(e.path)}: {e.message}" for e in
                  jsonschema.Draft202012Validator(schema).iter_errors(doc)]
        assert not errors, (path.name, errors[:5])
    # the schema is not vacuous: a wrong decision is refused
    doc["decision"] = "APPROVED"
    assert not jsonschema.Draft202012Validator(schema).is_valid(doc)


def _readme_result_table() -> dict[str, set[str]]:
    """{row key: backticked field names in its description} of the JSON result table."""
    block = README.split("## The JSON result")[1].split("\n## ")[0]
    rows = {}
    for line in block.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) != 2 or not cells[0].startswith("`"):
            continue
        keys = re.findall(r"`([^`]+)`", cells[0])
        names = {m.group(1) for m in re.finditer(r"`([a-z_][a-z_0-9]*)", cells[1])}
        for k in keys:
            rows[k] = names if len(keys) == 1 else set()
    return rows


def test_readme_result_table_matches_the_schema():
    schema = json.loads(RESULT_SCHEMA.read_text(encoding="utf-8"))
    top = schema["properties"]
    char = top["characteristics"]["items"]["properties"]
    nested = {
        "spec": top["spec"]["properties"], "data_files[]": top["data_files"]["items"]
        ["properties"], "run": top["run"]["properties"], "workbook": top["workbook"]
        ["properties"], "characteristics[]": char,
        "checks[]": char["checks"]["items"]["properties"],
        "diagnostics[]": char["diagnostics"]["items"]["properties"],
    }
    rows = _readme_result_table()
    documented_top = {k.removesuffix("[]") for k in rows if k not in ("checks[]",
                                                                        "diagnostics[]")}
    msg = ("the README's JSON result table and verify/result.schema.json disagree: document a "
           "new result field in both")
    assert documented_top == set(top), (msg, documented_top ^ set(top))
    for key, props in nested.items():
        named = rows[key]
        assert set(props) <= named, (msg, key, set(props) - named)
        # a name the row gives beyond the schema's fields must be a field of a nested object
        deeper = set()
        for p in props.values():
            deeper |= set(p.get("properties", {})) | set(p.get("items", {}).get("properties",
                                                                              {}))
        assert named <= set(props) | deeper, (msg, key, named - set(props) - deeper)


# -- shell completion ---------------------------------------------------------------------------


def _complete(script: Path, words: list[str]) -> list[str]:
    cword = len(words) - 1
    arr = " ".join(f"'{w}'" for w in words)
    r = subprocess.run(["bash", "-c", f"source {script}; COMP_WORDS=({arr}); "
                        f"COMP_CWORD={cword}; _verify_complete; printf '%s\\n' "
                        '"${COMPREPLY[@]}"'], capture_output=True, text=True, timeout=60)
    assert r.returncode == 0, r.stderr
    return [x for x in r.stdout.splitlines() if x]


@pytest.mark.skipif(shutil.which("bash") is None, reason="needs bash")
def test_bash_completion_completes_commands_options_and_choices(tmp_path):
    script = tmp_path / "verify.bash"
    script.write_text(run(["completion", "bash"]).stdout, encoding="utf-8")
    assert _complete(script, ["verify", "ni"]) == ["nightly"]
    assert "--final" in _complete(script, ["verify", "run", "--f"])
    assert set(_complete(script, ["verify", "completion", ""])) == {"bash", "zsh"}
    assert "--json" in _complete(script, ["verify", "check", "--j"])
    assert "--result" in _complete(script, ["verify", "schema", "--r"])


def test_zsh_completion_uses_the_same_function():
    text = run(["completion", "zsh"]).stdout
    assert "bashcompinit" in text and "complete -o filenames -F _verify_complete verify" in text
    zsh = shutil.which("zsh")
    if zsh is None:
        pytest.skip("zsh is not installed: the zsh script was checked as text only")
    r = subprocess.run([zsh, "-n", "-c", text], capture_output=True, text=True, timeout=60)
    assert r.returncode == 0, r.stderr
