"""A one-line progress bar for sweeps: counts per status, elapsed time and an ETA.

On a terminal the line is redrawn in place; elsewhere (a log file, CI) a line is written at
most every :attr:`ProgressBar.log_every_s` seconds and at the end.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

__all__ = ["ProgressBar", "format_duration"]


def format_duration(seconds: float) -> str:
    """``h:mm:ss`` of a duration in s."""
    seconds = max(0, int(round(seconds)))
    return f"{seconds // 3600}:{seconds // 60 % 60:02d}:{seconds % 60:02d}"


class ProgressBar:
    """Counts finished candidates and draws ``[####....] 12/40 done 10 rejected 1 ...``.

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
        self.total = total
        self.stream = stream if stream is not None else sys.stderr
        self.width = width
        self.counts = {"done": 0, "rejected": 0, "failed": 0}
        self._start = time.monotonic()
        self._last_log = -float("inf")
        self._tty = bool(getattr(self.stream, "isatty", lambda: False)())

    @property
    def finished(self) -> int:
        """Candidates finished so far in this run."""
        return sum(self.counts.values())

    def line(self) -> str:
        """The current progress line."""
        n, total = self.finished, max(self.total, 1)
        filled = int(self.width * n / total)
        elapsed = time.monotonic() - self._start
        eta = elapsed / n * (self.total - n) if n else None
        return (f"[{'#' * filled}{'.' * (self.width - filled)}] {n}/{self.total}  "
                + "  ".join(f"{k} {v}" for k, v in self.counts.items())
                + f"  elapsed {format_duration(elapsed)}"
                + (f"  ETA {format_duration(eta)}" if eta is not None else ""))

    def update(self, status: str) -> None:
        """Count one finished candidate of ``status`` and redraw."""
        self.counts[status] = self.counts.get(status, 0) + 1
        self.draw()

    def draw(self, final: bool = False) -> None:
        """Draw the line (in place on a terminal, rate-limited elsewhere)."""
        now = time.monotonic()
        if self._tty:
            self.stream.write("\r" + self.line() + ("\n" if final else ""))
        elif final or now - self._last_log >= self.log_every_s:
            self.stream.write(self.line() + "\n")
            self._last_log = now
        self.stream.flush()

    def close(self) -> None:
        """Draw the last line and end it."""
        self.draw(final=True)
