"""Hostile input and faults (issue 10): every case ends in a clear exit 2 naming the file, or a
valid result, never a stall, a half-commit or an "internal error".

The cases are the ones the issue lists. Facts used: POSIX file types (a FIFO blocks an open
for reading until a writer comes; /dev/zero never ends), XML 1.0's character production
(W3C XML 1.0, section 2.2: no C0 control but tab, LF, CR), the YAML 1.2 core schema (YAML 1.2,
section 10.3: decimal integers, no underscores, no sexagesimal), Unicode's Control Pictures
block (U+2400 + code of the control character).
"""

from __future__ import annotations

import io
import json
import os
import shutil
import socket
import subprocess
import sys
import zipfile
from pathlib import Path
from xml.etree import ElementTree as ET

import openpyxl
import pytest
from helpers_spec import BASE_CSV, BASE_SPEC, write_case

from verify.cli import main
from verify.errors import DataError, SpecError
from verify.safe_open import FileRefused, check_xlsx_archive, read_regular
from verify.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]
posix_only = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs POSIX FIFOs")


def _run(args, capsys):
    code = main([str(a) for a in args])
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def _cli(args, cwd: Path, timeout: float = 120):
    """verify in a subprocess, so that a stall fails the test instead of hanging the suite."""
    return subprocess.run([sys.executable, "-m", "verify", *map(str, args)], cwd=cwd,
                          capture_output=True, text=True, timeout=timeout)


def _all_files(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*")) if folder.exists() else []


# -- 1, 2, 6: only regular files are read -----------------------------------------------------


@posix_only
def test_a_fifo_as_data_file_is_refused_without_hanging(tmp_path):
    spec = write_case(tmp_path, csv=None)
    os.mkfifo(tmp_path / "lots.csv")
    r = _cli(["check", spec], tmp_path, timeout=60)  # would block forever on open()
    assert r.returncode == 2
    assert "lots.csv" in r.stderr and "named pipe (FIFO)" in r.stderr
    assert "internal error" not in r.stderr


@posix_only
def test_a_link_to_dev_zero_as_data_file_is_refused(tmp_path, capsys):
    spec = write_case(tmp_path, csv=None)
    (tmp_path / "lots.csv").symlink_to("/dev/zero")
    code, _, err = _run(["check", spec], capsys)
    assert code == 2 and "lots.csv" in err and "character device" in err
    assert "link is followed" in err


@posix_only
def test_a_socket_as_data_file_is_refused(tmp_path, capsys):
    spec = write_case(tmp_path, csv=None)
    short = Path(f"/tmp/verify-sock-{os.getpid()}")
    s = socket.socket(socket.AF_UNIX)
    try:
        s.bind(str(short))
        (tmp_path / "lots.csv").symlink_to(short)
        code, _, err = _run(["check", spec], capsys)
    finally:
        s.close()
        short.unlink(missing_ok=True)
    assert code == 2 and "a socket" in err


def test_a_folder_as_data_file_is_refused(tmp_path, capsys):
    spec = write_case(tmp_path, csv=None)
    (tmp_path / "lots.csv").mkdir()
    code, _, err = _run(["check", spec], capsys)
    assert code == 2 and "lots.csv" in err and "folder" in err


@posix_only
def test_a_fifo_or_device_as_spec_is_refused(tmp_path, capsys):
    os.mkfifo(tmp_path / "pipe.yaml")
    code, _, err = _run(["check", tmp_path / "pipe.yaml"], capsys)
    assert code == 2 and "pipe.yaml" in err and "named pipe" in err
    (tmp_path / "zero.yaml").symlink_to("/dev/zero")
    with pytest.raises(SpecError, match="character device"):
        load_spec(tmp_path / "zero.yaml")


@posix_only
def test_a_file_swapped_for_a_fifo_after_stat_is_caught_by_fstat(tmp_path, monkeypatch):
    """The race between the stat and the open: the open does not block (O_NONBLOCK) and the
    descriptor's own fstat refuses the FIFO."""
    os.mkfifo(tmp_path / "p")
    real_stat = os.stat
    regular = real_stat(__file__)
    monkeypatch.setattr(os, "stat", lambda p, *a, **k: regular if str(p).endswith("/p")
                        else real_stat(p, *a, **k))
    with pytest.raises(FileRefused, match="named pipe"):
        read_regular(tmp_path / "p", what="data file")


def test_a_data_file_over_the_size_limit_names_file_size_limit_and_option(tmp_path, capsys):
    big = BASE_CSV + "".join(f"C{i},New Co,10.0{i % 10},5.2{i % 10}\n" for i in range(3000))
    spec = write_case(tmp_path, csv=big)
    code, _, err = _run(["check", spec, "--max-data-mb", "0.01"], capsys)
    assert code == 2
    size = (tmp_path / "lots.csv").stat().st_size
    assert "lots.csv" in err
    assert f"the data file is {size:,} bytes, more than the limit of 10,485 bytes" in err
    assert "raise it with --max-data-mb" in err
    code, out, _ = _run(["check", spec, "--max-data-mb", "1"], capsys)
    assert code == 0 and "valid" in out


def _xlsx_bytes(rows, pad: int = 0) -> bytes:
    """A small workbook; with ``pad``, that many spaces inside the sheet XML (legal
    whitespace between elements, which deflate shrinks about a thousandfold)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    for r in rows:
        ws.append(r)
    buf = io.BytesIO()
    wb.save(buf)
    if not pad:
        return buf.getvalue()
    out = io.BytesIO()
    with zipfile.ZipFile(buf) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                data = data.replace(b"</sheetData>", b"</sheetData>" + b" " * pad)
            zout.writestr(info.filename, data, compresslevel=9)
    return out.getvalue()


def test_an_xlsx_that_expands_a_thousandfold_is_refused_before_parsing(tmp_path, capsys):
    rows = [line.split(",") for line in BASE_CSV.strip().splitlines()]
    raw = _xlsx_bytes(rows, pad=30 * 1024 * 1024)
    assert len(raw) < 200_000  # 30 MB of XML in a file of a few dozen kilobytes
    (tmp_path / "lots.xlsx").write_bytes(raw)
    spec = write_case(tmp_path, spec=BASE_SPEC.replace("lots.csv", "lots.xlsx"), csv=None)
    code, _, err = _run(["check", spec], capsys)
    assert code == 2 and "lots.xlsx" in err and "decompression bomb" in err
    assert "sheet1.xml" in err


def test_an_xlsx_expanding_beyond_eight_times_the_limit_is_refused():
    rows = [["lot", "v"]] + [[f"L{i}", i * 0.5] for i in range(3000)]
    raw = _xlsx_bytes(rows)
    with pytest.raises(FileRefused, match="expands to .* of XML, more than 8 times"):
        check_xlsx_archive(raw, "lots.xlsx", max_bytes=1000)
    check_xlsx_archive(raw, "lots.xlsx", max_bytes=10 * 1024 * 1024)  # within the limit


# -- 5, 8: spec text --------------------------------------------------------------------------


@pytest.mark.parametrize("written", ["1_0", "0x0A", "0o12", "1:30", "+0x1"])
def test_yaml_1_1_number_forms_stay_text_and_fail_with_their_line(tmp_path, written):
    spec = write_case(tmp_path, spec=BASE_SPEC.replace("alpha: 0.05", f"alpha: {written}"))
    with pytest.raises(SpecError) as err:
        load_spec(spec)
    issue = err.value.issues[0]
    assert issue.path == "alpha" and issue.line == 3
    assert "must be a number, not text" in issue.message


def test_yaml_1_2_numbers_and_booleans(tmp_path):
    text = (BASE_SPEC.replace("target: 10.0", "target: 1e1")  # YAML 1.2: a float
            .replace("alpha: 0.05", "alpha: .05\nmin_n: 010"))  # 010 is ten, not eight
    spec = load_spec(write_case(tmp_path, spec=text))
    assert spec.min_n == 10 and spec.alpha == 0.05
    assert spec.characteristics[0].target == 10.0
    # YAML 1.1's yes/no booleans are text in YAML 1.2
    bad = BASE_SPEC.replace("  new: New Co", "  new: New Co\n  ignore_other: yes")
    with pytest.raises(SpecError, match="ignore_other"):
        load_spec(write_case(tmp_path, spec=bad))


def test_yaml_nested_too_deeply_gives_a_line(tmp_path):
    spec = write_case(tmp_path, spec=BASE_SPEC + "x: " + "[\n" * 3000)
    with pytest.raises(SpecError, match="nested too deeply") as err:
        load_spec(spec)
    assert err.value.issues[0].line is not None
    assert err.value.issues[0].line > BASE_SPEC.count("\n")


def test_two_hundred_thousand_brackets_in_a_spec(tmp_path, capsys):
    spec = write_case(tmp_path, spec=BASE_SPEC + "x: " + "[" * 200_000 + "\n")
    code, _, err = _run(["check", spec], capsys)
    assert code == 2 and "internal error" not in err


@pytest.mark.parametrize("key,escaped,what", [
    ("title", r'"\ud83d\ude00 Bracket"', "surrogate"),
    ("title", r'"Brack\0et"', "NUL"),
    ("data.file", r'"lo\x00ts.csv"', "NUL"),
])
def test_surrogates_and_nul_in_a_spec_are_spec_errors_with_line_and_key(tmp_path, key, escaped,
                                                                        what):
    leaf = key.split(".")[-1]
    old = {"title": "title: Bracket supplier change", "data.file": "  file: lots.csv"}[key]
    spec = write_case(tmp_path, spec=BASE_SPEC.replace(old, f"{old.split(':')[0]}: {escaped}"))
    with pytest.raises(SpecError) as err:
        load_spec(spec)
    issue = err.value.issues[0]
    assert issue.path == key and what in issue.message and issue.line is not None
    assert leaf in BASE_SPEC.splitlines()[issue.line - 1]


def test_a_megabyte_cell_is_cut_in_the_message(tmp_path, capsys):
    huge = "x" * 1_000_000
    spec = write_case(tmp_path, csv=BASE_CSV.replace("10.03", huge))
    code, _, err = _run(["check", spec], capsys)
    assert code == 2 and "row 4" in err and "width" in err
    assert "1,000,000 characters" in err and len(err) < 2000


# -- 3: text that XML cannot carry ------------------------------------------------------------


def _xml_parts_parse(path: Path) -> None:
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.endswith((".xml", ".rels")):
                ET.fromstring(z.read(name))  # raises on a part that is not well-formed


def test_control_characters_in_spec_text_give_a_workbook_that_opens(tmp_path, capsys):
    text = (BASE_SPEC.replace("title: Bracket supplier change",
                              'title: "Bracket\\x01 change\\e[0m\\x7f"')
            .replace("unit: mm\n    target", 'unit: "m\\x02m\\x1b"\n    target', 1))
    spec = write_case(tmp_path, spec=text, csv=BASE_CSV.replace("A1,", "A\x01,"))
    out = tmp_path / "out"
    code, _, err = _run(["run", spec, "--out", out], capsys)
    assert code in (0, 1, 3), err
    wb_path = out / "spec.xlsx"
    _xml_parts_parse(wb_path)
    wb = openpyxl.load_workbook(wb_path)
    assert wb.properties.title == "Bracket\u2401 change\u241b[0m\u2421"
    cells = {c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row}
    assert "A\u2401" in cells  # the lot id from the data
    with zipfile.ZipFile(wb_path) as z:  # the unit reaches the chart axis titles, visibly
        charts = b"".join(z.read(n) for n in z.namelist() if n.startswith("xl/charts/"))
    assert "m\u2402m\u241b".encode() in charts
    doc = json.loads((out / "spec.json").read_text(encoding="utf-8"))
    assert doc["title"] == "Bracket\x01 change\x1b[0m\x7f"  # the JSON keeps the original
    assert doc["characteristics"][0]["unit"] == "m\x02m\x1b"
    assert main(["replay", str(out / "spec.xlsx")]) == 0
    assert main(["replay", str(out / "spec.json")]) == 0


# -- 4: several specs commit together or not at all -------------------------------------------


def _two_specs(tmp_path: Path) -> tuple[Path, Path]:
    a = write_case(tmp_path, spec=BASE_SPEC)
    b = tmp_path / "b.yaml"
    b.write_text(BASE_SPEC.replace("Bracket supplier change", "Bracket B"), encoding="utf-8")
    return a.rename(tmp_path / "a.yaml"), b


def test_a_folder_where_a_report_goes_stops_the_run_before_anything_is_written(tmp_path,
                                                                              capsys):
    a, b = _two_specs(tmp_path)
    out = tmp_path / "o"
    (out / "b.json").mkdir(parents=True)
    code, _, err = _run(["run", a, b, "--out", out], capsys)
    assert code == 2 and "b.json is a folder" in err and "nothing was written" in err
    assert _all_files(out) == ["b.json"]


def test_a_failed_rename_undoes_the_whole_run(tmp_path, capsys, monkeypatch):
    a, b = _two_specs(tmp_path)
    out = tmp_path / "o"
    assert main(["run", str(a), str(b), "--out", str(out)]) in (0, 1, 3)
    before = {p: p.read_bytes() for p in out.iterdir()}
    (tmp_path / "lots.csv").write_text(BASE_CSV.replace("10.01", "10.02"), encoding="utf-8")
    real = os.replace
    calls = []

    def failing(src, dst):
        calls.append(dst)
        if len(calls) == 3:  # a.xlsx and a.json are in place; b.xlsx fails
            raise PermissionError(13, "Permission denied", str(dst))
        return real(src, dst)

    import verify.runner as runner

    monkeypatch.setattr(runner.os, "replace", failing)
    code, _, err = _run(["run", a, b, "--out", out], capsys)
    monkeypatch.setattr(runner.os, "replace", real)
    assert code == 2
    assert "could not rename the new b.xlsx into place" in err and "Permission denied" in err
    assert "the 2 file(s) already renamed in this run were removed and the previous versions " \
           "put back" in err
    assert {p: p.read_bytes() for p in out.iterdir()} == before  # previous results, intact
    assert not [p for p in out.iterdir() if p.name.startswith(".")]  # no temporary files


def test_a_failed_rename_of_a_first_run_leaves_nothing(tmp_path, capsys, monkeypatch):
    a, b = _two_specs(tmp_path)
    out = tmp_path / "o"
    real = os.replace
    calls = []

    def failing(src, dst):
        calls.append(dst)
        if len(calls) == 4:
            raise OSError(28, "No space left on device", str(dst))
        return real(src, dst)

    import verify.runner as runner

    monkeypatch.setattr(runner.os, "replace", failing)
    code, _, err = _run(["run", a, b, "--out", out], capsys)
    assert code == 2 and "nothing of this run remains" in err
    assert "3 file(s) already renamed in this run were removed" in err
    assert _all_files(out) == []


# -- 5, 6: replay -----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def recorded(tmp_path_factory):
    base = tmp_path_factory.mktemp("rec")
    shutil.copytree(ROOT / "specs", base / "specs")
    shutil.copytree(ROOT / "sample_lots", base / "sample_lots")
    main(["run", str(base / "specs" / "bushing-supplier.yaml"), "--out", str(base / "out")])
    return base / "out" / "bushing-supplier.json"


def _forged(tmp_path: Path, recorded: Path, change) -> Path:
    doc = json.loads(recorded.read_text(encoding="utf-8"))
    change(doc)
    p = tmp_path / "forged.json"
    p.write_text(json.dumps(doc), encoding="utf-8")
    return p


def _set(path: str, value):
    def change(doc):
        obj = doc
        keys = path.split(".")
        for k in keys[:-1]:
            obj = obj[int(k)] if isinstance(obj, list) else obj[k]
        last = keys[-1]
        if isinstance(obj, list):
            obj[int(last)] = value
        else:
            obj[last] = value
    return change


@pytest.mark.parametrize("path,value,words", [
    ("versions", [1, 2], "versions must be an object"),
    ("tool", "x", "tool must be an object"),
    ("spec.path", 5, "spec.path must be a path (text), not a number"),
    ("spec.resolved_path", 5, "spec.resolved_path must be a path (text), not a number"),
    ("data_files.0.resolved_path", 5, "data_files[0].resolved_path must be a path"),
    ("data_files.0.path", ["a"], "data_files[0].path must be a path (text), not a list"),
    ("data_files.0.sha256", "zz", "data_files[0].sha256 must be 64"),
    ("final", "yes", "final must be true or false"),
    ("spec.text", "\ud800", "lone UTF-16 surrogate"),
])
def test_replay_refuses_a_damaged_record_with_a_clear_message(tmp_path, capsys, recorded,
                                                              path, value, words):
    p = _forged(tmp_path, recorded, _set(path, value))
    code, out, err = _run(["replay", p], capsys)
    assert code == 2 and words in err and "internal error" not in err


def test_replay_of_two_hundred_thousand_brackets(tmp_path, capsys):
    p = tmp_path / "deep.json"
    p.write_text("[" * 200_000, encoding="utf-8")
    code, _, err = _run(["replay", p], capsys)
    assert code == 2 and "internal error" not in err and "deep.json" in err
    p.write_text('{"format": "verify-result/1", "x": ' + "[" * 100 + "]" * 100 + "}",
                 encoding="utf-8")
    code, _, err = _run(["replay", p], capsys)
    assert code == 2 and "nests more than 64 levels" in err


def test_replay_of_a_workbook_with_a_truncated_workbook_xml(tmp_path, capsys, recorded):
    src = recorded.with_suffix(".xlsx")
    bad = tmp_path / "cut.xlsx"
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(bad, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/workbook.xml":
                data = data[: len(data) // 2]
            zout.writestr(info, data)
    code, _, err = _run(["replay", bad], capsys)
    assert code == 2 and "cut.xlsx" in err and "damaged" in err
    assert "internal error" not in err


def test_replay_reads_only_the_data_file_the_spec_names(tmp_path, capsys, recorded):
    outside = tmp_path / "secret.txt"
    outside.write_text("not a data file of this report\n", encoding="utf-8")

    def change(doc):
        doc["data_files"][0]["path"] = str(outside)
        doc["data_files"][0]["resolved_path"] = str(outside)
    p = _forged(tmp_path, recorded, change)
    code, out, err = _run(["replay", p], capsys)
    import hashlib

    digest = hashlib.sha256(outside.read_bytes()).hexdigest()
    assert code == 2 and "not the data file its spec text names" in err
    assert digest not in out + err


@posix_only
def test_replay_of_a_fifo_report_or_data_file_does_not_hang(tmp_path, recorded):
    os.mkfifo(tmp_path / "r.json")
    r = _cli(["replay", tmp_path / "r.json"], tmp_path, timeout=60)
    assert r.returncode == 2 and "named pipe" in r.stderr
    base = tmp_path / "b"
    shutil.copytree(recorded.parent.parent, base)
    data = base / "sample_lots" / "bushing_lots.csv"
    data.unlink()
    os.mkfifo(data)
    moved = base / "out" / "bushing-supplier.json"
    doc = json.loads(moved.read_text(encoding="utf-8"))
    doc["spec"]["resolved_path"] = str(base / "specs" / "bushing-supplier.yaml")
    moved.write_text(json.dumps(doc), encoding="utf-8")
    r = _cli(["replay", moved], tmp_path, timeout=60)
    assert r.returncode == 2 and "named pipe" in r.stderr and "bushing_lots.csv" in r.stderr


# -- the data root is checked before anything is opened ----------------------------------------


@posix_only
def test_data_root_refuses_a_fifo_outside_it_without_opening_it(tmp_path):
    from verify.runner import prepare

    (tmp_path / "root").mkdir()
    spec = write_case(tmp_path, csv=None)
    os.mkfifo(tmp_path / "lots.csv")
    with pytest.raises(DataError, match="outside --data-root"):
        prepare(spec, data_root=tmp_path / "root")  # an open() would block here
