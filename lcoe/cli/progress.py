"""A progress bar on standard error for the long commands (Monte Carlo, sweep, tornado).

Shown only where someone watches: standard output and standard error both a terminal, and no
``--json``; it appears after about a second (a quick run shows none) and is cleared when the
run ends, so the table that follows is as without it. The bar is tqdm's; the engine reports
the fraction done through the same callback the app's progress bar uses.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager

DELAY_S = 1.0     # a run shorter than this shows no bar
STEPS = 1000      # the bar's resolution
REDRAW_S = 0.1    # the bar is redrawn at most this often


def wanted(args) -> bool:
    """True where a bar is shown: both streams a terminal and no --json."""
    if getattr(args, "json", False):
        return False
    try:
        return sys.stdout.isatty() and sys.stderr.isatty()
    except (AttributeError, ValueError):
        return False


@contextmanager
def bar(args, label: str):
    """A callback ``f(fraction)`` that moves the bar, or None where no bar is wanted."""
    if not wanted(args):
        yield None
        return
    from tqdm import tqdm

    from lcoe.outputs.tables import terminal_width
    # the width given, as a terminal that reports none (0 columns) would hide the bar
    with tqdm(total=STEPS, desc=label, file=sys.stderr, delay=DELAY_S, mininterval=REDRAW_S, leave=False,
              unit="", ncols=min(terminal_width(sys.stderr), 100),
              bar_format="{desc}: {percentage:3.0f}% |{bar}| {elapsed} elapsed, {remaining} left") as t:
        def move(fraction: float) -> None:
            n = min(STEPS, max(0, round(STEPS * float(fraction))))
            if n > t.n:
                t.update(n - t.n)
        yield move
