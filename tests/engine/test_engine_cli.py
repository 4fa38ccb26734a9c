"""Engine flags of the CLI: the same ``inspect --json`` from every engine, resume, one-line errors."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from fleet_files import write_tiny_fleet

from fleetfuel.cli import EXIT_OK, main


@pytest.fixture(scope="module")
def fleet_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return write_tiny_fleet(tmp_path_factory.mktemp("cli_fleet"), vehicles=2, days=2)


def _inspect(capsys: pytest.CaptureFixture[str], *args: str) -> dict:
    assert main(["inspect", *args, "--json"]) == EXIT_OK
    return json.loads(capsys.readouterr().out)


def test_processes_and_resume_give_the_local_account(fleet_dir: Path, tmp_path: Path,
                                                      capsys: pytest.CaptureFixture[str]) -> None:
    local = _inspect(capsys, str(fleet_dir))
    pool = _inspect(capsys, str(fleet_dir), "--workers", "2", "--work", str(tmp_path / "w"))
    assert pool == local
    again = _inspect(capsys, str(fleet_dir), "--workers", "2", "--work", str(tmp_path / "w"), "--resume")
    assert again == local
    log = (tmp_path / "w" / "tasks.jsonl").read_text(encoding="utf-8").splitlines()
    cleans = [json.loads(line) for line in log if json.loads(line)["stage"] == "clean"]
    assert len(cleans) == len({c["key"] for c in cleans})  # the resumed run cleaned nothing again


@pytest.mark.slow
def test_scheduler_flag_joins_an_existing_cluster(fleet_dir: Path, tmp_path: Path,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    distributed = pytest.importorskip("distributed")
    local = _inspect(capsys, str(fleet_dir))
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  host="127.0.0.1") as cluster:
        joined = _inspect(capsys, str(fleet_dir), "--scheduler", cluster.scheduler_address,
                          "--work", str(tmp_path / "w"))
    assert joined == local


def test_unreachable_scheduler_is_one_line(fleet_dir: Path, capsys: pytest.CaptureFixture[str]) -> None:
    pytest.importorskip("distributed")
    code = main(["inspect", str(fleet_dir), "--scheduler", "tcp://127.0.0.1:9"])
    err = capsys.readouterr().err.strip()
    assert code != EXIT_OK and len(err.splitlines()) == 1 and "tcp://127.0.0.1:9" in err


def test_bad_engine_settings_are_one_line(fleet_dir: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["inspect", str(fleet_dir), "--workers", "0"])
    err = capsys.readouterr().err.strip()
    assert code != EXIT_OK and err.splitlines() == [err] and "engine.workers" in err
