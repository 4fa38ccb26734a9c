"""Tidy output tables: column order, stable sort, OWASP formula escaping, deterministic bytes."""

from __future__ import annotations

import io
import time

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from report_fixture import EVIL_ROUTE

from fleetfuel.errors import InternalError
from fleetfuel.report import tables


# OWASP "CSV Injection": cells beginning with = + - @ tab or carriage return are prefixed with '
@pytest.mark.parametrize("text", ["=1+1", "+1", "-2+3", "@SUM(A1)", "\tx", "\rx"])
def test_escape_text_prefixes_formula_characters(text: str) -> None:
    assert tables.escape_text(text) == "'" + text


@pytest.mark.parametrize("value", ["north loop", "a=b", "", " =x", 3.5, -2, None, True])
def test_escape_text_leaves_other_values(value: object) -> None:
    assert tables.escape_text(value) == value


def test_route_forecast_table_columns_and_stable_sort(result) -> None:
    table = tables.route_forecast_table(result.route_forecast)
    # the fixed columns first, in order; extra columns (units in names) after
    assert tuple(table.columns[: len(tables.ROUTE_FORECAST_COLUMNS)]) == tables.ROUTE_FORECAST_COLUMNS
    assert list(table.columns[len(tables.ROUTE_FORECAST_COLUMNS):]) == ["kwh_per_100km", "co2_wtw_kg_per_year"]
    keys = list(zip(table["route"], table["vehicle_class"], table["spec"], strict=True))
    assert keys == sorted(keys)
    # consistency is kept row by row: L/100 km x km / 100 = L/year (definition of L/100 km)
    rows = table.dropna(subset=["fuel_l_per_100km"])
    np.testing.assert_allclose(rows["fuel_l_per_100km"] * rows["annual_km"] / 100.0, rows["fuel_l_per_year"])


def test_tables_do_not_mutate_input(result) -> None:
    before = result.route_forecast.copy()
    tables.csv_bytes(tables.route_forecast_table(result.route_forecast))
    pd.testing.assert_frame_equal(result.route_forecast, before)


def test_missing_contract_column_is_a_bug_with_its_name(result) -> None:
    with pytest.raises(InternalError, match="route_forecast: missing column 'tco_per_year'"):
        tables.route_forecast_table(result.route_forecast.drop(columns="tco_per_year"))


def test_csv_escapes_text_and_keeps_numbers(result) -> None:
    table = tables.route_forecast_table(result.route_forecast)
    back = pd.read_csv(io.BytesIO(tables.csv_bytes(table)), keep_default_na=False)
    assert ("'" + EVIL_ROUTE) in set(back["route"])
    assert set(back.loc[back["spec"].str.contains("electric"), "spec"]) == {"'-van electric"}
    assert back["infeasible_reason"].str.startswith("'@").sum() == 1
    # numbers are read back as numbers, with full precision
    assert back["annual_km"].dtype == np.float64
    np.testing.assert_array_equal(back["annual_km"].to_numpy(), table["annual_km"].to_numpy())
    assert back["energy_cost_per_year"].sum() == pytest.approx(table["energy_cost_per_year"].sum(), rel=1e-15)


def test_negative_numbers_are_not_escaped() -> None:
    frame = pd.DataFrame({"name": ["-x"], "saving_per_year": [-1500.5]})
    text = tables.csv_bytes(frame).decode()
    assert text == "name,saving_per_year\n'-x,-1500.5\n"


def test_ranking_csv_joins_route_lists_and_escapes_them(result) -> None:
    table = tables.fleet_ranking_table(result.fleet_ranking)
    assert tuple(table.columns) == tables.FLEET_RANKING_COLUMNS
    assert list(zip(table["vehicle_class"], table["rank"], strict=True)) == [
        ("truck", 1), ("truck", 2), ("van", 1), ("van", 2)
    ]
    back = pd.read_csv(io.BytesIO(tables.csv_bytes(table)), keep_default_na=False)
    assert back.loc[back["spec"] == "'-van electric", "routes_not_served"].item() == "'" + EVIL_ROUTE


def test_csv_and_parquet_bytes_are_deterministic(result) -> None:
    table = tables.route_forecast_table(result.route_forecast)
    first_csv, first_parquet = tables.csv_bytes(table), tables.parquet_bytes(table)
    time.sleep(1.1)  # a time stamp of one-second resolution would differ
    again = tables.route_forecast_table(result.route_forecast.sample(frac=1.0, random_state=3))
    assert tables.csv_bytes(again) == first_csv
    assert tables.parquet_bytes(again) == first_parquet


def test_parquet_round_trip_keeps_values_and_types(result) -> None:
    table = tables.route_forecast_table(result.route_forecast)
    back = pq.read_table(io.BytesIO(tables.parquet_bytes(table))).to_pandas()
    assert list(back.columns) == list(table.columns)
    assert back["route"].tolist() == table["route"].tolist()  # Parquet keeps text as written (not a spreadsheet)
    assert back["feasible"].dtype == bool
    np.testing.assert_array_equal(back["tco_per_year"].to_numpy(), table["tco_per_year"].to_numpy())


def test_assumptions_table_keeps_order_and_shows_every_item(result) -> None:
    table = tables.assumptions_table(result.assumptions)
    assert table["assumption"].tolist() == list(result.assumptions)
    assert table["value"].tolist() == ["1.7", "250", "EUR", "0.35"]
