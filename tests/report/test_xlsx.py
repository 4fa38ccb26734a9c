"""The workbook read back with openpyxl: sheets, escaped text, numbers as numbers, formatting."""

from __future__ import annotations

import io

import openpyxl
import pytest
from report_fixture import EVIL_ROUTE

from fleetfuel.report import tables, xlsx


@pytest.fixture
def book(result):
    data = xlsx.workbook_bytes(result.route_forecast, result.fleet_ranking, result.assumptions)
    return openpyxl.load_workbook(io.BytesIO(data))


def _column(sheet, name: str) -> list:
    header = [c.value for c in sheet[1]]
    j = header.index(name) + 1
    return [row[0] for row in sheet.iter_rows(min_row=2, min_col=j, max_col=j)]


def test_sheets_and_headers(book) -> None:
    assert book.sheetnames == [xlsx.SHEET_RANKING, xlsx.SHEET_ROUTES, xlsx.SHEET_ASSUMPTIONS]
    routes = book[xlsx.SHEET_ROUTES]
    header = [c.value for c in routes[1]]
    assert tuple(header[: len(tables.ROUTE_FORECAST_COLUMNS)]) == tables.ROUTE_FORECAST_COLUMNS
    assert all(c.font.bold for c in routes[1])
    assert routes.freeze_panes == "A2"
    assert routes.max_row == 1 + 6
    assert routes.column_dimensions["A"].width >= len(EVIL_ROUTE)


def test_formula_text_is_escaped_and_stays_text(book) -> None:
    # OWASP CSV Injection applies to spreadsheets too: a leading = would make a live formula
    cells = _column(book[xlsx.SHEET_ROUTES], "route")
    evil = [c for c in cells if c.value == "'" + EVIL_ROUTE]
    assert len(evil) == 2
    assert all(c.data_type == "s" for c in cells)
    specs = _column(book[xlsx.SHEET_RANKING], "spec")
    assert {c.value for c in specs if c.value.startswith("'")} == {"'-van electric"}
    keys = _column(book[xlsx.SHEET_ASSUMPTIONS], "assumption")
    assert keys[-1].value == "'+grid intensity [kg/kWh]" and keys[-1].data_type == "s"
    assert not any(c.data_type == "f" for ws in book for row in ws.iter_rows() for c in row)


def test_numbers_stay_numbers_with_formats(result, book) -> None:
    routes = book[xlsx.SHEET_ROUTES]
    km = _column(routes, "annual_km")
    assert all(c.data_type == "n" for c in km)
    expected = tables.route_forecast_table(result.route_forecast)["annual_km"].tolist()
    assert [c.value for c in km] == expected
    assert km[0].number_format == "#,##0"
    per_100 = [c for c in _column(routes, "fuel_l_per_100km") if c.value is not None]
    assert per_100 and all(c.data_type == "n" and c.number_format == "0.00" for c in per_100)
    # missing values are empty cells, not text "nan"
    assert sum(c.value is None for c in _column(routes, "fuel_l_per_100km")) == 3
    feasible = _column(routes, "feasible")
    assert [c.data_type for c in feasible] == ["b"] * 6
    ranks = _column(book[xlsx.SHEET_RANKING], "rank")
    assert [c.value for c in ranks] == [1, 2, 1, 2] and ranks[0].number_format == "0"
