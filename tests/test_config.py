"""Run-config loading: stage tables, unknown keys refused with the file and key named."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pytest

from fleetfuel.config import RunConfig, from_mapping, load_run_config
from fleetfuel.errors import ConfigError


@dataclass(frozen=True, slots=True, kw_only=True)
class _Demo:
    step_s: float = 1.0
    names: tuple[str, ...] = ()
    label: str | None = None


def test_from_mapping_coerces_toml_types() -> None:
    built = from_mapping(_Demo, {"step_s": 2, "names": ["a", "b"]}, "x.toml [demo]")
    assert built == _Demo(step_s=2.0, names=("a", "b"))
    assert isinstance(built.step_s, float)


def test_from_mapping_rejects_unknown_key_naming_it() -> None:
    with pytest.raises(ConfigError, match=r"x.toml \[demo\]: unknown key 'stepp_s'"):
        from_mapping(_Demo, {"stepp_s": 2}, "x.toml [demo]")


def test_from_mapping_rejects_wrong_type() -> None:
    with pytest.raises(ConfigError, match="step_s: expected float, found str"):
        from_mapping(_Demo, {"step_s": "fast"}, "x.toml [demo]")


def test_no_file_gives_defaults() -> None:
    assert load_run_config(None) == RunConfig()


def test_unknown_section_named(tmp_path: Path) -> None:
    path = tmp_path / "run.toml"
    path.write_text("[cleaning]\nstep_s = 1\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"run.toml: unknown section \[cleaning\]"):
        load_run_config(path)


def test_bad_toml_is_one_line(tmp_path: Path) -> None:
    path = tmp_path / "run.toml"
    path.write_text("[clean\n", encoding="utf-8")
    with pytest.raises(ConfigError) as info:
        load_run_config(path)
    assert "\n" not in str(info.value) and "run.toml" in str(info.value)


def test_cycles_section_is_read_and_checked(tmp_path: Path) -> None:
    path = tmp_path / "run.toml"
    path.write_text("[cycles]\nseed = 7\nmax_types = 5\n", encoding="utf-8")
    cfg = load_run_config(path)
    assert (cfg.cycles.seed, cfg.cycles.max_types) == (7, 5)
    path.write_text("[cycles]\nseeds = 7\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"\[cycles\]: unknown key 'seeds'"):
        load_run_config(path)
