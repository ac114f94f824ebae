"""Re-create the writer's native charts in a live Excel sheet through xlwings.

Each openpyxl chart on an output sheet (:mod:`wzq.io.workbook.charts`) is read
for its series: the cell holding the series name, the x values or
categories and the values, as sheet references. The chart is then built in
Excel over the very same cells, so it stays live:

* the leading series whose values lie in adjacent columns (or rows) of one
  sheet, named by cells in one row above (one column to the left), become one
  source block (``chart.set_source_data``, plotted by columns or rows), with
  their x values set by ``chart.set_x_axis_values``;
* any further series (another sheet, other rows) is added through Excel's
  own ``SERIES`` formula on the chart's native object (Windows); where that
  object is not available the series is left out and listed as skipped.

Titles, axis titles and scales, the legend position and series colours follow
the openpyxl chart; each of those steps is optional (an older xlwings may
lack it) and is listed as skipped when Excel refuses it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import absolute_coordinate, range_to_tuple
from openpyxl.worksheet.worksheet import Worksheet

from wzq.io.live.sheets import Skipped, quote_sheet

__all__ = [
    "LEGEND_POSITIONS",
    "POINTS_PER_CM",
    "Ref",
    "SeriesPlan",
    "Source",
    "add_chart",
    "add_charts",
    "add_native_series",
    "chart_series",
    "chart_type",
    "series_formula",
    "source_group",
]

#: Points per centimetre (openpyxl sizes charts in cm, Excel in points).
POINTS_PER_CM = 72 / 2.54

LEGEND_POSITIONS = {"b": "bottom", "t": "top", "l": "left", "r": "right", "tr": "corner"}


@dataclass(frozen=True)
class Ref:
    """A rectangular reference on one sheet (1-based, inclusive)."""

    sheet: str
    first_row: int
    first_col: int
    last_row: int
    last_col: int

    @classmethod
    def parse(cls, text: str | None) -> Ref | None:
        if not text:
            return None
        sheet, (c0, r0, c1, r1) = range_to_tuple(text)
        return cls(sheet, r0, c0, r1, c1)

    @property
    def address(self) -> str:
        first = f"${get_column_letter(self.first_col)}${self.first_row}"
        if (self.first_row, self.first_col) == (self.last_row, self.last_col):
            return first
        return f"{first}:${get_column_letter(self.last_col)}${self.last_row}"

    @property
    def formula(self) -> str:
        """``'Charts'!$S$4:$S$147``: the reference as Excel writes it in a formula."""
        return f"{quote_sheet(self.sheet)}!{absolute_coordinate(self.address)}"


@dataclass(frozen=True)
class SeriesPlan:
    """One series of a chart: xlwings chart type, name cell, x values, values, colours."""

    kind: str
    title: Ref | None
    x: Ref | None
    y: Ref
    line_rgb: tuple[int, int, int] | None = None
    fill_rgb: tuple[int, int, int] | None = None


def chart_type(sub: Any) -> str | None:
    """The xlwings chart type of an openpyxl chart (``None``: not supported here)."""
    tag = sub.tagname
    if tag == "scatterChart":
        style = sub.scatterStyle or "marker"
        if style in ("line", "smooth"):
            return "xy_scatter_lines_no_markers"
        return "xy_scatter_lines" if style in ("lineMarker", "smoothMarker") else "xy_scatter"
    if tag == "barChart":
        shape = "column" if sub.barDir == "col" else "bar"
        grouping = {"stacked": "stacked", "percentStacked": "stacked_100"}.get(
            sub.grouping, "clustered"
        )
        return f"{shape}_{grouping}"
    if tag == "lineChart":
        return {"stacked": "line_stacked", "percentStacked": "line_stacked_100"}.get(
            sub.grouping, "line"
        )
    if tag == "areaChart":  # the risk's fan chart stacks its bands
        return {"stacked": "area_stacked", "percentStacked": "area_stacked_100"}.get(
            sub.grouping, "area"
        )
    return {"pieChart": "pie", "doughnutChart": "doughnut"}.get(tag)


def _ref_text(data: Any) -> str | None:
    """The formula of a numeric or text data source (``None`` for literals or nothing)."""
    if data is None:
        return None
    for part in (getattr(data, "numRef", None), getattr(data, "strRef", None)):
        if part is not None and part.f:
            return part.f
    return None


def _hex_rgb(fill: Any) -> tuple[int, int, int] | None:
    value = getattr(fill, "srgbClr", None) if fill is not None else None
    value = getattr(value, "val", value)
    if not isinstance(value, str) or len(value) < 6:
        return None
    text = value[-6:]
    try:
        return (int(text[0:2], 16), int(text[2:4], 16), int(text[4:6], 16))
    except ValueError:
        return None


def chart_series(chart: Any) -> list[SeriesPlan]:
    """Every series of an openpyxl chart, combined charts included, in plot order."""
    out = []
    for sub in getattr(chart, "_charts", None) or [chart]:
        kind = chart_type(sub)
        if kind is None:
            raise ValueError(f"chart type {sub.tagname} is not supported")
        for s in sub.series:
            values = s.yVal if s.yVal is not None else s.val
            y = Ref.parse(_ref_text(values))
            if y is None:
                raise ValueError("a series without cell references")
            title = s.tx.strRef.f if s.tx is not None and s.tx.strRef is not None else None
            x = s.xVal if s.xVal is not None else s.cat
            gp = s.graphicalProperties
            out.append(
                SeriesPlan(
                    kind,
                    Ref.parse(title),
                    Ref.parse(_ref_text(x)),
                    y,
                    line_rgb=_hex_rgb(gp.line.solidFill if gp is not None and gp.line else None),
                    fill_rgb=_hex_rgb(gp.solidFill if gp is not None else None),
                )
            )
    return out


@dataclass(frozen=True)
class Source:
    """The source block of a chart: areas on one sheet, plotted by ``columns`` or ``rows``."""

    sheet: str
    areas: tuple[Ref, ...]
    plot_by: str

    @property
    def address(self) -> str:
        return ",".join(a.address for a in self.areas)


def _turn(ref: Ref) -> Ref:
    """The same reference with rows and columns swapped (to handle rows like columns)."""
    return Ref(ref.sheet, ref.first_col, ref.first_row, ref.last_col, ref.last_row)


def _turned(ref: Ref | None) -> Ref | None:
    return None if ref is None else _turn(ref)


def _column_group(series: list[SeriesPlan]) -> tuple[int, tuple[Ref, ...]]:
    """Leading series whose values are adjacent single columns with the same rows, names
    in one row above them (or no names), same x values and chart type."""
    first = series[0]
    y = first.y
    if y.first_col != y.last_col:
        return 0, ()
    title_row = first.title.first_row if first.title is not None else None
    if title_row is not None and title_row >= y.first_row:
        return 0, ()
    n = 0
    for k, s in enumerate(series):
        col = y.first_col + k
        same = (
            s.kind == first.kind
            and s.x == first.x
            and s.y == Ref(y.sheet, y.first_row, col, y.last_row, col)
        )
        named = (
            s.title is None
            if title_row is None
            else s.title == Ref(y.sheet, title_row, col, title_row, col)
        )
        if not (same and named):
            break
        n += 1
    if n == 0:
        return 0, ()
    last_col = y.first_col + n - 1
    values = Ref(y.sheet, y.first_row, y.first_col, y.last_row, last_col)
    if title_row is None:
        return n, (values,)
    if title_row == y.first_row - 1:
        return n, (Ref(y.sheet, title_row, y.first_col, y.last_row, last_col),)
    return n, (Ref(y.sheet, title_row, y.first_col, title_row, last_col), values)


def source_group(series: list[SeriesPlan]) -> tuple[int, Source | None]:
    """How many leading series one source block covers, and that block.

    The values of the series are adjacent single columns (or single rows) of one
    sheet sharing the same rows (columns), x values and chart type; their names
    sit in one row above (one column to the left), next to the values or apart
    (then the block has two areas, as a selection made with Ctrl in Excel).
    """
    if not series:
        return 0, None
    n, areas = _column_group(series)
    if n and (n > 1 or series[0].y.first_row != series[0].y.last_row):
        return n, Source(series[0].y.sheet, areas, "columns")
    turned = [SeriesPlan(s.kind, _turned(s.title), _turned(s.x), _turn(s.y)) for s in series]
    m, turned_areas = _column_group(turned)
    if m >= max(n, 1):
        return m, Source(series[0].y.sheet, tuple(_turn(a) for a in turned_areas), "rows")
    if n:
        return n, Source(series[0].y.sheet, areas, "columns")
    return 0, None


def series_formula(s: SeriesPlan, order: int) -> str:
    """Excel's ``=SERIES(name, x values, values, order)`` for one series."""
    parts = [s.title.formula if s.title else "", s.x.formula if s.x else "", s.y.formula]
    return f"=SERIES({','.join(parts)},{order})"


def add_native_series(chart: Any, formula: str) -> None:
    """Add one series to a chart through its native object's ``SERIES`` formula (Windows)."""
    api = chart.api
    native = api[1] if isinstance(api, tuple) else api
    try:
        collection = native.SeriesCollection
    except AttributeError:
        raise NotImplementedError(
            "this Excel has no SeriesCollection on its chart object (macOS)"
        ) from None
    collection().NewSeries().Formula = formula


def _text(title: Any) -> str | None:
    """The plain text of an openpyxl chart or axis title."""
    if title is None:
        return None
    tx = getattr(title, "tx", None)
    rich = getattr(tx, "rich", None)
    if rich is None:
        return None
    return "".join(run.t or "" for p in rich.p for run in (p.r or [])) or None


def _position(ws_sheet: Any, anchor: Any) -> tuple[float, float]:
    """Left and top (points) of the cell a chart is anchored at."""
    if isinstance(anchor, str):
        cell = ws_sheet.range(anchor)
    else:
        start = anchor._from
        cell = ws_sheet.range((start.row + 1, start.col + 1))
    return float(cell.left), float(cell.top)


def _axis(xl_axis: Any, axis: Any, what: str, skipped: Skipped) -> None:
    title = _text(axis.title)
    if title:
        skipped.attempt(f"{what} title", lambda: setattr(xl_axis, "title", title))
    scaling = axis.scaling
    for attr, value in (
        ("minimum_scale", scaling.min if scaling is not None else None),
        ("maximum_scale", scaling.max if scaling is not None else None),
        ("major_unit", getattr(axis, "majorUnit", None)),
    ):
        if value is not None:
            skipped.attempt(
                f"{what} {attr}",
                lambda attr=attr, value=value: setattr(xl_axis, attr, float(value)),
            )
    fmt = getattr(getattr(axis, "numFmt", None), "formatCode", None)
    if fmt:
        skipped.attempt(f"{what} number format", lambda: setattr(xl_axis, "number_format", fmt))


def _style(xl_chart: Any, chart: Any, series: list[SeriesPlan], name: str, sk: Skipped) -> None:
    title = _text(chart.title)
    if title:
        sk.attempt(f"{name}: title", lambda: setattr(xl_chart, "title", title))
    sk.attempt(
        f"{name}: x axis", lambda: _axis(xl_chart.category_axis, chart.x_axis, f"{name}: x", sk)
    )
    sk.attempt(
        f"{name}: y axis", lambda: _axis(xl_chart.value_axis, chart.y_axis, f"{name}: y", sk)
    )
    legend = chart.legend
    if legend is None:
        sk.attempt(f"{name}: legend", lambda: setattr(xl_chart.legend, "visible", False))
    elif legend.position in LEGEND_POSITIONS:
        where = LEGEND_POSITIONS[legend.position]
        sk.attempt(f"{name}: legend", lambda: setattr(xl_chart.legend, "position", where))
    for k, s in enumerate(series):
        for attr, rgb in (("line_color", s.line_rgb), ("fill_color", s.fill_rgb)):
            if rgb is not None:
                sk.attempt(
                    f"{name}: series {k + 1} {attr}",
                    lambda k=k, attr=attr, rgb=rgb: setattr(xl_chart.series[k], attr, rgb),
                )


def add_chart(book: Any, sheet: Any, chart: Any, index: int, skipped: Skipped) -> None:
    """Build one openpyxl ``chart`` of output sheet ``sheet`` in the live book."""
    name = f"{sheet.name}: chart {index}"
    try:
        series = chart_series(chart)
    except ValueError as e:
        skipped.append(f"{name} ({e})")
        return
    left, top = _position(sheet, chart.anchor)
    xl_chart = sheet.charts.add(
        left, top, chart.width * POINTS_PER_CM, chart.height * POINTS_PER_CM
    )
    try:
        _fill_chart(book, xl_chart, chart, series, name, skipped)
    except Exception:
        xl_chart.delete()  # no half-built chart is left behind
        raise


def _fill_chart(
    book: Any, xl_chart: Any, chart: Any, series: list[SeriesPlan], name: str, skipped: Skipped
) -> None:
    n, block = source_group(series)
    if block is not None:
        # while the new chart is Excel's default column chart every column (row) is a
        # series; an XY chart would take the first one as x values
        source = book.sheets[block.sheet].range(block.address)
        xl_chart.set_source_data(source, plot_by=block.plot_by)
        x = series[0].x
        if x is not None:
            xl_chart.set_x_axis_values(book.sheets[x.sheet].range(x.address))
    xl_chart.chart_type = series[0].kind
    present = list(series[:n])
    for order, s in enumerate(series[n:], start=n + 1):
        try:
            add_native_series(xl_chart, series_formula(s, len(present) + 1))
        except Exception as e:
            skipped.append(f"{name}: series {order} ({type(e).__name__}: {e})")
            continue
        present.append(s)
        if s.kind != series[0].kind:
            k = len(present) - 1
            skipped.attempt(
                f"{name}: series {order} type",
                lambda k=k, kind=s.kind: setattr(xl_chart.series[k], "chart_type", kind),
            )
    _style(xl_chart, chart, present, name, skipped)


def add_charts(book: Any, ws: Worksheet, sheet: Any, skipped: Skipped) -> None:
    """Re-create every chart of openpyxl sheet ``ws`` on xlwings ``sheet``."""
    for index, chart in enumerate(ws._charts, start=1):
        try:
            add_chart(book, sheet, chart, index, skipped)
        except Exception as e:  # e.g. an xlwings older than 0.37.6: the values still stand
            skipped.append(f"{sheet.name}: chart {index} ({type(e).__name__}: {e})")
