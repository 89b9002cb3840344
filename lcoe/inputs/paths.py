"""Input files read safely: only regular files, of bounded size, checked before they are opened.

Opening a named pipe blocks until something writes to it, and a device such as the zero
device never ends; so the path is looked at (``os.stat``) before it is opened, and
anything but a regular file is refused with one line.
"""

from __future__ import annotations

import errno
import os
import stat
from pathlib import Path
from typing import Callable

MiB = 1024 * 1024
#: a data file (power curve, wind series) is read up to this size
MAX_DATA_BYTES = 200 * MiB
#: a scenario file is read up to this size (a large one, with 200 variants, is some 100 KB)
MAX_SCENARIO_BYTES = 4 * MiB


def _size(n: int) -> str:
    return f"{n / MiB:,.0f} MB" if n >= MiB else f"{n / 1024:,.0f} KB"


def check_input_file(path: str | Path, fail: Callable[[str], Exception], *, what: str = "a data file",
                     max_bytes: int = MAX_DATA_BYTES) -> os.stat_result:
    """The ``os.stat`` of ``path`` if it is a regular file of at most ``max_bytes``; else
    ``raise fail(message)``. Symbolic links are followed (a loop of them is refused)."""
    text = os.fspath(path)
    if not text.strip():
        raise fail("the path is empty")
    if "\x00" in text:
        raise fail("the path contains a NUL character")
    try:
        st = os.stat(text)
    except FileNotFoundError:
        raise fail("file not found") from None
    except NotADirectoryError:
        raise fail("file not found (a part of the path is a file, not a folder)") from None
    except PermissionError:
        raise fail("cannot be read (permission denied)") from None
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise fail("cannot be read (a loop of symbolic links)") from None
        if exc.errno == errno.ENAMETOOLONG:
            raise fail("cannot be read (the path is too long)") from None
        raise fail(f"cannot be read ({exc.strerror or type(exc).__name__})") from None
    except ValueError:
        raise fail("the path cannot be used (it holds a character the system refuses)") from None
    if stat.S_ISDIR(st.st_mode):
        raise fail(f"is a folder, not {what}")
    if not stat.S_ISREG(st.st_mode):
        raise fail(f"is not a regular file (a pipe, device or socket); give {what}")
    if st.st_size > max_bytes:
        raise fail(f"is {_size(st.st_size)}; {what} is read up to {_size(max_bytes)}")
    return st
