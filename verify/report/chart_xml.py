"""The XML part of a characteristic sheet's scatter chart, written as text.

openpyxl saves a chart by building an element tree of its whole object graph
(``ChartBase._write`` -> ``ChartSpace.to_tree``) and serialising the tree; for the few
shapes of chart :mod:`verify.report.charts` draws that is most of the chart's cost of saving.
:func:`scatter_chart_xml` writes the same bytes straight from the chart's fields, reading only
the fields those charts set. Anything else (another kind of chart, a layout, a field it does
not know, text that the tree writer would escape differently) returns ``None`` and the caller
keeps openpyxl's own route. tests/test_chart_xml.py compares both routes byte for byte.

Element order and attribute formats follow openpyxl 3.1's ``to_tree`` of ``ChartSpace``,
``ScatterChart``, ``XYSeries``, ``NumericAxis``, ``Title`` and ``GraphicalProperties``
(numbers through ``openpyxl.compat.strings.safe_string``: ``"%.16g"``); escaping follows
``xml.etree.ElementTree``'s ``_escape_cdata`` / ``_escape_attrib``.
"""

from __future__ import annotations

import math

_NS = (
    '<chartSpace xmlns:a="http://schemas.openxmlformats.org/drawingml/2006/main" '
    'xmlns="http://schemas.openxmlformats.org/drawingml/2006/chart">'
)


class _Unsupported(Exception):
    """The chart has something this writer does not write: use openpyxl's route."""


def _text(s) -> str:
    if not isinstance(s, str) or any(ch < " " for ch in s):
        raise _Unsupported  # control characters: leave them to the tree writer
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _attr(s) -> str:
    return _text(s).replace('"', "&quot;")


def _num(v) -> str:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise _Unsupported
    return f"{v:.16g}"  # safe_string's "%.16g"


def _run_text(rich) -> tuple[str, object]:
    """The one paragraph with one run of a chart or axis title."""
    if rich is None or len(rich.p) != 1:
        raise _Unsupported
    p = rich.p[0]
    if p.r is None or len(p.r) != 1 or p.fld or p.br or p.endParaRPr is not None:
        raise _Unsupported
    return p.r[0].t, p


def _char_props(cp) -> str:
    """``<a:defRPr>`` / ``<a:rPr>`` attributes: size and bold only."""
    if cp is None:
        return ""
    known = {"sz": cp.sz, "b": cp.b}
    for name in cp.__attrs__:
        if name not in known and getattr(cp, name) is not None:
            raise _Unsupported
    for name in cp.__elements__:
        if getattr(cp, name, None):  # empty tags default to False
            raise _Unsupported
    out = ""
    if cp.sz is not None:
        out += f' sz="{_num(cp.sz)}"'
    if cp.b is not None:
        out += f' b="{int(bool(cp.b))}"'
    return out


def _title(title) -> str:
    if title is None:
        return ""
    if title.layout is not None or title.spPr is not None or title.txPr is not None:
        raise _Unsupported
    tx = title.tx
    if tx is None or tx.strRef is not None:
        raise _Unsupported
    text, p = _run_text(tx.rich)
    ppr = p.pPr
    if ppr is None or ppr.defRPr is None:
        raise _Unsupported
    defr = _char_props(ppr.defRPr)
    rpr = p.r[0].rPr
    run = "" if rpr is None else f"<a:rPr{_char_props(rpr)} />"
    t = "<a:t />" if not text else f"<a:t>{_text(text)}</a:t>"
    overlay = "" if title.overlay is None else f'<overlay val="{int(bool(title.overlay))}" />'
    return (
        f"<title><tx><rich><a:bodyPr /><a:p><a:pPr><a:defRPr{defr} /></a:pPr>"
        f"<a:r>{run}{t}</a:r></a:p></rich></tx>{overlay}</title>"
    )


def _line(ln) -> str:
    """``<a:ln>`` of a series, a marker or a marker's outline."""
    if ln is None:
        return ""
    if ln.gradFill is not None or ln.pattFill is not None or ln.custDash is not None:
        raise _Unsupported
    if ln.round or ln.bevel or ln.miter is not None:
        raise _Unsupported
    if ln.headEnd is not None or ln.tailEnd is not None or ln.cap or ln.cmpd or ln.algn:
        raise _Unsupported
    w = "" if ln.w is None else f' w="{_num(ln.w)}"'
    fill = ""
    if ln.noFill:
        fill = "<a:noFill />"
    elif ln.solidFill is not None:
        fill = _solid(ln.solidFill)
    dash = "" if ln.prstDash is None else f'<a:prstDash val="{_attr(ln.prstDash)}" />'
    return f"<a:ln{w}>{fill}{dash}</a:ln>"


def _solid(fill) -> str:
    if fill.srgbClr is None or not isinstance(fill.srgbClr, str):
        raise _Unsupported
    for name in ("scrgbClr", "hslClr", "sysClr", "schemeClr", "prstClr"):
        if getattr(fill, name, None) is not None:
            raise _Unsupported
    return f'<a:solidFill><a:srgbClr val="{_attr(fill.srgbClr)}" /></a:solidFill>'


def _sppr(gp) -> str:
    if gp is None:
        return ""
    if gp.xfrm is not None or gp.prstGeom is not None or gp.bwMode is not None:
        raise _Unsupported
    if gp.gradFill is not None or gp.pattFill is not None:
        raise _Unsupported
    if gp.scene3d is not None or gp.sp3d is not None:
        raise _Unsupported
    fill = "<a:noFill />" if gp.noFill else ""
    if gp.solidFill is not None:
        fill += _solid(gp.solidFill)
    return f"<spPr>{fill}{_line(gp.ln)}</spPr>"


def _ref(data) -> str:
    if data is None or data.numRef is None or data.numLit is not None:
        raise _Unsupported
    if data.numRef.numCache is not None:
        raise _Unsupported
    return f"<numRef><f>{_text(data.numRef.f)}</f></numRef>"


def _series(i: int, s) -> str:
    for name in (
        "dPt",
        "dLbls",
        "trendline",
        "errBars",
        "bubble3D",
        "bubbleSize",
        "invertIfNegative",
    ):
        if getattr(s, name, None):
            raise _Unsupported
    if s.tx is None or s.tx.strRef is not None or s.tx.v is None:
        raise _Unsupported
    m = s.marker
    marker = ""
    if m is not None:
        size = "" if m.size is None else f'<size val="{_num(m.size)}" />'
        # a NestedNoneSet: None is written as "none"
        sym = f'<symbol val="{_attr(m.symbol or "none")}" />'
        marker = f"<marker>{sym}{size}{_sppr(m.spPr)}</marker>"
    smooth = "" if s.smooth is None else f'<smooth val="{int(bool(s.smooth))}" />'
    return (
        f'<ser><idx val="{i}" /><order val="{i}" /><tx><v>{_text(s.tx.v)}</v></tx>'
        f"{_sppr(s.spPr)}{marker}<xVal>{_ref(s.xVal)}</xVal><yVal>{_ref(s.yVal)}</yVal>"
        f"{smooth}</ser>"
    )


def _axis(ax) -> str:
    sc = ax.scaling
    if sc.logBase is not None or sc.orientation != "minMax":
        raise _Unsupported
    scaling = '<scaling><orientation val="minMax" />'
    if sc.max is not None:
        scaling += f'<max val="{_num(sc.max)}" />'
    if sc.min is not None:
        scaling += f'<min val="{_num(sc.min)}" />'
    scaling += "</scaling>"
    if ax.minorGridlines is not None or ax.spPr is not None or ax.txPr is not None:
        raise _Unsupported
    if ax.crosses is not None or ax.crossesAt is not None or ax.crossBetween is not None:
        raise _Unsupported
    if ax.minorUnit is not None or ax.dispUnits is not None:
        raise _Unsupported
    if ax.majorGridlines is not None:
        gl = ax.majorGridlines
        if gl.spPr is not None:
            raise _Unsupported
        grid = "<majorGridlines />"
    else:
        grid = ""
    title = ax.title
    if title is not None and (title.overlay is not None or title.tx.rich.p[0].r[0].rPr is not None):
        raise _Unsupported
    nf = ax.numFmt
    fmt = ""
    if nf is not None:
        linked = int(bool(nf.sourceLinked))
        fmt = f'<numFmt formatCode="{_attr(nf.formatCode)}" sourceLinked="{linked}" />'
    delete = "" if ax.delete is None else f'<delete val="{int(bool(ax.delete))}" />'
    # openpyxl writes an unset tick mark as an explicit "none" (its _explicit_none)
    ticks = (
        f'<majorTickMark val="{_attr(ax.majorTickMark or "none")}" />'
        f'<minorTickMark val="{_attr(ax.minorTickMark or "none")}" />'
    )
    if ax.tickLblPos is not None:
        ticks += f'<tickLblPos val="{_attr(ax.tickLblPos)}" />'
    unit = "" if ax.majorUnit is None else f'<majorUnit val="{_num(ax.majorUnit)}" />'
    return (
        f'<valAx><axId val="{_num(ax.axId)}" />{scaling}{delete}'
        f'<axPos val="{_attr(ax.axPos)}" />{grid}{_title(title)}{fmt}{ticks}'
        f'<crossAx val="{_num(ax.crossAx)}" />{unit}</valAx>'
    )


def scatter_chart_xml(chart) -> bytes | None:
    """The ``xl/charts/chartN.xml`` bytes openpyxl would write for ``chart``, or ``None``.

    Parameters
    ----------
    chart : openpyxl.chart.ScatterChart
        A chart built by :mod:`verify.report.charts` (one scatter plot, two value axes).

    Returns
    -------
    bytes or None
        UTF-8 XML without a declaration (as ``openpyxl.xml.functions.tostring`` writes it),
        or ``None`` when the chart has anything this writer does not cover.
    """
    from openpyxl.chart import ScatterChart

    from .chart_model import ScatterPlan

    if isinstance(chart, ScatterPlan):
        return chart.xml()  # the characteristic charts' own plain-data route
    try:
        if type(chart) is not ScatterChart or chart._charts != [chart]:
            raise _Unsupported
        if chart.layout is not None or chart.roundedCorners is not None:
            raise _Unsupported
        if chart.pivotSource is not None or chart.pivotFormats or chart.graphical_properties:
            raise _Unsupported
        if chart.scatterStyle is not None or chart.varyColors is not None:
            raise _Unsupported
        if chart.dLbls is not None or chart.idx_base != 0:
            raise _Unsupported
        style = "" if chart.style is None else f'<style val="{_num(chart.style)}" />'
        series = "".join(_series(i, s) for i, s in enumerate(chart.series))
        x, y = chart.x_axis, chart.y_axis
        if x.tagname != "valAx" or y.tagname != "valAx":
            raise _Unsupported
        legend = ""
        if chart.legend is not None:
            lg = chart.legend
            if lg.legendEntry or lg.layout is not None or lg.overlay is not None:
                raise _Unsupported
            if lg.spPr is not None or lg.txPr is not None:
                raise _Unsupported
            pos = "" if lg.legendPos is None else f'<legendPos val="{_attr(lg.legendPos)}" />'
            legend = f"<legend>{pos}</legend>"
        vis = int(bool(chart.visible_cells_only))
        blanks = chart.display_blanks
        text = (
            f"{_NS}{style}<chart>{_title(chart.title)}<plotArea><scatterChart>{series}"
            f'<axId val="{_num(x.axId)}" /><axId val="{_num(y.axId)}" /></scatterChart>'
            f'{_axis(x)}{_axis(y)}</plotArea>{legend}<plotVisOnly val="{vis}" />'
            f'<dispBlanksAs val="{_attr(blanks)}" /></chart></chartSpace>'
        )
    except (_Unsupported, AttributeError, IndexError, TypeError):
        return None
    return text.encode("utf-8")
