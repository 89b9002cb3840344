"""The one exception type for input a user can get wrong."""

from __future__ import annotations

from typing import Any


def _show(value: Any) -> str:
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
            parts.append(f"{self.file}: ")
        if self.key:
            parts.append(self.key)
            if self.has_value:
                parts.append(f" = {_show(self.value)}")
            parts.append(": ")
        parts.append(self.message)
        return "".join(parts).translate(_LINE_BREAKS)

    def with_file(self, file: str) -> "ScenarioError":
        if self.file is None:
            self.file = file
            self.args = (self.line(),)
        return self

    def __str__(self) -> str:
        return self.line()
