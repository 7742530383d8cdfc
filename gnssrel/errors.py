"""The few exceptions gnssrel raises for bad input.

Every user-facing error is a ``GnssrelInputError`` (a ``ValueError``) that
knows the file and, where it makes sense, the line.  The command line prints
``str(error)`` as one line and exits with status 2; nothing else is shown.
"""

from __future__ import annotations

from pathlib import Path


class GnssrelInputError(ValueError):
    """Bad or inconsistent user input (a file, an option, a time)."""

    def __init__(self, message: str, path: str | Path | None = None,
                 line: int | None = None, text: str | None = None):
        self.message = message
        self.path = None if path is None else str(path)
        self.line = line
        self.text = text
        super().__init__(self.__str__())

    def __str__(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path if self.line is None else f"{self.path}:{self.line}"
            where += ": "
        shown = ""
        if self.text is not None:
            snippet = self.text.rstrip("\r\n")
            if len(snippet) > 60:
                snippet = snippet[:57] + "..."
            shown = f" (line reads {snippet!r})"
        return f"{where}{self.message}{shown}"


class FileFormatError(GnssrelInputError):
    """A file is truncated, garbled, of an unknown version or kind."""


class TimeScaleError(GnssrelInputError):
    """An ambiguous or unknown time or time scale."""


class NoDataError(GnssrelInputError):
    """The inputs are readable but share nothing to work on (no overlap)."""
