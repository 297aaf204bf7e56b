"""One entry point for reading a sweep, whatever the analyzer exported: Touchstone or a text table.

Every command that reads a sweep (and the site runner, per entry) calls :func:`read_any_sweep`, so a
CSV export works the same everywhere once its columns are named.
"""
from __future__ import annotations

import re
from pathlib import Path

from ..base.errors import InputFileError, OptionError, field_ref
from .inputfile import check_input_file
from .tablesweep import COLUMNS_EXAMPLES, MagnitudeSweep, named, read_table_sweep
from .touchstone import read_sweep

__all__ = ["read_any_sweep", "read_phase_sweep"]

_SNP = re.compile(r"\.s\d+p\Z", re.I)


def _looks_like_touchstone(path: Path) -> bool:
    """True when the first line that is not blank or a '!' comment is an option line or a [keyword]."""
    check_input_file(path)  # a regular file within the size limit: never a device or a pipe that would hang
    try:
        with open(path, "rb") as fh:
            head = fh.read(65536)
    except OSError:
        return True  # let the Touchstone reader say what is wrong with the file
    for raw in head.decode("latin-1").splitlines():
        s = raw.strip().lstrip("\ufeff")
        if not s or s.startswith("!"):
            continue
        return s.startswith("#") or s.startswith("[")
    return True


def read_any_sweep(path, columns=None, *, port: int | None = None, expect_ports: int | None = 1,
                   option: str = "columns"):
    """Read a sweep from Touchstone or, with ``columns``, from a text table.

    Parameters
    ----------
    path : str or os.PathLike
    columns : str or ColumnMap, optional
        The table's columns (``freq:MHz,r,x`` ...; see :mod:`deembed.io.tablesweep`). Without it the
        file must be Touchstone; a file not named .sNp whose first line is not an option line or a
        Touchstone keyword is refused with a hint to name its columns.
    port : int, optional
        For a multi-port Touchstone file, which reflection to take (not for tables).
    expect_ports : int or None
        Port count the caller needs (Touchstone only; a table is always one port).
    option : str
        How the columns are given, for messages: the field ``columns`` (the command line shows
        ``--columns``), or a place in a file such as a site file's ``antenna 2 (x): 'columns'``.

    Returns
    -------
    Sweep or MagnitudeSweep
        A :class:`~deembed.io.sweep.Sweep` when the data has phase; a
        :class:`~deembed.io.tablesweep.MagnitudeSweep` for SWR or return loss alone.
    """
    p = Path(path)
    if columns is not None:
        if port is not None:
            raise OptionError("port", f"{path} is a text table, which holds one reflection; {field_ref('port')} is "
                                      "for multi-port Touchstone files: leave it out")
        return read_table_sweep(path, columns, option=option)
    if not _SNP.search(p.name) and p.is_file() and not _looks_like_touchstone(p):
        ref = named(option)
        how = (f"{ref}, e.g. {ref} freq:MHz,r,x" if ref != option or option.startswith("--")
               else f'a columns key ({option}), e.g. columns = "freq:MHz,r,x"')
        raise InputFileError(str(path), f"this is a text table, not Touchstone: say what its columns hold with "
                                        f"{how} (the others: {COLUMNS_EXAMPLES.split(' or ', 1)[1]})")
    return read_sweep(path, port=port, expect_ports=expect_ports)


def read_phase_sweep(path, columns=None, *, port: int | None = None, option: str = "columns", needs: str = ""):
    """:func:`read_any_sweep` for work that needs the phase (comparison, the look along the line): a sweep of
    SWR or return loss alone is refused with the reason and what to export instead."""
    sw = read_any_sweep(path, columns, port=port, expect_ports=1, option=option)
    if isinstance(sw, MagnitudeSweep):
        what = "SWR" if sw.quantity == "swr" else "return loss"
        raise InputFileError(str(path), f"this sweep holds {what} only, without phase; {needs or 'this'} needs the "
                                        "reflection's phase: export R and X (freq:MHz,r,x), the reflection's real and "
                                        "imaginary parts, or return loss with phase, or a Touchstone file")
    return sw
