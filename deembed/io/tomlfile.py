"""Reading the project's TOML files (line descriptions, catalogs, band lists, site files).

One reader, so that every TOML file fails the same way: one :class:`InputFileError` naming the file
(and the line, for a syntax error) and saying what to do.
"""
from __future__ import annotations

import codecs
import os
import re

from ..base.errors import InputFileError
from .inputfile import format_size, read_input_bytes
from .tomlbounds import MAX_TOML_BYTES, check_toml_bounds

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 (pyproject lists tomli for it)
    import tomli as tomllib

DATA_DIR = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "data")
"""The package's own data files (cable catalog, band list)."""


def load_toml(path, hint: str = "fix the file") -> dict:
    """Read a TOML file, turning every failure into an InputFileError that names the file.

    The file must be a regular file within the input size limit (:mod:`deembed.io.inputfile`) and
    within the shape bounds of :mod:`deembed.io.tomlbounds`, checked before parsing. A UTF-8
    byte-order mark (which some editors write) is skipped.
    """
    p = str(path)
    data = read_input_bytes(p)
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8):]
    if len(data) > MAX_TOML_BYTES:
        raise InputFileError(p, f"is {format_size(len(data))}; deembed's TOML files are far smaller (limit "
                                f"{format_size(MAX_TOML_BYTES)}): check that it is the right file")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise InputFileError(p, "not a UTF-8 text file; save it as UTF-8 TOML", line=line) from None
    check_toml_bounds(text, p)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputFileError(p, f"not valid TOML ({exc}); {hint}", line=int(m.group(1)) if m else None) from None
    except RecursionError:  # pragma: no cover - the bounds above keep the parser far from this
        raise InputFileError(p, "nested too deeply to read; fix the file") from None
