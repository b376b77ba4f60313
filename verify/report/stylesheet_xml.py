"""The workbook's styles part (``xl/styles.xml``) with the same bytes as openpyxl's, for less.

openpyxl's ``write_stylesheet`` turns every distinct cell format of the workbook into a
``CellStyle`` object and serialises it through its descriptors: most of the cost of the part,
and the same few hundred formats in every workbook a process writes (the nightly run writes
hundreds). Here each format's ``<xf>`` element is serialised once per process, by openpyxl's
own ``to_tree`` and ``tostring``, and remembered by what decides its text: the format's
indices and the text of its alignment and protection. Everything else in the part (fonts,
fills, borders, number formats, named styles) is openpyxl's, unchanged.

``tests/test_stylesheet_xml.py`` holds the result to openpyxl's ``write_stylesheet`` byte for
byte, with and without the remembered formats.
"""

from __future__ import annotations

_XF: dict[tuple, bytes] = {}
_XF_MAX = 8192  # formats remembered at most (a workbook has tens to a few hundred)


def stylesheet_xml(wb) -> bytes:
    """``tostring(write_stylesheet(wb))``: the styles part openpyxl 3.1 writes for ``wb``."""
    from openpyxl.styles.cell_style import CellStyleList
    from openpyxl.styles.colors import ColorList
    from openpyxl.styles.numbers import BUILTIN_FORMATS_MAX_SIZE, NumberFormat
    from openpyxl.styles.stylesheet import Stylesheet
    from openpyxl.xml.functions import tostring

    # openpyxl.styles.stylesheet.write_stylesheet, with the cell formats left out
    stylesheet = Stylesheet()
    stylesheet.fonts = wb._fonts
    stylesheet.fills = wb._fills
    stylesheet.borders = wb._borders
    stylesheet.dxfs = wb._differential_styles.styles
    stylesheet.colors = ColorList(indexedColors=wb._colors)
    stylesheet.numFmts.numFmt = [NumberFormat(idx, code) for idx, code in
                                 enumerate(wb._number_formats, BUILTIN_FORMATS_MAX_SIZE)]
    stylesheet.cellXfs = CellStyleList(xf=[])
    stylesheet._split_named_styles(wb)
    stylesheet.tableStyles = wb._table_styles
    frame = tostring(stylesheet.to_tree())

    empty = tostring(CellStyleList(xf=[]).to_tree())
    if frame.count(empty) != 1:  # pragma: no cover - another openpyxl: its own route
        from openpyxl.styles.stylesheet import write_stylesheet

        return tostring(write_stylesheet(wb))
    styles = list(wb._cell_styles)
    parts: dict[tuple[str, int], bytes | None] = {}  # an alignment's or protection's text
    cells = b"".join(_xf(wb, style, tostring, parts) for style in styles)
    full = b'<cellXfs count="%d">%s</cellXfs>' % (len(styles), cells) if styles else empty
    return frame.replace(empty, full, 1)


def _xf(wb, style, tostring, parts: dict) -> bytes:
    """One cell format's ``<xf>`` element, as ``write_stylesheet`` serialises it."""
    align = prot = None
    if style.alignmentId:
        align = wb._alignments[style.alignmentId]
    if style.protectionId:
        prot = wb._protections[style.protectionId]
    key = (style.tobytes(), _text(parts, "alignment", style.alignmentId, align, tostring),
           _text(parts, "protection", style.protectionId, prot, tostring))
    text = _XF.get(key)
    if text is None:
        from openpyxl.styles.cell_style import CellStyle

        xf = CellStyle.from_array(style)
        if align is not None:
            xf.alignment = align
        if prot is not None:
            xf.protection = prot
        text = tostring(xf.to_tree())
        if len(_XF) >= _XF_MAX:
            _XF.clear()
        _XF[key] = text
    return text


def _text(parts: dict, kind: str, index: int, obj, tostring) -> bytes | None:
    """The serialised text of a format's alignment or protection (None: the format has none),
    once per workbook and index."""
    if obj is None:
        return None
    hit = parts.get((kind, index))
    if hit is None:
        tree = obj.to_tree()
        hit = parts[(kind, index)] = b"" if tree is None else b"<>" + tostring(tree)
    return hit
