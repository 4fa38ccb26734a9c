"""The CLI end to end, in process: ``main([...])`` on small inputs, exit codes and JSON keys."""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import pytest

from fleetfuel.cli import EXIT_NO_USABLE_INPUT, EXIT_OK, EXIT_SOME_INPUT_FAILED, main
from fleetfuel.resources import data_dir

# Keys the inspect --json contract fixes (issue text, kept exactly: other tools read them).
REQUIRED_KEYS = {
    "path",
    "vehicle_ids",
    "rows_in",
    "rows_kept",
    "rows_interpolated",
    "dropped",
    "distance_km",
    "driving_time_s",
    "climb_m",
    "flags",
    "error",
}


@pytest.fixture(scope="module")
def one_day_file() -> Path:
    files = sorted((data_dir("sample_logs") / "fleet_portal").glob("*.csv"))
    if not files:
        pytest.skip("sample fleet not built")
    return files[0]


def _data_lines(path: Path) -> int:
    # Independent count of data rows: non-empty lines after the single header line.
    opener = gzip.open if path.suffix == ".gz" else open
    with opener(path, "rt", encoding="utf-8-sig") as handle:
        return sum(1 for line in handle if line.strip()) - 1


def test_inspect_json_has_the_fixed_keys_and_balances(one_day_file: Path, capsys) -> None:
    assert main(["inspect", "--json", str(one_day_file)]) == EXIT_OK
    out = json.loads(capsys.readouterr().out)
    (entry,) = out["files"]
    assert REQUIRED_KEYS <= set(entry)
    assert entry["error"] is None
    assert entry["rows_in"] == _data_lines(one_day_file)
    assert entry["rows_in"] == entry["rows_kept"] + sum(entry["dropped"].values())
    assert entry["distance_km"] > 1.0


def test_bad_file_beside_good_one_is_one_line_and_exit_zero(one_day_file: Path, tmp_path: Path, capsys) -> None:
    bad = tmp_path / "garbage.csv"
    bad.write_bytes(b"\x00\x01\x02 not a log \xff\xfe")
    assert main(["inspect", str(one_day_file), str(bad)]) == EXIT_OK
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "garbage.csv" in err[0] and "Traceback" not in err[0]


def test_strict_fails_when_any_file_failed(one_day_file: Path, tmp_path: Path) -> None:
    bad = tmp_path / "empty.csv"
    bad.write_text("", encoding="utf-8")
    assert main(["inspect", "--strict", str(one_day_file), str(bad)]) == EXIT_SOME_INPUT_FAILED


def test_no_usable_file_is_non_zero(tmp_path: Path, capsys) -> None:
    bad = tmp_path / "nothing.csv"
    bad.write_text("a,b\n1,2\n", encoding="utf-8")
    assert main(["inspect", str(bad)]) == EXIT_NO_USABLE_INPUT
    assert "nothing.csv" in capsys.readouterr().err


def test_help_and_version(capsys) -> None:
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert "fleetfuel" in capsys.readouterr().out
    assert main([]) == EXIT_OK
