"""A progress bar on a terminal; silent in pipes, files and CI.

The bar is drawn on standard error only when it is a terminal (``isatty``),
the environment variable ``CI`` is not set and ``FRAMEBUCKLE_PROGRESS`` is
not ``0``; ``FRAMEBUCKLE_PROGRESS=1`` forces it on.  It redraws one line in
place with a carriage return and clears it at the end, so the normal output
that follows is not interleaved with it.
"""

from __future__ import annotations

import os
import sys
import time


def enabled(stream=None) -> bool:
    flag = os.environ.get("FRAMEBUCKLE_PROGRESS")
    if flag is not None:
        return flag not in ("0", "", "false", "no")
    if os.environ.get("CI"):
        return False
    stream = stream or sys.stderr
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


class Progress:
    """``with Progress(total, "label") as bar: bar.step("what")`` - ``total`` steps."""

    WIDTH = 24

    def __init__(self, total: int, label: str = "", stream=None, show: bool | None = None):
        self.total = max(int(total), 0)
        self.label = label
        self.stream = stream or sys.stderr
        self.show = enabled(self.stream) if show is None else show
        self.done = 0
        self._t0 = time.monotonic()
        self._last = 0

    def __enter__(self):
        self._draw("")
        return self

    def __exit__(self, *exc):
        if self.show:
            self.stream.write("\r" + " " * self._last + "\r")
            self.stream.flush()
        return False

    def __call__(self, what: str = ""):
        """Callable form, for APIs that take a per-step callback (``api.solve(progress=)``)."""
        self.step(what)

    def step(self, what: str = ""):
        self.done = min(self.done + 1, self.total) if self.total else self.done + 1
        self._draw(what)

    def line(self, what: str = "") -> str:
        el = time.monotonic() - self._t0
        if not self.total:          # unknown number of steps: a count, no bar
            return f"{self.label} {self.done} done {el:5.1f}s {what}"[:100]
        filled = int(self.WIDTH * min(self.done, self.total) / self.total)
        bar = "#" * filled + "-" * (self.WIDTH - filled)
        return f"{self.label} [{bar}] {self.done}/{self.total} {el:5.1f}s {what}"[:100]

    def _draw(self, what):
        if not self.show:
            return
        text = self.line(what)
        pad = max(self._last - len(text), 0)
        self.stream.write("\r" + text + " " * pad)
        self.stream.flush()
        self._last = len(text)
