"""Progress bar: drawn on terminals only, silent otherwise."""

from __future__ import annotations

import io

from agepost.progress import BAR_WIDTH, Progress, progress


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_silent_when_not_a_terminal():
    stream = io.StringIO()
    with progress(10, label="deriving", stream=stream) as bar:
        bar.advance(10)
    assert stream.getvalue() == "" and bar.done == 10


def test_silent_when_disabled_even_on_a_terminal():
    stream = FakeTerminal()
    with progress(10, label="deriving", enabled=False, stream=stream) as bar:
        bar.advance(4)
    assert stream.getvalue() == ""


def test_draws_on_a_terminal_and_ends_with_newline():
    stream = FakeTerminal()
    with Progress(4, label="bands", enabled=True, stream=stream, min_interval_s=0.0) as bar:
        for _ in range(4):
            bar.advance()
    text = stream.getvalue()
    frames = text.rstrip("\n").split("\r")[1:]
    assert len(frames) == 6  # opening frame, four advances, closing frame
    assert frames[0].startswith("bands [" + "." * BAR_WIDTH + "]   0%  0/4")
    assert frames[-1].startswith("bands [" + "#" * BAR_WIDTH + "] 100%  4/4")
    assert text.endswith("\n")


def test_throttled_redraws():
    stream = FakeTerminal()
    with Progress(1000, label="x", enabled=True, stream=stream, min_interval_s=60.0) as bar:
        for _ in range(1000):
            bar.advance()
    assert stream.getvalue().count("\r") == 2  # first and last frame only


def test_unknown_total_shows_a_count():
    stream = FakeTerminal()
    with Progress(None, label="reading", enabled=True, stream=stream, min_interval_s=0.0) as bar:
        bar.advance(7)
    assert "reading  7  " in stream.getvalue()


def test_overshoot_is_capped_at_full():
    bar = Progress(2, label="x", enabled=False)
    bar.advance(5)
    assert "100%  5/2" in bar.line()
