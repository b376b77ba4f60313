"""A characteristic sheet's scatter chart as plain data, written straight to its XML part.

:mod:`verify.report.charts` used to build every chart as an openpyxl ``ScatterChart`` (a
``Series`` with its marker, line and fill objects per line on the chart, axes, rich-text
titles) only for openpyxl to turn that object graph into an element tree and then text. A
:class:`ScatterPlan` holds just what those charts vary - the title, each series' name, cell
ranges and look, the axes' titles, number formats and bounds - and :meth:`ScatterPlan.xml`
writes the part directly.

The bytes are those openpyxl 3.1 writes for the equivalent ``ScatterChart``
(:meth:`ScatterPlan.to_openpyxl` builds it with the same styling helpers the charts always
used): element order, defaults it writes explicitly (``prstDash val="solid"``, tick marks
``none``, ``symbol val="none"``), numbers through ``"%.16g"`` (its ``safe_string``) and
``xml.etree.ElementTree``'s escaping. tests/test_chart_model.py compares the two for every
chart of the factory workbooks. Text that the tree writer would treat differently (control
characters, line breaks that ``title_maker`` splits into paragraphs) is not written here:
:meth:`xml` returns ``None`` and the save takes openpyxl's route through :meth:`to_openpyxl`.

A :class:`ScatterPlan` is an ``openpyxl.chart._chart.ChartBase`` only so that the worksheet's
drawing anchors it like any chart (``SpreadsheetDrawing._write`` checks the type); it never
runs ``ChartBase.__init__`` and keeps its data in its own attributes.
"""

from __future__ import annotations

import math

from openpyxl.chart import Series
from openpyxl.chart._chart import ChartBase
from openpyxl.chart.text import RichText, Text
from openpyxl.chart.title import Title
from openpyxl.drawing.text import (
    CharacterProperties,
    Paragraph,
    ParagraphProperties,
    RegularTextRun,
)
from openpyxl.utils import get_column_letter, quote_sheetname

_HEAD = (
    '<chartSpace xmlns:a="http://schemas.openxmlformats.org/drawingml/2006/main" '
    'xmlns="http://schemas.openxmlformats.org/drawingml/2006/chart"><style val="2" /><chart>'
)
_NO_MARKER = (
    '<marker><symbol val="none" /><spPr><a:ln><a:prstDash val="solid" /></a:ln></spPr></marker>'
)
_RICH = "<tx><rich><a:bodyPr /><a:p><a:pPr>"


class _Unwritable(Exception):
    """Text this writer leaves to openpyxl's tree writer."""


def _text(s: str) -> str:
    if any(ch < " " for ch in s):
        raise _Unwritable
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _attr(s: str) -> str:
    return _text(s).replace('"', "&quot;")


def _num(v) -> str:
    return f"{float(v):.16g}"  # openpyxl's safe_string: "%.16g"


def cell_range(ws, col: int, first: int, last: int) -> str:
    """``'sheet'!$C$5:$C$9`` (one cell: ``'sheet'!$C$5``), as ``openpyxl.chart.Reference``
    writes a one-column range."""
    c = get_column_letter(col)
    if first == last:
        return f"{quote_sheetname(ws.title)}!${c}${first}"
    return f"{quote_sheetname(ws.title)}!${c}${first}:${c}${last}"


def points(colour: str, size: int = 4) -> tuple:
    """A series drawn as points without a line (:func:`style_points`)."""
    return ("points", colour, size)


def line(colour: str, dash: str | None = None, width: int = 19050) -> tuple:
    """A series drawn as a line without markers (:func:`style_line`)."""
    return ("line", colour, dash, width)


def chart_title(text: str, size: int = 1000) -> Title:
    """A chart title in a modest font (the default is large enough to squeeze the plot)."""
    cp = CharacterProperties(sz=size, b=True)
    para = Paragraph(pPr=ParagraphProperties(defRPr=cp), r=[RegularTextRun(rPr=cp, t=text)])
    return Title(tx=Text(rich=RichText(p=[para])), overlay=False)


def style_points(s: Series, colour: str, size: int = 4) -> None:
    """Points without a line, in one colour."""
    s.marker.symbol = "circle"
    s.marker.size = size
    s.marker.graphicalProperties.solidFill = colour
    s.marker.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.noFill = True
    s.smooth = False


def style_line(s: Series, colour: str, dash: str | None = None, width: int = 19050) -> None:
    """A line without markers (``dash`` e.g. "dash"; ``width`` in EMU)."""
    s.marker.symbol = "none"
    s.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.width = width
    if dash:
        s.graphicalProperties.line.dashStyle = dash
    s.smooth = False


class Axis:
    """What a value axis shows: title, number format (``None``: the default), bounds."""

    __slots__ = ("title", "fmt", "lo", "hi", "grid", "major_unit")

    def __init__(self, grid: bool):
        self.title = ""
        self.fmt: str | None = None
        self.lo = self.hi = None
        self.grid = grid  # major gridlines (openpyxl's default on the y axis only)
        self.major_unit = None

    def xml(self, ax_id: int, cross: int) -> str:
        scaling = '<scaling><orientation val="minMax" />'
        if self.hi is not None:
            scaling += f'<max val="{_num(self.hi)}" />'
        if self.lo is not None:
            scaling += f'<min val="{_num(self.lo)}" />'
        if "\n" in self.title:
            raise _Unwritable  # title_maker makes a paragraph per line
        t = f"<a:t>{_text(self.title)}</a:t>" if self.title else "<a:t />"
        fmt = f'<numFmt formatCode="{_attr(self.fmt)}" sourceLinked="0" />' if self.fmt else ""
        unit = "" if self.major_unit is None else f'<majorUnit val="{_num(self.major_unit)}" />'
        return (
            f'<valAx><axId val="{ax_id}" />{scaling}</scaling><delete val="0" /><axPos val="l" />'
            f"{'<majorGridlines />' if self.grid else ''}<title>{_RICH}<a:defRPr /></a:pPr>"
            f"<a:r>{t}</a:r></a:p></rich></tx></title>{fmt}"
            '<majorTickMark val="none" /><minorTickMark val="none" /><tickLblPos val="low" />'
            f'<crossAx val="{cross}" />{unit}</valAx>'
        )


class ScatterPlan(ChartBase):
    """One characteristic chart: title, series and two value axes (see the module text)."""

    def __init__(self, title: str, width: float, height: float):
        # not ChartBase.__init__: none of its objects are used (see the module text)
        self.anchor = "E15"
        self.width, self.height = width, height
        self.plan_title = title
        self.plan_series: list[tuple[str, str, str, tuple]] = []
        self.x = Axis(grid=False)
        self.y = Axis(grid=True)
        self.gaps = False  # dispBlanksAs "gap" written by openpyxl either way

    def add(self, name: str, xref: str, yref: str, look: tuple) -> None:
        """A series: its name, x and y cell ranges and :func:`points` or :func:`line`."""
        self.plan_series.append((name, xref, yref, look))

    def _series_xml(self, i: int, name: str, xref: str, yref: str, look: tuple) -> str:
        if look[0] == "points":
            _, colour, size = look
            fill = f'<a:solidFill><a:srgbClr val="{_attr(colour)}" /></a:solidFill>'
            sp = '<spPr><a:ln><a:noFill /><a:prstDash val="solid" /></a:ln></spPr>'
            marker = (
                f'<marker><symbol val="circle" /><size val="{_num(size)}" /><spPr>{fill}'
                f'<a:ln>{fill}<a:prstDash val="solid" /></a:ln></spPr></marker>'
            )
        else:
            _, colour, dash, width = look
            sp = (
                f'<spPr><a:ln w="{_num(width)}"><a:solidFill><a:srgbClr val="{_attr(colour)}" />'
                f'</a:solidFill><a:prstDash val="{_attr(dash or "solid")}" /></a:ln></spPr>'
            )
            marker = _NO_MARKER
        return (
            f'<ser><idx val="{i}" /><order val="{i}" /><tx><v>{_text(name)}</v></tx>{sp}{marker}'
            f"<xVal><numRef><f>{_text(xref)}</f></numRef></xVal>"
            f'<yVal><numRef><f>{_text(yref)}</f></numRef></yVal><smooth val="0" /></ser>'
        )

    def xml(self) -> bytes | None:
        """The chart part's bytes, or ``None`` for text left to openpyxl (see the module)."""
        try:
            title = _text(self.plan_title)
            series = "".join(self._series_xml(i, *s) for i, s in enumerate(self.plan_series))
            text = (
                f'{_HEAD}<title>{_RICH}<a:defRPr sz="1000" b="1" /></a:pPr><a:r>'
                f'<a:rPr sz="1000" b="1" /><a:t>{title}</a:t></a:r></a:p></rich></tx>'
                f'<overlay val="0" /></title><plotArea><scatterChart>{series}'
                '<axId val="10" /><axId val="20" /></scatterChart>'
                f"{self.x.xml(10, 20)}{self.y.xml(20, 10)}</plotArea>"
                '<legend><legendPos val="b" /></legend><plotVisOnly val="1" />'
                '<dispBlanksAs val="gap" /></chart></chartSpace>'
            )
        except _Unwritable:
            return None
        if not all(
            math.isfinite(float(v)) for a in (self.x, self.y) for v in (a.lo, a.hi) if v is not None
        ):
            return None  # safe_string writes "" for these; leave it to openpyxl
        return text.encode("utf-8")

    def to_openpyxl(self):
        """The same chart as an openpyxl ``ScatterChart`` (how the charts were built before)."""
        from openpyxl.chart import Reference, ScatterChart, Series

        chart = ScatterChart()
        chart.title = chart_title(self.plan_title)
        chart.style = 2
        chart.height, chart.width = self.height, self.width
        chart.anchor = self.anchor
        for name, xref, yref, look in self.plan_series:
            s = Series(Reference(range_string=yref), Reference(range_string=xref), title=name)
            if look[0] == "points":
                style_points(s, look[1], look[2])
            else:
                style_line(s, look[1], look[2], look[3])
            chart.series.append(s)
        if self.gaps:
            chart.display_blanks = "gap"
        for ax, plan in ((chart.x_axis, self.x), (chart.y_axis, self.y)):
            ax.title = plan.title
            ax.delete = False
            if plan.fmt:
                ax.number_format = plan.fmt
                ax.numFmt.sourceLinked = False
            if not plan.grid:
                ax.majorGridlines = None
            ax.tickLblPos = "low"
            ax.scaling.min, ax.scaling.max = plan.lo, plan.hi
            if plan.major_unit is not None:
                ax.majorUnit = plan.major_unit
        chart.legend.position = "b"
        return chart

    def _write(self):
        """openpyxl's writer route (``ExcelWriter._write_charts``), for any other save."""
        chart = self.to_openpyxl()
        chart._id = self._id
        return chart._write()
