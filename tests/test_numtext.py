"""Fast number text: the chunked CSV and Touchstone writers and the chunked Touchstone reader, checked
against outside references (pandas' own CSV writer, Python's correctly rounded float(), the decimal module)
and against the same file read in one piece.
"""
import io
from decimal import Decimal

import numpy as np
import pandas as pd
import pytest

from deembed.base.errors import InputFileError
from deembed.io import numtext, touchstone
from deembed.io.numtext import scale_decimal_tokens, table_blocks, write_csv_chunks
from deembed.io.touchstone import read_sweep, write_touchstone

SPECIAL = [np.nan, np.inf, -np.inf, -0.0, 0.0, 1e300, 1.5e-310, 123456789012.0, 0.1, 5e-5, 2.0, -1e-7]


def _csv(columns: dict, chunk: int) -> str:
    buf = io.StringIO()
    write_csv_chunks(buf, columns.keys(), table_blocks(columns, chunk))
    return buf.getvalue()


@pytest.mark.parametrize("chunk", [1, 7, 50_000])
def test_csv_is_what_pandas_writes(chunk):
    # Reference: pandas.DataFrame.to_csv(index=False, float_format="%.9g"), the writer this one replaces
    rng = np.random.default_rng(3)
    n = 1000
    cols = {
        "freq_hz": np.linspace(1e6, 60e6, n),
        "gamma_re": rng.standard_normal(n),
        "swr": np.exp(rng.uniform(0, 30, n)),
        "tiny": rng.standard_normal(n) * 1e-12,
        "special": np.resize(np.array(SPECIAL), n),
    }
    ref = io.StringIO()
    pd.DataFrame(cols).to_csv(ref, index=False, float_format="%.9g")
    assert _csv(cols, chunk) == ref.getvalue()


def test_csv_header_quotes_like_pandas():
    cols = {"a,b": np.array([1.0]), 'say "x"': np.array([np.nan])}
    ref = io.StringIO()
    pd.DataFrame(cols).to_csv(ref, index=False, float_format="%.9g")
    assert _csv(cols, 10) == ref.getvalue()


@pytest.mark.parametrize("exp", [0, 3, 6, 9])
def test_scaled_frequencies_are_correctly_rounded(exp):
    # Reference: the decimal module's exact value of the text times 10**exp, rounded once to float64
    # (Python's float() of a decimal string is correctly rounded, IEEE 754-2008 sec. 5.12.2).
    rng = np.random.default_rng(exp)
    texts = [repr(float(v)) for v in rng.uniform(0, 5000, 500)] + ["14.2", "0", "1.", ".5", "+7", "0.000001"]
    got = scale_decimal_tokens(texts, exp)
    want = np.array([float(Decimal(t).scaleb(exp)) for t in texts])
    assert np.array_equal(got, want)
    with_exp = ["1.5e3", "2E-2", "7e+0"]
    assert np.array_equal(scale_decimal_tokens(with_exp, exp), [float(Decimal(t).scaleb(exp)) for t in with_exp])


def test_touchstone_values_are_shortest_round_trip_text(tmp_path):
    # The format rule of the writer: each value is repr(float), the shortest text that reads back exactly
    # (Python float repr, David Gay's algorithm); each frequency reads back exactly in its unit.
    rng = np.random.default_rng(5)
    n = 2345
    f = np.cumsum(rng.uniform(1.0, 5e4, n)) + 1e6
    g = rng.standard_normal(n) * 0.3 + 1j * rng.standard_normal(n) * 0.3
    path = tmp_path / "x.s1p"
    write_touchstone(path, f, g, comments=["one", "two"])
    lines = path.read_text().splitlines()
    assert lines[:3] == ["! one", "! two", "# MHz S RI R 50"]
    for k, line in enumerate(lines[3:]):
        ftxt, re_txt, im_txt = line.split(" ")
        assert re_txt == repr(float(g[k].real)) and im_txt == repr(float(g[k].imag))
        assert float(Decimal(ftxt).scaleb(6)) == f[k]
    back = read_sweep(path)
    assert np.array_equal(back.freq_hz, f) and np.array_equal(back.gamma, g)


def test_touchstone_chunks_change_nothing(tmp_path, monkeypatch):
    rng = np.random.default_rng(6)
    f = np.linspace(1e6, 2e6, 301)
    s = rng.standard_normal((301, 2, 2)) + 1j * rng.standard_normal((301, 2, 2))
    for fmt in ("RI", "MA", "DB"):
        whole, parts = tmp_path / f"w{fmt}.s2p", tmp_path / f"p{fmt}.s2p"
        write_touchstone(whole, f, s, fmt=fmt, unit="kHz")
        monkeypatch.setattr(touchstone, "CHUNK_ROWS", 17)
        write_touchstone(parts, f, s, fmt=fmt, unit="kHz")
        monkeypatch.undo()
        assert whole.read_bytes() == parts.read_bytes()


def _big_file(tmp_path, extra=""):
    rng = np.random.default_rng(8)
    n = 400
    f = np.linspace(1.0, 30.0, n)
    rows = [f"{float(f[k])!r} {float(rng.standard_normal())!r} {float(rng.standard_normal())!r}" for k in range(n)]
    rows[57] += " ! a trailing comment"
    rows.insert(120, "! a comment line in the data")
    rows.insert(300, "# MHz S RI R 50")
    text = "! head\n# MHz S RI R 50\n" + "\n".join(rows) + "\n" + extra
    path = tmp_path / "big.s1p"
    path.write_text(text)
    return path


def test_reader_chunks_change_nothing(tmp_path, monkeypatch):
    path = _big_file(tmp_path)
    whole = read_sweep(path)
    monkeypatch.setattr(touchstone, "CHUNK_CHARS", 64)  # many chunks of a line or two
    parts = read_sweep(path)
    assert np.array_equal(whole.freq_hz, parts.freq_hz) and np.array_equal(whole.s, parts.s)
    assert whole.comments == parts.comments and whole.notes == parts.notes
    assert "a comment line in the data" in parts.comments
    assert any("second option line" in n for n in parts.notes)


@pytest.mark.parametrize("chunk", [64, 1 << 20])
def test_reader_errors_name_the_same_line_in_any_chunk(tmp_path, monkeypatch, chunk):
    path = _big_file(tmp_path, extra="31.0 0.1 abc\n")
    monkeypatch.setattr(touchstone, "CHUNK_CHARS", chunk)
    with pytest.raises(InputFileError) as err:
        read_sweep(path)
    n_lines = path.read_text().count("\n")
    assert f"line {n_lines}" in str(err.value) and "'abc' is not a number" in str(err.value)


def test_reader_noise_block_after_a_chunk_boundary(tmp_path, monkeypatch):
    # Touchstone 1.1: in a 2-port file, a line of 5 numbers whose frequency does not increase starts the
    # noise parameters (IBIS Touchstone Rev 1.1); everything after it is skipped.
    f = np.linspace(1.0, 2.0, 60)
    rows = [" ".join([repr(float(x))] + ["0.1", "0.2"] * 4) for x in f]
    rows += ["1.0 2.5 0.5 10 0.3", "1.5 2.6 0.5 11 0.3"]
    path = tmp_path / "amp.s2p"
    path.write_text("# GHz S RI R 50\n" + "\n".join(rows) + "\n")
    whole = read_sweep(path, expect_ports=2)
    monkeypatch.setattr(touchstone, "CHUNK_CHARS", 100)
    parts = read_sweep(path, expect_ports=2)
    assert parts.npoints == whole.npoints == 60
    assert parts.notes == whole.notes and "noise parameters" in parts.notes[-1]


def test_chunk_rows_constant_is_shared():
    assert touchstone.CHUNK_ROWS == numtext.CHUNK_ROWS
