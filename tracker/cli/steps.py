"""Step-by-step status of long work, for the two places that write to a terminal:
the command line (``tracker.cli``) and the benchmark's ``main``. The library
never writes: it is handed nothing of this.
"""

from __future__ import annotations

import sys
import threading
import time
from typing import IO, Any


def terminal(stream: Any) -> bool:
    """True when ``stream`` is a terminal."""
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


class Steps:
    """Step-by-step status of a long command on standard error.

    ``step(label)`` starts a step. Once a step has run ``DELAY_S`` its line
    appears, showing the label and the seconds spent, updated a few times a
    second; the next step (or the end) closes a shown line with its time, so
    quick commands print nothing. Does nothing at all when ``show`` is
    false: output piped to a file or read by a program carries no status.
    """

    TICK_S = 0.2
    DELAY_S = 0.5

    def __init__(self, show: bool, stream: IO[str] | None = None):
        self.show = show
        self.stream = stream or sys.stderr
        self._label: str | None = None
        self._started = 0.0
        self._shown = False
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None  # runs only while shown

    def __enter__(self) -> Steps:
        if self.show:
            self._thread = threading.Thread(target=self._tick, daemon=True)
            self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        if self._thread is None:
            return
        self._stop.set()
        self._thread.join()
        self._close(failed=exc[0] is not None)

    def step(self, label: str) -> None:
        """Close the step before (if any) and start ``label``."""
        if not self.show:
            return
        with self._lock:
            self._close()
            self._label, self._started, self._shown = label, time.perf_counter(), False

    def _write(self, end: str = "") -> None:
        secs = time.perf_counter() - self._started
        self.stream.write(f"\r\x1b[K{self._label} ... {secs:.1f} s{end}")
        self.stream.flush()
        self._shown = True

    def _close(self, failed: bool = False) -> None:
        if self._label is not None and self._shown:
            if failed:
                self.stream.write("\r\x1b[K")
                self.stream.flush()
            else:
                self._write("\n")
        self._label = None

    def _tick(self) -> None:
        while not self._stop.wait(self.TICK_S):
            with self._lock:
                if self._label is not None and time.perf_counter() - self._started >= self.DELAY_S:
                    self._write()
