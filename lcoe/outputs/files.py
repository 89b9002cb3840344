"""Atomic file output: a temporary file in the same folder, then a rename."""

from __future__ import annotations

import csv
import io
import os
import tempfile
from pathlib import Path
from typing import Callable

from lcoe.inputs.errors import ScenarioError


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_atomic(path: str | Path, write: Callable[[Path], None], *, option: str = "output") -> Path:
    """Call ``write(tmp_path)`` then move the file into place; on any failure nothing is left.

    ``option`` names the command-line option in the error message.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ScenarioError(f"folder does not exist: {folder}", key=option, value=str(path))
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise ScenarioError(f"cannot write in {folder} ({exc.strerror})", key=option, value=str(path)) from None
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        write(tmp_path)
        os.chmod(tmp_path, 0o666 & ~_umask())   # mkstemp makes owner-only files; use the usual mode
        os.replace(tmp_path, path)
    except OSError as exc:
        tmp_path.unlink(missing_ok=True)
        raise ScenarioError(f"cannot write the file ({exc.strerror})", key=option, value=str(path)) from None
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise
    return path


def safe_cell(value):
    """Text that a spreadsheet would read as a formula gets a leading apostrophe (CSV)."""
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value


def write_csv(path: str | Path, header: list[str], rows: list[list], *, option: str = "--csv") -> Path:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    # Python < 3.12 leaves a field holding a bare carriage return unquoted, which splits the
    # row on reading: such rows are written fully quoted (RFC 4180).
    quoted = csv.writer(buf, lineterminator="\n", quoting=csv.QUOTE_ALL)
    for r in [[safe_cell(h) for h in header]] + [["" if v is None else safe_cell(v) for v in r] for r in rows]:
        (quoted if any(isinstance(v, str) and "\r" in v for v in r) else w).writerow(r)
    data = buf.getvalue()
    return write_atomic(path, lambda p: p.write_text(data, encoding="utf-8"), option=option)
