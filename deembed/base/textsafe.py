"""Text from files, made safe to show on a terminal.

A name in a line file, a site entry or a Touchstone comment is the file author's text. Written raw to a
terminal, control characters in it act: ESC sequences set the window title, clear the screen or move
the cursor, a carriage return overwrites what was shown before it, NUL and bidirectional overrides hide
or reorder text. Everything deembed prints passes through :func:`escape_controls` (the command line wraps
standard output and standard error in :class:`SafeStream`), so such characters are shown as visible
escapes (``\\x1b``, ``\\u202e``) instead of acting.
"""
from __future__ import annotations

import re

# C0 controls except TAB and LF, DEL, C1 controls, and the Unicode format characters that reorder or hide
# text (bidirectional embeddings, overrides and isolates; zero-width joiners are harmless and kept).
_CONTROLS = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069\ufeff]")


def _visible(m: re.Match) -> str:
    c = ord(m.group())
    return f"\\x{c:02x}" if c < 0x100 else f"\\u{c:04x}"


def escape_controls(text: str) -> str:
    """``text`` with every control character shown as an escape; tabs and newlines are kept.

    Examples
    --------
    >>> escape_controls("feed\\x1b]0;owned\\x07 A")
    'feed\\\\x1b]0;owned\\\\x07 A'
    """
    return _CONTROLS.sub(_visible, text)


def one_line(text: str) -> str:
    """``text`` escaped and folded onto one line (for ``error: ...`` messages)."""
    return " ".join(escape_controls(str(text)).split())


class SafeStream:
    """A text stream wrapper that escapes control characters in everything written through it.

    ``write_control`` writes its text unchanged: for the program's own cursor control (a progress line
    redrawn with a carriage return), never for text that came from a file.
    """

    def __init__(self, stream):
        self._stream = stream

    def write(self, text: str) -> int:
        self._stream.write(escape_controls(text))
        return len(text)

    def write_control(self, text: str) -> int:
        return self._stream.write(text)

    def writelines(self, lines) -> None:
        for ln in lines:
            self.write(ln)

    def __getattr__(self, name):  # flush, isatty, fileno, encoding, buffer, ...
        return getattr(self._stream, name)


def write_control(stream, text: str) -> None:
    """Write the program's own control text (``"\\r"``) to ``stream``, through a SafeStream or not."""
    getattr(stream, "write_control", stream.write)(text)
