"""The project's own exceptions.

Every error a user can cause is a :class:`DeembedError`. The command line turns one into a single
line ``error: <message>`` and exit status 2; nothing else is shown unless ``--debug`` is given.
"""
from __future__ import annotations


class DeembedError(Exception):
    """Base class of every error deembed raises for bad input."""


class InputFileError(DeembedError):
    """A file that cannot be used, named with the line where the fault is (when there is one)."""

    def __init__(self, path, message: str, line: int | None = None):
        self.path = str(path)
        self.line = line
        self.reason = message
        where = f"{self.path}, line {line}" if line is not None else self.path
        super().__init__(f"{where}: {message}")


class OptionError(DeembedError):
    """An option or parameter value outside its physical or syntactic range."""

    def __init__(self, option: str, message: str):
        self.option = option
        self.reason = message
        super().__init__(f"{option}: {message}")


class CharacterizationError(DeembedError):
    """A characterization that cannot be trusted (a fit that failed, data that do not describe a line)."""
