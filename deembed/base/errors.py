"""The project's own exceptions.

Every error a user can cause is a :class:`DeembedError`. The command line turns one into a single
line ``error: <message>`` and the error's ``exit_status``: 2 for bad input (a file or an option), 3 for
results that could not be written (:class:`OutputWriteError`); nothing else is shown unless
``--debug`` is given.

Library code names what is wrong by the quantity or file field (``power``, ``length``, ``port``), never by a
command-line option. A field mentioned inside a message is written in backquotes (```vf```): ``str(exc)``
shows it as the plain name, and :meth:`DeembedError.render` lets the command line show its own option name
for it instead (``--vf``; the map is ``deembed.cli.options.OPTION_FOR_FIELD``).
"""
from __future__ import annotations

import re

_FIELD = re.compile(r"`([a-z][a-z0-9_]*)`")


def field_ref(name: str) -> str:
    """How a message mentions a field: ```name``` (see the module notes)."""
    return f"`{name}`"


def render_fields(text: str, names: dict | None = None) -> str:
    """``text`` with each ```field``` replaced by ``names[field]`` (or the plain field name)."""
    names = names or {}
    return _FIELD.sub(lambda m: names.get(m.group(1), m.group(1)), text)


class DeembedError(Exception):
    """Base class of every error deembed raises for bad input."""

    exit_status = 2

    def __init__(self, *args):
        self.template = str(args[0]) if args else ""
        super().__init__(render_fields(self.template), *args[1:])

    def render(self, names: dict | None = None) -> str:
        """The message with each field named as ``names`` says (e.g. ``{"power": "--power"}``)."""
        return render_fields(self.template, names)


class InputFileError(DeembedError):
    """A file that cannot be used, named with the line where the fault is (when there is one)."""

    def __init__(self, path, message: str, line: int | None = None):
        self.path = str(path)
        self.line = line
        self.reason = render_fields(message)
        where = f"{self.path}, line {line}" if line is not None else self.path
        super().__init__(f"{where}: {message}")


class OptionError(DeembedError):
    """A value outside its physical or syntactic range, named by its field (``power``, ``length``).

    ``field`` may also be a place in a file (``section 2 'length'``); then it is shown as it is.
    """

    def __init__(self, field: str, message: str):
        self.field = str(field).strip("`")
        self.reason = render_fields(message)
        head = field_ref(self.field) if _FIELD.fullmatch(field_ref(self.field)) else self.field
        super().__init__(f"{head}: {message}")

    @property
    def option(self) -> str:
        """The field (the name this attribute had when errors named options)."""
        return self.field


class CharacterizationError(DeembedError):
    """A characterization that cannot be trusted (a fit that failed, data that do not describe a line)."""


class OutputWriteError(DeembedError):
    """Results that could not be written: permission, a full disk, a folder or file in the way, or the
    output folder in use by another run. Not bad input: the command line exits with status 3."""

    exit_status = 3

    def __init__(self, path, message: str):
        self.path = str(path)
        self.reason = message
        super().__init__(f"{self.path}: {message}")
