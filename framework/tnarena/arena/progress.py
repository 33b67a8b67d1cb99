"""A one-line progress bar with rate and ETA, written to a terminal or a log."""

from __future__ import annotations

import time
from typing import TextIO

#: Seconds between redraws on a terminal, and between lines in a log.
REDRAW_SECONDS, LOG_SECONDS = 0.5, 30.0


class Progress:
    """Counts finished tasks out of ``total``; ``stream=None`` keeps quiet."""

    def __init__(self, total: int, stream: TextIO | None, unit: str = "tasks") -> None:
        self.total, self.stream, self.unit = total, stream, unit
        self.done = self.failed = 0
        self.start = self._last = time.monotonic()
        self._tty = bool(stream is not None and getattr(stream, "isatty", lambda: False)())
        self._draw(force=True)

    def advance(self, failed: bool = False) -> None:
        self.done += 1
        self.failed += int(failed)
        self._draw(force=self.done == self.total)

    def close(self) -> None:
        if self.stream is not None and self._tty:
            print(file=self.stream, flush=True)

    def line(self) -> str:
        elapsed = time.monotonic() - self.start
        frac = self.done / self.total if self.total else 1.0
        width = 24
        filled = int(round(frac * width))
        rate = self.done / elapsed if elapsed > 0 else 0.0
        eta = (self.total - self.done) / rate if rate > 0 else float("nan")
        failed = f", {self.failed} failed" if self.failed else ""
        return (f"[{'#' * filled}{'.' * (width - filled)}] {self.done}/{self.total} {self.unit} "
                f"{100 * frac:3.0f}%  {rate:.2f}/s  elapsed {_clock(elapsed)}  ETA {_clock(eta)}{failed}")

    def _draw(self, force: bool = False) -> None:
        if self.stream is None:
            return
        now = time.monotonic()
        if not force and now - self._last < (REDRAW_SECONDS if self._tty else LOG_SECONDS):
            return
        self._last = now
        if self._tty:
            print("\r" + self.line(), end="", file=self.stream, flush=True)
        else:
            print(self.line(), file=self.stream, flush=True)


def _clock(seconds: float) -> str:
    if seconds != seconds or seconds == float("inf"):
        return "--:--"
    seconds = int(round(seconds))
    h, rest = divmod(seconds, 3600)
    m, s = divmod(rest, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m:02d}:{s:02d}"
