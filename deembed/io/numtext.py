"""Numbers as text at the speed of a compiled formatter and parser: chunk by chunk, one format per chunk.

Writing: a block of rows is turned into text by one ``%`` operation on a row format repeated for every row
of the block (Python's C float formatting does the work); nothing holds a Python object per point beyond
one block. Reading: numbers are parsed by numpy's C parser (``numpy.fromstring`` with a separator), and a
frequency written in a unit (``14.2`` in MHz) is turned into Hz as the decimal ``14.2e6`` correctly rounded,
by joining a chunk's frequency texts with the unit's exponent as the separator and parsing the result once.

The CSV written here is byte for byte what ``pandas.DataFrame.to_csv(path, index=False,
float_format=fmt)`` writes for the same float columns (``""`` for NaN, ``inf``/``-inf``, ``\\n`` line
ends); tests/test_numtext.py checks that against pandas.
"""
from __future__ import annotations

import csv
import io
import warnings

import numpy as np

CHUNK_ROWS = 16_384
"""Rows formatted per chunk: large enough that the per-chunk overhead vanishes (under 1 % of the time),
small enough that one chunk's text and its Python floats (about 60 bytes a value while it is formatted)
stay a few megabytes whatever the sweep's size."""


# ------------------------------------------------------------------------------------------------
# writing


def format_block(block: np.ndarray, row_format: str, nan_text: str | None = None) -> str:
    """Text of a 2-D float block, ``row_format`` (one ``%`` field per column, ending in a newline) per row.

    ``nan_text`` replaces the text of NaN values (``"%.9g" % nan`` is ``"nan"``); no other formatted number
    contains the letters ``nan``, so the replacement is exact.
    """
    m = block.shape[0]
    if m == 0:
        return ""
    text = (row_format * m) % tuple(block.ravel().tolist())
    if nan_text is not None and "nan" in text:
        text = text.replace("nan", nan_text)
    return text


def csv_header(names) -> str:
    """The header line as the csv module (and pandas) writes it: fields quoted only where needed."""
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow([str(n) for n in names])
    return buf.getvalue()


def write_csv_chunks(fh, names, blocks, float_format: str = "%.9g") -> None:
    """Write a CSV of float columns to the text file ``fh``: the header, then each (m, k) block of rows.

    ``blocks`` is an iterable of 2-D float arrays with ``len(names)`` columns; NaN is written as an empty
    field, as pandas does.
    """
    names = list(names)
    fh.write(csv_header(names))
    row = ",".join([float_format] * len(names)) + "\n"
    for block in blocks:
        block = np.asarray(block, dtype=float)
        for i in range(0, block.shape[0], CHUNK_ROWS):
            fh.write(format_block(block[i:i + CHUNK_ROWS], row, nan_text=""))


def table_blocks(columns, chunk: int = CHUNK_ROWS):
    """Yield (m, k) float blocks of a table, ``chunk`` rows at a time.

    ``columns`` is a dict of equal-length 1-D arrays, or a table object with ``rows(start, stop)`` and
    ``n_rows`` (whose columns are then worked out one block at a time).
    """
    rows = getattr(columns, "rows", None)
    if rows is not None:
        n = columns.n_rows
        for i in range(0, n, chunk):
            yield np.column_stack(list(rows(i, min(i + chunk, n)).values())).astype(float, copy=False)
        return
    cols = [np.asarray(v) for v in columns.values()]
    n = cols[0].shape[0] if cols else 0
    for i in range(0, n, chunk):
        yield np.column_stack([c[i:i + chunk] for c in cols]).astype(float, copy=False)


def is_float_table(columns) -> bool:
    """True when every column is a 1-D array of real floats (what :func:`write_csv_chunks` writes
    exactly as pandas would); a table object says so itself (``float_columns``)."""
    if getattr(columns, "float_columns", False):
        return True
    for v in columns.values():
        a = np.asarray(v)
        if a.ndim != 1 or a.dtype.kind != "f":
            return False
    return True


# ------------------------------------------------------------------------------------------------
# frequencies in a unit, exactly


def scale_decimal_tokens(texts: list, exp: int) -> np.ndarray:
    """Decimal texts times 10**exp, each the correctly rounded float64 (the exponent goes into the text)."""
    if exp == 0:
        return np.array(texts, dtype=float)
    joined = " ".join(texts)
    if "e" not in joined and "E" not in joined:
        sfx = f"e{exp} "
        return _fromstring((sfx.join(texts) + sfx).encode("ascii"), len(texts))
    out = []
    for t in texts:
        low = t.lower()
        if "e" in low:
            mant, e = low.split("e")
            out.append(f"{mant}e{int(e) + exp}")
        else:
            out.append(f"{t}e{exp}")
    return np.array(out, dtype=float)


def _fromstring(data: bytes, count: int) -> np.ndarray:
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        vals = np.fromstring(data, dtype=float, sep=" ")
    if vals.size != count:
        raise ValueError("number text did not parse")
    return vals
