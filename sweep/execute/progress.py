"""The progress line: tasks done/total, walker-steps per second, time left (stderr)."""

from __future__ import annotations

import sys
import threading
import time
from typing import Any

from sweep.text import format_duration


class Progress:
    """One status line on stderr: tasks done/total, walker-steps per second, time left."""

    def __init__(
        self,
        total: int,
        done: int,
        enabled: bool,
        concurrency: int,
        started: float | None = None,
        note: str = "",
    ) -> None:
        #: Shown after the counts (a precision target's state of the points).
        self.note = note
        self.total = total
        self.done = done
        self.start_done = done
        self.enabled = enabled
        self.steps = 0
        self.t0 = time.monotonic()
        #: When the run started (before compiling): "elapsed" counts from here; rates
        #: and time left from ``t0``, when tasks began.
        self.started = self.t0 if started is None else started
        self.last = 0.0
        self.tty = sys.stderr.isatty()
        self.concurrency = concurrency
        self.lock = threading.Lock()

    def update(self, summary: dict[str, Any]) -> None:
        with self.lock:
            if "steps" in summary:
                self.done += 1
                self.steps += summary["steps"]
            now = time.monotonic()
            interval = 0.5 if self.tty else 30.0
            if self.enabled and (
                now - self.last >= interval or self.done == self.total
            ):
                self.last = now
                self._show(now)

    def _show(self, now: float) -> None:
        elapsed = max(now - self.t0, 1e-9)
        new = self.done - self.start_done
        rate = self.steps / elapsed
        left = self.total - self.done
        eta = "?" if new == 0 else format_duration(elapsed / new * left, "clock")
        width = 24
        filled = int(width * self.done / max(self.total, 1))
        bar = "#" * filled + "." * (width - filled)
        line = (
            f"[{bar}] {self.done}/{self.total} tasks  {rate / 1e6:8.2f} M walker-steps/s  "
            f"elapsed {format_duration(now - self.started, 'clock')}  left {eta}"
        )
        if self.note:
            line += f"  {self.note}"
        sys.stderr.write(("\r" + line) if self.tty else (line + "\n"))
        sys.stderr.flush()

    def close(self) -> None:
        if self.enabled and self.tty:
            self._show(time.monotonic())
            sys.stderr.write("\n")
            sys.stderr.flush()
