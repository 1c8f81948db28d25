"""Native chart builders (openpyxl ``chart``), never pictures of charts.

openpyxl 3.1 hides chart axes unless ``delete`` is set to False, so every builder sets it.
"""

from __future__ import annotations

from openpyxl.chart import BarChart, LineChart, Reference, ScatterChart, Series
from openpyxl.chart.marker import DataPoint
from openpyxl.chart.series import SeriesLabel

from planner.report.cells import neutralise_text
from planner.report.styles import SERIES_COLOURS

CHART_WIDTH_CM = 16.0
CHART_HEIGHT_CM = 7.5


def _show_axes(chart) -> None:
    chart.x_axis.delete = False
    chart.y_axis.delete = False


def _colour(series, colour, *, dashed: bool = False, width_pt: float = 1.5) -> None:
    """Line colour (hex, or an index into SERIES_COLOURS), width and dash of a series."""
    if isinstance(colour, int):
        colour = SERIES_COLOURS[colour % len(SERIES_COLOURS)]
    series.graphicalProperties.line.solidFill = colour
    series.graphicalProperties.line.width = int(width_pt * 12700)  # EMU per point
    if dashed:
        series.graphicalProperties.line.dashStyle = "dash"


def bar_chart(ws, *, title: str, categories: Reference, values: Reference, y_title: str,
              y_format: str, anchor: str, colour: str | None = None,
              point_colours: list[str] | None = None, horizontal: bool = False,
              width_cm: float = CHART_WIDTH_CM, height_cm: float = CHART_HEIGHT_CM) -> BarChart:
    """Column chart of one series (e.g. fleet present cost per chemistry); ``point_colours``
    colours each column (one colour per chemistry in every chart); ``horizontal`` draws
    bars, which leaves room for long category names."""
    chart = BarChart()
    chart.type = "bar" if horizontal else "col"
    chart.title = neutralise_text(title)
    chart.legend = None
    chart.add_data(values, titles_from_data=False)
    chart.set_categories(categories)
    chart.y_axis.title = y_title
    chart.y_axis.numFmt = y_format
    chart.y_axis.majorGridlines = None
    chart.y_axis.scaling.min = 0  # bars from zero: an axis starting higher exaggerates differences
    colour = colour or SERIES_COLOURS[0]
    chart.series[0].graphicalProperties.solidFill = colour
    chart.series[0].graphicalProperties.line.solidFill = colour
    for index, fill in enumerate(point_colours or []):
        point = DataPoint(idx=index)
        point.graphicalProperties.solidFill = fill
        point.graphicalProperties.line.solidFill = fill
        chart.series[0].dPt.append(point)
    if horizontal:
        chart.x_axis.scaling.orientation = "maxMin"  # first category on top, as in the table
    chart.width, chart.height = width_cm, height_cm
    _show_axes(chart)
    ws.add_chart(chart, anchor)
    return chart


def soh_chart(ws, *, title: str, x_values: Reference, series: list[tuple],
              anchor: str, horizon_years: float, y_min: float = 0.0,
              height_cm: float = CHART_HEIGHT_CM, width_cm: float = CHART_WIDTH_CM) -> ScatterChart:
    """State of health over the horizon: straight-line scatter so the x axis is in years.

    ``series`` holds (label, y reference, colour, dashed[, width in pt]) per line (colour a
    hex string or an index); monthly points draw the replacement saw-tooth as a
    near-vertical rise. Every chart of a family takes the same ``y_min``.
    """
    chart = ScatterChart()
    chart.title = neutralise_text(title)
    chart.style = 2
    for label, y_ref, colour, dashed, *width in series:
        s = Series(y_ref, x_values)
        s.tx = SeriesLabel(v=neutralise_text(label))
        s.marker.symbol = "none"
        s.smooth = False
        _colour(s, colour, dashed=dashed, width_pt=width[0] if width else 1.5)
        chart.series.append(s)
    chart.x_axis.title = "Years from start"
    chart.x_axis.scaling.min = 0
    chart.x_axis.scaling.max = horizon_years
    chart.x_axis.majorUnit = 5 if horizon_years > 10 else 1
    chart.x_axis.numFmt = "0"
    chart.y_axis.title = "State of health"
    chart.y_axis.numFmt = "0%"
    chart.y_axis.scaling.min = y_min
    chart.y_axis.scaling.max = 1.05
    chart.legend.position = "r"  # beside the plot: a flat chart keeps its height for the lines
    chart.width, chart.height = width_cm, height_cm
    _show_axes(chart)
    ws.add_chart(chart, anchor)
    return chart


def monthly_temperature_chart(ws, *, title: str, categories: Reference,
                              series: list[tuple[str, Reference]], anchor: str,
                              y_range: tuple[float, float] | None = None) -> LineChart:
    """Monthly mean air and battery temperature of one site (one line each); every chart
    of the family takes the same ``y_range`` [°C]."""
    chart = LineChart()
    chart.title = neutralise_text(title)
    for index, (label, ref) in enumerate(series):
        s = Series(ref)
        s.tx = SeriesLabel(v=neutralise_text(label))
        s.marker.symbol = "none"
        s.smooth = False
        _colour(s, index)
        chart.series.append(s)
    chart.set_categories(categories)
    chart.y_axis.title = "Temperature [°C]"
    chart.x_axis.tickLblPos = "low"  # month labels below the plot even when it dips under 0 °C
    chart.y_axis.numFmt = "0"
    if y_range is not None:
        chart.y_axis.scaling.min, chart.y_axis.scaling.max = y_range
    chart.legend.position = "b"
    chart.width, chart.height = CHART_WIDTH_CM, CHART_HEIGHT_CM
    _show_axes(chart)
    ws.add_chart(chart, anchor)
    return chart


def stacked_bar_chart(ws, *, title: str, categories: Reference, series: list[Reference], y_title: str,
                      y_format: str, anchor: str, x_title: str | None = None,
                      width_cm: float = CHART_WIDTH_CM, colours: list[str] | None = None,
                      horizontal: bool = False, height_cm: float = CHART_HEIGHT_CM) -> BarChart:
    """Stacked columns, one series per cost part (the header cell above each column is its
    name, ``colours`` its colour); negative parts (residual value) stack below zero.
    ``horizontal`` draws bars, which leaves room for long category names."""
    chart = BarChart()
    chart.type = "bar" if horizontal else "col"
    chart.grouping = "stacked"
    chart.overlap = 100
    chart.title = neutralise_text(title)
    for index, ref in enumerate(series):
        chart.add_data(ref, titles_from_data=True)
        s = chart.series[-1]
        colour = colours[index] if colours and index < len(colours) else SERIES_COLOURS[index % len(SERIES_COLOURS)]
        s.graphicalProperties.solidFill = colour
        s.graphicalProperties.line.solidFill = colour
    chart.set_categories(categories)
    chart.y_axis.title = y_title
    chart.y_axis.numFmt = y_format
    chart.y_axis.majorGridlines = None
    if x_title:
        chart.x_axis.title = x_title
    chart.x_axis.tickLblPos = "low"  # labels below the plot when a part is negative
    if horizontal:
        chart.x_axis.scaling.orientation = "maxMin"  # first category on top, as in the table
    chart.legend.position = "b"
    chart.width, chart.height = width_cm, height_cm
    _show_axes(chart)
    ws.add_chart(chart, anchor)
    return chart


#: Public names of the two helpers for sheets that build their own charts.
colour_series = _colour
show_axes = _show_axes
