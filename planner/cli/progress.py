"""A one-line progress bar on stderr for runs that take more than a moment.

Shown only on a terminal, and only once the run has lasted :data:`SHOW_AFTER_S`; elsewhere (a
pipe, CI, a notebook) it stays silent. It is a plain callable, so the pipeline only calls
``progress(name)`` and never knows where the text goes.
"""

from __future__ import annotations

import sys
import time

#: Seconds before the bar appears; quicker runs print nothing.
SHOW_AFTER_S = 0.5
_WIDTH = 24


class ProgressBar:
    """``bar(step_name)`` advances one step of ``total``; ``bar.done()`` clears the line."""

    def __init__(self, total: int, stream=None, enabled: bool | None = None):
        self.total = max(int(total), 1)
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = self.stream.isatty() if enabled is None else enabled
        self.count = 0
        self.t0 = time.monotonic()
        self.shown = False

    def __call__(self, name: str) -> None:
        self.count = min(self.count + 1, self.total)
        elapsed = time.monotonic() - self.t0
        if not self.enabled or elapsed < SHOW_AFTER_S:
            return
        filled = int(_WIDTH * self.count / self.total)
        text = f"\r[{'#' * filled}{'.' * (_WIDTH - filled)}] {self.count}/{self.total} {name[:40]:40s} {elapsed:5.1f} s"
        self.stream.write(text)
        self.stream.flush()
        self.shown = True

    def done(self) -> None:
        if self.shown:
            self.stream.write("\r" + " " * (_WIDTH + 60) + "\r")
            self.stream.flush()
