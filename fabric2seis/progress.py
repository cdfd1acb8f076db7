"""Progress bars of the long stages, drawn on a terminal only.

A bar is one line of stderr redrawn in place with carriage returns: the stage's name, a bar of
``#`` and ``-``, and the share done in percent. ``terminal_bars`` gives a bar maker only when the
stream is a terminal (a TTY); elsewhere (logs, CI, pipes) it gives None and nothing is drawn, so
files and captured output never hold a bar. The library's stages take an optional bar maker and
report the share of their work done, a fraction from 0 to 1 (``stage_bar``, ``share``).
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import TextIO

#: a stage reports the share of its work done, 0 to 1
Done = Callable[[float], None]


class TerminalBar:
    """A bar on one line of a terminal, redrawn when the whole percent done changes.

    Parameters
    ----------
    label : str
        What is being done, shown before the bar.
    stream : file
        Where the bar is drawn (a terminal).
    width : int
        Characters of the bar itself.
    """

    def __init__(self, label: str, stream: TextIO, width: int = 30) -> None:
        self.label, self.stream, self.width = label, stream, width
        self.percent = -1

    def show(self, fraction: float) -> None:
        """Draw the bar at ``fraction`` done (clipped to 0 to 1); nothing when the percent is unchanged.

        Parameters
        ----------
        fraction : float
            Share of the work done, 0 to 1.
        """
        fraction = min(max(float(fraction), 0.0), 1.0)
        percent = int(fraction * 100.0)
        if percent == self.percent:
            return
        self.percent = percent
        filled = int(round(fraction * self.width))
        self.stream.write(f"\r{self.label} [{'#' * filled}{'-' * (self.width - filled)}] {percent:3d} %")
        self.stream.flush()

    def close(self) -> None:
        """Draw the bar full and end its line."""
        self.show(1.0)
        self.stream.write("\n")
        self.stream.flush()


#: makes a bar for a stage from its label
BarMaker = Callable[[str], TerminalBar]


def terminal_bars(stream: TextIO | None = None) -> BarMaker | None:
    """A bar maker drawing on ``stream`` (default stderr) when it is a terminal, else None.

    Parameters
    ----------
    stream : file, optional
        The stream bars are drawn on; ``sys.stderr`` by default.

    Returns
    -------
    callable or None
        ``label -> TerminalBar``; None when ``stream`` is not a TTY (nothing is drawn).
    """
    out = sys.stderr if stream is None else stream
    isatty = getattr(out, "isatty", None)
    if isatty is None or not isatty():
        return None
    return lambda label: TerminalBar(label, out)


def _ignore(_fraction: float) -> None:
    pass


@contextmanager
def stage_bar(bars: BarMaker | None, label: str) -> Iterator[Done]:
    """Run a stage with a bar: yields the function that reports the share done; the bar ends full.

    Parameters
    ----------
    bars : callable or None
        A bar maker (``terminal_bars``); None draws nothing.
    label : str
        What the stage does.

    Yields
    ------
    callable
        ``fraction -> None``, the share of the stage done (0 to 1).
    """
    if bars is None:
        yield _ignore
        return
    bar = bars(label)
    try:
        yield bar.show
    finally:
        bar.close()


def share(done: Done, start: float, end: float) -> Done:
    """The part of a stage from ``start`` to ``end``: a sub-task's 0 to 1 maps onto that part.

    Parameters
    ----------
    done : callable
        The stage's reporter.
    start, end : float
        The part of the stage the sub-task is, fractions 0 to 1.

    Returns
    -------
    callable
        The sub-task's reporter.
    """
    return lambda fraction: done(start + (end - start) * min(max(float(fraction), 0.0), 1.0))
