"""A small progress bar on stderr: drawn only on a terminal, silent otherwise or when quiet."""
from __future__ import annotations

import sys
import time
from typing import TextIO


class Progress:
    """Progress of a long search.

    Parameters
    ----------
    label : str
        Text before the bar.
    stream : file, optional
        Defaults to ``sys.stderr``.
    quiet : bool
        Never draw.
    min_interval_s : float
        Redraw at most this often.
    """

    def __init__(self, label: str = "", stream: TextIO | None = None, quiet: bool = False,
                 min_interval_s: float = 0.2) -> None:
        self.label = label
        self.stream = stream if stream is not None else sys.stderr
        isatty = getattr(self.stream, "isatty", None)
        self.enabled = (not quiet) and bool(isatty and isatty())
        self.min_interval_s = min_interval_s
        self._last = 0.0
        self._t0 = time.perf_counter()
        self._drawn = False

    def update(self, done: int, total: int) -> None:
        """Report ``done`` of ``total`` units."""
        if not self.enabled:
            return
        now = time.perf_counter()
        if now - self._last < self.min_interval_s and done < total:
            return
        self._last = now
        frac = 0.0 if total <= 0 else min(1.0, done / total)
        width = 30
        bar = "#" * int(frac * width) + "-" * (width - int(frac * width))
        self.stream.write(f"\r{self.label} [{bar}] {frac * 100:5.1f}% {done:,}/{total:,} "
                          f"{now - self._t0:6.1f}s")
        self.stream.flush()
        self._drawn = True

    def close(self) -> None:
        """End the bar line (if one was drawn)."""
        if self.enabled and self._drawn:
            self.stream.write("\n")
            self.stream.flush()
            self._drawn = False
