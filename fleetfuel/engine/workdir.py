"""The run's work folder: a partitioned Parquet dataset of what the per-partition tasks made.

Layout (``<key>`` is a partition key, ``<vehicle>/<start>``, see :mod:`fleetfuel.engine.partition`)::

    run.json                    inputs (path, size, modification time) and settings of the run
    raw/<n>.json                facts of input path n (read files, failures, rows in, vehicles)
    raw/<n>-<m>.parquet         raw canonical rows of its read file m (a zip has several; file order)
    raw/<n>-<m>.dropped.parquet rows the reader dropped, with the reason
    samples/<key>.parquet       clean, segmented samples of one partition
    features/<key>.parquet      its micro-trip feature table
    trips/<key>.parquet         its trip table
    summary/<key>.parquet       per-file summary of its cleaning (for the row account)
    dropped/<key>.parquet       rows its cleaning dropped, with the reason
    done/<key>.json             written last: the partition is finished
    tasks.jsonl                 task log: stage, key, worker, seconds, worker's peak RSS

Every file is written to a temporary name and renamed, so a killed run leaves finished files and
no half-written ones; ``--resume`` keeps what a run of the same inputs and settings finished.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from fleetfuel import schema
from fleetfuel.errors import OutputError
from fleetfuel.report.files import atomic_target, write_text_atomic

PARTITION_TABLES: Final = ("samples", "features", "trips", "summary", "dropped")
"""Tables every finished partition leaves in the work folder."""
_FOLDERS: Final = ("raw", *PARTITION_TABLES, "done")
ROW_GROUP_ROWS: Final = 65_536  # our choice: row groups small enough for predicate push-down
READ_BATCH_FILES: Final = 256  # files per batch of :func:`read_frames` (see there)
RUN_FILE: Final = "run.json"
TASK_LOG: Final = "tasks.jsonl"


def write_frame(path: Path, frame: pd.DataFrame) -> None:
    """Write ``frame`` to Parquet at ``path`` atomically (index dropped, row groups for push-down)."""
    table = pa.Table.from_pandas(frame, preserve_index=False)
    # Dictionary pages for the text columns only: numbers rarely repeat, and trying a dictionary
    # for them cost a third of the write time (measured on the sample fleet's partitions, which
    # also came out 14 % smaller).
    text = [f.name for f in table.schema if pa.types.is_string(f.type) or pa.types.is_large_string(f.type)
            or pa.types.is_dictionary(f.type)]
    with atomic_target(path) as tmp:  # streamed to disk: no copy of the file in memory
        pq.write_table(table, tmp, row_group_size=ROW_GROUP_ROWS, use_dictionary=text)


def write_json(path: Path, data: Any) -> None:
    """Write ``data`` as JSON at ``path`` atomically."""
    write_text_atomic(path, json.dumps(data, indent=1, sort_keys=True, default=str))


def read_json(path: Path) -> Any:
    """The JSON at ``path``."""
    return json.loads(path.read_text(encoding="utf-8"))


def typed(frame: pd.DataFrame) -> pd.DataFrame:
    """Canonical dtypes after a Parquet round trip: id and text columns as pandas ``string``."""
    text = (*schema.STRING_COLUMNS, *schema.SEGMENT_ID_COLUMNS, schema.ROUTE_SOURCE)
    for name in text:
        if name in frame.columns and frame[name].dtype != pd.StringDtype():
            frame[name] = frame[name].astype("string")
    return frame


def read_frames(paths: Iterable[Path], columns: Sequence[str] | None = None) -> pd.DataFrame | None:
    """The Parquet files ``paths`` (those that exist) read and concatenated in the given order
    (None when there is no row)."""
    table, _ = _read_tables([p for p in paths if p.is_file()], columns)
    return None if table is None else _to_frame(table)


def read_keyed_frames(paths: Mapping[str, Path], columns: Sequence[str] | None, key_column: str) -> pd.DataFrame | None:
    """:func:`read_frames` of ``paths`` (key -> file, in order) with the key of each row's file in
    ``key_column``, a categorical (a code per row, not a text: the keys are long and repeat)."""
    keys = [key for key, path in paths.items() if path.is_file()]
    table, rows = _read_tables([paths[key] for key in keys], columns)
    if table is None:
        return None
    frame = _to_frame(table)
    frame[key_column] = pd.Categorical.from_codes(np.repeat(np.arange(len(keys)), rows), categories=pd.Index(keys))
    return frame


def _read_tables(found: list[Path], columns: Sequence[str] | None) -> tuple[pa.Table | None, list[int]]:
    """The files ``found`` as one Arrow table, and each file's row count."""
    # Files read a batch at a time and each batch made one chunk: thousands of small tables held at
    # once, and a frame of as many chunks per column, cost far more than their rows (measured on
    # 3534 partitions' micro-trip features, 109 MiB as a frame: peak 378 MiB more read at once,
    # 231 MiB more in batches of 256).
    batches, rows = [], []
    for start in range(0, len(found), READ_BATCH_FILES):
        parts = [pq.read_table(p, columns=list(columns) if columns else None) for p in found[start:start + READ_BATCH_FILES]]
        rows.extend(t.num_rows for t in parts)
        parts = [t for t in parts if t.num_rows]
        if parts:
            batches.append(pa.concat_tables(parts, promote_options="default").combine_chunks())
    if not batches:
        return None, rows
    table = pa.concat_tables(batches, promote_options="default")
    del batches
    return table, rows


def _to_frame(table: pa.Table) -> pd.DataFrame:
    return typed(table.to_pandas(split_blocks=True, self_destruct=True))  # Arrow buffers let go as converted


def read_trip_rows(path: Path, columns: Sequence[str], trips: Iterable[str] | None = None) -> pd.DataFrame | None:
    """Rows of the Parquet file ``path`` (``columns`` only) whose ``trip_id`` is in ``trips`` (all
    rows when None), filtered in pyarrow; None when the file is missing or no row is left."""
    if not path.is_file():
        return None
    wanted = None if trips is None else pc.field(schema.TRIP_ID).isin(pa.array(sorted(trips), type=pa.string()))
    table = pq.read_table(path, columns=list(columns), filters=wanted)
    return typed(table.to_pandas()) if table.num_rows else None


@dataclass(frozen=True, slots=True)
class WorkFolder:
    """Paths of the work folder rooted at ``root`` (see the module docstring)."""

    root: Path

    def raw(self, number: int, suffix: str = ".parquet") -> Path:
        """Raw rows (``.parquet``), facts (``.json``) or reader drops (``.dropped.parquet``) of file ``number``."""
        return self.root / "raw" / f"{number:06d}{suffix}"

    def table(self, name: str, key: str) -> Path:
        """Partition ``key``'s table ``name`` (one of :data:`PARTITION_TABLES`)."""
        return self.root / name / f"{key}.parquet"

    def done(self, key: str) -> Path:
        """Marker of finished partition ``key``."""
        return self.root / "done" / f"{key}.json"

    @property
    def task_log(self) -> Path:
        return self.root / TASK_LOG

    def begin(self, fingerprint: dict[str, Any], resume: bool) -> bool:
        """Start a run: keep the folder's datasets when resuming the same run, else empty them.

        Returns whether earlier results are kept. Only fleetfuel's own subfolders are removed.

        Raises
        ------
        OutputError
            The work folder cannot be created or written.
        """
        run_file = self.root / RUN_FILE
        try:
            self.root.mkdir(parents=True, exist_ok=True)
            same = resume and run_file.is_file() and read_json(run_file) == json.loads(json.dumps(fingerprint, default=str))
            if not same:
                for name in _FOLDERS:
                    shutil.rmtree(self.root / name, ignore_errors=True)
                self.task_log.unlink(missing_ok=True)
                write_json(run_file, fingerprint)
        except (OSError, ValueError) as exc:
            raise OutputError(f"{self.root}: cannot use as work folder ({type(exc).__name__}: {exc})") from None
        return bool(same)

    def log_tasks(self, records: Iterable[Any]) -> None:
        """Append task records (stage, key, worker, seconds) to the task log."""
        lines = [json.dumps({"stage": r.stage, "key": r.key, "worker": r.worker, "seconds": round(r.seconds, 4),
                             "peak_rss_bytes": r.peak_rss_bytes}) for r in records]
        if lines:
            with self.task_log.open("a", encoding="utf-8") as handle:
                handle.write("\n".join(lines) + "\n")

    def tasks(self) -> pd.DataFrame:
        """The task log as a table (``stage, key, worker, seconds, peak_rss_bytes``)."""
        if not self.task_log.is_file():
            return pd.DataFrame(columns=["stage", "key", "worker", "seconds", "peak_rss_bytes"])
        return pd.read_json(self.task_log, lines=True)


def file_fingerprint(paths: Sequence[Path]) -> list[list[Any]]:
    """``[path, size, modification time]`` of each input (a missing file gives ``None`` values)."""
    out = []
    for path in paths:
        try:
            st = Path(str(path).split("!", 1)[0]).stat()
            out.append([str(path), st.st_size, st.st_mtime_ns])
        except OSError:
            out.append([str(path), None, None])
    return out
