"""Text tables that fit the terminal: the one layout every table of the command line goes through.

A table is its columns (header lines, alignment) and its rows of cells, already formatted. When
the whole table is wider than ``width``, its value columns are split into blocks, one under the
other, each block repeating the label columns on the left, so that every line fits. ``width=None``
prints the table whole (``--wide``).
"""

from __future__ import annotations

import os
import shutil
import sys
import textwrap
from dataclasses import dataclass

#: The width when standard output is not a terminal (a pipe, a file, a test).
DEFAULT_WIDTH = 100
INDENT = "  "


def terminal_width(stream=None) -> int:
    """The columns of the terminal standard output writes to; :data:`DEFAULT_WIDTH` when it writes to
    no terminal. ``COLUMNS`` in the environment, when set to a whole number, wins."""
    env = os.environ.get("COLUMNS", "")
    if env.strip().isdigit() and int(env) > 0:
        return int(env)
    stream = sys.stdout if stream is None else stream
    try:
        if stream.isatty():
            return shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns
    except (AttributeError, ValueError, OSError):
        pass
    return DEFAULT_WIDTH


@dataclass(frozen=True)
class Column:
    """One column: its header lines (top to bottom) and its alignment (``>`` right, ``<`` left)."""
    head: tuple[str, ...]
    align: str = ">"
    min_width: int = 0


def col(*head: str, align: str = ">", min_width: int = 0) -> Column:
    return Column(tuple(head), align, min_width)


def _widths(columns, rows) -> list[int]:
    out = []
    for j, c in enumerate(columns):
        cells = [len(r[j]) for r in rows]
        out.append(max([c.min_width, *map(len, c.head), *cells]))
    return out


def _line(cells, columns, widths, gap: str) -> str:
    parts = [f"{s:{c.align}{w}}" for s, c, w in zip(cells, columns, widths)]
    return (INDENT + gap.join(parts)).rstrip()


def blocks(n_values: int, label_width: int, value_widths: list[int], width: int | None, gap: int) -> list[range]:
    """The value columns of each block: as many as fit ``width`` beside the labels (at least one)."""
    if width is None:
        return [range(n_values)]
    out, start, used = [], 0, len(INDENT) + label_width
    for j in range(n_values):
        need = value_widths[j] + (gap if (label_width or j > start) else 0)
        if j > start and used + need > width:
            out.append(range(start, j))
            start, used = j, len(INDENT) + label_width
            need = value_widths[j] + (gap if label_width else 0)
        used += need
    out.append(range(start, n_values))
    return [b for b in out if len(b)] or [range(0)]


def render(columns: list[Column], rows: list[list[str]], *, labels: int = 1, width: int | None = DEFAULT_WIDTH,
           gap: int = 2) -> list[str]:
    """The lines of a table: the first ``labels`` columns label the rows and are repeated in every
    block; the other columns are split into blocks that fit ``width`` (None: one block, whole)."""
    rows = [[str(c) for c in r] for r in rows]
    if any(len(r) != len(columns) for r in rows):
        raise ValueError("every row needs one cell per column")
    widths = _widths(columns, rows)
    sep = " " * gap
    label_width = sum(widths[:labels]) + gap * max(labels - 1, 0)
    parts = blocks(len(columns) - labels, label_width, widths[labels:], width, gap)
    depth = max((len(c.head) for c in columns), default=0)
    out: list[str] = []
    for k, part in enumerate(parts):
        idx = list(range(labels)) + [labels + j for j in part]
        cs, ws = [columns[i] for i in idx], [widths[i] for i in idx]
        if k:
            out.append("")
        for h in range(depth):
            heads = [c.head[h - (depth - len(c.head))] if h >= depth - len(c.head) else "" for c in cs]
            out.append(_line(heads, cs, ws, sep))
        out.extend(_line([r[i] for i in idx], cs, ws, sep) for r in rows)
    return out


def wrap(text: str, width: int | None = DEFAULT_WIDTH, indent: str = "", subsequent: str | None = None) -> list[str]:
    """A line of text wrapped to ``width`` (never below 40 columns; None: the default width)."""
    w = max(40, DEFAULT_WIDTH if width is None else width)
    return textwrap.wrap(text, w, initial_indent=indent,
                         subsequent_indent=indent if subsequent is None else subsequent) or [""]


def warning_lines(warnings: list[str], width: int | None = DEFAULT_WIDTH) -> list[str]:
    """The closing "Warnings" block of a table: a blank line, the title, each warning wrapped."""
    if not warnings:
        return []
    out = ["", "Warnings"]
    for w in warnings:
        out += wrap(w, width or None, "  - ", "    ")
    return out
