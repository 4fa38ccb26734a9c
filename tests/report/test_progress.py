"""The progress bar draws only on a terminal and when not quiet."""

from __future__ import annotations

import io

from fleetfuel.report.progress import ProgressBar


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_silent_when_not_a_terminal() -> None:
    stream = io.StringIO()
    with ProgressBar("outputs", stream=stream) as bar:
        bar.update(1, 2)
        bar.update(2, 2)
    assert stream.getvalue() == ""


def test_silent_when_quiet_even_on_a_terminal() -> None:
    stream = FakeTerminal()
    with ProgressBar("outputs", stream=stream, quiet=True) as bar:
        bar.update(2, 2)
    assert stream.getvalue() == ""


def test_draws_on_a_terminal_and_ends_the_line() -> None:
    stream = FakeTerminal()
    with ProgressBar("outputs", stream=stream, clock=lambda: 0.0) as bar:
        bar.update(2, 4, "report.html")
        bar.update(4, 4)
    text = stream.getvalue()
    assert "outputs [" in text and "4/4" in text and "100%" in text and "report.html" in text
    assert text.endswith("\n")
