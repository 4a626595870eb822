"""Progress on standard error: a status line for long commands, a counting bar for sweeps.

On a terminal the line is redrawn in place; elsewhere (a log file, CI) lines are written
instead: every message of :class:`Progress`, and the sweep bar at most every
:attr:`ProgressBar.log_every_s` seconds and at the end.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["Progress", "ProgressBar", "format_duration"]


def format_duration(seconds: float) -> str:
    """``h:mm:ss`` of a duration in s."""
    seconds = max(0, int(round(seconds)))
    return f"{seconds // 3600}:{seconds // 60 % 60:02d}:{seconds % 60:02d}"


class _Line:
    """One line of progress on ``stream`` (default ``sys.stderr``), timed from creation."""

    #: Least time between two lines written off a terminal, s (0: every line).
    log_every_s = 0.0

    def __init__(self, stream: TextIO | None = None):
        self.stream = stream if stream is not None else sys.stderr
        self._tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self._start = time.monotonic()
        self._last_log = -float("inf")
        self._drawn = 0  # length of the line now on the terminal

    @property
    def elapsed(self) -> float:
        """Time since the start, s."""
        return time.monotonic() - self._start

    def _show(self, text: str, final: bool = False) -> None:
        """Redraw ``text`` in place on a terminal; elsewhere write it as a line, rate-limited
        by :attr:`log_every_s` unless ``final``.  ``final`` ends the line."""
        now = time.monotonic()
        if self._tty:
            self.stream.write("\r" + text.ljust(self._drawn) + ("\n" if final else ""))
            self._drawn = 0 if final else len(text)
        elif final or now - self._last_log >= self.log_every_s:
            self.stream.write(text + "\n")
            self._last_log = now
        self.stream.flush()


class Progress(_Line):
    """Callable that shows ``[elapsed s] message``, e.g. the ``progress`` of the studies."""

    def __call__(self, message: str) -> None:
        self._show(f"[{self.elapsed:7.1f} s] {message}")

    def close(self) -> None:
        """End the progress display (a newline after the line redrawn on a terminal)."""
        if self._tty and self._drawn:
            self.stream.write("\n")
            self.stream.flush()
            self._drawn = 0


class ProgressBar(_Line):
    """Counts finished candidates and draws ``[####....] 12/40  done 10  rejected 1 ...``.

    Parameters
    ----------
    total
        Candidates to evaluate in this run (stored ones are not counted).
    stream
        Where to draw; default ``sys.stderr``.
    width
        Bar width in characters.
    """

    log_every_s = 10.0

    def __init__(self, total: int, stream: TextIO | None = None, width: int = 24):
        super().__init__(stream)
        self.total = total
        self.width = width
        self.counts = {"done": 0, "rejected": 0, "failed": 0}
        self.note = ""  # shown at the end of the line (an optimisation's best so far)

    @property
    def finished(self) -> int:
        """Candidates finished so far in this run."""
        return sum(self.counts.values())

    def line(self) -> str:
        """The current progress line."""
        n, total = self.finished, max(self.total, 1)
        filled = int(self.width * n / total)
        elapsed = self.elapsed
        eta = elapsed / n * (self.total - n) if n else None
        return (f"[{'#' * filled}{'.' * (self.width - filled)}] {n}/{self.total}  "
                + "  ".join(f"{k} {v}" for k, v in self.counts.items())
                + f"  elapsed {format_duration(elapsed)}"
                + (f"  ETA {format_duration(eta)}" if eta is not None else "")
                + (f"  {self.note}" if self.note else ""))

    def update(self, status: str) -> None:
        """Count one finished candidate of ``status`` and redraw."""
        self.counts[status] = self.counts.get(status, 0) + 1
        self.draw()

    def draw(self, final: bool = False) -> None:
        """Draw the line (in place on a terminal, rate-limited elsewhere)."""
        self._show(self.line(), final)

    def close(self) -> None:
        """Draw the last line and end it."""
        self.draw(final=True)
