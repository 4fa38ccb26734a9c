"""Write output files atomically: a failed run leaves no half-written output."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

_FILE_MODE = 0o666


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_text_atomic(path: Path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` through a temporary file in the same folder, then rename."""
    return write_bytes_atomic(path, text.encode("utf-8"))


@contextmanager
def atomic_target(path: Path) -> Iterator[Path]:
    """A temporary path in ``path``'s folder to write to; renamed to ``path`` when the block ends
    without an error, removed when it raises (so a writer can stream to disk, not to memory)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, _FILE_MODE & ~_current_umask())  # mkstemp makes 0600; outputs are shared files
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_bytes_atomic(path: Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder, then rename."""
    with atomic_target(path) as tmp:
        tmp.write_bytes(data)
    return path
