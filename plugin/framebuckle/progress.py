"""Progress lines on the terminal for long runs and batches.

Written to standard error and only when it is a terminal (silent in pipes, logs
and tests), on one line rewritten in place with elapsed time.
"""

from __future__ import annotations

import sys
import time


class Progress:
    def __init__(self, stream=None, enabled: bool | None = None, label: str = "framebuckle"):
        self.stream = stream if stream is not None else sys.stderr
        if enabled is None:
            try:
                enabled = bool(self.stream.isatty())
            except (AttributeError, ValueError):
                enabled = False
        self.enabled = enabled
        self.label = label
        self.t0 = time.perf_counter()
        self._width = 0

    def _show(self, text: str):
        if not self.enabled:
            return
        line = f"{self.label}: [{time.perf_counter() - self.t0:7.1f} s] {text}"
        pad = max(self._width - len(line), 0)
        self._width = len(line)
        self.stream.write("\r" + line + " " * pad)
        self.stream.flush()

    def stage(self, text: str):
        self._show(text)

    def __call__(self, case_name: str):
        self._show(f"case '{case_name}' done")

    def count(self, done: int, total: int, text: str = ""):
        self._show(f"{done}/{total} {text}".rstrip())

    def close(self):
        if self.enabled and self._width:
            self.stream.write("\r" + " " * self._width + "\r")
            self.stream.flush()
            self._width = 0
