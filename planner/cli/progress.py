"""A one-line progress bar on stderr for runs that take more than a moment.

Shown only on a terminal, and only once the run has lasted :data:`SHOW_AFTER_S`; elsewhere (a
pipe, CI, a notebook) it stays silent. It is a plain callable, so the pipeline only calls
``progress(name)`` and never knows where the text goes. With a ``unit`` (``"chunks"``) the line
also shows the rate and the time left, from the mean rate so far:

    [##########..............] 9/21 chunks  1.8 chunks/s  7 s left  chunk 9
"""

from __future__ import annotations

import sys
import time

#: Seconds before the bar appears; quicker runs print nothing.
SHOW_AFTER_S = 0.5
_WIDTH = 24


def format_duration(seconds: float) -> str:
    """``7 s``, ``4 min 05 s``, ``2 h 03 min``: the time left, rounded up to the second."""
    s = max(int(-(-seconds // 1)), 0)
    if s < 60:
        return f"{s} s"
    if s < 3600:
        return f"{s // 60} min {s % 60:02d} s"
    return f"{s // 3600} h {s % 3600 // 60:02d} min"


class ProgressBar:
    """``bar(step_name)`` advances one step of ``total``; ``bar.done()`` clears the line.

    ``unit`` names the steps (``"chunks"``) and adds the rate and the time left; ``clock`` is
    for tests (a function returning seconds, default :func:`time.monotonic`).
    """

    def __init__(self, total: int, stream=None, enabled: bool | None = None, unit: str | None = None,
                 clock=time.monotonic):
        self.total = max(int(total), 1)
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = _is_terminal(self.stream) if enabled is None else enabled
        self.unit = unit
        self.clock = clock
        self.count = 0
        self.t0 = clock()
        self.shown = False
        self.width = 0

    def line(self, name: str, elapsed: float) -> str:
        """The text of the bar after ``self.count`` steps and ``elapsed`` seconds."""
        filled = int(_WIDTH * self.count / self.total)
        bar = f"[{'#' * filled}{'.' * (_WIDTH - filled)}] {self.count}/{self.total}"
        if self.unit is None:
            return f"{bar} {name[:40]:40s} {elapsed:5.1f} s"
        rate = self.count / elapsed if elapsed > 0 else 0.0
        left = (self.total - self.count) / rate if rate > 0 else float("inf")
        left_text = format_duration(left) + " left" if rate > 0 else "-- left"
        return f"{bar} {self.unit}  {rate:.3g} {self.unit}/s  {left_text}  {name[:30]}"

    def __call__(self, name: str) -> None:
        self.count = min(self.count + 1, self.total)
        elapsed = self.clock() - self.t0
        if not self.enabled or elapsed < SHOW_AFTER_S:
            return
        text = self.line(name, elapsed)
        pad = max(self.width - len(text), 0)
        self.stream.write("\r" + text + " " * pad)
        self.stream.flush()
        self.width = len(text)
        self.shown = True

    def done(self) -> None:
        if self.shown:
            self.stream.write("\r" + " " * max(self.width, _WIDTH + 60) + "\r")
            self.stream.flush()


def _is_terminal(stream) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # no isatty, or a closed stream
        return False
