"""Progress on stderr: the sweep's counting bar and the status line of long commands."""

import io
import re

from fluxlab.sweep.progress import Progress, ProgressBar, format_duration


class Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_line_counts_and_ends_with_a_newline():
    stream = io.StringIO()  # not a terminal: lines are written, rate-limited, not redrawn
    bar = ProgressBar(4, stream=stream, width=8)
    assert "ETA" not in bar.line()  # nothing finished yet: no estimate
    for status in ("done", "rejected", "done", "failed"):
        bar.update(status)
    bar.close()
    last = stream.getvalue().splitlines()[-1]
    assert last.startswith("[########] 4/4  done 2  rejected 1  failed 1")
    assert re.search(r"elapsed \d+:\d\d:\d\d  ETA 0:00:00$", last)
    assert stream.getvalue().endswith("\n")


def test_bar_off_a_terminal_is_rate_limited():
    stream = io.StringIO()
    bar = ProgressBar(3, stream=stream, width=6)
    for status in ("done", "done", "done"):  # well within log_every_s of each other
        bar.update(status)
    assert len(stream.getvalue().splitlines()) == 1  # the first update only
    bar.close()
    lines = stream.getvalue().splitlines()
    assert len(lines) == 2 and lines[-1].startswith("[######] 3/3  done 3")


def test_messages_off_a_terminal_are_lines():
    stream = io.StringIO()
    progress = Progress(stream)
    progress("meshing")
    progress("torque vs position 1/4")
    progress.close()
    lines = stream.getvalue().splitlines()
    assert [re.sub(r"^\[ *\d+\.\d s\] ", "", line) for line in lines] == [
        "meshing", "torque vs position 1/4"]
    assert "\r" not in stream.getvalue()


def test_messages_on_a_terminal_overwrite_the_longer_line_before():
    stream = Terminal()
    progress = Progress(stream)
    progress("a long first message")
    progress("short")
    progress.close()
    first, second = stream.getvalue().split("\r")[1:]
    assert len(second.rstrip("\n")) == len(first)  # padded: no tail of the first is left
    assert second.rstrip().endswith("short") and stream.getvalue().endswith("\n")


def test_format_duration():
    assert format_duration(0) == "0:00:00"
    assert format_duration(3725.4) == "1:02:05"
