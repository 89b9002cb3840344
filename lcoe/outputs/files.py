"""Atomic file output: a temporary file in the same folder, then a rename; and the rules that
keep an output from destroying anything.

An output path is refused when it is one of the run's inputs (the scenario or a data file,
compared by resolved path and by inode), when it is not a regular file (a folder, a
device, a pipe), and, unless ``force``, when it is read-only or a symbolic link (with
``force`` the link itself is replaced, never written through). ``-`` means standard
output. A SIGTERM during a write removes the temporary file, as an interrupt does.
"""

from __future__ import annotations

import contextlib
import csv
import io
import os
import signal
import stat
import sys
import tempfile
import threading
from pathlib import Path
from typing import Callable, Iterable

from lcoe.inputs.errors import ScenarioError

STDOUT = "-"


class Terminated(SystemExit):
    """A SIGTERM turned into an exception while a file is written, so the temporary file goes
    (exit status 128 + 15, as the signal would give)."""

    def __init__(self):
        super().__init__(128 + signal.SIGTERM)


@contextlib.contextmanager
def terminate_cleanly():
    """While the block runs, SIGTERM raises :class:`Terminated` (main thread only, and only
    where nobody else handles the signal)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.getsignal(signal.SIGTERM)
    if previous not in (signal.SIG_DFL, None):
        yield
        return

    def handler(signum, frame):
        raise Terminated()

    signal.signal(signal.SIGTERM, handler)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _hold_sigterm():
    """Block SIGTERM in this thread (POSIX); returns the previous mask, or None where not possible."""
    if not hasattr(signal, "pthread_sigmask"):
        return None
    return signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGTERM})


def _release_sigterm(held) -> None:
    """Restore the mask of :func:`_hold_sigterm`; a SIGTERM that came meanwhile is delivered now."""
    if held is not None:
        signal.pthread_sigmask(signal.SIG_SETMASK, held)


def _identity(path: Path) -> tuple | None:
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    return (st.st_dev, st.st_ino)


def check_output(path, *, option: str, inputs: Iterable[tuple[str, Path]] = (), force: bool = False,
                 stdout: bool = True, suffix: str | None = None) -> Path | None:
    """Refuse an output path that would destroy or misplace something; None for ``-`` (standard output).

    ``inputs`` are (label, path) pairs of the files the run reads: the output may be none of them.
    ``suffix`` (``.xlsx``, ``.csv``): the file name must end with it, in any case, so that a file is
    never written under another format's name.
    """
    text = os.fspath(path) if path is not None else ""
    if not text.strip():
        raise ScenarioError("the path is empty; give a file name", key=option, value=text)
    if text == STDOUT:
        if not stdout:
            raise ScenarioError("cannot be standard output ('-'); give a file name", key=option, value=text)
        return None
    if "\x00" in text:
        raise ScenarioError("the path contains a NUL character", key=option, value=text)
    p = _safe_path(text, option, inputs, force)
    if suffix is not None and p.suffix.lower() != suffix:
        raise ScenarioError(f"writes a {suffix} file: give a name ending in {suffix}", key=option, value=text)
    return p


def _safe_path(text: str, option: str, inputs, force: bool) -> Path:
    """The checks of :func:`check_output` on a file path (not standard output)."""
    p = Path(text)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise ScenarioError(f"folder does not exist: {folder}", key=option, value=text)
    try:
        lst = os.lstat(p)
    except FileNotFoundError:
        lst = None
    except OSError as exc:
        raise ScenarioError(f"cannot be used ({exc.strerror})", key=option, value=text) from None
    target = _identity(p)
    for label, inp in inputs:
        same = target is not None and target == _identity(inp)
        try:
            same = same or p.resolve() == Path(inp).resolve()
        except (OSError, RuntimeError, ValueError):
            pass
        if same:
            raise ScenarioError(f"is {label}, an input of this run; writing there would destroy it", key=option,
                                value=text)
    if lst is None:
        return p
    if stat.S_ISLNK(lst.st_mode):
        if not force:
            raise ScenarioError("is a symbolic link; give another path, or --force to replace the link (its target "
                                "is left alone)", key=option, value=text)
        return p
    if stat.S_ISDIR(lst.st_mode):
        raise ScenarioError("is a folder; give a file name", key=option, value=text)
    if not stat.S_ISREG(lst.st_mode):
        raise ScenarioError("is not a regular file (a device, pipe or socket); outputs are written only to "
                            "regular files", key=option, value=text)
    if not force and (not lst.st_mode & 0o222 or not os.access(p, os.W_OK)):
        raise ScenarioError("is read-only; give another path, or --force to replace it", key=option, value=text)
    return p


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
        mode = os.lstat(path).st_mode
    except OSError:
        mode = None
    if mode is not None and stat.S_ISDIR(mode):
        raise ScenarioError("is a folder; give a file name", key=option, value=str(path))
    if mode is not None and not (stat.S_ISREG(mode) or stat.S_ISLNK(mode)):
        # the rename would replace a device or a pipe by a plain file
        raise ScenarioError("is not a regular file (a device, pipe or socket); outputs are written only to "
                            "regular files", key=option, value=str(path))
    tmp_path = None
    with terminate_cleanly():             # from before the temporary file exists until it is renamed
        try:
            # SIGTERM is held back while the temporary file is made and its name recorded, so that
            # a signal can never fall between the two and leave the file behind
            held = _hold_sigterm()
            try:
                fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
                tmp_path = Path(tmp)
            except OSError as exc:
                raise ScenarioError(f"cannot write in {folder} ({exc.strerror})", key=option,
                                    value=str(path)) from None
            finally:
                _release_sigterm(held)
            os.close(fd)
            write(tmp_path)
            os.chmod(tmp_path, 0o666 & ~_umask())   # mkstemp makes owner-only files; use the usual mode
            os.replace(tmp_path, path)
            tmp_path = None
        except OSError as exc:
            if tmp_path is not None:
                tmp_path.unlink(missing_ok=True)
            raise ScenarioError(f"cannot write the file ({exc.strerror})", key=option, value=str(path)) from None
        except BaseException:
            if tmp_path is not None:
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
    if os.fspath(path) == STDOUT:
        sys.stdout.write(data)
        sys.stdout.flush()
        return None
    return write_atomic(path, lambda p: p.write_text(data, encoding="utf-8"), option=option)
