"""Property tests for hostile input (issue 10): any text gives a workbook that opens, and any
damage to a report given to replay gives a result or a clean error, never a crash.

Well-formedness is judged by Python's own XML parser (expat) over every XML part of the package
and by openpyxl loading the file; the character rules are XML 1.0's (W3C, section 2.2).
"""

from __future__ import annotations

import json
import shutil
import zipfile
from pathlib import Path
from xml.etree import ElementTree as ET

import openpyxl
import pytest
from factory import make_evaluation
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from verify.cli import main
from verify.errors import VerifyError
from verify.replay import ReplayResult, replay
from verify.report.json_result import dumps, result_dict
from verify.report.workbook import write_workbook

ROOT = Path(__file__).resolve().parents[1]
SETTINGS = settings(max_examples=15, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow])

# any character at all, control characters, DEL, non-characters and surrogates included
any_text = st.text(st.characters(min_codepoint=0, max_codepoint=0x10FFFF), min_size=1,
                   max_size=40)
hostile_text = st.one_of(
    any_text,
    st.lists(st.sampled_from(["\x00", "\x01", "\x1b", "\x7f", "\x0b", "\ufffe", "\uffff",
                              "\ud800", "\t", "\r", "\n", "&", "<", "]]>", "=", "'", "a"]),
             min_size=1, max_size=20).map("".join),
)


def _opens(path: Path) -> None:
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.endswith((".xml", ".rels")):
                ET.fromstring(z.read(name))
    openpyxl.load_workbook(path).close()


@SETTINGS
@given(title=hostile_text, change_id=hostile_text, lots=st.lists(hostile_text, min_size=2,
                                                                  max_size=3, unique=True))
def test_every_workbook_written_from_hostile_text_opens(tmp_path, title, change_id, lots):
    # the spec text stays plain: YAML cannot hold such characters unescaped (a spec writes
    # them as escapes), while the title and change id carry them as loaded
    import pandas as pd

    # lone surrogates fit pandas' Python string storage, not its pyarrow one (used when pyarrow
    # is installed, as with the test extra): the factory's table must hold them to test this
    with pd.option_context("mode.string_storage", "python"):
        ev = make_evaluation("pooled", n_old=4, n_new=4, parts_per_lot=2, title=title,
                             change_id=change_id, lot_ids=lots, spec_text="format: verify/1\n")
    path = tmp_path / "w.xlsx"
    record = dumps(result_dict(ev)) if all(
        not 0xD800 <= ord(c) <= 0xDFFF for c in title + change_id + "".join(lots)) else None
    write_workbook(ev, path, record_json=record)
    _opens(path)
    if record is not None:  # the embedded record reads back exactly
        from verify.report.workbook import read_record

        wb = openpyxl.load_workbook(path, read_only=True)
        try:
            assert json.loads(read_record(wb)) == json.loads(record)
        finally:
            wb.close()


@SETTINGS
@given(name=st.from_regex(r"\A[A-Za-z][A-Za-z0-9_.-]{0,30}\Z"), unit=hostile_text)
def test_characteristic_names_and_units_give_sheets_and_charts_that_open(tmp_path, name, unit):
    import dataclasses

    ev = make_evaluation("welch", n_old=5, n_new=5, name=name)
    c = ev.characteristics[0]
    ev = dataclasses.replace(ev, characteristics=(dataclasses.replace(c, unit=unit),
                                                  *ev.characteristics[1:]))
    path = tmp_path / "w.xlsx"
    write_workbook(ev, path)
    _opens(path)


# -- reports given to replay ------------------------------------------------------------------


@pytest.fixture(scope="module")
def recorded(tmp_path_factory) -> Path:
    base = tmp_path_factory.mktemp("fuzz")
    shutil.copytree(ROOT / "specs", base / "specs")
    shutil.copytree(ROOT / "sample_lots", base / "sample_lots")
    main(["run", str(base / "specs" / "housing-resin.yaml"), "--out", str(base / "out")])
    return base / "out" / "housing-resin.json"


json_values = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(-10**20, 10**20),
              st.floats(allow_nan=False, allow_infinity=False), hostile_text),
    lambda inner: st.one_of(st.lists(inner, max_size=3),
                            st.dictionaries(hostile_text, inner, max_size=3)),
    max_leaves=8,
)


def _paths(obj, prefix=()):
    yield prefix
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _paths(v, (*prefix, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _paths(v, (*prefix, i))


@SETTINGS
@given(data=st.data())
def test_a_damaged_report_replays_or_is_a_clean_error(tmp_path, recorded, data):
    doc = json.loads(recorded.read_text(encoding="utf-8"))
    paths = [p for p in _paths(doc) if p]
    for _ in range(data.draw(st.integers(1, 3))):
        where = data.draw(st.sampled_from(paths))
        parent = doc
        try:
            for k in where[:-1]:
                parent = parent[k]
            if data.draw(st.booleans()) and isinstance(parent, dict):
                parent.pop(where[-1], None)
            else:
                parent[where[-1]] = data.draw(json_values)
        except (KeyError, IndexError, TypeError):
            continue  # an earlier change removed this place
    p = tmp_path / "r.json"
    p.write_text(json.dumps(doc), encoding="utf-8")
    try:
        res = replay(p)
    except VerifyError as exc:
        assert str(exc)
    else:
        assert isinstance(res, ReplayResult)


@SETTINGS
@given(garbage=st.binary(max_size=400))
def test_garbage_bytes_as_a_report_are_a_clean_error(tmp_path, garbage):
    for suffix in (".json", ".xlsx"):
        p = tmp_path / f"g{suffix}"
        p.write_bytes(garbage if suffix == ".json" else b"PK\x03\x04" + garbage)
        with pytest.raises(VerifyError):
            replay(p)
