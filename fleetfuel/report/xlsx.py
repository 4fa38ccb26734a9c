"""``route_forecast.xlsx``: formatted sheets ranking, per-route table and assumptions (openpyxl).

Text cells that begin with a formula character are escaped with a leading ``'`` (OWASP CSV
Injection, see :mod:`fleetfuel.report.tables`); numbers are written as numbers, booleans as
booleans, missing values as empty cells.
"""

from __future__ import annotations

import datetime as dt
import io
from collections.abc import Mapping
from typing import Any, Final

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from fleetfuel.report.tables import (
    assumptions_table,
    escape_text,
    fleet_ranking_table,
    plain_value,
    route_forecast_table,
)

SHEET_RANKING: Final = "ranking"
SHEET_ROUTES: Final = "per-route"
SHEET_ASSUMPTIONS: Final = "assumptions"

HEADER_FILL: Final = PatternFill("solid", fgColor="DDE6F0")
HEADER_FONT: Final = Font(bold=True)
MIN_WIDTH_CHARS: Final = 8
MAX_WIDTH_CHARS: Final = 60
WIDTH_PADDING_CHARS: Final = 2
FIXED_TIME: Final = dt.datetime(2000, 1, 1)  # document properties: no run-dependent time stamp

NUMBER_FORMATS: Final = (
    ("rank", "0"),
    ("_per_100km", "0.00"),
    ("annual_km", "#,##0"),
    ("_share", "0.0%"),
    ("_per_year", "#,##0"),
)
"""Column-name pattern -> Excel number format; the first match wins; other numbers ``General``."""


def _number_format(column: str) -> str:
    for pattern, fmt in NUMBER_FORMATS:
        if pattern in column:
            return fmt
    return "General"


def _cell_value(value: Any) -> Any:
    value = plain_value(value)
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    return escape_text(value)


def write_sheet(sheet: Worksheet, frame: pd.DataFrame) -> Worksheet:
    """Fill ``sheet`` with ``frame``: bold shaded header, frozen header row, widths, number formats."""
    columns = [str(c) for c in frame.columns]
    sheet.append([escape_text(c) for c in columns])
    for cell in sheet[1]:
        cell.font = HEADER_FONT
        cell.fill = HEADER_FILL
        cell.alignment = Alignment(horizontal="center", vertical="center", wrap_text=True)
    for row in frame.itertuples(index=False, name=None):
        sheet.append([_cell_value(v) for v in row])
    sheet.freeze_panes = "A2"
    for j, name in enumerate(columns, start=1):
        letter = get_column_letter(j)
        fmt = _number_format(name)
        width = len(name)
        for (cell,) in sheet.iter_rows(min_row=2, min_col=j, max_col=j):
            if cell.data_type == "n" and cell.value is not None:
                cell.number_format = fmt
            width = max(width, len(str(cell.value)) if cell.value is not None else 0)
        sheet.column_dimensions[letter].width = min(
            MAX_WIDTH_CHARS, max(MIN_WIDTH_CHARS, width + WIDTH_PADDING_CHARS)
        )
    return sheet


def workbook_bytes(
    route_forecast: pd.DataFrame, fleet_ranking: pd.DataFrame, assumptions: Mapping[str, Any]
) -> bytes:
    """The workbook (sheets :data:`SHEET_RANKING`, :data:`SHEET_ROUTES`, :data:`SHEET_ASSUMPTIONS`) as bytes."""
    book = Workbook()
    book.properties.created = FIXED_TIME
    book.properties.modified = FIXED_TIME
    ranking = book.active
    ranking.title = SHEET_RANKING
    write_sheet(ranking, fleet_ranking_table(fleet_ranking))
    write_sheet(book.create_sheet(SHEET_ROUTES), route_forecast_table(route_forecast))
    write_sheet(book.create_sheet(SHEET_ASSUMPTIONS), assumptions_table(assumptions))
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
