"""The sweep progress line: counts per status, a bar, elapsed time and an ETA."""

import io
import re

from fluxlab.sweep.progress import ProgressBar, format_duration


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


def test_format_duration():
    assert format_duration(0) == "0:00:00"
    assert format_duration(3725.4) == "1:02:05"
