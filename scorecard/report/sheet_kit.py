"""The sheet kit: generic sheet writers both workbooks use.

Every text goes through ``text_cell``, which stores it as a string, so a label such as ``=1+1``
or ``-5`` is never read as a formula. Tables are written where the layout says (title, note,
caption, then the header row), and every book is saved under a temporary name, then renamed.
"""

from __future__ import annotations

import datetime
import math
import os
import zipfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.chart.shapes import GraphicalProperties
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.worksheet.worksheet import Worksheet
from openpyxl.writer.excel import ExcelWriter

from ..files import replacing


# Layout shared by the table sheets: title, note, table captions, then the header row.
TITLE_ROW, NOTE_ROW, CAPTION_ROW, HEADER_ROW = 1, 2, 3, 4


FIRST_ROW = HEADER_ROW + 1
COUNT, WEIGHTED_COUNT = "#,##0", "#,##0.00"
RATE = "0.0%"
WOE = AUC = STATISTIC = P_VALUE = "0.0000"
SMALL_P_VALUE = "0.00E+00"  # p-values of the fit and of selection reach 1e-60
RISKY_TEXT_START = ("=", "+", "-", "@")
TEXT_LIMIT = 32767  # the most characters a spreadsheet cell holds
HEADER_FILL = PatternFill("solid", fgColor="E6EBE0")
INPUT_FILL = PatternFill("solid", fgColor="FFF4D6")
FONT_NAME, FONT_SIZE = "Calibri", 11  # one family for every cell: the workbook default's, named wherever a font is set
BOLD = Font(name=FONT_NAME, size=FONT_SIZE, bold=True)
TITLE_FONT = Font(name=FONT_NAME, bold=True, size=14)
# Printing: landscape A4 with the spreadsheet programs' default margins (0.7 inch a side) leaves 10.29
# inches of width; no sheet prints its 11-point text below 8 points, so a sheet is fitted to the page's
# width only while that scales it by 8/11 or more, and is otherwise printed across pages at that scale
# with its header rows and first columns repeated on each.
PAGE_WIDTH_POINTS = (11.69 - 2 * 0.7) * 72
SMALLEST_PRINTED_POINTS = 8
ACROSS_SCALE = 75  # per cent: 11-point text prints at 8.25 points
WRAP = Alignment(wrap_text=True, vertical="top")
SAMPLE_COLOURS = ("2F5D8A", "C8553D", "6A994E")  # development, hold-out, out-of-time dots


def save_workbook(book: Workbook, path: str | os.PathLike[str]) -> Path:
    """Save a workbook to ``path`` under a temporary name in the same folder, then rename it into place.

    Parameters
    ----------
    book : openpyxl.Workbook
    path : path-like
        The ``.xlsx`` file to write; its folder is made if needed.

    Returns
    -------
    pathlib.Path
        ``path``.

    Raises
    ------
    OSError
        The folder cannot be made or written to; any earlier file at ``path`` is left as it was.
    """
    for sheet in book.worksheets:
        printable(sheet)
    # no clock in the file: the document's dates and every zip entry's time are fixed, so the same
    # input gives the same bytes (openpyxl's own save stamps both with the time of saving)
    book.properties.created = book.properties.modified = FIXED_TIME
    with replacing(path) as temporary:
        with _SteadyZip(temporary, "w", zipfile.ZIP_DEFLATED, allowZip64=True) as archive:
            ExcelWriter(book, archive).write_data()
    return Path(path)


def printable(sheet: Worksheet) -> None:
    """Set a sheet up to print landscape on A4 with no text below ``SMALLEST_PRINTED_POINTS``.

    A sheet whose columns fit the page's width at a scale of 8/11 or more is fitted to it; a wider
    one is printed across several pages at ``ACROSS_SCALE`` per cent, repeating the rows down to its
    header and its first column (or the frozen ones) on every page.
    """
    sheet.page_setup.orientation = "landscape"
    sheet.page_setup.paperSize = sheet.PAPERSIZE_A4
    if fitting_scale(sheet) * FONT_SIZE >= SMALLEST_PRINTED_POINTS:
        sheet.page_setup.fitToWidth, sheet.page_setup.fitToHeight = 1, 0
        sheet.sheet_properties.pageSetUpPr.fitToPage = True
        return
    sheet.sheet_properties.pageSetUpPr.fitToPage = False
    sheet.page_setup.scale = ACROSS_SCALE
    frozen = sheet.freeze_panes
    frozen_cell = sheet[frozen] if frozen else None
    header_row = frozen_cell.row - 1 if frozen_cell is not None and frozen_cell.row > 1 else HEADER_ROW
    columns = frozen_cell.column - 1 if frozen_cell is not None and frozen_cell.column > 1 else 1
    sheet.print_title_rows = f"1:{header_row}"
    sheet.print_title_cols = f"A:{get_column_letter(columns)}"


def fitting_scale(sheet: Worksheet) -> float:
    """The scale at which a sheet's used columns fit the printed page's width (1 when they fit as they are)."""
    return min(1.0, PAGE_WIDTH_POINTS / sheet_width_points(sheet))


def sheet_width_points(sheet: Worksheet) -> float:
    """The printed width of a sheet's used columns: a column w characters wide is 7w + 5 pixels, 0.75 point each."""
    total = 0.0
    for column in range(1, sheet.max_column + 1):
        dimension = sheet.column_dimensions.get(get_column_letter(column))
        width = dimension.width if dimension is not None and dimension.width else DEFAULT_COLUMN_WIDTH
        total += (7 * width + 5) * 0.75
    return total


DEFAULT_COLUMN_WIDTH = 8.43  # characters: a column the sheet sets no width for


FIXED_TIME = datetime.datetime(2000, 1, 1)  # the date every workbook says it was made and changed


class _SteadyZip(zipfile.ZipFile):
    """A zip file whose entries all carry ``FIXED_TIME`` instead of the time they were written."""

    def writestr(self, name, data, compress_type=None, compresslevel=None):
        if not isinstance(name, zipfile.ZipInfo):
            name = zipfile.ZipInfo(name, date_time=FIXED_TIME.timetuple()[:6])
            name.compress_type = self.compression
        super().writestr(name, data, compress_type, compresslevel)

    def write(self, filename, arcname=None, compress_type=None, compresslevel=None):
        # openpyxl writes each sheet to a file first; a file's entry would carry its time of writing
        with open(filename, "rb") as stream:
            self.writestr(arcname or os.path.basename(filename), stream.read(), compress_type, compresslevel)


class Formula(str):
    """Formula text without the leading '=' (marks a value to be written as a formula)."""


TOO_SMALL = "too small"  # a level that holds too few applications to be the adverse-impact reference


def impact_formulas(cell: Mapping[str, str], letter: Mapping[str, str], first: int, last: int, share: float,
                    guide: float) -> dict[str, Formula]:
    """The adverse-impact columns of one level's row (rows ``first`` to ``last`` hold its attribute's levels).

    Approval rate; the rate again when the level may be the reference, else the words "too small" (a
    level may be when it holds at least ``share`` of the attribute's applications, and the largest
    level always may: checks.fairness.adverse_impact); the ratio to the largest such rate; and
    whether it is under the four-fifths ``guide``. ``cell`` and ``letter`` give each header's cell in
    the row and its column letter.
    """
    counts, candidates = (f"${letter[header]}${first}:${letter[header]}${last}"
                          for header in ("Applications", "Rate if it may be the reference"))
    mine, rate, ratio = cell["Applications"], cell["Approval rate"], cell["Ratio to the reference"]
    return {
        "Approval rate": Formula(f'IF({mine}>0,{cell["Approved"]}/{mine},"")'),
        "Rate if it may be the reference": Formula(f'IF(OR({mine}>={share!r}*SUM({counts}),{mine}=MAX({counts})),'
                                                   f'{rate},"{TOO_SMALL}")'),
        "Ratio to the reference": Formula(f'IF(MAX({candidates})>0,{rate}/MAX({candidates}),"")'),
        "Under the guide": Formula(f'IF({ratio}<{guide!r},"under {guide:g}","at or above {guide:g}")'),
    }


@dataclass(frozen=True)
class Placed:
    """Where a table landed on its sheet: its header row, data rows and each header's column."""

    sheet: Worksheet
    header_row: int
    first_row: int
    last_row: int  # first_row - 1 when the table has no rows
    columns: Mapping[str, int]

    def letter(self, header: str) -> str:
        """Return the column letter of a header."""
        return get_column_letter(self.columns[header])

    def reference(self, header: str, first: int | None = None, last: int | None = None) -> Reference:
        """Return a chart reference to one column's data cells (or rows ``first`` to ``last``)."""
        column = self.columns[header]
        return Reference(self.sheet, min_col=column, max_col=column, min_row=first or self.first_row,
                         max_row=last or self.last_row)


def text_cell(sheet: Worksheet, row: int, column: int, text: object, *, bold: bool = False) -> Cell:
    """Write text that stays text: never read as a formula, whatever it begins with.

    Characters a spreadsheet file cannot hold are replaced by U+FFFD, and text is cut at the
    32,767 characters a cell holds. Text beginning with ``=``, ``+``, ``-`` or ``@`` also gets
    the quote prefix, so that editing the cell in a spreadsheet keeps it text.
    """
    text = ILLEGAL_CHARACTERS_RE.sub("\ufffd", str(text))[:TEXT_LIMIT]
    cell = sheet.cell(row=row, column=column)
    cell.value = text
    cell.data_type = "s"  # openpyxl takes a leading '=' for a formula; this is data
    if text.startswith(RISKY_TEXT_START):
        cell.quotePrefix = True
    if bold:
        cell.font = BOLD
    return cell


def value_cell(sheet: Worksheet, row: int, column: int, value: object, *, number_format: str | None = None) -> Cell:
    """Write a number, truth value or text as a plain Python value; NaN, infinity and None leave it empty.

    A ``Formula`` is written as a formula, and any other text as text (``text_cell``).
    """
    if isinstance(value, Formula):
        return formula_cell(sheet, row, column, value, number_format=number_format)
    value = plain_value(value)
    if isinstance(value, str):
        return text_cell(sheet, row, column, value)
    cell = sheet.cell(row=row, column=column, value=value)
    if number_format and isinstance(value, (int, float)) and not isinstance(value, bool):
        cell.number_format = number_format
    return cell


def formula_cell(sheet: Worksheet, row: int, column: int, formula: str, *, number_format: str | None = None,
                 bold: bool = False) -> Cell:
    """Write a formula (given without the leading '=')."""
    cell = sheet.cell(row=row, column=column, value=f"={formula}")
    if number_format:
        cell.number_format = number_format
    if bold:
        cell.font = BOLD
    return cell


def plain_value(value: object) -> bool | int | float | str | None:
    """Return a value as a plain Python bool, int, float or str; None for NaN, infinity and missing."""
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    return str(value)


def header_cells(sheet: Worksheet, row: int, column: int, headers: Sequence[str]) -> dict[str, int]:
    """Write a row of bold, shaded headers; return each header's column."""
    columns = {}
    for offset, header in enumerate(headers):
        cell = text_cell(sheet, row, column + offset, header, bold=True)
        cell.fill = HEADER_FILL
        cell.alignment = Alignment(wrap_text=True, vertical="bottom")
        columns[header] = column + offset
    return columns


def write_frame(sheet: Worksheet, frame: pd.DataFrame, *, row: int = HEADER_ROW, column: int = 1,
                formats: Mapping[str, str] | None = None, caption: str = "") -> Placed:
    """Write a frame as a table: bold header at ``row``, the data below, number formats per column.

    Parameters
    ----------
    sheet : Worksheet
    frame : pandas.DataFrame
        Column names are the headers shown; the index is not written.
    row, column : int
        The header's row and the table's first column.
    formats : mapping of header to number format
    caption : str
        Written in bold above the header.

    Returns
    -------
    Placed
    """
    formats = formats or {}
    if caption:
        text_cell(sheet, row - 1, column, caption, bold=True)
    columns = header_cells(sheet, row, column, [str(name) for name in frame.columns])
    for name in frame.columns:  # a number column's header sits right, over the numbers, however wide the column
        if _numbers(frame[name]):
            sheet.cell(row=row, column=columns[str(name)]).alignment = Alignment(wrap_text=True, vertical="bottom",
                                                                                horizontal="right")
    for offset, name in enumerate(frame.columns):
        number_format = formats.get(str(name))
        for position, value in enumerate(frame[name].tolist(), start=row + 1):
            value_cell(sheet, position, column + offset, value, number_format=number_format)
    return Placed(sheet, row, row + 1, row + len(frame), columns)


def _numbers(values: pd.Series) -> bool:
    """Whether a column holds numbers (a formula counts as one), with at least one present."""
    present = [v for v in values.tolist() if v is not None and not (isinstance(v, float) and math.isnan(v))]
    return bool(present) and all(isinstance(v, (int, float, np.integer, np.floating, Formula)) and not isinstance(v, bool)
                                 for v in present)


def write_pairs(sheet: Worksheet, pairs: Iterable[tuple[str, object]], *, row: int, column: int = 1,
                caption: str = "", formats: Mapping[str, str] | None = None) -> int:
    """Write label–value pairs down two columns under a bold caption; return the next free row."""
    formats = formats or {}
    if caption:
        text_cell(sheet, row, column, caption, bold=True)
        row += 1
    for label, value in pairs:
        text_cell(sheet, row, column, label)
        value_cell(sheet, row, column + 1, value, number_format=formats.get(label))
        row += 1
    return row


def text_sections(sheet: Worksheet, sections: Sequence[tuple[str, Sequence[str]]], *, first_row: int) -> None:
    """Write captioned paragraphs down column A (a bold caption, then one wrapped line a row), ready to print."""
    row = first_row
    for caption, lines in sections:
        text_cell(sheet, row, 1, caption, bold=True)
        row += 1
        for line in lines:
            text_cell(sheet, row, 1, line).alignment = WRAP
            row += 1
        row += 1
    sheet.column_dimensions["A"].width = 120
    sheet.freeze_panes = "A3"
    print_across(sheet)


def sheet_heading(sheet: Worksheet, title: str, note: str) -> None:
    """Write the sheet's title and a one-line note of what it holds and on which sample."""
    text_cell(sheet, TITLE_ROW, 1, title).font = TITLE_FONT
    text_cell(sheet, NOTE_ROW, 1, note)


def freeze_header(sheet: Worksheet, header_row: int = HEADER_ROW, *, columns: int = 0) -> None:
    """Freeze the rows down to the header (and ``columns`` columns) and repeat them on printed pages."""
    sheet.freeze_panes = sheet.cell(row=header_row + 1, column=columns + 1).coordinate
    sheet.print_title_rows = f"1:{header_row}"
    print_across(sheet)


def print_across(sheet: Worksheet) -> None:
    """Print landscape (``printable`` settles, when the book is saved, whether on one page's width or across pages)."""
    sheet.page_setup.orientation = "landscape"


def fit_widths(sheet: Worksheet, *, from_row: int = CAPTION_ROW + 1, minimum: float = 8, maximum: float = 60) -> None:
    """Set each column's width to its longest entry from ``from_row`` down, within bounds."""
    widths: dict[int, float] = {}
    for row in sheet.iter_rows(min_row=from_row):
        for cell in row:
            if cell.value is not None:
                widths[cell.column] = max(widths.get(cell.column, 0), _shown_length(cell))
    for column, width in widths.items():
        sheet.column_dimensions[get_column_letter(column)].width = min(max(width + 2, minimum), maximum)


def scatter_chart(title: str, x_title: str, y_title: str,
                  series: Iterable[tuple[str, Reference, Reference]], *, width: float = 16,
                  height: float = 9) -> ScatterChart:
    """Return a line chart of (x, y) series, each given as (name, x reference, y reference)."""
    chart = ScatterChart()
    chart.scatterStyle = "lineMarker"
    for name, x_values, y_values in series:
        line = Series(y_values, x_values, title=name)
        line.marker.symbol = "none"
        line.smooth = False
        chart.series.append(line)
    return _dressed(chart, title, x_title, y_title, width, height)


def bar_chart(title: str, x_title: str, y_title: str, categories: Reference,
              series: Iterable[tuple[str, Reference]], *, width: float = 16, height: float = 9) -> BarChart:
    """Return a clustered column chart of series given as (name, values reference) over categories."""
    chart = BarChart()
    chart.type = "col"
    chart.grouping = "clustered"
    for name, values in series:
        chart.series.append(Series(values, title=name))
    chart.set_categories(categories)
    return _dressed(chart, title, x_title, y_title, width, height)


def cell_address(sheet: str, row: int, column: int) -> str:
    """Return an absolute reference to one cell of a sheet: 'Classing'!$I$7."""
    return f"{quote_sheetname(sheet)}!${get_column_letter(column)}${row}"


def range_address(sheet: str, first_row: int, last_row: int, column: int) -> str:
    """Return an absolute reference to part of one column of a sheet."""
    letter = get_column_letter(column)
    return f"{quote_sheetname(sheet)}!${letter}${first_row}:${letter}${last_row}"


def _dressed(chart, title, x_title, y_title, width, height):
    chart.title = title
    chart.x_axis.title = x_title
    chart.y_axis.title = y_title
    # without this, recent spreadsheet programs hide the axes of an openpyxl chart
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.width, chart.height = width, height
    chart.legend.position = "b"
    return chart


def as_points(series: Series, colour: str) -> None:
    """Draw a scatter series as filled dots without a line."""
    series.marker.symbol = "circle"
    series.marker.size = 7
    series.marker.graphicalProperties = GraphicalProperties(solidFill=colour)
    series.marker.graphicalProperties.line.solidFill = colour
    series.graphicalProperties.line.noFill = True


def _shown_length(cell: Cell) -> float:
    if cell.data_type == "f":
        return 10
    if isinstance(cell.value, str):
        return max(len(line) for line in cell.value.splitlines() or [""])
    if isinstance(cell.value, bool):
        return 5
    if isinstance(cell.value, int):
        return len(f"{cell.value:,}")
    return 10


def count_number_format(histograms) -> str:
    """Whole-number counts show as such; weighted counts keep two decimals."""
    values = np.concatenate([np.concatenate([h.goods, h.bads, h.others]) for h in histograms])
    return COUNT if np.all(values == np.round(values)) else WEIGHTED_COUNT
