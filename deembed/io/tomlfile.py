"""Reading the project's TOML files (line descriptions, catalogs, band lists, site files).

One reader, so that every TOML file fails the same way: one :class:`InputFileError` naming the file
(and the line, for a syntax error) and saying what to do.
"""
from __future__ import annotations

import os
import re

from ..base.errors import InputFileError

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 (pyproject lists tomli for it)
    import tomli as tomllib

DATA_DIR = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "data")
"""The package's own data files (cable catalog, band list)."""


def load_toml(path, hint: str = "fix the file") -> dict:
    """Read a TOML file, turning every failure into an InputFileError that names the file."""
    p = str(path)
    if not os.path.exists(p):
        raise InputFileError(p, "no such file; check the path")
    if os.path.isdir(p):
        raise InputFileError(p, "is a folder; give a TOML file")
    try:
        with open(p, "rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputFileError(p, f"not valid TOML ({exc}); {hint}", line=int(m.group(1)) if m else None) from None
    except UnicodeDecodeError:
        raise InputFileError(p, "not a UTF-8 text file; save it as UTF-8 TOML") from None
    except OSError as exc:
        raise InputFileError(p, f"cannot read it ({exc.strerror})") from None
