"""One line on standard error when the compiled (numba) kernels must be built.

numba keeps each compiled kernel in a cache on disk; the first run after an install (or
after the numba cache was cleared) builds them, which takes seconds with nothing else
to show. numba's event API reports every real compilation (a kernel loaded from the
cache raises no event), so the first one prints the notice, once per process.
"""

from __future__ import annotations

import sys

#: The building time, roughly: a cold `lcoe run` of the demo took 6 s longer than a warm one on
#: a 2-core machine (`lcoe bench` measures `cold_run_s` and `warm_run_s`); sweeps and tornadoes
#: build a few more kernels, slower machines take longer.
ESTIMATE_S = 10

NOTICE = f"preparing the fast kernels, once: about {ESTIMATE_S} s"

_installed = False


def announce_builds() -> bool:
    """Print :data:`NOTICE` to standard error when the first kernel of this
    process is compiled. Returns False where numba is missing (the array formulas run)."""
    global _installed
    if _installed:
        return True
    try:
        from numba.core import event
    except ImportError:
        return False

    class _Once(event.Listener):
        told = False

        def on_start(self, ev):
            if not self.told:
                self.told = True
                print(NOTICE, file=sys.stderr, flush=True)

        def on_end(self, ev):
            pass

    event.register("numba:compile", _Once())
    _installed = True
    return True
