"""Small SVG charts for the reports: pure functions from numbers to the text of one ``<svg>`` element.

Every chart is sized by its viewBox (the page's CSS scales it to the column), carries a
``<title>`` for screen readers, escapes every piece of text it is given, and refers to nothing
outside itself: no script, no font, no link, no namespace URL (inline SVG in HTML needs none).
Colours are presentation attributes, so a chart also reads when it is copied out of the page.

The charts draw only what the reports hold already: curves and tables of a few hundred points at
most (one per score level or band), never rows of a ledger.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from xml.sax.saxutils import escape, quoteattr

import numpy as np

# Colours of our own: ink on warm paper, a teal accent, and muted series colours that stay
# apart when printed in grey.
INK = "#1f2a30"
MUTED = "#5e6a72"
GRID = "#e4e0d7"
PAPER = "#fbfaf7"
GOOD_COLOUR = "#3b7d4f"
BAD_COLOUR = "#a8433a"
SERIES_COLOURS = ("#2f6f73", "#b0761a", "#6a4c93", "#5e6a72", "#9c4f6e", "#4f7a99")  # teal, ochre, plum, slate, rose, steel

WIDTH, HEIGHT = 640, 300
MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM = 60, 20, 34, 46
FONT_SIZE = 11  # every text of a chart, in px: the pages draw charts at their own width, never smaller
CHARACTER_WIDTH = 0.58  # average glyph width of a sans-serif face, in ems: sizes label space
BAR_HEIGHT = 22
BAR_FIGURE_ROOM = 0.25  # share of the value span left beside the longest bar for its figure
MAX_LABEL_CHARACTERS = 34
TURNED_LABEL_CHARACTERS = 14
TURNED_MARGIN_BOTTOM = 66
RULE_DASH = "2 3"  # the vertical rule at a marked x
DIAGONAL_DASH = "4 4"  # the chance line of a ROC chart
SERIES_DASH = "6 4"  # a dashed series


@dataclass(frozen=True)
class Series:
    """One line of a line chart.

    Attributes
    ----------
    name : str
        Shown in the legend.
    x, y : tuple of float
        The points, in drawing order.
    colour : str
        Stroke colour; blank picks the next of ``SERIES_COLOURS``.
    dashed, markers : bool
        Draw the line dashed; draw a dot at every point.
    """

    name: str
    x: tuple[float, ...]
    y: tuple[float, ...]
    colour: str = ""
    dashed: bool = False
    markers: bool = False


@dataclass(frozen=True)
class Frame:
    """Where the plot area sits in the viewBox and which data ranges it spans.

    ``x`` and ``y`` map data values to viewBox coordinates; y grows downwards in SVG, so the
    lowest value sits on the bottom edge of the plot area.
    """

    width: float
    height: float
    left: float
    right: float
    top: float
    bottom: float
    x_range: tuple[float, float]
    y_range: tuple[float, float]

    def x(self, value: float) -> float:
        """Return the viewBox x of a data value."""
        low, high = self.x_range
        return self.left + (value - low) / (high - low) * (self.width - self.left - self.right)

    def y(self, value: float) -> float:
        """Return the viewBox y of a data value."""
        low, high = self.y_range
        return self.height - self.bottom - (value - low) / (high - low) * (self.height - self.top - self.bottom)


# --------------------------------------------------------------------------------------------
# Charts


def line_chart(series: Sequence[Series], *, x_label: str, y_label: str, title: str,
               x_range: tuple[float, float] | None = None, y_range: tuple[float, float] | None = None,
               x_percent: bool = False, y_percent: bool = False, diagonal: bool = False,
               vertical_at: float | None = None, vertical_label: str = "",
               width: float = WIDTH, height: float = HEIGHT) -> str:
    """Return a line chart of one or more series on shared axes.

    Parameters
    ----------
    series : sequence of Series
    x_label, y_label : str
        Axis titles.
    title : str
        The chart's accessible name (say which sample it is on).
    x_range, y_range : (float, float), optional
        Data ranges of the axes; default: nice bounds around the data.
    x_percent, y_percent : bool
        Label the ticks of an axis holding shares as percentages.
    diagonal : bool
        Draw the dashed line from the lower-left to the upper-right corner (a chance ROC curve).
    vertical_at : float, optional
        Draw a dotted vertical rule at this x, named ``vertical_label`` in the legend.
    width, height : float
        Size of the viewBox.

    Returns
    -------
    str
        One ``<svg>`` element.
    """
    xs = np.concatenate([np.asarray(s.x, float) for s in series]) if series else np.zeros(0)
    ys = np.concatenate([np.asarray(s.y, float) for s in series]) if series else np.zeros(0)
    x_ticks = nice_ticks(*(x_range or _data_range(xs)))
    y_ticks = nice_ticks(*(y_range or _data_range(ys)))
    frame = Frame(width, height, MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM,
                  x_range or (x_ticks[0], x_ticks[-1]), y_range or (y_ticks[0], y_ticks[-1]))
    parts = [_grid(frame, x_ticks, y_ticks, x_percent=x_percent, y_percent=y_percent),
             _axis_titles(frame, x_label, y_label)]
    if diagonal:
        parts.append(_line(frame.x(frame.x_range[0]), frame.y(frame.y_range[0]), frame.x(frame.x_range[1]),
                           frame.y(frame.y_range[1]), colour=MUTED, dash=DIAGONAL_DASH))
    colours = _colours(series)
    parts += [_polyline(frame, s, colour) for s, colour in zip(series, colours)]
    legend = [(s.name, colour, SERIES_DASH if s.dashed else "") for s, colour in zip(series, colours)]
    legend = legend if len(series) > 1 else []  # one line needs no key: the axis titles name it
    if vertical_at is not None:
        x = frame.x(vertical_at)
        parts.append(_line(x, frame.top, x, frame.height - frame.bottom, colour=INK, dash=RULE_DASH))
        legend.append((vertical_label, INK, RULE_DASH))
    parts.append(_legend(frame, legend))
    return _svg(width, height, title, parts)


def bar_chart(labels: Sequence[str], values: Sequence[float], *, value_label: str, title: str,
              colours: Sequence[str] | None = None, percent: bool = False, width: float = 440) -> str:
    """Return a horizontal bar chart, one bar per label, drawn from zero (values may be negative).

    Parameters
    ----------
    labels : sequence of str
        One per bar, top to bottom; long labels are shortened with an ellipsis, and the full
        text is kept in the bar's tooltip.
    values : sequence of float
    value_label : str
        Title of the value axis.
    title : str
        The chart's accessible name.
    colours : sequence of str, optional
        One per bar; default: the accent colour.
    percent : bool
        Label the value ticks as percentages.
    width : float
        Width of the viewBox; the height follows from the number of bars.
    """
    values = np.asarray(values, float)
    shown = [_shortened(str(label)) for label in labels]
    left = min(240.0, 16 + FONT_SIZE * CHARACTER_WIDTH * max((len(label) for label in shown), default=1))
    top, bottom = 10.0, 40.0
    height = top + BAR_HEIGHT * len(values) + bottom
    frame = Frame(width, height, left, MARGIN_RIGHT + 16, top, bottom, _bar_range(values), (0.0, float(len(values))))
    ticks = [tick for tick in nice_ticks(*frame.x_range, count=4) if frame.x_range[0] <= tick <= frame.x_range[1]]
    colours = list(colours) if colours is not None else [SERIES_COLOURS[0]] * len(values)
    parts = [_vertical_grid(frame, ticks, percent=percent)]
    for row, (label, full, value, colour) in enumerate(zip(shown, labels, values, colours)):
        parts.append(_bar_row(frame, row, label, str(full), float(value), colour, percent=percent))
    parts.append(_line(frame.x(0.0), frame.top, frame.x(0.0), height - frame.bottom, colour=INK))
    parts.append(_text(frame.left + (width - frame.left - frame.right) / 2, height - 8, value_label,
                       anchor="middle", colour=MUTED))
    return _svg(width, height, title, parts)


def woe_bars(labels: Sequence[str], woe: Sequence[float], *, title: str) -> str:
    """Return the WoE of each bin as horizontal bars: better-than-average bins right, worse left.

    Parameters
    ----------
    labels : sequence of str
        Bin labels, in the classing's order.
    woe : sequence of float
        Weight of evidence of each bin (ln of share of goods over share of bads).
    title : str
        The chart's accessible name (name the characteristic and the sample).
    """
    colours = [GOOD_COLOUR if value >= 0 else BAD_COLOUR for value in woe]
    return bar_chart(labels, woe, value_label="weight of evidence", title=title, colours=colours, width=500)


def score_distribution(labels: Sequence[str], goods: Sequence[float], bads: Sequence[float], *,
                       title: str, width: float = 460, height: float = HEIGHT) -> str:
    """Return the share of all goods and of all bads in each score band, as paired columns.

    Parameters
    ----------
    labels : sequence of str
        Band labels, lowest scores first.
    goods, bads : sequence of float
        Weighted goods and bads in each band; they are turned into shares of their totals.
    title : str
        The chart's accessible name (say which sample it is on).
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    shares = {"goods": goods / goods.sum(), "bads": bads / bads.sum()}
    return clustered_columns(labels, shares, colours=(GOOD_COLOUR, BAD_COLOUR), x_label="score band",
                           y_label="share of goods or of bads", title=title, percent=True,
                           width=width, height=height)


def clustered_columns(labels: Sequence[str], series: Mapping[str, Sequence[float]], *, x_label: str, y_label: str,
                    title: str, colours: Sequence[str] = SERIES_COLOURS, percent: bool = False,
                    width: float = WIDTH, height: float = HEIGHT) -> str:
    """Return vertical columns, one cluster of columns per label and one colour per series.

    Parameters
    ----------
    labels : sequence of str
        One per position on the x axis.
    series : mapping of str to sequence of float
        Name (legend) to one non-negative value per label.
    x_label, y_label, title : str
    colours : sequence of str
        One per series.
    percent : bool
        Label the value ticks as percentages.
    """
    values = np.array([np.asarray(v, float) for v in series.values()])
    ticks = nice_ticks(0.0, float(values.max()) if values.size else 1.0)
    frame = _category_frame(labels, width, height, (ticks[0], ticks[-1]))
    parts = [_horizontal_grid(frame, ticks, percent=percent), _category_axis(frame, labels),
             _axis_titles(frame, x_label, y_label)]
    slot = frame.x(1.0) - frame.x(0.0)
    column = 0.8 * slot / max(len(values), 1)
    for number, (name, row) in enumerate(zip(series, values)):
        for position, value in enumerate(row):
            x = frame.x(position) + 0.1 * slot + number * column
            parts.append(_rect(x, frame.y(value), column - 1, frame.y(0.0) - frame.y(value), colours[number % len(colours)],
                               tooltip=f"{labels[position]}: {name} {_tick_text(value, 0.001, percent)}"))
    parts.append(_legend(frame, [(name, colours[n % len(colours)], "") for n, name in enumerate(series)], swatch="block"))
    return _svg(width, height, title, parts)


def calibration_chart(labels: Sequence[str], observed: Sequence[float], lower: Sequence[float],
                      upper: Sequence[float], predicted: Sequence[float], *, title: str,
                      width: float = WIDTH, height: float = HEIGHT) -> str:
    """Return observed against predicted bad rates per score band, with the observed rate's interval.

    Parameters
    ----------
    labels : sequence of str
        Band labels, lowest scores first.
    observed : sequence of float
        Observed bad rate of each band (a dot).
    lower, upper : sequence of float
        Interval of the observed rate (a whisker), e.g. Jeffreys.
    predicted : sequence of float
        Mean predicted PD of each band (a dashed line with open diamonds).
    title : str
        The chart's accessible name (say which sample it is on).
    """
    observed, lower, upper, predicted = (np.asarray(v, float) for v in (observed, lower, upper, predicted))
    ticks = nice_ticks(0.0, float(max(upper.max(), predicted.max(), observed.max())) if observed.size else 1.0)
    frame = _category_frame(labels, width, height, (ticks[0], ticks[-1]))
    parts = [_horizontal_grid(frame, ticks, percent=True), _category_axis(frame, labels),
             _axis_titles(frame, "score band", "bad rate")]
    centres = np.arange(len(labels)) + 0.5
    parts.append(_polyline(frame, Series("predicted", tuple(centres), tuple(predicted), dashed=True), MUTED))
    for centre, value in zip(centres, predicted):
        parts.append(_diamond(frame.x(centre), frame.y(value), MUTED))
    for label, centre, rate, low, high in zip(labels, centres, observed, lower, upper):
        x = frame.x(centre)
        parts.append(_line(x, frame.y(low), x, frame.y(high), colour=BAD_COLOUR, width=1.5))
        for end in (low, high):
            parts.append(_line(x - 4, frame.y(end), x + 4, frame.y(end), colour=BAD_COLOUR, width=1.5))
        parts.append(_dot(x, frame.y(rate), BAD_COLOUR, radius=3.5,
                          tooltip=f"{label}: observed {_tick_text(rate, 0.0001, True)}"))
    parts.append(_legend(frame, [("observed bad rate with interval", BAD_COLOUR, ""),
                                 ("predicted PD (band mean)", MUTED, SERIES_DASH)], marks=("dot", "diamond")))
    return _svg(width, height, title, parts)


def roc_chart(curves: Mapping[str, tuple[Sequence[float], Sequence[float]]], *, title: str) -> str:
    """Return ROC curves of one or more samples on one chart, with the chance diagonal.

    Parameters
    ----------
    curves : mapping of str to (goods declined, bads declined)
        Per sample, the shares of all goods and of all bads declined at each cut-off.
    title : str
        The chart's accessible name.
    """
    series = [Series(name, tuple(x), tuple(y)) for name, (x, y) in curves.items()]
    return line_chart(series, x_label="share of goods declined", y_label="share of bads declined", title=title,
                      x_range=(0.0, 1.0), y_range=(0.0, 1.0), x_percent=True, y_percent=True, diagonal=True,
                      width=460, height=400)


def ks_chart(scores: Sequence[float], goods_share: Sequence[float], bads_share: Sequence[float], *,
             ks_score: float, ks: float, title: str) -> str:
    """Return the cumulative shares of goods and of bads scored at or below each score, with the KS score.

    Parameters
    ----------
    scores : sequence of float
        Score levels, ascending.
    goods_share, bads_share : sequence of float
        Share of all goods and of all bads scored at or below each level.
    ks_score, ks : float
        Where the gap between the two is widest, and the gap (the KS statistic).
    title : str
        The chart's accessible name (say which sample it is on).
    """
    series = [Series("bads", tuple(scores), tuple(bads_share), colour=BAD_COLOUR),
              Series("goods", tuple(scores), tuple(goods_share), colour=GOOD_COLOUR)]
    return line_chart(series, x_label="score", y_label="share scored at or below", title=title,
                      y_range=(0.0, 1.0), y_percent=True, vertical_at=ks_score,
                      vertical_label=f"KS {ks:.3f} at {_plain_number(ks_score)}", width=460, height=300)


def cost_trace_chart(cost_trace: Sequence[float], *, title: str) -> str:
    """Return the fit's cost (mean negative log-likelihood) at the start and after each iteration.

    Parameters
    ----------
    cost_trace : sequence of float
        Cost before the first step, then after each step.
    title : str
        The chart's accessible name (say which sample it is on).
    """
    steps = tuple(float(step) for step in range(len(cost_trace)))
    series = [Series("cost", steps, tuple(cost_trace), colour=SERIES_COLOURS[0], markers=True)]
    x_range = (0.0, max(1.0, float(len(cost_trace) - 1)))
    return line_chart(series, x_label="iteration", y_label="mean negative log-likelihood", title=title,
                      x_range=x_range, width=460, height=260)


# --------------------------------------------------------------------------------------------
# Ticks and numbers


def nice_ticks(low: float, high: float, *, count: int = 5) -> list[float]:
    """Return round tick values (1, 2 or 5 times a power of ten apart) that cover ``[low, high]``.

    Example
    -------
    >>> nice_ticks(0.0, 0.87)
    [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]
    """
    if not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        centre = low if math.isfinite(low) else 0.0
        low, high = centre - 0.5, centre + 0.5
    rough = (high - low) / max(count, 1)
    power = 10.0 ** math.floor(math.log10(rough))
    step = next(m * power for m in (1.0, 2.0, 5.0, 10.0) if m * power >= rough)
    first = math.floor(low / step + 1e-9)
    last = math.ceil(high / step - 1e-9)
    return [round(n * step, 12) for n in range(first, last + 1)]


def _bar_range(values: np.ndarray) -> tuple[float, float]:
    """The value range of a bar chart: zero, the bars, and room beside the longest for its figure."""
    low, high = _data_range(np.append(values, 0.0))
    if low == high:  # every bar is 0 (e.g. a characteristic of one bin): any span around 0 will do
        return -1.0, 1.0
    span = high - low
    return low - (BAR_FIGURE_ROOM * span if low < 0 else 0.0), high + (BAR_FIGURE_ROOM * span if high > 0 else 0.0)


def _data_range(values: np.ndarray) -> tuple[float, float]:
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return 0.0, 1.0
    return float(finite.min()), float(finite.max())


def _tick_text(value: float, step: float, percent: bool) -> str:
    """A tick label with as many decimals as the step needs."""
    if percent:
        value, step = value * 100, step * 100
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 0
    text = f"{value:.{decimals}f}"
    text = "0" if text.strip("-0.") == "" else text  # no "-0"
    return text + ("%" if percent else "")


def _plain_number(value: float) -> str:
    return f"{value:g}"


def _n(value: float) -> str:
    """A coordinate, with at most two decimals and no trailing zeros."""
    text = f"{value:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _shortened(label: str, limit: int = MAX_LABEL_CHARACTERS) -> str:
    return label if len(label) <= limit else label[:limit - 1] + "…"


def _colours(series: Sequence[Series]) -> list[str]:
    palette = iter(SERIES_COLOURS * (len(series) // len(SERIES_COLOURS) + 1))
    return [s.colour or next(palette) for s in series]


# --------------------------------------------------------------------------------------------
# Drawing pieces (each returns SVG text; every piece of text passes through escape or quoteattr)


def _svg(width: float, height: float, title: str, parts: Sequence[str]) -> str:
    return (f'<svg class="chart" viewBox="0 0 {_n(width)} {_n(height)}" width="{_n(width)}" height="{_n(height)}" '
            f'role="img" aria-label={quoteattr(title)} font-size="{FONT_SIZE}" fill="{INK}">'
            f"<title>{escape(title)}</title>" + "".join(parts) + "</svg>")


def _line(x1: float, y1: float, x2: float, y2: float, *, colour: str, width: float = 1.0, dash: str = "") -> str:
    dashes = f' stroke-dasharray="{dash}"' if dash else ""
    return (f'<line x1="{_n(x1)}" y1="{_n(y1)}" x2="{_n(x2)}" y2="{_n(y2)}" stroke="{colour}" '
            f'stroke-width="{_n(width)}"{dashes}/>')


def _text(x: float, y: float, text: str, *, anchor: str = "start", colour: str = INK, size: float | None = None,
          rotate: float = 0.0, full: str = "") -> str:
    """A text; one shortened from ``full`` keeps the whole of it as its title, shown on hover."""
    extra = f' font-size="{_n(size)}"' if size else ""
    if rotate:
        extra += f' transform="rotate({_n(rotate)} {_n(x)} {_n(y)})"'
    hover = f"<title>{escape(full)}</title>" if full and full != text else ""
    return f'<text x="{_n(x)}" y="{_n(y)}" text-anchor="{anchor}" fill="{colour}"{extra}>{escape(text)}{hover}</text>'


def _rect(x: float, y: float, width: float, height: float, colour: str, *, tooltip: str = "") -> str:
    inner = f"<title>{escape(tooltip)}</title>" if tooltip else ""
    return (f'<rect x="{_n(x)}" y="{_n(y)}" width="{_n(max(width, 0.0))}" height="{_n(max(height, 0.0))}" '
            f'fill="{colour}">{inner}</rect>')


def _dot(x: float, y: float, colour: str, *, radius: float = 2.5, tooltip: str = "") -> str:
    inner = f"<title>{escape(tooltip)}</title>" if tooltip else ""
    return f'<circle cx="{_n(x)}" cy="{_n(y)}" r="{_n(radius)}" fill="{colour}">{inner}</circle>'


def _diamond(x: float, y: float, colour: str, size: float = 4.5) -> str:
    points = f"{_n(x)},{_n(y - size)} {_n(x + size)},{_n(y)} {_n(x)},{_n(y + size)} {_n(x - size)},{_n(y)}"
    return f'<polygon points="{points}" fill="{PAPER}" stroke="{colour}" stroke-width="1.5"/>'


def _polyline(frame: Frame, series: Series, colour: str) -> str:
    points = " ".join(f"{_n(frame.x(x))},{_n(frame.y(y))}" for x, y in zip(series.x, series.y)
                      if math.isfinite(x) and math.isfinite(y))
    dashes = f' stroke-dasharray="{SERIES_DASH}"' if series.dashed else ""
    line = (f'<polyline points="{points}" fill="none" stroke="{colour}" stroke-width="2" '
            f'stroke-linejoin="round"{dashes}/>')
    if series.markers:
        line += "".join(_dot(frame.x(x), frame.y(y), colour, radius=3) for x, y in zip(series.x, series.y))
    return line


def _grid(frame: Frame, x_ticks: Sequence[float], y_ticks: Sequence[float], *, x_percent: bool,
          y_percent: bool) -> str:
    return _horizontal_grid(frame, y_ticks, percent=y_percent) + _vertical_grid(frame, x_ticks, percent=x_percent)


def _horizontal_grid(frame: Frame, ticks: Sequence[float], *, percent: bool) -> str:
    """Horizontal grid lines with value labels on the left; the lowest is the axis line."""
    step = ticks[1] - ticks[0] if len(ticks) > 1 else 1.0
    right = frame.width - frame.right
    parts = []
    for number, tick in enumerate(ticks):
        y = frame.y(tick)
        parts.append(_line(frame.left, y, right, y, colour=INK if number == 0 else GRID))
        parts.append(_text(frame.left - 6, y + 4, _tick_text(tick, step, percent), anchor="end", colour=MUTED))
    return "".join(parts)


def _vertical_grid(frame: Frame, ticks: Sequence[float], *, percent: bool) -> str:
    """Vertical grid lines with value labels below the plot area."""
    step = ticks[1] - ticks[0] if len(ticks) > 1 else 1.0
    bottom = frame.height - frame.bottom
    parts = []
    for tick in ticks:
        x = frame.x(tick)
        parts.append(_line(x, frame.top, x, bottom, colour=GRID))
        parts.append(_text(x, bottom + 15, _tick_text(tick, step, percent), anchor="middle", colour=MUTED))
    return "".join(parts)


def _category_frame(labels: Sequence[str], width: float, height: float, y_range: tuple[float, float]) -> Frame:
    """The frame of a chart with one slot per label, with room below for turned labels when needed."""
    slot = (width - MARGIN_LEFT - MARGIN_RIGHT) / max(len(labels), 1)
    bottom = TURNED_MARGIN_BOTTOM if _turned(labels, slot) else MARGIN_BOTTOM
    return Frame(width, height, MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, bottom, (0.0, float(len(labels))), y_range)


def _turned(labels: Sequence[str], slot: float) -> bool:
    longest = max((len(str(label)) for label in labels), default=0)
    return longest * FONT_SIZE * CHARACTER_WIDTH > slot - 4


def _category_axis(frame: Frame, labels: Sequence[str]) -> str:
    """One label under the middle of each slot; turned when they would overlap."""
    slot = frame.x(1.0) - frame.x(0.0)
    turned = _turned(labels, slot)
    bottom = frame.height - frame.bottom
    parts = []
    for position, label in enumerate(labels):
        x = frame.x(position + 0.5)
        if turned:
            parts.append(_text(x + 3, bottom + 12, _shortened(str(label), TURNED_LABEL_CHARACTERS), anchor="end", colour=MUTED,
                               rotate=-30, full=str(label)))
        else:
            parts.append(_text(x, bottom + 15, str(label), anchor="middle", colour=MUTED))
    return "".join(parts)


def _axis_titles(frame: Frame, x_label: str, y_label: str) -> str:
    middle_x = frame.left + (frame.width - frame.left - frame.right) / 2
    middle_y = frame.top + (frame.height - frame.top - frame.bottom) / 2
    return (_text(middle_x, frame.height - 6, x_label, anchor="middle", colour=MUTED)
            + _text(14, middle_y, y_label, anchor="middle", colour=MUTED, rotate=-90))


def _legend(frame: Frame, entries: Sequence[tuple[str, str, str]], *, swatch: str = "line",
            marks: Sequence[str] = ()) -> str:
    """Legend entries in a row above the plot area: (name, colour, dash pattern or blank).

    Each swatch draws what the chart draws for its series: a block, a line, or a mark ('dot': a dot
    on a whisker, as an observed rate with its interval; 'diamond': an open diamond on the line).
    """
    x, y = frame.left, frame.top - 14
    parts = []
    for number, (name, colour, dash) in enumerate(entries):
        mark = marks[number] if number < len(marks) else ""
        if swatch == "block":
            parts.append(_rect(x, y - 8, 12, 10, colour))
        elif mark == "dot":
            parts.append(_line(x + 9, y - 9, x + 9, y + 3, colour=colour, width=1.5) + _dot(x + 9, y - 3, colour, radius=3.5))
        else:
            parts.append(_line(x, y - 3, x + 18, y - 3, colour=colour, width=2, dash=dash))
            if mark == "diamond":
                parts.append(_diamond(x + 9, y - 3, colour))
        parts.append(_text(x + 24, y + 1, name))
        x += 24 + len(name) * FONT_SIZE * CHARACTER_WIDTH + 18
    return "".join(parts)


def _bar_row(frame: Frame, row: int, label: str, full: str, value: float, colour: str, *, percent: bool) -> str:
    top = frame.top + row * BAR_HEIGHT + 4
    start, end = sorted((frame.x(0.0), frame.x(value)))
    bar = _rect(start, top, end - start, BAR_HEIGHT - 8, colour, tooltip=f"{full}: {value:.4f}")
    name = _text(frame.left - 8, top + BAR_HEIGHT / 2, label, anchor="end", full=full)
    step = 0.01 if not percent else 0.001
    figure_x = end + 4 if value >= 0 else start - 4
    figure = _text(figure_x, top + BAR_HEIGHT / 2 - 1, _tick_text(value, step, percent),
                   anchor="start" if value >= 0 else "end", colour=MUTED)
    return bar + name + figure
