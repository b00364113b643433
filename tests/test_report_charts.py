"""Tests of scorecard.report.charts: the SVG helpers parse as XML, escape their text, refer to
nothing outside themselves, and put each point where the viewBox arithmetic says it goes."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ElementTree

import pytest

from scorecard.report import charts
from scorecard.report.charts import (
    BAD_COLOUR,
    GOOD_COLOUR,
    MARGIN_BOTTOM,
    MARGIN_LEFT,
    MARGIN_RIGHT,
    MARGIN_TOP,
    Frame,
    Series,
    bar_chart,
    calibration_chart,
    cost_trace_chart,
    ks_chart,
    line_chart,
    nice_ticks,
    roc_chart,
    score_distribution,
    woe_bars,
)

# Coordinates are written with two decimals; a hand computation agrees to within that rounding.
COORDINATE_ATOL = 0.005
HOSTILE = '<script>alert(1)</script> & "quotes"'
FORMULA = "=1+2"
EXTERNAL = re.compile(r"https?:|//|@import|url\(|<script|xlink|href", re.IGNORECASE)


def every_chart() -> dict[str, str]:
    """One of each chart, with a hostile label wherever a chart takes one."""
    labels = [HOSTILE, FORMULA, "plain"]
    return {
        "line": line_chart([Series(HOSTILE, (0, 1, 2), (0.5, 0.4, 0.3)), Series("b", (0, 2), (0.1, 0.2), dashed=True)],
                           x_label=HOSTILE, y_label="y", title=HOSTILE),
        "bar": bar_chart(labels, [1.0, -2.0, 0.5], value_label="value", title=HOSTILE),
        "woe": woe_bars(labels, [0.4, -0.3, 0.0], title=HOSTILE),
        "distribution": score_distribution(labels, [10, 20, 30], [6, 3, 1], title=HOSTILE),
        "calibration": calibration_chart(labels, [0.4, 0.2, 0.05], [0.3, 0.15, 0.02], [0.5, 0.26, 0.09],
                                         [0.38, 0.22, 0.04], title=HOSTILE),
        "roc": roc_chart({HOSTILE: ([0, 0.2, 1], [0, 0.6, 1])}, title=HOSTILE),
        "ks": ks_chart([500, 520, 540], [0.1, 0.5, 1.0], [0.4, 0.9, 1.0], ks_score=520, ks=0.4, title=HOSTILE),
        "cost": cost_trace_chart([0.69, 0.5, 0.45, 0.449], title=HOSTILE),
    }


def polyline_points(element) -> list[tuple[float, float]]:
    return [tuple(float(v) for v in pair.split(",")) for pair in element.get("points").split()]


# --------------------------------------------------------------------------------------------
# Well-formed, escaped, self-contained


@pytest.mark.parametrize("name", sorted(every_chart()))
def test_every_chart_parses_as_xml_with_a_viewbox_and_a_title(name):
    svg = every_chart()[name]
    root = ElementTree.fromstring(svg)
    assert root.tag == "svg"
    assert re.fullmatch(r"0 0 [\d.]+ [\d.]+", root.get("viewBox"))
    assert root.find("title").text == HOSTILE  # the accessible name, escaped on the way in and read back whole


@pytest.mark.parametrize("name", sorted(every_chart()))
def test_every_chart_escapes_its_text_and_refers_to_nothing_outside(name):
    svg = every_chart()[name]
    assert "<script" not in svg
    assert "&lt;script&gt;" in svg
    assert not EXTERNAL.search(svg)


def test_hostile_labels_come_back_as_the_same_text():
    root = ElementTree.fromstring(every_chart()["bar"])
    texts = [element.text for element in root.iter("text")]
    tooltips = [element.text for element in root.iter("title")]
    assert FORMULA in texts
    assert f"{HOSTILE}: 1.0000" in tooltips  # the label is longer than a bar's room: whole in the tooltip


def test_a_long_label_is_shortened_and_kept_whole_in_the_tooltip():
    label = "a label far longer than any bar chart has room to write out in full"
    root = ElementTree.fromstring(bar_chart([label], [1.0], value_label="v", title="t"))
    shown = [element.text for element in root.iter("text") if element.text and element.text.startswith("a label")]
    assert shown == [label[:charts.MAX_LABEL_CHARACTERS - 1] + "…"]
    tooltips = [element.text for element in root.iter("title")]
    assert f"{label}: 1.0000" in tooltips
    # the shortened label itself keeps the whole label as its title, shown on hover
    text = next(element for element in root.iter("text") if element.text and element.text.startswith("a label"))
    assert text.find("title").text == label


def test_turned_category_labels_are_shortened_with_the_whole_label_on_hover():
    labels = ["D23, D17, D18, D21, D07, D33", "D08, D02", "own"] * 4
    root = ElementTree.fromstring(charts.clustered_columns(labels, {"share": [0.1] * 12}, x_label="x", y_label="y",
                                                           title="t"))
    shortened = [element for element in root.iter("text") if element.text and element.text.endswith("…")]
    assert shortened and all(element.find("title").text in labels for element in shortened)
    assert all(element.find("title").text.startswith(element.text[:-1]) for element in shortened)


def test_every_text_of_every_chart_is_at_least_11_px_in_the_charts_own_units():
    # the pages draw a chart at its own width (style.css: a chart is never shrunk in its row), so 11 units
    # are 11 px on the page
    for name, svg in every_chart().items():
        root = ElementTree.fromstring(svg)
        sizes = [float(element.get("font-size", root.get("font-size"))) for element in root.iter("text")]
        assert sizes and min(sizes) >= 11, name


def test_the_calibration_legend_draws_the_marks_of_the_chart():
    svg = charts.calibration_chart(["418–515", "516–532"], [0.1, 0.05], [0.08, 0.03], [0.12, 0.07], [0.09, 0.06],
                                   title="t")
    root = ElementTree.fromstring(svg)
    legend_y = float(next(t for t in root.iter("text") if t.text == "observed bad rate with interval").get("y"))
    near = lambda element, key: abs(float(element.get(key)) - legend_y) < 12  # noqa: E731
    assert any(near(dot, "cy") and dot.get("fill") == charts.BAD_COLOUR for dot in root.iter("circle"))  # observed: a dot
    diamonds = [p for p in root.iter("polygon") if abs(float(p.get("points").split(",")[1].split()[0]) - legend_y) < 16]
    assert diamonds and diamonds[0].get("stroke") == charts.MUTED  # predicted: an open diamond on a dashed line


# --------------------------------------------------------------------------------------------
# Points land where the arithmetic says


def test_frame_maps_the_corners_of_the_data_to_the_corners_of_the_plot_area():
    # By hand: a 200 × 100 viewBox, plot area x from 60 to 180 and y from 34 (top) to 54 (bottom).
    frame = Frame(200, 100, MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM, (0.0, 10.0), (0.0, 1.0))
    assert frame.x(0.0) == pytest.approx(60.0)
    assert frame.x(10.0) == pytest.approx(200 - MARGIN_RIGHT)
    assert frame.x(2.5) == pytest.approx(60.0 + 0.25 * 120.0)
    assert frame.y(0.0) == pytest.approx(100 - MARGIN_BOTTOM)
    assert frame.y(1.0) == pytest.approx(MARGIN_TOP)
    assert frame.y(0.25) == pytest.approx(54.0 - 0.25 * 20.0)


def test_line_chart_puts_points_where_the_viewbox_arithmetic_says():
    # By hand, with width 200, height 100 and the margins 60 / 20 / 34 / 46:
    # (0, 0) -> (60, 54); (0.5, 0.25) -> (60 + 0.5·120, 54 − 0.25·20) = (120, 49); (1, 1) -> (180, 34).
    svg = line_chart([Series("s", (0.0, 0.5, 1.0), (0.0, 0.25, 1.0))], x_label="x", y_label="y", title="t",
                     x_range=(0.0, 1.0), y_range=(0.0, 1.0), width=200, height=100)
    line = ElementTree.fromstring(svg).find("polyline")
    expected = [(60.0, 54.0), (120.0, 49.0), (180.0, 34.0)]
    for (x, y), (want_x, want_y) in zip(polyline_points(line), expected):
        assert x == pytest.approx(want_x, abs=COORDINATE_ATOL)
        assert y == pytest.approx(want_y, abs=COORDINATE_ATOL)


def test_roc_chart_draws_the_chance_diagonal_corner_to_corner_and_a_curve_per_sample():
    svg = roc_chart({"development": ([0, 0.3, 1], [0, 0.7, 1]), "hold-out": ([0, 0.4, 1], [0, 0.6, 1])}, title="t")
    root = ElementTree.fromstring(svg)
    width, height = (float(v) for v in root.get("viewBox").split()[2:])
    diagonal = [line for line in root.iter("line") if line.get("stroke-dasharray") == charts.DIAGONAL_DASH]
    assert len(diagonal) == 1
    x1, y1, x2, y2 = (float(diagonal[0].get(key)) for key in ("x1", "y1", "x2", "y2"))
    assert (x1, y1) == pytest.approx((MARGIN_LEFT, height - MARGIN_BOTTOM))
    assert (x2, y2) == pytest.approx((width - MARGIN_RIGHT, MARGIN_TOP))
    assert len(root.findall("polyline")) == 2
    legend = [element.text for element in root.iter("text")]
    assert "development" in legend and "hold-out" in legend


def test_bars_start_at_zero_and_their_lengths_are_proportional_to_the_values():
    root = ElementTree.fromstring(woe_bars(["worse", "better"], [-0.5, 1.0], title="t"))
    worse, better = [rect for rect in root.iter("rect")]
    assert worse.get("fill") == BAD_COLOUR and better.get("fill") == GOOD_COLOUR
    zero = float(worse.get("x")) + float(worse.get("width"))
    assert float(better.get("x")) == pytest.approx(zero, abs=COORDINATE_ATOL)  # both bars meet at 0
    ratio = float(better.get("width")) / float(worse.get("width"))
    assert ratio == pytest.approx(2.0, abs=0.01)  # widths are rounded to 0.01 of a unit


def test_a_single_bin_of_zero_woe_still_draws():
    root = ElementTree.fromstring(woe_bars(["all"], [0.0], title="t"))
    assert [element.text for element in root.iter("text")].count("all") == 1


def test_score_distribution_columns_are_shares_of_their_own_totals():
    # Goods 10, 30 (shares 0.25, 0.75); bads 6, 2 (0.75, 0.25): heights of the goods columns are 1 : 3.
    root = ElementTree.fromstring(score_distribution(["low", "high"], [10, 30], [6, 2], title="t"))
    goods = [float(rect.get("height")) for rect in root.iter("rect")
             if rect.get("fill") == GOOD_COLOUR and rect.find("title") is not None]
    bads = [float(rect.get("height")) for rect in root.iter("rect")
            if rect.get("fill") == BAD_COLOUR and rect.find("title") is not None]
    assert goods[1] / goods[0] == pytest.approx(3.0, rel=0.01)
    assert bads[0] / bads[1] == pytest.approx(3.0, rel=0.01)
    assert goods[1] == pytest.approx(bads[0], abs=COORDINATE_ATOL)


def test_calibration_whiskers_span_the_interval_and_the_dot_sits_at_the_rate():
    svg = calibration_chart(["a"], [0.2], [0.1], [0.3], [0.25], title="t")
    root = ElementTree.fromstring(svg)
    width, height = (float(v) for v in root.get("viewBox").split()[2:])
    # Ticks for a top value of 0.3 run 0, 0.05, …, 0.3, so the plot spans 0 to 0.3 vertically.
    frame = Frame(width, height, MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM, (0.0, 1.0), (0.0, 0.3))
    dot = root.find("circle")
    assert float(dot.get("cy")) == pytest.approx(frame.y(0.2), abs=COORDINATE_ATOL)
    assert float(dot.get("cx")) == pytest.approx(frame.x(0.5), abs=COORDINATE_ATOL)
    whisker = [line for line in root.iter("line")
               if line.get("stroke") == BAD_COLOUR and line.get("x1") == line.get("x2")][0]
    ends = sorted(float(whisker.get(key)) for key in ("y1", "y2"))
    assert ends == pytest.approx(sorted([frame.y(0.1), frame.y(0.3)]), abs=COORDINATE_ATOL)


def test_ks_chart_names_the_statistic_and_rules_the_score():
    svg = ks_chart([500, 520, 540], [0.1, 0.5, 1.0], [0.4, 0.9, 1.0], ks_score=520, ks=0.4, title="t")
    root = ElementTree.fromstring(svg)
    assert "KS 0.400 at 520" in [element.text for element in root.iter("text")]
    rules = [line for line in root.iter("line") if line.get("stroke-dasharray") == charts.RULE_DASH
             and line.get("x1") == line.get("x2") and float(line.get("y2")) > float(line.get("y1"))]
    assert len(rules) == 1
    # x ticks for 500..540 are 500, 510, …, 540, so 520 is the middle of the plot area.
    middle = MARGIN_LEFT + (float(root.get("viewBox").split()[2]) - MARGIN_LEFT - MARGIN_RIGHT) / 2
    assert float(rules[0].get("x1")) == pytest.approx(middle, abs=COORDINATE_ATOL)


def test_cost_trace_chart_has_a_dot_per_iteration_and_copes_with_a_single_value():
    root = ElementTree.fromstring(cost_trace_chart([0.69, 0.5, 0.45], title="t"))
    assert len(root.findall("circle")) == 3
    ElementTree.fromstring(cost_trace_chart([0.5], title="t"))  # a fit that starts at its optimum


# --------------------------------------------------------------------------------------------
# Ticks


@pytest.mark.parametrize(("low", "high", "expected"), [
    (0.0, 0.87, [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]),
    (3.0, 97.0, [0.0, 20.0, 40.0, 60.0, 80.0, 100.0]),
    (344.0, 647.0, [300.0, 400.0, 500.0, 600.0, 700.0]),
    (-1.13, 1.25, [-1.5, -1.0, -0.5, 0.0, 0.5, 1.0, 1.5]),
])
def test_nice_ticks_are_round_and_cover_the_range(low, high, expected):
    # Worked by hand: step = the smallest of 1, 2, 5 × 10^k not below (high − low) / 5.
    assert nice_ticks(low, high) == pytest.approx(expected)


def test_nice_ticks_of_a_single_value_still_make_an_axis():
    ticks = nice_ticks(0.42, 0.42)
    assert ticks[0] <= 0.42 <= ticks[-1] and len(ticks) >= 2
