"""Atomic output writes leave a complete file with the usual permissions."""

from __future__ import annotations

import os
import stat
from pathlib import Path

from fleetfuel.report.files import write_text_atomic


def test_atomic_write_respects_umask_not_mkstemp_0600(tmp_path: Path) -> None:
    # POSIX: a new file gets 0666 masked by the umask; mkstemp alone would give 0600.
    old = os.umask(0o022)
    try:
        path = write_text_atomic(tmp_path / "out.txt", "hello\n")
    finally:
        os.umask(old)
    assert path.read_text(encoding="utf-8") == "hello\n"
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]  # no temporary file left
