"""``verify nightly`` with hostile specs (issue 10): a data path that is a device or a FIFO, a
spec over its time limit, stray result files. One bad spec is ERROR with its reason in the
ledger and the digest; the others run and are recorded; nothing is half-written.

POSIX file-type facts: a FIFO blocks an open for reading until a writer comes; /dev/zero never
ends. The time-limit case uses a limit no process can meet (a spawned Python needs far more
than a millisecond to start), so it is deterministic.
"""

from __future__ import annotations

import os
from pathlib import Path

import openpyxl
import pytest
from test_nightly import history, nightly, states, write_spec

from verify.ledger import Ledger

posix_only = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs POSIX FIFOs")


def _bad_data(folder: Path, name: str, kind: str) -> None:
    write_spec(folder, name)
    data = folder / f"{name}.csv"
    data.unlink()
    if kind == "fifo":
        os.mkfifo(data)
    else:
        data.symlink_to("/dev/zero")


@posix_only
@pytest.mark.parametrize("root", [False, True])
def test_a_device_and_a_fifo_beside_good_specs_are_errors_and_the_rest_run(tmp_path, root):
    folder = tmp_path / "specs"
    for name in ("alpha", "beta", "gamma"):
        write_spec(folder, name)
    _bad_data(folder, "zero", "device")
    _bad_data(folder, "pipe", "fifo")
    out = tmp_path / "nightly"
    kw = {"data_root": folder} if root else {}
    result, lines, _ = nightly(folder, out, **kw)
    assert states(result) == {"alpha": ("RUN", "PASS"), "beta": ("RUN", "PASS"),
                              "gamma": ("RUN", "PASS"), "pipe": ("ERROR", None),
                              "zero": ("ERROR", None)}
    assert result.exit_status == 2
    errors = {r.name: r.error for r in result.rows if r.state == "ERROR"}
    assert "pipe.csv" in errors["pipe"] and "named pipe (FIFO)" in errors["pipe"]
    assert "zero.csv" in errors["zero"]
    # the link resolves to /dev/zero: outside the data root, refused before it is opened
    assert ("outside --data-root" if root else "character device") in errors["zero"]
    with Ledger.open(out / "ledger.sqlite") as led:
        entries = {Path(e.spec_path).stem: e for e in led.entries(run_id=result.run_id)}
    assert entries["pipe"].state == "ERROR" and "named pipe" in entries["pipe"].error
    assert {n for n, e in entries.items() if e.state == "RUN"} == {"alpha", "beta", "gamma"}
    assert not (out / "pipe").exists() and not (out / "zero").exists()
    digest = openpyxl.load_workbook(result.digest)
    text = " ".join(str(c.value) for row in digest.worksheets[0].iter_rows() for c in row)
    assert "named pipe (FIFO)" in text
    assert ("outside --data-root" if root else "character device") in text


@posix_only
def test_a_device_outside_the_data_root_is_refused_before_it_is_opened(tmp_path):
    folder = tmp_path / "specs"
    write_spec(folder, "good")
    write_spec(folder, "stray")
    (folder / "stray.yaml").write_text((folder / "stray.yaml").read_text(encoding="utf-8")
                                       .replace("file: stray.csv", "file: /dev/zero"),
                                       encoding="utf-8")
    result, _, _ = nightly(folder, tmp_path / "out", data_root=folder)
    assert states(result) == {"good": ("RUN", "PASS"), "stray": ("ERROR", None)}
    stray = next(r for r in result.rows if r.name == "stray")
    assert "outside --data-root" in stray.error and "character device" not in stray.error


def test_a_spec_over_its_time_limit_is_an_error_and_nothing_is_written(tmp_path):
    folder = tmp_path / "specs"
    write_spec(folder, "one")
    write_spec(folder, "two")
    out = tmp_path / "nightly"
    result, _, _ = nightly(folder, out, spec_timeout=0.001)
    assert states(result) == {"one": ("ERROR", None), "two": ("ERROR", None)}
    assert all("stopped after 0.001 s" in r.error and "--spec-timeout" in r.error
               for r in result.rows)
    assert not [p for p in out.rglob("*") if p.suffix in (".json",) or
                (p.suffix == ".xlsx" and not p.name.startswith("digest-"))]
    again, _, _ = nightly(folder, out)  # with the default limit they run
    assert states(again) == {"one": ("RUN", "PASS"), "two": ("RUN", "PASS")}


def test_result_files_no_ledger_entry_names_are_quarantined_and_said(tmp_path):
    folder = tmp_path / "specs"
    write_spec(folder, "bushing")
    out = tmp_path / "nightly"
    nightly(folder, out)
    kept = history(out, "bushing")
    stray = out / "bushing" / "20991231T000000Z-PASS.json"
    stray.write_text('{"format": "verify-result/1"}', encoding="utf-8")
    (out / "bushing" / "20991231T000000Z-PASS.xlsx").write_bytes(b"PK")
    (out / "bushing" / ".20991231T000000Z-PASS.json.x1.part").write_text("x", encoding="utf-8")
    result, _, err = nightly(folder, out)
    assert "moved 2 result file(s) that no ledger entry names" in err
    assert "removed 1 temporary file(s)" in err
    assert history(out, "bushing") == kept  # the recorded results stay
    moved = out / "quarantine" / result.run_id / "bushing"
    assert sorted(p.name for p in moved.iterdir()) == [
        "20991231T000000Z-PASS.json", "20991231T000000Z-PASS.xlsx"]
    with Ledger.open(out / "ledger.sqlite") as led:
        named = led.named_outputs()
    for f in (out / "bushing").iterdir():  # every result left in place has its entry
        if f.suffix in (".xlsx", ".json") and f.name != "latest.json":
            assert ("bushing", f.name) in named


@posix_only
def test_a_spec_that_is_a_fifo_is_an_error_not_a_stall(tmp_path):
    folder = tmp_path / "specs"
    write_spec(folder, "good")
    # a spec file found by name whose target becomes a FIFO: the worker refuses it
    os.mkfifo(tmp_path / "pipe")
    (folder / "pipe.yaml").symlink_to(tmp_path / "pipe")
    result, _, _ = nightly(folder, tmp_path / "out", spec_timeout=60)
    assert states(result).get("good") == ("RUN", "PASS")
    assert "pipe" not in states(result) or states(result)["pipe"][0] == "ERROR"


def _children(pid: int) -> list[int]:
    """Processes whose parent is ``pid`` (Linux /proc)."""
    out = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except (OSError, IndexError):
            continue
        if int(fields[1]) == pid and fields[0] != "Z":
            out.append(int(stat.parent.name))
    return out


@pytest.mark.slow
@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs Linux /proc")
def test_killing_the_parent_alone_stops_its_workers_and_leaves_no_unrecorded_result(tmp_path):
    import signal
    import sqlite3
    import subprocess
    import sys
    import time

    from test_nightly import REPO, _wait_for

    folder = tmp_path / "specs"
    n = 12
    for i in range(n):
        write_spec(folder, f"spec{i:02d}")
    out = tmp_path / "nightly"
    proc = subprocess.Popen([sys.executable, "-m", "verify.nightly", str(folder), "--out",
                             str(out), "--jobs", "2"], cwd=REPO, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    ledger = out / "ledger.sqlite"

    def entries() -> int:
        if not ledger.exists():
            return 0
        con = sqlite3.connect(f"file:{ledger}?mode=ro", uri=True, timeout=5)
        try:
            return con.execute("SELECT COUNT(*) FROM entries WHERE state = 'RUN'").fetchone()[0]
        except sqlite3.OperationalError:
            return 0
        finally:
            con.close()

    try:
        _wait_for(lambda: entries() >= 2, timeout=120)
        workers = _children(proc.pid)
        assert workers  # the evaluation pool is at work
    finally:
        proc.send_signal(signal.SIGKILL)  # the parent only, as an OOM killer would
        proc.communicate(timeout=30)
    def alive(pid: int) -> bool:
        try:
            return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0] != "Z"
        except (OSError, IndexError):
            return False

    deadline = time.monotonic() + 30
    while any(alive(w) for w in workers) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not [w for w in workers if alive(w)]  # the workers noticed their parent was gone
    with Ledger.open(ledger) as led:
        named = led.named_outputs()
        recorded = len(led.entries())
    for f in out.glob("*/*"):  # every visible result has the entry that names it
        if f.suffix in (".xlsx", ".json") and f.name != "latest.json":
            assert (f.parent.name, f.name) in named, f
    assert recorded < n
    result, _, _ = nightly(folder, out)  # the next run finishes the work and clears up
    assert {s for s, _ in states(result).values()} <= {"RUN", "UNCHANGED"}
    assert list(out.rglob("*.part*")) == []
