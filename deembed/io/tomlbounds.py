"""Bounds on a TOML file's shape, checked before the parser sees it.

Python's TOML parser recurses once per level of nested arrays and inline tables (a few hundred levels
of ``[[[[...`` end in RecursionError) and takes time and memory growing with the square of a dotted
key's length (``a.a.a...`` with 20 000 parts: half a minute, 1.6 GB). deembed's own files (line
descriptions, catalogs, band lists, site files) need a few levels and two-part keys, so a file is
refused, naming the line, when it goes beyond generous bounds:

* ``MAX_TOML_BYTES`` (1 MiB) in all;
* ``MAX_DEPTH`` (32) levels of arrays and inline tables inside one another;
* ``MAX_KEY_PARTS`` (32) parts in one dotted key or table header;
* ``MAX_TABLES`` (5000) tables (headers and inline tables together).

The scan is linear in the file's length: it follows strings (basic, literal, multi-line) and comments
only far enough to skip them, and leaves every syntax error to the parser, which names it better.
"""
from __future__ import annotations

import re

from ..base.errors import InputFileError

MAX_TOML_BYTES = 1024 ** 2
MAX_DEPTH = 32
MAX_KEY_PARTS = 32
MAX_TABLES = 5000

# Everything the scan must look at: string and comment openers, brackets, separators, newlines.
_TOKEN = re.compile(r'"""|\'\'\'|["\'#\[\]{}.=,\n]')
_BASIC_END = re.compile(r'(?:[^"\\\n]|\\.)*"')
_ML_BASIC_END = re.compile(r'(?:[^"\\]|\\.|"(?!""))*"""', re.S)


def check_toml_bounds(text: str, path: str) -> None:
    """Raise :class:`InputFileError` naming ``path`` (and the line) when ``text`` is outside the bounds."""
    if len(text) > MAX_TOML_BYTES:
        raise InputFileError(path, f"holds {len(text)} characters; deembed's TOML files are far smaller "
                                   f"(limit {MAX_TOML_BYTES // 1024} KiB): check that it is the right file")
    stack: list[str] = []       # open '[' (array) and '{' (inline table) in values
    header = False              # inside a [table] or [[table]] header
    at_line_start = True
    key_parts = 1
    in_key = True
    tables = 0
    line = 1
    pos, n = 0, len(text)

    def refuse(what: str) -> None:
        raise InputFileError(path, f"{what}; deembed's files never need so much: fix or shorten the file",
                             line=line)

    while pos < n:
        m = _TOKEN.search(text, pos)
        if m is None:
            return
        tok, start = m.group(), m.start()
        if at_line_start and text[pos:start].strip():
            at_line_start = False
        pos = m.end()
        if tok == "\n":
            line += 1
            if not stack:
                at_line_start, in_key, key_parts = True, True, 1
            continue
        if tok == "#":
            end = text.find("\n", pos)
            pos = n if end < 0 else end
            continue
        if tok in ('"""', "'''"):
            if tok == '"""':
                e = _ML_BASIC_END.match(text, pos)
                end = e.end() if e else -1
            else:
                end = text.find("'''", pos)
                end = end + 3 if end >= 0 else -1
            if end < 0:
                return  # unterminated: the parser says where
            line += text.count("\n", pos, end)
            pos = end
            at_line_start = False
            continue
        if tok == '"':
            e = _BASIC_END.match(text, pos)
            if e is None:
                return
            pos = e.end()
            at_line_start = False
            continue
        if tok == "'":
            end = text.find("'", pos)
            nl = text.find("\n", pos)
            if end < 0 or (0 <= nl < end):
                return
            pos = end + 1
            at_line_start = False
            continue
        if tok == "[":
            if at_line_start and not stack:
                header = True
                in_key, key_parts = True, 1
                tables += 1
                if pos < n and text[pos] == "[":
                    pos += 1
            else:
                stack.append("[")
                in_key = False
            at_line_start = False
        elif tok == "]":
            if header:
                header = False
                in_key = False
                if pos < n and text[pos] == "]":
                    pos += 1
            elif stack:
                stack.pop()
        elif tok == "{":
            stack.append("{")
            tables += 1
            in_key, key_parts = True, 1
        elif tok == "}":
            if stack:
                stack.pop()
            in_key = False
        elif tok == ",":
            if stack and stack[-1] == "{":
                in_key, key_parts = True, 1
        elif tok == "=":
            in_key = False
        elif tok == "." and in_key:
            key_parts += 1
            if key_parts > MAX_KEY_PARTS:
                refuse(f"a dotted key or table name with more than {MAX_KEY_PARTS} parts")
        at_line_start = False
        if len(stack) > MAX_DEPTH:
            refuse(f"arrays or inline tables nested more than {MAX_DEPTH} deep")
        if tables > MAX_TABLES:
            refuse(f"more than {MAX_TABLES} tables")
