"""Progress lines on standard error for long commands."""

from __future__ import annotations

import sys
import time

__all__ = ["Progress"]


class Progress:
    """Callable that prints ``[elapsed s] message`` to stderr, overwriting on a terminal."""

    def __init__(self, stream=None):
        self.stream = sys.stderr if stream is None else stream
        self.start = time.perf_counter()
        self.tty = self.stream.isatty()

    def __call__(self, message: str) -> None:
        line = f"[{time.perf_counter() - self.start:7.1f} s] {message}"
        if self.tty:
            self.stream.write("\r" + line.ljust(78))
        else:
            self.stream.write(line + "\n")
        self.stream.flush()

    def done(self) -> None:
        """End the progress display."""
        if self.tty:
            self.stream.write("\n")
