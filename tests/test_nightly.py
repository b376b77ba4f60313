"""``verify nightly`` end to end: change detection, history, the decision of record, isolation,
locking, a SIGKILL midway, the digest.

The expectations follow from the rules of issue 6 (which run is skipped, which run locks the
decision of record, which exit status), not from a statistics reference: the data are built so
that every decision is far from its borderline (no shift against a margin of 10 sd, or a new
lot 40 sd off target), so the statistics can only decide one way.
"""

from __future__ import annotations

import io
import json
import os
import re
import signal
import sqlite3
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import numpy as np
import pytest

from verify.cli_nightly import add_nightly_arguments, main_for_tests
from verify.digest import HEADER_ROW, DigestRow, Progress, summary_line, write_digest
from verify.ledger import Ledger
from verify.nightly import run_nightly

REPO = Path(__file__).resolve().parents[1]
HISTORY = re.compile(r"^\d{8}T\d{6}Z-[0-9a-f]{8}-(PASS|HOLD|PENDING)(-\d+)?\.(xlsx|json)$")
SD = 0.05


# --- building specs and lot files --------------------------------------------------------------


def _lot_rows(lot: str, line: str, mean: float, parts: int, seed: int) -> list[str]:
    rng = np.random.default_rng(seed)
    return [f"{lot},{line},{v:.4f}" for v in rng.normal(mean, SD, parts)]


def write_spec(folder: Path, name: str, *, min_n: int | None = None, margin: float = 0.5,
               new_lots: int = 2, parts: int = 10, extra: str = "") -> Path:
    """A spec with old lots O1-O3 and new lots N1..N<new_lots>, all on target (10.0 mm)."""
    folder.mkdir(parents=True, exist_ok=True)
    rows = ["lot,line,bore"]
    seed = sum(map(ord, name))
    for i in range(1, 4):
        rows += _lot_rows(f"O{i}", "old", 10.0, parts, seed + i)
    for i in range(1, new_lots + 1):
        rows += _lot_rows(f"N{i}", "new", 10.0, parts, seed + 100 + i)
    (folder / f"{name}.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    spec = folder / f"{name}.yaml"
    spec.write_text(
        "format: verify/1\n"
        f"title: Harrowgate Works bore check {name}\n"
        "alpha: 0.05\n"
        + (f"min_n: {min_n}\n" if min_n is not None else "")
        + extra
        + "data:\n"
        f"  file: {name}.csv\n"
        "  lot: lot\n"
        "  process: line\n"
        "  old: old\n"
        "  new: new\n"
        "characteristics:\n"
        "  - name: bore\n"
        "    unit: mm\n"
        "    target: 10.0\n"
        "    checks:\n"
        f"      shift: {{margin: {margin}}}\n",
        encoding="utf-8")
    return spec


def append_lot(folder: Path, name: str, lot: str, *, mean: float = 10.0, parts: int = 10,
               line: str = "new") -> None:
    with open(folder / f"{name}.csv", "a", encoding="utf-8") as f:
        f.write("\n".join(_lot_rows(lot, line, mean, parts, sum(map(ord, lot)))) + "\n")


def nightly(specs: Path, out: Path, *args: str, **kw):
    """Run one nightly pass in this process; returns (result, stdout lines, stderr text)."""
    err = io.StringIO()
    buf = io.StringIO()
    from contextlib import redirect_stdout

    with redirect_stdout(buf):
        result = run_nightly([str(specs)], out=out, progress_stream=err, command="test", **kw)
    return result, buf.getvalue().splitlines(), err.getvalue()


def states(result) -> dict[str, tuple[str, str | None]]:
    return {r.name: (r.state, r.decision) for r in result.rows}


def history(out: Path, name: str) -> list[str]:
    return sorted(p.name for p in (out / name).iterdir() if HISTORY.match(p.name))


@pytest.fixture
def specs(tmp_path: Path) -> Path:
    folder = tmp_path / "specs"
    write_spec(folder, "bushing")  # no min_n: the first run locks a PASS
    write_spec(folder, "housing", min_n=30)  # 20 new parts of 30: PENDING
    return folder


@pytest.fixture
def out(tmp_path: Path) -> Path:
    return tmp_path / "nightly"


# --- change detection, history and the ledger --------------------------------------------------


def test_first_run_writes_history_latest_digest_and_ledger(specs, out):
    result, lines, err = nightly(specs, out)
    assert states(result) == {"bushing": ("RUN", "PASS"), "housing": ("RUN", "PENDING")}
    assert result.exit_status == 3  # a PENDING, no HOLD or error
    for name, decision in (("bushing", "PASS"), ("housing", "PENDING")):
        files = history(out, name)
        assert len(files) == 2 and all(f"-{decision}." in f for f in files)
        js, xlsx = (out / name / f for f in files)  # sorted: .json before .xlsx
        doc = json.loads(js.read_text(encoding="utf-8"))
        assert doc["decision"] == decision
        assert doc["workbook"] == {"path": str(xlsx), "sha256": doc["workbook"]["sha256"]}
        assert (out / name / "latest.json").read_text(encoding="utf-8") == js.read_text(
            encoding="utf-8")
        with zipfile.ZipFile(xlsx) as z:
            assert z.testzip() is None
    assert "first result" in lines[0] and lines[0].startswith("PASS")
    assert "no decision of record yet" in lines[1]
    assert lines[-1].startswith(f"nightly {result.run_id}: 2 spec(s): 2 ran, 0 unchanged")
    assert result.digest.exists() and result.digest.name.startswith("digest-")
    assert "nightly: [2/2]" in err  # plain log lines: the stream is not a terminal
    with Ledger.open(out / "ledger.sqlite") as led:
        entries = led.entries(run_id=result.run_id)
        assert [e.state for e in entries] == ["RUN", "RUN"]
        bushing = next(e for e in entries if e.spec_path.endswith("bushing.yaml"))
        assert bushing.standing == "RECORD"
        assert bushing.workbook_sha256 and Path(bushing.workbook_path).exists()
        assert bushing.lots == {"new": ("N1", "N2"), "old": ("O1", "O2", "O3")}
        assert [r.decision for r in led.records()] == ["PASS"]
        assert led.runs()[0].exit_status == 3
        assert led.integrity() == "ok"


def test_second_run_skips_everything(specs, out):
    first, _, _ = nightly(specs, out)
    before = {n: history(out, n) for n in ("bushing", "housing")}
    second, lines, _ = nightly(specs, out)
    assert states(second) == {"bushing": ("UNCHANGED", "PASS"),
                              "housing": ("UNCHANGED", "PENDING")}
    assert second.exit_status == first.exit_status == 3  # unchanged specs carry their result
    assert {n: history(out, n) for n in before} == before  # nothing rewritten
    assert all("no change since the last run" in line for line in lines[:2])
    with Ledger.open(out / "ledger.sqlite") as led:
        runs = led.runs()
        assert [r.unchanged for r in runs] == [0, 2]
        for e in led.entries(run_id=second.run_id):
            based = led.entry(e.based_on)
            assert based.run_id == first.run_id and based.decision == e.decision


def test_a_result_recorded_but_never_put_in_place_is_evaluated_again(specs, out):
    # A run killed after a spec's ledger entry was written and before its staged files were
    # renamed into place (the next run clears the staged files) leaves an entry naming files
    # that do not exist: deleting them after a complete run is the same state. That result
    # cannot stand as UNCHANGED; the spec runs again and says why.
    first, _, _ = nightly(specs, out)
    for f in history(out, "bushing"):
        (out / "bushing" / f).unlink()
    (out / "bushing" / "latest.json").unlink()
    second, lines, err = nightly(specs, out)
    assert states(second) == {"bushing": ("RUN", "PASS"), "housing": ("UNCHANGED", "PENDING")}
    bushing = next(line for line in lines if "bushing" in line)
    assert "evaluated again: the files of its last result" in bushing
    assert f"{first.run_id}-PASS.xlsx" in bushing and "not in place" in bushing
    assert "bushing: evaluated again" in err
    assert history(out, "bushing") == [f"{second.run_id}-PASS.{ext}" for ext in ("json", "xlsx")]
    latest = json.loads((out / "bushing" / "latest.json").read_text(encoding="utf-8"))
    assert latest["decision"] == "PASS" and latest["ledger"]["head"]
    third, _, _ = nightly(specs, out)  # in place now: nothing runs
    assert states(third) == {"bushing": ("UNCHANGED", "PASS"),
                             "housing": ("UNCHANGED", "PENDING")}
    with Ledger.open(out / "ledger.sqlite") as led:
        assert led.integrity() == "ok"
        (entry,) = [e for e in led.entries(run_id=third.run_id)
                    if e.spec_path.endswith("bushing.yaml")]
        assert led.entry(entry.based_on).run_id == second.run_id


def test_a_missing_or_stale_latest_json_is_copied_again_from_the_standing_result(specs, out):
    # killed between renaming the result into place and copying it to latest.json: the copy
    # is missing (first spec) or still the previous result's (second spec)
    nightly(specs, out)
    append_lot(specs, "housing", "N3")
    nightly(specs, out)
    (out / "bushing" / "latest.json").unlink()
    older, newer = sorted((out / "housing").glob("*.json"))[:2]  # run ids sort by time
    assert older.name != "latest.json" and newer.name != "latest.json"
    (out / "housing" / "latest.json").write_text(older.read_text(encoding="utf-8"),
                                                 encoding="utf-8")
    before = {n: history(out, n) for n in ("bushing", "housing")}
    third, _, err = nightly(specs, out)
    assert states(third) == {"bushing": ("UNCHANGED", "PASS"), "housing": ("UNCHANGED", "PASS")}
    assert {n: history(out, n) for n in before} == before  # nothing evaluated again
    assert "bushing: latest.json did not match its standing result" in err
    assert "housing: latest.json did not match its standing result" in err
    (bushing_js,) = [f for f in history(out, "bushing") if f.endswith(".json")]
    for folder, standing in (("bushing", bushing_js), ("housing", newer.name)):
        assert (out / folder / "latest.json").read_text(encoding="utf-8") == (
            out / folder / standing).read_text(encoding="utf-8")
    _, _, err = nightly(specs, out)
    assert "latest.json" not in err  # in step again: nothing to copy


def test_the_unchanged_path_imports_no_scipy_or_pandas(specs, out):
    nightly(specs, out)
    code = ("import sys\nfrom verify.cli_nightly import main_for_tests\n"
            f"rc = main_for_tests([{str(specs)!r}, '--out', {str(out)!r}])\n"
            "print('heavy:', sorted(m for m in ('scipy', 'pandas', 'verify.evaluate') "
            "if m in sys.modules))\nsys.exit(rc)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=REPO, timeout=120)
    assert proc.returncode == 3, proc.stderr
    assert "heavy: []" in proc.stdout
    assert proc.stdout.count("unchanged") >= 2


def test_appending_a_lot_reruns_only_its_spec(specs, out):
    nightly(specs, out)
    append_lot(specs, "housing", "N3")
    result, lines, _ = nightly(specs, out)
    assert states(result) == {"bushing": ("UNCHANGED", "PASS"), "housing": ("RUN", "PASS")}
    housing = next(line for line in lines if "housing" in line)
    assert "1 new lot (N3)" in housing
    assert "decision PENDING -> PASS" in housing
    assert "decision of record locked: PASS" in housing  # 30 of 30 planned: the plan is done
    assert result.exit_status == 0
    assert len(history(out, "housing")) == 4 and len(history(out, "bushing")) == 2


def test_a_changed_tool_version_reruns(specs, out, monkeypatch):
    nightly(specs, out)
    from verify.nightly import fingerprints, record, run

    for module in (fingerprints, record, run):  # every nightly module that reads the version
        monkeypatch.setattr(module, "__version__", "99.0")
    result, _, _ = nightly(specs, out)
    assert {s for s, _ in states(result).values()} == {"RUN"}


# --- the decision of record ------------------------------------------------------------------


def test_pending_is_provisional_until_min_n_then_the_record_locks(specs, out):
    first, _, _ = nightly(specs, out)
    with Ledger.open(out / "ledger.sqlite") as led:
        key = str((specs / "housing.yaml").resolve())
        assert led.last_entry(key).standing == "PROVISIONAL"
        assert led.record(key, led.last_entry(key).spec_sha256) is None
    append_lot(specs, "housing", "N3")
    nightly(specs, out)
    with Ledger.open(out / "ledger.sqlite") as led:
        rec = led.latest_record(key)
        assert rec.decision == "PASS" and rec.basis == "every process reached min_n"
        latest = json.loads((out / "housing" / "latest.json").read_text(encoding="utf-8"))
        assert latest["monitoring"].startswith("decision of record: PASS, locked by this run")
        assert rec.result_path == led.last_entry(key).result_path


def test_drift_is_flagged_and_the_decision_of_record_stays(specs, out):
    nightly(specs, out)  # bushing: PASS locked (no min_n)
    append_lot(specs, "bushing", "N3", mean=12.0)  # 40 sd off: the shift is now beyond 0.5
    result, lines, _ = nightly(specs, out)
    assert states(result)["bushing"] == ("RUN", "HOLD")
    assert result.exit_status == 1  # drift (and a HOLD)
    line = next(line for line in lines if "bushing" in line)
    assert "DRIFT: overall PASS -> HOLD; bore PASS -> HOLD" in line
    latest = json.loads((out / "bushing" / "latest.json").read_text(encoding="utf-8"))
    assert latest["decision"] == "HOLD"
    assert latest["monitoring"].startswith("monitoring; decision of record: PASS on ")
    assert "drift: these data would decide HOLD" in latest["monitoring"]
    key = str((specs / "bushing.yaml").resolve())
    with Ledger.open(out / "ledger.sqlite") as led:
        records = [r for r in led.records() if r.spec_path == key]
        assert [r.decision for r in records] == ["PASS"]  # the record stands
        e = led.last_entry(key)
        assert e.drift and e.standing == "MONITORING" and e.record_id == records[0].id
    again, _, _ = nightly(specs, out)  # nothing new: the drift is carried, still exit 1
    assert states(again)["bushing"] == ("UNCHANGED", "HOLD")
    assert again.exit_status == 1
    assert any(r.drift for r in again.rows)


def test_final_locks_a_pending_spec(specs, out):
    nightly(specs, out)
    result, _, _ = nightly(specs, out, final=True)
    # bushing has its record already and is unchanged; housing runs again to lock one
    assert states(result) == {"bushing": ("UNCHANGED", "PASS"), "housing": ("RUN", "PASS")}
    with Ledger.open(out / "ledger.sqlite") as led:
        key = str((specs / "housing.yaml").resolve())
        rec = led.latest_record(key)
        assert rec.final and rec.basis.startswith("--final")
    later, _, _ = nightly(specs, out)  # without --final: unchanged, the final record stands
    assert states(later)["housing"] == ("UNCHANGED", "PASS")
    append_lot(specs, "housing", "N3")
    monitored, _, _ = nightly(specs, out)  # evaluated as final, as its record was
    assert states(monitored)["housing"] == ("RUN", "PASS")
    assert not any(r.drift for r in monitored.rows)


def test_an_edited_spec_starts_a_record_that_supersedes_the_old_one(specs, out):
    nightly(specs, out)
    write_spec(specs, "bushing", margin=0.4,
               extra="supersedes_reason: margin tightened to 0.4 mm after the design review\n")
    result, lines, _ = nightly(specs, out)
    assert states(result)["bushing"] == ("RUN", "PASS")
    key = str((specs / "bushing.yaml").resolve())
    with Ledger.open(out / "ledger.sqlite") as led:
        old, new = [r for r in led.records() if r.spec_path == key]
        assert old.spec_sha256 != new.spec_sha256
        assert new.supersedes == old.id
        assert new.supersedes_reason == "margin tightened to 0.4 mm after the design review"
    latest = json.loads((out / "bushing" / "latest.json").read_text(encoding="utf-8"))
    assert "supersedes the record of the earlier spec version, PASS on" in latest["monitoring"]


# --- isolation -------------------------------------------------------------------------------


def test_an_error_spec_is_recorded_and_the_others_results_stay_intact(specs, out):
    nightly(specs, out)
    kept = {n: {f: (out / n / f).read_bytes() for f in history(out, n) + ["latest.json"]}
            for n in ("bushing", "housing")}
    with open(specs / "housing.csv", "a", encoding="utf-8") as f:
        f.write("N3,new,n/a-ish\n")  # a cell that is not a number
    (specs / "broken.yaml").write_text("format: verify/1\ntitle: [unclosed\n", encoding="utf-8")
    write_spec(specs, "fresh")
    result, lines, _ = nightly(specs, out)
    assert states(result) == {"broken": ("ERROR", None), "bushing": ("UNCHANGED", "PASS"),
                              "fresh": ("RUN", "PASS"), "housing": ("ERROR", None)}
    assert result.exit_status == 2
    by_name = {r.name: r for r in result.rows}
    assert "housing.csv" in by_name["housing"].error and "row 52" in by_name["housing"].error
    assert "YAML" in by_name["broken"].error
    assert any(line.startswith("-        ERROR") and "housing" in line for line in lines)
    for n, files in kept.items():  # the earlier results, latest.json included, are untouched
        for f, content in files.items():
            assert (out / n / f).read_bytes() == content
    with Ledger.open(out / "ledger.sqlite") as led:
        errors = [e for e in led.entries(run_id=result.run_id) if e.state == "ERROR"]
        assert len(errors) == 2 and all(e.error for e in errors)
    again, _, _ = nightly(specs, out)  # an error is never skipped as unchanged
    assert states(again)["housing"] == ("ERROR", None)
    assert states(again)["fresh"] == ("UNCHANGED", "PASS")


def test_a_new_spec_runs_without_its_data_read_twice_and_every_entry_names_its_data(
        specs, out):
    # A spec with no earlier result runs whatever its data are: its fingerprint leaves the
    # data files to the evaluation (no light reading of the spec, no hashing), and the entry
    # names the files the evaluation read. A failed one names them too, hashed then.
    import hashlib

    from verify.nightly.fingerprints import ProbeTask, probe

    spec = specs / "bushing.yaml"
    first = probe(ProbeTask(str(spec), None, None, None))
    assert first.error is None and first.fingerprint.data_files == ()
    rooted = probe(ProbeTask(str(spec), None, str(specs), None))  # a data root: checked first
    assert [d.path for d in rooted.fingerprint.data_files] == ["bushing.csv"]

    def sha(path: Path) -> str:
        return hashlib.sha256(path.read_bytes()).hexdigest()

    result, _, _ = nightly(specs, out)
    with Ledger.open(out / "ledger.sqlite") as led:
        entries = {Path(e.spec_path).stem: e for e in led.entries(run_id=result.run_id)}
    for name in ("bushing", "housing"):
        (d,) = entries[name].data_files
        assert (d.path, d.file, d.sha256) == (
            f"{name}.csv", str(specs / f"{name}.csv"), sha(specs / f"{name}.csv"))
    again = probe(ProbeTask(str(spec), entries["bushing"], None, None))  # known: hashed
    assert again.fingerprint.matches(entries["bushing"].fingerprint)

    (specs / "broken.csv").write_text("lot,line,bore\nO1,old,n/a\n", encoding="utf-8")
    (specs / "broken.yaml").write_text(
        spec.read_text(encoding="utf-8").replace("bushing.csv", "broken.csv"), encoding="utf-8")
    result, _, _ = nightly(specs, out)
    with Ledger.open(out / "ledger.sqlite") as led:
        (error,) = [e for e in led.entries(run_id=result.run_id) if e.state == "ERROR"]
    assert "broken.csv" in error.error
    assert [(d.path, d.sha256) for d in error.data_files] == [
        ("broken.csv", sha(specs / "broken.csv"))]


def test_data_outside_the_data_root_is_refused(tmp_path, out):
    inside = tmp_path / "lots"
    write_spec(inside, "ok")
    elsewhere = tmp_path / "elsewhere"
    write_spec(elsewhere, "stray")
    spec = (elsewhere / "stray.yaml").read_text(encoding="utf-8")
    folder = tmp_path / "specs"
    folder.mkdir()
    (folder / "ok.yaml").write_text(
        (inside / "ok.yaml").read_text(encoding="utf-8").replace("file: ok.csv",
                                                                  "file: ../lots/ok.csv"),
        encoding="utf-8")
    (folder / "stray.yaml").write_text(spec.replace("file: stray.csv",
                                                    "file: ../elsewhere/stray.csv"),
                                       encoding="utf-8")
    result, _, _ = nightly(folder, out, data_root=inside)
    assert states(result) == {"ok": ("RUN", "PASS"), "stray": ("ERROR", None)}
    stray = next(r for r in result.rows if r.name == "stray")
    assert "outside --data-root" in stray.error
    assert not (out / "stray").exists()  # nothing written for a refused spec


def test_jobs_two_gives_the_same_results(specs, out, tmp_path):
    write_spec(specs, "third", margin=0.5)
    one, _, _ = nightly(specs, out)
    two, _, _ = nightly(specs, tmp_path / "two", jobs=2)
    assert states(one) == states(two)


def test_history_is_never_overwritten_within_one_second(specs, out, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1735790400")  # every run at 2025-01-02 04:00:00
    first, _, _ = nightly(specs, out)
    append_lot(specs, "bushing", "N3")
    second, _, _ = nightly(specs, out)
    # issue 13: a history file is named by the run id the ledger cites, so an auditor finds a
    # run's files from its id; two runs in the same second still never share a name
    assert history(out, "bushing") == sorted(
        f"{r.run_id}-PASS.{ext}" for r in (first, second) for ext in ("json", "xlsx"))
    assert sorted(p.name for p in out.glob("digest-*")) == [
        "digest-2025-01-02-2.xlsx", "digest-2025-01-02.xlsx"]


# --- two processes, and a SIGKILL -------------------------------------------------------------


def _start(specs: Path, out: Path, *args: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "verify.nightly", str(specs), "--out", str(out), *args],
        cwd=REPO, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        start_new_session=True)


def _wait_for(predicate, timeout: float = 60.0) -> None:
    deadline = time.monotonic() + timeout
    while not predicate():
        if time.monotonic() > deadline:
            raise TimeoutError("condition not reached")
        time.sleep(0.05)


def _lock_held(out: Path) -> bool:
    lock = out / "ledger.sqlite.lock"
    return lock.exists() and lock.stat().st_size > 0


@pytest.mark.slow
def test_two_concurrent_runs_leave_the_ledger_consistent(tmp_path, out):
    folder = tmp_path / "specs"
    for i in range(6):
        write_spec(folder, f"spec{i}")
    first = _start(folder, out)
    try:
        _wait_for(lambda: _lock_held(out))
        impatient = _start(folder, out, "--lock-timeout", "0.2")
        patient = _start(folder, out, "--lock-timeout", "120")
        _, err = impatient.communicate(timeout=60)
        assert impatient.returncode == 2
        assert "another nightly run (pid" in err and "holds the ledger lock since" in err
        assert "try again later" in err
        first_out, _ = first.communicate(timeout=120)
        patient_out, _ = patient.communicate(timeout=120)
    finally:
        for p in (first,):
            if p.poll() is None:
                os.killpg(p.pid, signal.SIGKILL)
    assert first.returncode == 0 and patient.returncode == 0
    assert first_out.count(" ran ") == 6 and patient_out.count(" unchanged ") == 6
    with Ledger.open(out / "ledger.sqlite") as led:
        assert led.integrity() == "ok"
        runs = led.runs()
        assert [(r.ran, r.unchanged) for r in runs] == [(6, 0), (0, 6)]
        for r in runs:
            assert len(led.entries(run_id=r.run_id)) == 6
        assert len(led.records()) == 6


@pytest.mark.slow
def test_sigkill_midway_leaves_no_partial_output_and_the_next_run_continues(tmp_path, out):
    folder = tmp_path / "specs"
    n = 16
    for i in range(n):
        write_spec(folder, f"spec{i:02d}")
    proc = _start(folder, out)
    ledger = out / "ledger.sqlite"

    def written() -> int:
        if not ledger.exists():
            return 0
        con = sqlite3.connect(f"file:{ledger}?mode=ro", uri=True, timeout=5)
        try:
            return con.execute("SELECT COUNT(*) FROM entries").fetchone()[0]
        except sqlite3.OperationalError:
            return 0
        finally:
            con.close()

    try:
        _wait_for(lambda: written() >= 3)
        time.sleep(0.15)  # land inside the next spec's writing, most likely
    finally:
        os.killpg(proc.pid, signal.SIGKILL)  # the run and its worker, as a crash would
        proc.communicate(timeout=30)
    assert proc.returncode == -signal.SIGKILL

    # Every file a reader could take for a result is complete; temporary files are hidden.
    visible = [p for p in out.rglob("*") if p.is_file() and not p.name.startswith(".")]
    for p in visible:
        if p.suffix == ".xlsx":
            with zipfile.ZipFile(p) as z:
                assert z.testzip() is None
        elif p.suffix == ".json":
            assert json.loads(p.read_text(encoding="utf-8"))["format"] == "verify-result/1"
    assert all(p.name.startswith(".") for p in out.rglob("*.part*"))

    with Ledger.open(ledger) as led:
        assert led.integrity() == "ok"
        assert led.runs() == []  # the killed run never completed
        entries = led.entries()
    done = {Path(e.spec_path).stem for e in entries}
    assert 3 <= len(done) < n
    # the kill may land between a spec's ledger entry and the renaming of its files: such a
    # result is not in place, and the next run evaluates that spec again
    in_place = {Path(e.spec_path).stem for e in entries
                if Path(e.workbook_path).is_file() and Path(e.result_path).is_file()}
    assert len(done - in_place) <= 1  # the parent puts one spec in place at a time

    result, _, _ = nightly(folder, out)
    ran = {r.name for r in result.rows if r.state == "RUN"}
    unchanged = {r.name for r in result.rows if r.state == "UNCHANGED"}
    assert unchanged == in_place and len(ran) == n - len(in_place)
    for r in result.rows:
        if r.name in done - in_place:
            assert any("evaluated again" in c for c in r.changes())
    assert result.exit_status == 0
    assert list(out.rglob("*.part*")) == []  # the next run cleared the leftovers
    for r in result.rows:
        latest = json.loads((out / r.name / "latest.json").read_text(encoding="utf-8"))
        assert latest["decision"] == "PASS"


# --- the command, the digest, progress ----------------------------------------------------------


def test_command_line_usage_errors(tmp_path, capsys):
    empty = tmp_path / "empty"
    empty.mkdir()
    assert main_for_tests([str(empty), "--out", str(tmp_path / "o")]) == 2
    assert "no spec files" in capsys.readouterr().err
    assert main_for_tests([str(empty), "--jobs", "0"]) == 2
    assert "must be at least 1" in capsys.readouterr().err
    assert main_for_tests([str(tmp_path), "--data-root", str(tmp_path / "nope")]) == 2
    assert "no such folder" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_the_sub_command_hooks_into_a_verify_parser(tmp_path, specs, capsys):
    import argparse

    from verify.cli_nightly import add_nightly, nightly_main

    parser = argparse.ArgumentParser(prog="verify")
    sub = parser.add_subparsers(dest="command", required=True)
    add_nightly(sub).set_defaults(func=nightly_main)
    args = parser.parse_args(["nightly", str(specs), "--out", str(tmp_path / "o"), "--jobs", "2"])
    assert args.func(args) == 3
    assert "2 ran, 0 unchanged" in capsys.readouterr().out


def test_parser_defaults():
    import argparse

    args = add_nightly_arguments(argparse.ArgumentParser()).parse_args(["specs"])
    assert (args.out, args.ledger, args.jobs, args.data_root, args.final, args.lock_timeout) == (
        "reports/nightly", None, 1, None, False, 60.0)


def test_digest_workbook_has_a_row_per_spec_and_keeps_text_as_text(tmp_path):
    from openpyxl import load_workbook

    rows = [
        DigestRow("bushing", "specs/bushing.yaml", "RUN", decision="HOLD",
                  previous_decision="PASS", standing="MONITORING",
                  record="PASS on 2025-01-02, run r1", drift=True,
                  drift_note="overall PASS -> HOLD", new_lots=('=HYPERLINK("x")', "+1")),
        DigestRow("housing", "specs/housing.yaml", "ERROR", error="housing.csv, row 3: bad"),
    ]
    path = tmp_path / "digest.xlsx"
    write_digest(path, rows, run=[("run", "r2"), ("started", "s"), ("finished", "f")])
    ws = load_workbook(path)["Digest"]
    header = [c.value for c in ws[HEADER_ROW]]
    assert header[:3] == ["Spec", "State", "Decision"]
    first = {h: c for h, c in zip(header, ws[HEADER_ROW + 1], strict=True)}
    assert first["Spec"].value == "bushing" and first["Drift"].value == "yes"
    assert first["New lots"].value == 2
    assert first["New lot ids"].value == '=HYPERLINK("x"), +1'
    assert first["New lot ids"].data_type == "s"  # text, never a formula
    second = {h: c.value for h, c in zip(header, ws[HEADER_ROW + 2], strict=True)}
    assert second["State"] == "ERROR" and second["Error"] == "housing.csv, row 3: bad"
    # the header row is as tall as its wrapped labels ("Previous decision" in 11 characters
    # takes two lines): spreadsheet programs do not grow rows on opening a file
    assert ws.row_dimensions[HEADER_ROW].height == 2 * 14.5 + 2


def test_the_digest_carries_the_caution_above_its_table(tmp_path):
    """Like every workbook, the digest says that its results support, and never replace, the
    review and sign-off (the project's safety rule); on the first printed page, above the
    decisions, wrapped within the printed columns."""
    from openpyxl import load_workbook

    from verify.digest import DIGEST_CAUTION, PRINTED_COLUMNS

    path = tmp_path / "digest.xlsx"
    write_digest(path, [DigestRow("housing", "specs/housing.yaml", "RUN", decision="PASS")],
                 run=[("run", "r2"), ("started", "s"), ("finished", "f")])
    ws = load_workbook(path)["Digest"]
    (cell,) = [c for row in ws.iter_rows(max_row=HEADER_ROW - 1) for c in row
               if c.value == DIGEST_CAUTION]
    assert "never replace" in cell.value and "sign-off" in cell.value
    assert "verify approves nothing" in cell.value
    assert cell.alignment.wrap_text
    last = chr(ord("A") + PRINTED_COLUMNS - 1)
    assert f"A{cell.row}:{last}{cell.row}" in {str(r) for r in ws.merged_cells.ranges}
    assert ws.row_dimensions[cell.row].height > 2 * 14.5  # its lines fit the row
    assert ws.print_area == f"'Digest'!$A$1:${last}${HEADER_ROW + 1}"


def test_digest_rows_stay_within_the_tallest_row(tmp_path):
    """An error message of hundreds of lines (a traceback-like text from a failed spec) keeps
    its whole text, in rows no taller than the 409 points a worksheet row can have (Excel
    refuses a taller one), on both sheets."""
    from openpyxl import load_workbook

    from verify.report.cells import ROW_HEIGHT_MAX

    error = "\n".join(f"line {i}: the data file could not be read" for i in range(300))
    path = tmp_path / "digest.xlsx"
    write_digest(path, [DigestRow("housing", "specs/housing.yaml", "ERROR", error=error)],
                 run=[("run", "r2"), ("started", "s"), ("finished", "f")])
    wb = load_workbook(path)
    for ws in (wb["Digest"], wb["By spec"]):
        heights = [d.height for d in ws.row_dimensions.values() if d.height is not None]
        assert heights and max(heights) == ROW_HEIGHT_MAX
    by_spec = [c.value for row in wb["By spec"].iter_rows() for c in row]
    assert error in by_spec


def test_the_digests_long_run_lines_wrap_within_the_page(tmp_path):
    """The run's line and the ledger head (a 64-character hash and the command to check it)
    wrap within the printed columns of the Digest sheet, and the Run sheet's wrapped values get
    the rows their lines need: neither is cut at the page's edge nor drawn over the next row
    (seen on the rendered pages)."""
    from openpyxl import load_workbook

    from verify.digest import PRINTED_COLUMNS

    head = "e0d9a1d64c34def1bdfebaa065f48cbc0dc693d2ed242f0bfcac28b639d0ca30"
    path = tmp_path / "digest.xlsx"
    write_digest(path, [DigestRow("housing", "specs/housing.yaml", "RUN", decision="PASS")],
                 run=[("run", "20261203T085123Z-9a31dbe4"),
                      ("started", "2026-12-03T08:51:23.663247Z"),
                      ("finished", "2026-12-03T08:51:27.418662Z"),
                      ("ledger head", f"{head} (chain position 10; check with 'verify ledger "
                                      f"/srv/nightly/ledger.sqlite --head {head}')")])
    wb = load_workbook(path)
    digest, run = wb["Digest"], wb["Run"]
    merged = {str(r) for r in digest.merged_cells.ranges}
    last = chr(ord("A") + PRINTED_COLUMNS - 1)
    assert {f"A2:{last}2", f"A3:{last}3"} <= merged
    for r in (2, 3):
        assert digest.cell(r, 1).alignment.wrap_text
        assert digest.row_dimensions[r].height and digest.row_dimensions[r].height > 15
    (row,) = [c.row for c in run["A"] if c.value == "ledger head"]
    assert run.row_dimensions[row].height and run.row_dimensions[row].height > 15


def test_summary_lines_say_what_changed():
    row = DigestRow("housing", "s", "RUN", decision="PASS", previous_decision="PENDING",
                    standing="RECORD", new_lots=("N3", "N4"))
    assert summary_line(row) == ("PASS     ran        housing: 2 new lots (N3, N4); decision "
                                 "PENDING -> PASS; decision of record locked: PASS")
    err = DigestRow("broken", "s", "ERROR", error="broken.yaml:2: YAML syntax error\nmore")
    assert summary_line(err) == ("-        ERROR      broken: error: broken.yaml:2: YAML syntax "
                                 "error (+1 more lines)")


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_is_a_bar_on_a_terminal_and_log_lines_otherwise():
    rows = [DigestRow(f"s{i}", "p", "UNCHANGED", decision="PASS") for i in range(3)]
    tty, plain = _Terminal(), io.StringIO()
    for stream in (tty, plain):
        p = Progress(total=3, stream=stream)
        for r in rows:
            p.step(r)
    assert tty.getvalue().count("\r") == 3 and "[" + "#" * 30 + "] 3/3" in tty.getvalue()
    assert plain.getvalue().splitlines() == [
        "nightly: [1/3] s0: unchanged PASS", "nightly: [2/3] s1: unchanged PASS",
        "nightly: [3/3] s2: unchanged PASS"]


# --- the light parse of a spec's data paths -----------------------------------------------------

_ODD_DATA_NAMES = [  # (the data file's name as written in YAML, the file's name)
    ("'it''s lots 2024-01-05.csv'", "it's lots 2024-01-05.csv"),  # '' inside single quotes
    ('"lots\\u00e9\\t#1.csv"', "lots\u00e9\t#1.csv"),  # escapes in double quotes
    ("lots: old & new.csv", None),  # plain scalar with ': ' is not a path: both refuse
    ("2024-01-05.csv", "2024-01-05.csv"),  # a date with an extension: text in any schema
    ("|-\n    block scalar.csv", "block scalar.csv"),  # a block scalar
    ("&name anchored.csv", "anchored.csv"),  # an anchor on the value
    ("on.csv  # a comment after it", "on.csv"),
    ("deep.csv", None),  # ... in a spec nested too deeply to compose: both refuse it
]


@pytest.mark.parametrize(("written", "name"), _ODD_DATA_NAMES)
def test_light_data_paths_are_the_strict_loaders(tmp_path, written, name):
    """The nightly's first fingerprint names the files the run reads: data_paths_light gives,
    for a spec whose data path is written in quoted or unusual YAML, the paths load_spec
    resolves (data.file and the characteristics_from table, as written and absolute); where
    load_spec refuses the spec, no path. The reference is load_spec itself."""
    from verify.errors import SpecError
    from verify.nightly.fingerprints import data_paths_light
    from verify.spec import load_spec

    rng = np.random.default_rng(3)
    rows = ["lot,process,bore,wall"] + [
        f"{p.upper()}-{j // 5 + 1},{p},{12 + 0.01 * rng.standard_normal():.4f},"
        f"{2 + 0.01 * rng.standard_normal():.4f}" for p in ("old", "new") for j in range(10)]
    if name is not None:
        (tmp_path / name).write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "table.csv").write_text("name,unit,target,lower,upper\n"
                                        "bore,mm,12,11.9,12.1\nwall,mm,2,1.9,2.1\n",
                                        encoding="utf-8")
    text = ("format: verify/1\ntitle: odd data paths\n"
            f"data:\n  file: {written}\n  lot: lot\n  process: process\n  old: old\n"
            "  new: new\ncharacteristics_from: 'table.csv'\n"
            "defaults:\n  checks: {shift: {margin: 0.02}}\n")
    if written == "deep.csv":  # (libyaml composes it; the run's YAML reading cannot)
        text += "notes: " + "[" * 700 + "]" * 700 + "\n"  # (libyaml stops at 1000)
    spec = tmp_path / "odd.yaml"
    spec.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))  # with a byte-order mark
    try:
        s = load_spec(spec)
    except SpecError:
        strict = []
    else:
        strict = [(s.data.file_text, str(s.data.file))]
        table = s.characteristics_table
        if table is not None:
            strict.append((table.file_text, str(table.file)))
    assert (name is None) == (strict == [])
    assert data_paths_light(spec, spec.read_bytes()) == strict
