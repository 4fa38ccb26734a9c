"""A progress bar on stderr for long runs; silent when quiet or when stderr is not a terminal.

Stages before ``report`` cannot import it (stage order): they take a plain callback
``on_progress(done, total, note)`` and the pipeline passes :meth:`ProgressBar.update`.

    with ProgressBar(label="forecast", quiet=args.quiet) as bar:
        result = forecast_fleet(..., on_progress=bar.update)
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable, Iterable, Iterator
from typing import Final, TextIO, TypeVar

T = TypeVar("T")

BAR_WIDTH: Final = 28
MIN_REDRAW_S: Final = 0.1  # redraw at most ten times a second (common practice, no source)
NOTE_WIDTH: Final = 32

ProgressCallback = Callable[[int, int, str], None]


class ProgressBar:
    """``label [#####.....]  12/40  30%  0:05 elapsed  note`` redrawn in place on ``stream``.

    Parameters
    ----------
    label : str
        What is progressing.
    quiet : bool
        Never draw.
    stream : text stream, optional
        Where to draw (default ``sys.stderr``); drawing happens only when it is a terminal.
    clock : callable, optional
        Monotonic clock [s] (tests pass a fake one).
    """

    def __init__(self, label: str = "", *, quiet: bool = False, stream: TextIO | None = None,
                 clock: Callable[[], float] = time.monotonic) -> None:
        self.label = label
        self.stream = sys.stderr if stream is None else stream
        isatty = getattr(self.stream, "isatty", None)
        self.enabled = (not quiet) and bool(isatty and isatty())
        self._clock = clock
        self._start = clock()
        self._last_draw = -float("inf")
        self._drawn = False

    def line(self, done: int, total: int, note: str = "") -> str:
        """The bar's text for ``done`` of ``total`` steps."""
        share = min(max(done / total, 0.0), 1.0) if total > 0 else 0.0
        filled = int(round(share * BAR_WIDTH))
        elapsed = int(self._clock() - self._start)
        minutes, seconds = divmod(elapsed, 60)
        text = (f"{self.label} [{'#' * filled}{'.' * (BAR_WIDTH - filled)}] {done}/{total} {share:4.0%} "
                f"{minutes}:{seconds:02d} elapsed")
        return f"{text}  {note[:NOTE_WIDTH]}" if note else text

    def update(self, done: int, total: int, note: str = "") -> None:
        """Report ``done`` of ``total`` steps (a :data:`ProgressCallback`); redraws when due."""
        if not self.enabled:
            return
        now = self._clock()
        if done < total and now - self._last_draw < MIN_REDRAW_S:
            return
        self._last_draw = now
        self.stream.write("\r\x1b[2K" + self.line(done, total, note))
        self.stream.flush()
        self._drawn = True

    def close(self) -> None:
        """End the bar's line (nothing when nothing was drawn)."""
        if self._drawn:
            self.stream.write("\n")
            self.stream.flush()
            self._drawn = False

    def __enter__(self) -> ProgressBar:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def track(items: Iterable[T], total: int, label: str = "", *, quiet: bool = False,
          stream: TextIO | None = None) -> Iterator[T]:
    """Yield ``items`` while drawing a :class:`ProgressBar` of ``total`` steps."""
    with ProgressBar(label, quiet=quiet, stream=stream) as bar:
        bar.update(0, total)
        for done, item in enumerate(items, start=1):
            yield item
            bar.update(done, total)
