"""Streamed worksheets: big sheets written as XML directly, spliced into openpyxl's package.

openpyxl writes about 100k-145k cells a second; 500,000 measurements of 10 columns would take
most of a minute. So the large sheets (measurements, the spec text, the hidden record) are
saved by openpyxl as *placeholders* that carry everything except the data rows (column widths,
frozen header, header row, table part and its relationship, sheet state). :func:`splice` then
copies openpyxl's package into the final file, and for each streamed sheet inserts the rows,
generated chunk by chunk, into the placeholder's ``<sheetData>``. Memory stays flat.

Every streamed text cell is an inline string (``t="inlineStr"``): it can never be read as a
formula. Text is XML-escaped, carriage returns are kept as ``&#13;`` (a literal CR would be
folded into a line feed by any XML parser), characters XML cannot carry are replaced visibly
(:mod:`verify.report.safe_text`); as a last guard, :func:`splice` replaces any such control
byte left in a part openpyxl wrote.

The package is deterministic: every zip entry gets the same timestamp (the run's start) and the
document properties' created/modified times are set from it, so the same Evaluation gives the
same bytes.
"""

from __future__ import annotations

import datetime as dt
import functools
import io
import re
import zipfile
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from xml.etree import ElementTree as ET

from .safe_text import xml_legal

_NS_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_NS_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"

def zip_time(text: str) -> dt.datetime:
    """A run's start (ISO text) as the naive UTC datetime a saved workbook's zip entries and
    document times take (zip entries cannot predate 1980; text that is no time gives 1980)."""
    try:
        t = dt.datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except ValueError:
        t = dt.datetime(1980, 1, 1, tzinfo=dt.UTC)
    if t.tzinfo is None:
        t = t.replace(tzinfo=dt.UTC)
    t = t.astimezone(dt.UTC).replace(tzinfo=None, microsecond=0)
    return max(t, dt.datetime(1980, 1, 1))


def xml_text(text: str) -> str:
    """Escape text for an XML element; replace visibly what XML cannot carry; keep CR.

    (Four ``str.replace`` scans: about ten times faster than ``str.translate`` with a table of
    replacements on long text such as the record's 32,000-character chunks.)
    """
    return (
        xml_legal(text)
        .replace("&", "&amp;")
        .replace("<", "&lt;")
        .replace(">", "&gt;")
        .replace("\r", "&#13;")
    )


def t_element(text: str) -> str:
    """``<t>`` for an inline string, preserving leading/trailing whitespace."""
    esc = xml_text(text)
    if text != text.strip():
        return f'<t xml:space="preserve">{esc}</t>'
    return f"<t>{esc}</t>"


def text_cell(ref: str, text: str, style: int = 0) -> str:
    """One inline-string cell; empty text gives no cell at all."""
    if text == "":
        return ""
    s = f' s="{style}"' if style else ""
    return f'<c r="{ref}" t="inlineStr"{s}><is>{t_element(text)}</is></c>'


def number_cell(ref: str, value: float | int, style: int = 0) -> str:
    s = f' s="{style}"' if style else ""
    return f'<c r="{ref}"{s}><v>{value!r}</v></c>'


@dataclass
class StreamedSheet:
    """Rows to insert into a placeholder sheet, after the rows openpyxl wrote there.

    ``rows`` yields chunks of ``<row>`` XML, in row order; ``dimension`` is the sheet's used
    range (e.g. ``A1:J500001``). ``register``, when given, is called at the save with the
    function that gives a cell style's ``s`` attribute (registering the style in the
    workbook), after the styles of the cells openpyxl holds for the sheet and before ``rows``:
    rows whose styles are registered in sheet order, as openpyxl's writer registers them.
    ``outline_rows`` is the highest ``outlineLevel`` among the rows (0: none), for the sheet's
    ``<sheetFormatPr outlineLevelRow>`` (:func:`verify.report.sheet_xml.outline_levels`).
    """

    title: str
    rows: Callable[[], Iterable[str]]
    dimension: str
    register: Callable[[Callable], None] | None = None
    outline_rows: int = 0


def _sheet_parts(parts: Mapping[str, bytes]) -> dict[str, str]:
    """Sheet title -> part name (``xl/worksheets/sheetN.xml``) from the workbook's relations."""
    wb = ET.fromstring(parts["xl/workbook.xml"])
    rels = ET.fromstring(parts["xl/_rels/workbook.xml.rels"])
    targets = {r.get("Id"): r.get("Target") for r in rels.iter(f"{{{_NS_PKG_REL}}}Relationship")}
    out = {}
    for sheet in wb.iter(f"{{{_NS_MAIN}}}sheet"):
        target = targets[sheet.get(f"{{{_NS_REL}}}id")]
        target = target.lstrip("/")
        if not target.startswith("xl/"):
            target = "xl/" + target
        out[sheet.get("name")] = target
    return out


# Control bytes that no XML 1.0 document may contain, in any encoding of ours (UTF-8): a part
# holding one would not open. openpyxl writes text as it is given; every text reaching it is
# made safe first (safe_text), and this is the guard behind that.
_CONTROL_BYTES = re.compile(rb"[\x00-\x08\x0b\x0c\x0e-\x1f]")


_CONTROL_CHARS = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")


def _guard_controls(data: bytes) -> bytes:
    """Replace any XML-illegal control byte by U+FFFD (UTF-8), visibly."""
    if _CONTROL_BYTES.search(data) is None:
        return data
    return _CONTROL_BYTES.sub("\ufffd".encode(), data)


def guard_text_controls(text: str) -> str:
    """The same guard on text about to be encoded (these characters are single UTF-8 bytes)."""
    if _CONTROL_CHARS.search(text) is None:
        return text
    return _CONTROL_CHARS.sub("\ufffd", text)


_SHEETDATA_EMPTY = re.compile(rb"<sheetData\s*/>")
_DIMENSION = re.compile(rb'<dimension ref="[^"]*"\s*/>')


def _split_placeholder(xml: bytes) -> tuple[bytes, bytes]:
    """Split a placeholder sheet into the part before the end of sheetData and the rest."""
    m = _SHEETDATA_EMPTY.search(xml)
    if m:
        return xml[: m.start()] + b"<sheetData>", b"</sheetData>" + xml[m.end() :]
    end = xml.find(b"</sheetData>")
    if end < 0:
        raise ValueError("placeholder worksheet has no sheetData element")
    return xml[:end], xml[end:]


def _core_properties(xml: bytes, stamp: str) -> bytes:
    """Set created and modified in docProps/core.xml to ``stamp`` (W3CDTF)."""
    for tag in (b"dcterms:created", b"dcterms:modified"):
        xml = re.sub(
            rb"(<" + tag + rb"[^>]*>)[^<]*(</" + tag + rb">)",
            lambda m: m.group(1) + stamp.encode() + m.group(2),
            xml,
        )
    return xml


def splice(
    package: Mapping[str, bytes] | bytes,
    streamed: Iterable[StreamedSheet],
    path,
    *,
    timestamp: dt.datetime,
    compresslevel: int = 1,
) -> None:
    """Write ``package`` (openpyxl's saved bytes) to ``path`` with the streamed rows inserted.

    Parameters
    ----------
    package : mapping of part name to bytes, or bytes
        The workbook openpyxl wrote, with placeholder sheets: its parts in the order written
        (:func:`openpyxl_package`), or a saved package (a zip file's bytes).
    streamed : iterable of StreamedSheet
        Sheets (by title) whose rows are generated here.
    path : path-like
        Where to write the final file.
    timestamp : datetime
        UTC time given to every zip entry and to the document properties.
    compresslevel : int
        Deflate level; 1 is several times faster than 6 on large sheets, for a file about a
        third larger.
    """
    stamp = timestamp.astimezone(dt.UTC).replace(tzinfo=None)
    date_time = (
        max(stamp.year, 1980),
        stamp.month,
        stamp.day,
        stamp.hour,
        stamp.minute,
        stamp.second,
    )
    w3c = stamp.strftime("%Y-%m-%dT%H:%M:%SZ")
    if isinstance(package, (bytes, bytearray)):
        with zipfile.ZipFile(io.BytesIO(package)) as zin:
            package = {info.filename: zin.read(info.filename) for info in zin.infolist()}
    titles = _sheet_parts(package)
    by_part = {}
    for s in streamed:
        if s.title not in titles:
            raise KeyError(f"no placeholder sheet named {s.title!r}")
        by_part[titles[s.title]] = s
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, allowZip64=True) as zout:
        for name, data in package.items():
            out = zipfile.ZipInfo(name, date_time=date_time)
            out.compress_type = zipfile.ZIP_DEFLATED
            out.external_attr = 0o600 << 16
            sheet = by_part.get(name)
            if sheet is None:
                if name.endswith((".xml", ".rels", ".vml")):
                    data = _guard_controls(data)
                if name == "docProps/core.xml":
                    data = _core_properties(data, w3c)
                _write_part(zout, out, data)
                continue
            # the placeholder's frame gets the guard too (header and footer text, ...):
            # every sheet is streamed now, so this is where openpyxl's sheet XML passes
            data = _DIMENSION.sub(
                f'<dimension ref="{sheet.dimension}"/>'.encode(), _guard_controls(data),
                count=1,
            )
            head, tail = _split_placeholder(data)
            _set_level(out, compresslevel)
            with zout.open(out, "w", force_zip64=True) as fh:
                deflate_fast(fh, compresslevel)
                fh.write(head)
                for chunk in sheet.rows():
                    fh.write(chunk.encode("utf-8"))
                fh.write(tail)


def openpyxl_package(wb, worksheet_writer=None) -> dict[str, bytes]:
    """The parts openpyxl writes for ``wb``, by name in the order written.

    :func:`splice` deflates each part once into the final file; letting openpyxl deflate them
    first (as ``Workbook.save`` does) only to inflate them again was pure cost, and so was a
    zip archive in memory between the two (a CRC-32 and headers per part, written, then read
    and checked). (``Workbook.save`` also sets the modified time to the clock: splice sets both
    document times from the run's start anyway.)
    """
    archive = _Parts()
    _in_memory_writer(worksheet_writer)(wb, archive).save()
    return archive.parts


class _Parts:
    """What openpyxl's ``ExcelWriter`` uses of its zip archive (``writestr``, ``write``,
    ``namelist``, ``close``), keeping each part's bytes in order: a text part encoded as
    UTF-8, as ``ZipFile.writestr`` encodes it. A part written twice is an error (a zip archive
    would hold both, and a reader take either)."""

    def __init__(self) -> None:
        self.parts: dict[str, bytes] = {}

    def writestr(self, name, data, *_args, **_kwargs) -> None:
        if isinstance(name, zipfile.ZipInfo):
            name = name.filename
        if name in self.parts:
            raise ValueError(f"the workbook's writer wrote its part {name} twice")
        self.parts[name] = data.encode("utf-8") if isinstance(data, str) else bytes(data)

    def write(self, filename, arcname=None, *_args, **_kwargs) -> None:
        with open(filename, "rb") as f:
            self.writestr(arcname if arcname is not None else str(filename), f.read())

    def namelist(self) -> list[str]:
        return list(self.parts)

    def close(self) -> None:
        pass


def _in_memory_writer(worksheet_writer=None):
    """openpyxl's ExcelWriter with each worksheet written to memory instead of a temporary file.

    ``ExcelWriter.write_worksheet`` (openpyxl 3.1) writes every sheet to a named temporary
    file, adds the file to the archive and deletes it: three file-system calls a sheet, which
    on a busy disk cost more than writing the sheet. ``WorksheetWriter`` takes a BytesIO as
    well (its ``read`` returns the bytes); the rest is that method's code unchanged.
    ``worksheet_writer`` replaces openpyxl's ``WorksheetWriter`` (a subclass of it).
    """
    from openpyxl.drawing.spreadsheet_drawing import SpreadsheetDrawing
    from openpyxl.worksheet._writer import WorksheetWriter
    from openpyxl.writer.excel import ExcelWriter

    class InMemory(ExcelWriter):
        def write_data(self):
            # openpyxl 3.1's ExcelWriter.write_data, with the styles part written by
            # verify.report.stylesheet_xml (the same bytes, each cell format serialised once
            # per process)
            from openpyxl.packaging.extended import ExtendedProperties
            from openpyxl.workbook._writer import WorkbookWriter
            from openpyxl.writer.excel import (
                ARC_APP,
                ARC_CORE,
                ARC_CUSTOM,
                ARC_ROOT_RELS,
                ARC_STYLE,
                ARC_THEME,
                ARC_WORKBOOK,
                ARC_WORKBOOK_RELS,
                CPROPS_TYPE,
                theme_xml,
                tostring,
            )

            from .stylesheet_xml import stylesheet_xml

            archive = self._archive
            archive.writestr(ARC_APP, tostring(ExtendedProperties().to_tree()))
            archive.writestr(ARC_CORE, tostring(self.workbook.properties.to_tree()))
            archive.writestr(ARC_THEME, self.workbook.loaded_theme or theme_xml)
            if len(self.workbook.custom_doc_props) >= 1:
                archive.writestr(ARC_CUSTOM,
                                 tostring(self.workbook.custom_doc_props.to_tree()))

                class CustomOverride:
                    path = "/" + ARC_CUSTOM
                    mime_type = CPROPS_TYPE

                self.manifest.append(CustomOverride())
            self._write_worksheets()
            self._write_chartsheets()
            self._write_images()
            self._write_charts()
            self._write_external_links()
            archive.writestr(ARC_STYLE, stylesheet_xml(self.workbook))
            writer = WorkbookWriter(self.workbook)
            archive.writestr(ARC_ROOT_RELS, writer.write_root_rels())
            archive.writestr(ARC_WORKBOOK, writer.write())
            archive.writestr(ARC_WORKBOOK_RELS, writer.write_rels())
            self._merge_vba()
            self.manifest._write(archive, self.workbook)

        def _write_drawing(self, drawing):
            # a sheet's drawing of charts anchored at cells: its text depends only on each
            # chart's anchor and size (and the rels on the charts' paths), the same in most
            # sheets of most workbooks; serialised by openpyxl once per process and kept
            if _plain_drawing(drawing):
                return super()._write_drawing(drawing)
            from openpyxl.packaging.relationship import (
                Relationship,
                RelationshipList,
                get_rels_path,
            )
            from openpyxl.xml.functions import tostring

            self._drawings.append(drawing)
            drawing._id = len(self._drawings)
            for chart in drawing.charts:
                self._charts.append(chart)
                chart._id = len(self._charts)
            key = tuple((c.anchor.upper(), c.width, c.height) for c in drawing.charts)
            body = _remembered(_DRAWINGS, key, lambda: tostring(drawing._write()))

            def rels() -> bytes:
                rel_list = RelationshipList()
                for c in drawing.charts:
                    rel_list.append(Relationship(type="chart", Target=c.path))
                return tostring(rel_list.to_tree())

            rels_text = _remembered(_DRAWING_RELS, tuple(c.path for c in drawing.charts), rels)
            self._archive.writestr(drawing.path[1:], body)
            self._archive.writestr(get_rels_path(drawing.path)[1:], rels_text)
            self.manifest.append(drawing)

        def write_worksheet(self, ws):
            if self.workbook.write_only:
                return super().write_worksheet(ws)
            ws._drawing = SpreadsheetDrawing()
            ws._drawing.charts = ws._charts
            ws._drawing.images = ws._images
            writer = (worksheet_writer or WorksheetWriter)(ws, out=io.BytesIO())
            writer.write()
            ws._rels = writer._rels
            self._archive.writestr(ws.path[1:], writer.read())
            self.manifest.append(ws)

        def _write_charts(self):
            # a characteristic sheet's scatter chart as text (verify.report.chart_xml: the
            # same bytes as openpyxl's element tree, for a fraction of the cost); any other
            # chart through openpyxl's own route
            from openpyxl.xml.functions import tostring

            from .chart_xml import scatter_chart_xml

            if len(self._charts) != len(set(self._charts)):
                return super()._write_charts()  # openpyxl raises its own error
            for chart in self._charts:
                data = scatter_chart_xml(chart)
                self._archive.writestr(
                    chart.path[1:], data if data is not None else tostring(chart._write())
                )
                self.manifest.append(chart)

    return InMemory


def _plain_drawing(drawing) -> bool:
    """Whether a drawing goes openpyxl's own way: one with images, or a chart not anchored
    at a cell."""
    return bool(drawing.images) or not all(isinstance(c.anchor, str) for c in drawing.charts)


_DRAWINGS: dict[tuple, bytes] = {}  # a drawing's text by its charts' anchors and sizes
_DRAWING_RELS: dict[tuple, bytes] = {}  # a drawing's relationships by its charts' paths
_REMEMBER_MAX = 4096


def _remembered(memo: dict, key, make: Callable[[], bytes]) -> bytes:
    """``memo[key]``, made by ``make()`` on first use (the memo is emptied when full)."""
    text = memo.get(key)
    if text is None:
        if len(memo) >= _REMEMBER_MAX:
            memo.clear()
        text = memo[key] = make()
    return text


@functools.cache
def _isal_zlib():
    """python-isal's zlib module (ISA-L's deflate), or None where it is not installed."""
    try:
        from isal import isal_zlib
    except ImportError:
        return None
    return isal_zlib


def deflate_fast(entry, level: int) -> None:
    """Let ISA-L deflate a zip entry just opened for writing: python-isal's compressor in the
    place of zlib's, the same raw DEFLATE stream format (RFC 1951) that any zip reader inflates,
    at level 1 about three times as fast as zlib's level 1 for the same size (the sheets' XML is
    most of a workbook's bytes, and deflating it was a tenth of a nightly spec's CPU).

    Left to zlib where isal is not installed, where the level is beyond ISA-L's 0-3, or where
    ``entry`` is not a fresh deflating writer as CPython's ``zipfile`` makes one
    (``_ZipWriteFile`` with its compressor and nothing written yet). The bytes of a workbook
    then depend on which deflate wrote them, never its parts' content: the same evaluation
    gives the same parts either way, and the same file again with the same libraries."""
    isal_zlib = _isal_zlib()
    if isal_zlib is None or not 0 <= level <= 3:
        return
    if getattr(entry, "_compressor", None) is None or getattr(entry, "_compress_size", 1) != 0 \
            or getattr(entry, "_file_size", 1) != 0:
        return
    entry._compressor = isal_zlib.compressobj(level, isal_zlib.DEFLATED, -15)


def _write_part(zout: zipfile.ZipFile, info: zipfile.ZipInfo, data: bytes) -> None:
    """A part other than a sheet (styles, charts, drawings, relationships: small), at the
    fuller level of the deflate at hand: ISA-L's 3, or zlib's 6 where isal is not installed
    (``ZipFile.writestr``'s steps; zlib's set-up per part cost more than ISA-L's whole deflate
    of these parts, for files about one percent larger)."""
    if _isal_zlib() is None:
        zout.writestr(info, data, compresslevel=6)
        return
    _set_level(info, 3)
    info.file_size = len(data)  # (as writestr sets it before opening the entry)
    with zout.open(info, "w") as fh:
        deflate_fast(fh, 3)
        fh.write(data)


def _set_level(info: zipfile.ZipInfo, level: int) -> None:
    """Give one entry its deflate level (ZipFile.open(mode="w") reads it from the ZipInfo)."""
    if hasattr(info, "compress_level"):  # Python 3.13+
        info.compress_level = level
    else:
        info._compresslevel = level


@functools.cache
def row_writer(n_columns: int) -> Callable[..., str]:
    """``f(r, c1, ..., cn)``: the ``<row>`` element of sheet row ``r`` (its number as text)
    whose cells, in columns A, B, ..., each start ``<c r="{letter}{r}"`` and go on with the
    given text (the rest of the cell element, ``c1`` for column A and so on).

    An f-string compiled for the number of columns: a row costs about half of what
    ``str.format`` with the same template costs (which parses its template on every call),
    on the measurements sheet's hundreds of thousands of rows. The source holds nothing but
    column letters and argument names.
    """
    from openpyxl.utils import get_column_letter

    names = [f"c{j}" for j in range(1, n_columns + 1)]
    body = "".join(f'<c r="{get_column_letter(j)}{{r}}"{{{name}}}'
                   for j, name in enumerate(names, start=1))
    source = f"def row(r, {', '.join(names)}):\n    return f'<row r=\"{{r}}\">{body}</row>'\n"
    namespace: dict = {}
    exec(compile(source, "<verify.report.xlsx_fast.row_writer>", "exec"), namespace)
    return namespace["row"]


def chunked(items: Iterable[str], size: int = 4096) -> Iterator[str]:
    """Join an iterable of row strings into chunks of ``size`` rows."""
    buf: list[str] = []
    for item in items:
        buf.append(item)
        if len(buf) >= size:
            yield "".join(buf)
            buf.clear()
    if buf:
        yield "".join(buf)
