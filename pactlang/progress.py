"""Files and scenarios being checked -> one self-rewriting progress line on stderr.

Only on a terminal: `Progress.for_stream` gives None when the stream is not a
terminal or the user asked for quiet, and the checker then reports nothing.
The line is rewritten in place (carriage return, erase to end of line) and
cleared when the run ends, so it never mixes with the report on stdout.
"""

from __future__ import annotations

import shutil
import sys
import time
from typing import TextIO

BAR_WIDTH = 20


class Progress:
    """`[file 2/3] path  [#####.....] 3/7  "contingency name"  12s` on one line."""

    def __init__(self, stream: TextIO, total_files: int):
        self.stream = stream
        self.total_files = total_files
        self.file_index = 0
        self.path = ""
        self.scenarios = 1
        self.done = 0
        self.current = ""
        self.started = time.monotonic()

    @classmethod
    def for_stream(cls, total_files: int, quiet: bool = False, stream: TextIO | None = None) -> "Progress | None":
        """A progress line on `stream` (stderr by default) when it is a terminal
        and not `quiet`; None otherwise."""
        stream = stream or sys.stderr
        if quiet or not (hasattr(stream, "isatty") and stream.isatty()):
            return None
        return cls(stream, total_files)

    def start_file(self, path: str, scenarios: int) -> None:
        """A new file with `scenarios` scenarios (the baseline and each contingency)."""
        self.file_index += 1
        self.path = path
        self.scenarios = max(scenarios, 1)
        self.done = -1
        self.started = time.monotonic()

    def scenario(self, name: str) -> None:
        """The next scenario starts."""
        self.done += 1
        self.current = name
        self._draw()

    def end_file(self) -> None:
        self.done = self.scenarios
        self.clear()

    def clear(self) -> None:
        self.stream.write("\r\x1b[K")
        self.stream.flush()

    def line(self) -> str:
        """The text of the progress line, cut to the terminal width."""
        done = max(self.done, 0)
        filled = BAR_WIDTH * done // self.scenarios
        bar = "#" * filled + "." * (BAR_WIDTH - filled)
        where = "baseline" if self.current == "baseline" else f'"{self.current}"'
        elapsed = int(time.monotonic() - self.started)
        text = (f"[file {self.file_index}/{self.total_files}] {self.path}  [{bar}] "
                f"{done}/{self.scenarios}  {where}  {elapsed}s")
        width = shutil.get_terminal_size((80, 24)).columns - 1
        return text if len(text) <= width else text[: max(width - 1, 0)] + "…"

    def _draw(self) -> None:
        self.stream.write("\r\x1b[K" + self.line())
        self.stream.flush()
