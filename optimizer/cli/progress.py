"""Progress on stderr from tqdm: one bar per phase, drawn only on a terminal and never when quiet.

A command runs in phases (``strainline solve``: line table, search, front, writing). Each phase is
its own bar, so a bar at 100 % means that phase is done, not the command. The percentage is
rounded *down* to 0.1 %, so it never reads 100 % while work remains.

The search room never imports this module: it gets a :class:`Progress`, and calls
``progress.update(done, total)`` (or ``progress(done, total)``), nothing else.
"""
from __future__ import annotations

import math
import sys
import time
from typing import Any, TextIO

#: The bar when the total is known: the floored percentage, the bar, counts, elapsed and remaining.
BAR_FORMAT = "{desc}: {done_pct:5.1f}%|{bar}| {n_fmt}/{total_fmt} [{elapsed}<{remaining}, {rate_fmt}]"
#: A phase without a count (building a table, writing files): the elapsed time only.
OPEN_FORMAT = "{desc}: {elapsed}"


def floored_pct(done: float, total: float) -> float:
    """``100 done / total`` rounded down to 0.1 %, so only ``done >= total`` gives 100.0."""
    if total <= 0:
        return 0.0
    if done >= total:
        return 100.0
    return math.floor(1000.0 * max(done, 0) / total) / 10.0


def _tqdm_class():
    from tqdm import tqdm

    class _Bar(tqdm):
        monitor_interval = 0            # no monitor thread

        @property
        def format_dict(self) -> dict[str, Any]:
            d = super().format_dict
            total = d.get("total")
            d["done_pct"] = floored_pct(d["n"], total) if total else 0.0
            return d

    return _Bar


class Progress:
    """One progress bar (a phase of a command).

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
    total : int, optional
        The amount of work when known up front; :meth:`update` may give it too.
    """

    def __init__(self, label: str = "", stream: TextIO | None = None, quiet: bool = False,
                 min_interval_s: float = 0.2, total: int | None = None) -> None:
        self.label = label
        self.stream = stream if stream is not None else sys.stderr
        isatty = getattr(self.stream, "isatty", None)
        self.enabled = (not quiet) and bool(isatty and isatty())
        self.min_interval_s = min_interval_s
        self._last = 0.0
        self._bar = None
        self.total = total
        if self.enabled:
            self._bar = _tqdm_class()(
                total=total, desc=label, file=self.stream, leave=True, dynamic_ncols=True, ascii=True,
                mininterval=min_interval_s, bar_format=BAR_FORMAT if total else OPEN_FORMAT,
                smoothing=0.1)

    def update(self, done: int, total: int | None = None) -> None:
        """Report ``done`` of ``total`` units (``total`` may change, e.g. a budget cut short)."""
        bar = self._bar
        if bar is None:
            return
        if total is not None and total > 0 and total != bar.total:
            bar.total = total
            bar.bar_format = BAR_FORMAT
        done = min(done, bar.total) if bar.total else done
        bar.n = done
        now = time.perf_counter()
        if now - self._last >= self.min_interval_s or (bar.total and done >= bar.total):
            self._last = now
            bar.refresh()

    __call__ = update

    def close(self) -> None:
        """End the bar line (if one was drawn)."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None


class Phases:
    """The phases of one command, one :class:`Progress` each; use as a context manager.

    ``phases.start(name, total=None)`` ends the running phase and returns the new one's
    :class:`Progress`. With ``names`` given the label shows the phase number, e.g. ``[2/4] search``.
    """

    def __init__(self, names: tuple[str, ...] = (), quiet: bool = False, stream: TextIO | None = None) -> None:
        self.names = tuple(names)
        self.quiet = quiet
        self.stream = stream
        self.current: Progress | None = None

    def start(self, name: str, total: int | None = None) -> Progress:
        self.close()
        label = f"[{self.names.index(name) + 1}/{len(self.names)}] {name}" if name in self.names else name
        self.current = Progress(label, stream=self.stream, quiet=self.quiet, total=total)
        return self.current

    def close(self) -> None:
        if self.current is not None:
            self.current.close()
            self.current = None

    def __enter__(self) -> Phases:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
