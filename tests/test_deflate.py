"""The workbook's sheets deflated by ISA-L (python-isal) where it is installed.

``xlsx_fast.deflate_fast`` swaps the compressor of a zip entry just opened for writing: the
parts must be exactly the parts zlib would have stored (zip's own CRC checks pass, every part
inflates to the same bytes), only the deflated stream differs. Anything but a fresh deflating
writer, and levels beyond ISA-L's 0-3, stay with zlib. The DEFLATE format is RFC 1951; the
zip container APPNOTE 6.3 (method 8); any reader inflates either stream.
"""

from __future__ import annotations

import io
import pickle
import zipfile
import zlib

import pytest

from tests.factory import make_evaluation
from verify.report import xlsx_fast
from verify.report.workbook import write_workbook

isal_zlib = pytest.importorskip(
    "isal.isal_zlib", reason="python-isal is not installed: the sheets are deflated by zlib "
    "(a dependency on x86-64 and ARM64; install isal to test the faster deflate)")


def _parts(path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        assert z.testzip() is None  # every entry's CRC-32 checks
        return {i.filename: z.read(i.filename) for i in z.infolist()}


def test_isal_and_zlib_write_the_same_parts(tmp_path, monkeypatch):
    ev = make_evaluation("welch")
    write_workbook(ev, tmp_path / "isal.xlsx")
    monkeypatch.setattr(xlsx_fast, "_isal_zlib", lambda: None)
    write_workbook(pickle.loads(pickle.dumps(ev)), tmp_path / "zlib.xlsx")
    fast, plain = _parts(tmp_path / "isal.xlsx"), _parts(tmp_path / "zlib.xlsx")
    assert list(fast) == list(plain)
    assert fast == plain
    # and the sheets really were deflated by ISA-L: its stream, not zlib's, is in the file
    with zipfile.ZipFile(tmp_path / "isal.xlsx") as z:
        info = z.getinfo("xl/worksheets/sheet1.xml")
        raw = _stored_stream(tmp_path / "isal.xlsx", info)
    c = isal_zlib.compressobj(1, isal_zlib.DEFLATED, -15)
    assert raw == c.compress(fast["xl/worksheets/sheet1.xml"]) + c.flush()
    assert zlib.decompress(raw, -15) == fast["xl/worksheets/sheet1.xml"]
    # the other parts at ISA-L's fuller level 3 (zlib's 6 without it)
    with zipfile.ZipFile(tmp_path / "isal.xlsx") as z:
        styles = _stored_stream(tmp_path / "isal.xlsx", z.getinfo("xl/styles.xml"))
    c = isal_zlib.compressobj(3, isal_zlib.DEFLATED, -15)
    assert styles == c.compress(fast["xl/styles.xml"]) + c.flush()
    with zipfile.ZipFile(tmp_path / "zlib.xlsx") as z:
        styles = _stored_stream(tmp_path / "zlib.xlsx", z.getinfo("xl/styles.xml"))
    c = zlib.compressobj(6, zlib.DEFLATED, -15)
    assert styles == c.compress(plain["xl/styles.xml"]) + c.flush()


def _stored_stream(path, info: zipfile.ZipInfo) -> bytes:
    """An entry's compressed bytes as they sit in the file (after its local header)."""
    data = path.read_bytes()
    off = info.header_offset
    name_len = int.from_bytes(data[off + 26:off + 28], "little")
    extra_len = int.from_bytes(data[off + 28:off + 30], "little")
    start = off + 30 + name_len + extra_len
    return data[start:start + info.compress_size]


def _entry(z: zipfile.ZipFile, name: str):
    info = zipfile.ZipInfo(name)
    info.compress_type = zipfile.ZIP_DEFLATED
    return z.open(info, "w")


def test_only_a_fresh_deflating_entry_at_an_isal_level_is_swapped():
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        with _entry(z, "a.xml") as fh:
            before = fh._compressor
            xlsx_fast.deflate_fast(fh, 6)  # beyond ISA-L's levels: zlib's level 6 stays
            assert fh._compressor is before
            xlsx_fast.deflate_fast(fh, 1)
            assert fh._compressor is not before
            fh.write(b"<a/>")
        with _entry(z, "b.xml") as fh:
            fh.write(b"<b/>")
            started = fh._compressor
            xlsx_fast.deflate_fast(fh, 1)  # bytes already went through zlib: left alone
            assert fh._compressor is started
        info = zipfile.ZipInfo("c.xml")  # stored, not deflated: nothing to swap
        with z.open(info, "w") as fh:
            xlsx_fast.deflate_fast(fh, 1)
            assert fh._compressor is None
            fh.write(b"<c/>")
    with zipfile.ZipFile(buf) as back:
        assert back.testzip() is None
        assert [back.read(n) for n in ("a.xml", "b.xml", "c.xml")] == [b"<a/>", b"<b/>", b"<c/>"]
