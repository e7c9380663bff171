"""A small progress bar for long work, drawn on stderr only when a person is watching.

The bar is shown only if it is enabled (the command line turns it off with ``--quiet``)
and the stream is a terminal, so logs, pipes and test output stay clean. It redraws at
most every :data:`MIN_INTERVAL_S` seconds and ends with a newline.

Example
-------
>>> with progress(3, label="deriving", enabled=False) as bar:
...     for _ in range(3):
...         bar.advance()
>>> bar.done
3
"""

from __future__ import annotations

import sys
import time
from types import TracebackType
from typing import TextIO

#: Shortest time between two redraws, seconds.
MIN_INTERVAL_S = 0.1
#: Characters of the bar itself.
BAR_WIDTH = 28


class Progress:
    """Counts work done and draws ``label [#####.....]  45%  4500/10000  3.2 s``.

    Use :func:`progress` to make one; see the module docstring.
    """

    def __init__(
        self,
        total: int | None,
        *,
        label: str,
        enabled: bool,
        stream: TextIO | None = None,
        min_interval_s: float = MIN_INTERVAL_S,
    ) -> None:
        self.total = None if total is None else max(int(total), 0)
        self.label = label
        self.stream = sys.stderr if stream is None else stream
        self.shown = bool(enabled) and _is_terminal(self.stream)
        self.min_interval_s = min_interval_s
        self.done = 0
        self._start = time.monotonic()
        self._last_draw = -float("inf")

    def __enter__(self) -> Progress:
        self._start = time.monotonic()
        self._draw(force=True)
        return self

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        trace: TracebackType | None,
    ) -> None:
        if self.shown:
            self._draw(force=True)
            self.stream.write("\n")
            self.stream.flush()

    def advance(self, n: int = 1) -> None:
        """Record ``n`` more units of work done and redraw if enough time has passed."""
        self.done += int(n)
        self._draw(force=False)

    def line(self) -> str:
        """The text of the bar as it would be drawn now."""
        elapsed = f"{time.monotonic() - self._start:.1f} s"
        if not self.total:
            return f"{self.label}  {self.done}  {elapsed}"
        fraction = min(self.done / self.total, 1.0)
        filled = int(round(fraction * BAR_WIDTH))
        bar = "#" * filled + "." * (BAR_WIDTH - filled)
        return f"{self.label} [{bar}] {100 * fraction:3.0f}%  {self.done}/{self.total}  {elapsed}"

    def _draw(self, *, force: bool) -> None:
        if not self.shown:
            return
        now = time.monotonic()
        if not force and now - self._last_draw < self.min_interval_s:
            return
        self._last_draw = now
        self.stream.write("\r" + self.line())
        self.stream.flush()


def _is_terminal(stream: TextIO) -> bool:
    isatty = getattr(stream, "isatty", None)
    return bool(isatty is not None and isatty())


def progress(
    total: int | None,
    *,
    label: str,
    enabled: bool = True,
    stream: TextIO | None = None,
) -> Progress:
    """A progress bar for ``total`` units of work (None if unknown), used as a context manager.

    Parameters
    ----------
    total : int or None
        Units expected (rows, chunks, grid points); None shows a plain count.
    label : str
        What is being done, e.g. ``"deriving ages"``.
    enabled : bool
        False (the command line's ``--quiet``) draws nothing.
    stream : text stream or None
        Where to draw; default ``sys.stderr``. Nothing is drawn unless it is a terminal.
    """
    return Progress(total, label=label, enabled=enabled, stream=stream)
