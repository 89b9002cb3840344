"""The one exception type for input a user can get wrong."""

from __future__ import annotations

from typing import Any


def _show(value: Any) -> str:
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) >= 10 ** 30:
        # repr() of a huge integer is slow, and refused beyond 4300 digits
        return f"<an integer of about {int(abs(value).bit_length() * 0.30103) + 1} digits>"
    if isinstance(value, str):
        text = repr(value)
    elif isinstance(value, float):
        text = repr(value)
    elif isinstance(value, (dict, list)):
        text = "{...}" if isinstance(value, dict) else "[...]"
    else:
        text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


# every character str.splitlines() breaks on becomes a space: the message stays one line
_LINE_BREAKS = {ord(c): " " for c in "\n\r\v\f\x1c\x1d\x1e\x85\u2028\u2029"}

# the parts of a message are cut to these lengths, so a huge key or file name (or a binary
# header quoted from a data file) cannot turn one line into a screenful
MAX_KEY = 160
MAX_FILE = 160
MAX_MESSAGE = 200


def printable(text: str) -> str:
    """One line of printable text: line breaks become spaces, other control characters '?'
    (a terminal escape sequence quoted from a file is shown, not obeyed)."""
    text = str(text).translate(_LINE_BREAKS)
    return "".join(ch if ch.isprintable() or ch == " " else "?" for ch in text)


def cut(text: str, limit: int, *, middle: bool = False) -> str:
    """``text`` at most ``limit`` characters, the cut marked by '...' (in the middle for paths)."""
    text = printable(text)
    if len(text) <= limit:
        return text
    if middle:
        half = (limit - 3) // 2
        return text[:half] + "..." + text[len(text) - (limit - 3 - half):]
    return text[:limit - 3] + "..."


class ScenarioError(Exception):
    """Bad user input: a scenario file, a data file or an option.

    Carries the file, the dotted key and the offending value, and renders as one
    line: ``file: dotted.key = value: what is expected``.
    """

    def __init__(self, message: str, *, key: str | None = None, value: Any = None,
                 file: str | None = None, has_value: bool | None = None):
        self.message = message
        self.key = key
        self.value = value
        self.file = file
        self.has_value = (value is not None) if has_value is None else has_value
        super().__init__(self.line())

    def line(self) -> str:
        parts = []
        if self.file:
            parts.append(f"{cut(self.file, MAX_FILE, middle=True)}: ")
        if self.key:
            parts.append(cut(self.key, MAX_KEY, middle=True))
            if self.has_value:
                parts.append(f" = {_show(self.value)}")
            parts.append(": ")
        parts.append(cut(self.message, MAX_MESSAGE))
        return printable("".join(parts))

    def with_file(self, file: str) -> "ScenarioError":
        if self.file is None:
            self.file = file
            self.args = (self.line(),)
        return self

    def __str__(self) -> str:
        return self.line()
