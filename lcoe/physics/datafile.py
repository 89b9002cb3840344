"""Checks made before a data file is read: it exists, is a regular file and is not too large."""

from __future__ import annotations

import os
import stat
from pathlib import Path

from lcoe.inputs.errors import ScenarioError


def check_data_file(path: Path | str, *, key: str, max_bytes: int) -> Path:
    """Refuse a data file that is missing, a folder, not a regular file (a device, a pipe,
    a socket) or larger than ``max_bytes``; the message names the file, the key and the value.
    Returns the path."""
    path = Path(path)
    shown, name = str(path), path.name

    def fail(msg):
        return ScenarioError(msg, key=key, value=name, file=shown)

    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise fail("file not found") from None
    except (OSError, ValueError) as exc:
        raise fail(f"cannot be read ({type(exc).__name__})") from None
    if stat.S_ISDIR(st.st_mode):
        raise fail("is a folder, not a CSV file")
    if not stat.S_ISREG(st.st_mode):
        raise fail("is not a regular file (a device, pipe or socket); give a CSV file")
    if st.st_size > max_bytes:
        raise fail(f"is {st.st_size / 1e6:.1f} MB, more than the {max_bytes / 1e6:g} MB this file may have")
    return path
