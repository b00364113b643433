"""The page kit: what both HTML reports draw with.

Tables, headline figures and charts as the templates' macros draw them (every value already
text), the number formats every figure is shown in, the Jinja2 environment of the templates
shipped in ``scorecard.templates`` (the top-level templates/ folder, autoescaping on), and the
table pieces both reports share (a PSI's bins, a sample's calibration figures).
"""

from __future__ import annotations

import functools
import math
import platform
from collections.abc import Collection, Sequence
from dataclasses import dataclass
from importlib import resources

from markupsafe import Markup

from .. import __version__

DASH = "—"
ADJUSTED_MARK = "†"
NOT_COMPUTED = "not computed"


def reference_wording(share: float) -> str:
    """How the adverse-impact reference level is chosen, for a caption."""
    return (f"The reference is the most-approved level among those holding at least {share:.0%} of the attribute's "
            "applications (fairness.reference_share; the largest level always may be), so that a handful of "
            "applications cannot set the bar.")


@functools.cache
def environment():
    """Return the Jinja2 environment of the report templates, autoescaping on."""
    import jinja2

    folder = resources.files("scorecard.templates")
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(folder)),
        autoescape=jinja2.select_autoescape(enabled_extensions=("html", "xml"), default_for_string=True, default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def template_text(name: str) -> str:
    """Return a template's source text."""
    return resources.files("scorecard.templates").joinpath(name).read_text(encoding="utf-8")


# --------------------------------------------------------------------------------------------
# What the templates draw: tables, figures and charts, every value already text


@dataclass(frozen=True)
class Cell:
    """One table cell: its text (or safe markup) and its CSS classes."""

    text: str
    css: str = ""


@dataclass(frozen=True)
class Row:
    """One table row of cells, with the row's CSS classes."""

    cells: tuple[Cell, ...]
    css: str = ""


@dataclass(frozen=True)
class Table:
    """A table as the templates' ``data_table`` macro draws it (see ``text_table``)."""

    head: tuple[Cell, ...]
    rows: tuple[Row, ...]
    caption: str = ""
    css: str = ""


@dataclass(frozen=True)
class Figure:
    """A headline figure: a label, the value as text and a line of detail."""

    label: str
    value: str
    detail: str = ""


@dataclass(frozen=True)
class Chart:
    """An SVG chart with its caption."""

    svg: Markup
    caption: str


def text_table(columns: Sequence[str], rows, *, numeric: Collection[int] = (), caption: str = "",
               row_css: Sequence[str] | None = None, css: str = "") -> Table:
    """Return a table of text cells; columns listed in ``numeric`` are right-aligned.

    Parameters
    ----------
    columns : sequence of str
        The header of each column.
    rows : sequence of sequences
        Cell texts (or ``Cell`` values, to add CSS classes), one sequence per row.
    numeric : collection of int
        Positions of the columns to right-align.
    caption : str
        Shown under the table.
    row_css : sequence of str, optional
        CSS classes of each row (e.g. 'total').
    css : str
        CSS classes of the table.

    Returns
    -------
    Table
    """
    def cell(value, column):
        number = "number" if column in numeric else ""
        if isinstance(value, Cell):
            return Cell(value.text, " ".join(filter(None, (number, value.css))))
        return Cell(value, number)

    row_css = row_css or [""] * len(rows)
    head = tuple(cell(label, column) for column, label in enumerate(columns))
    body = tuple(Row(tuple(cell(value, column) for column, value in enumerate(row)), style)
                 for row, style in zip(rows, row_css))
    return Table(head, body, caption, css)


def captioned_chart(svg: str, caption: str) -> Chart:
    """Return an SVG chart from ``scorecard.report.charts`` with its caption."""
    # The chart helpers escape every text they draw, so their output is safe markup.
    return Chart(Markup(svg), caption)


def status_cell(word: str) -> Cell:
    """Return a cell that shows a status word (ok, watch or act) in its colour."""
    return Cell(Markup('<span class="status {0}">{0}</span>').format(word))


# --------------------------------------------------------------------------------------------
# Table pieces both reports draw


def psi_table(result, sample: str, label: str) -> Table:
    """Return a PSI's bins: counts and shares on development and on ``sample``, and each contribution."""
    rows = [[bin_label + (f" {ADJUSTED_MARK}" if adjusted else ""), count_text(expected), percent_text(expected_share, 1),
             count_text(actual), percent_text(actual_share, 1), fixed_text(contribution, 4)]
            for bin_label, expected, expected_share, actual, actual_share, contribution, adjusted in zip(
                result.labels, result.expected_counts, result.expected_share, result.actual_counts,
                result.actual_share, result.contributions, result.adjusted)]
    rows.append(["all", count_text(result.expected_counts.sum()), percent_text(1.0, 1), count_text(result.actual_counts.sum()),
                 percent_text(1.0, 1), fixed_text(result.value, 4)])
    caption = f"Score bands fixed on development against the {sample} sample; every application counts, whatever its outcome."
    if result.adjusted.any():
        caption += f" {ADJUSTED_MARK} empty in one sample: 0.5 added to both counts."
    return text_table([label, "development", "share", sample, "share", "PSI contribution"], rows, numeric=range(1, 6),
                      row_css=[""] * (len(rows) - 1) + ["total"], caption=caption)


def calibration_figures(checks) -> list[Figure]:
    """Return the Hosmer–Lemeshow, calibration-in-the-large, intercept, slope and Brier figures of a sample."""
    large = checks.in_the_large
    figures = [
        hosmer_lemeshow_figure(checks),
        Figure("Overall bad rate, observed", percent_text(large.observed_rate),
               f"predicted {percent_text(large.expected_rate)}, z {fixed_text(large.z, 2)}, p-value {p_value_text(large.p_two_sided)}"),
    ]
    line = checks.calibration_line
    if line is not None:
        figures += [
            Figure("Calibration intercept", fixed_text(line.intercept, 3),
                   f"standard error {fixed_text(line.intercept_std_error, 3)}; p-value against 0: {p_value_text(line.intercept_p_value)}"),
            Figure("Calibration slope", fixed_text(line.slope, 3),
                   f"standard error {fixed_text(line.slope_std_error, 3)}; p-value against 1: {p_value_text(line.slope_p_value)}"),
        ]
    figures.append(Figure("Brier score", fixed_text(checks.brier, 4), "mean squared error of the PD"))
    return figures


def hosmer_lemeshow_figure(checks) -> Figure:
    """The Hosmer–Lemeshow statistic with its degrees of freedom and why they are what they are, or why it is missing."""
    test = checks.hosmer_lemeshow
    if test is None:
        return Figure("Hosmer–Lemeshow", NOT_COMPUTED, checks.not_computed.get("Hosmer–Lemeshow test", ""))
    return Figure("Hosmer–Lemeshow", fixed_text(test.statistic, 2),
                  f"df {test.df} ({degrees_of_freedom_rule(test)}), p-value {p_value_text(test.p_value)}")


def degrees_of_freedom_rule(test) -> str:
    """Why a Hosmer–Lemeshow test has the degrees of freedom it has (in-sample g − 2, else g bands)."""
    if test.in_sample:
        return f"{test.n_bands} bands − 2: the model was fitted on this sample"
    return f"{test.n_bands} bands: the model was not fitted on this sample"


def classed_by(classed) -> str:
    """Who classed a characteristic, in words: the tool, the analyst changing the tool's proposal (with the IV
    the change cost or gained), or the analyst alone."""
    if classed.origin == "changed":
        change = classed.evidence.iv - classed.proposal_iv
        return (f"changed by the analyst (IV {classed.evidence.iv:.4f} against {classed.proposal_iv:.4f} for the "
                f"tool's proposal: {'+' if change >= 0 else '−'}{abs(change):.4f})")
    return "written by the analyst" if classed.origin == "written" else "proposed by the tool"


def library_versions() -> list[tuple[str, str]]:
    """The versions of the tool, Python and every library the figures depend on."""
    from importlib import metadata

    libraries = ["numpy", "pandas", "scipy", "pyarrow", "openpyxl", "jinja2"]
    return [("scorewright", __version__), ("Python", platform.python_version()),
            *((name, metadata.version(name)) for name in libraries)]


# --------------------------------------------------------------------------------------------
# Numbers as text


def count_text(value: float) -> str:
    """Return a count with thousands separators; weighted counts keep one decimal."""
    value = float(value)
    if not math.isfinite(value):
        return DASH
    return f"{value:,.0f}" if abs(value - round(value)) < 1e-9 else f"{value:,.1f}"


def fixed_text(value: float, decimals: int) -> str:
    """Return a number with fixed decimals and thousands separators ('—' when not finite)."""
    value = float(value)
    if not math.isfinite(value):
        return DASH
    text = f"{value:,.{decimals}f}"
    return text[1:] if text.startswith("-") and text.strip("-0.,") == "" else text  # no "-0.00"


def signed_text(value: float, decimals: int) -> str:
    """Return ``fixed_text`` with a '+' before a positive number."""
    text = fixed_text(value, decimals)
    return text if text.startswith("-") or text == DASH or text.strip("0.,") == "" else "+" + text


def percent_text(value: float, decimals: int = 2) -> str:
    """Return a share as a percentage."""
    value = float(value)
    return DASH if not math.isfinite(value) else f"{100 * value:.{decimals}f}%"


def p_value_text(value: float) -> str:
    """Return a p-value: three significant digits, and '< 0.001' below that."""
    value = float(value)
    if not math.isfinite(value):
        return DASH
    return "< 0.001" if value < 0.001 else f"{value:#.3g}"


def interval_text(low: float, high: float, decimals: int) -> str:
    """Return an interval as 'low to high'."""
    return f"{fixed_text(low, decimals)} to {fixed_text(high, decimals)}"


def level_text(level: float) -> str:
    """Return a confidence level as a percentage, e.g. '95%'."""
    return f"{100 * level:g}%"


def score_text(value: float, decimals: int) -> str:
    value = float(value)
    if not math.isfinite(value):
        return DASH
    return f"{value:.{decimals}f}" if decimals else f"{value:.0f}"


def span_text(low: float, high: float, decimals: int) -> str:
    """Return a score range as 'low–high' (one score when they are equal)."""
    return f"{score_text(low, decimals)}–{score_text(high, decimals)}" if low != high else score_text(low, decimals)
