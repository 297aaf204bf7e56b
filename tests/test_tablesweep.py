"""Text-table sweeps (--columns): reading, conversions against outside references, and bad input.

Sources beside each check; check-values.md tags: [D] computed from the named formula, [M] from memory.
"""
import numpy as np
import pytest
import skrf

from deembed.base.errors import InputFileError, OptionError
from deembed.io.tablesweep import MagnitudeSweep, parse_columns, read_table_sweep


def write(tmp_path, name, text, encoding="utf-8"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding))
    return p


# ------------------------------------------------------------------------------------------- mapping

@pytest.mark.parametrize("spec, quantity, kinds", [
    ("freq:MHz,r,x", "rx", ("freq", "r", "x")),
    ("freq:Hz,re,im", "reim", ("freq", "re", "im")),
    ("freq:MHz,rl,phase", "rlphase", ("freq", "rl", "phase")),
    ("freq:kHz,swr", "swr", ("freq", "swr")),
    ("freq:MHz,rl", "rl", ("freq", "rl")),
    ("freq:MHz,-,swr", "swr", ("freq", None, "swr")),
    (" X , Freq:GHZ , R ", "rx", ("x", "freq", "r")),
])
def test_column_specs(spec, quantity, kinds):
    cm = parse_columns(spec)
    assert cm.quantity == quantity
    assert cm.kinds == kinds


@pytest.mark.parametrize("spec, words", [
    ("", "name the table's columns"),
    ("freq,r,x", "needs its unit"),
    ("freq:THz,r,x", "unknown frequency unit"),
    ("freq:MHz,r", "R and X go together"),
    ("freq:MHz,phase", "a phase needs its return loss"),
    ("freq:MHz,swr,rl", "SWR stands alone"),
    ("freq:MHz,r,x,r", "twice"),
    ("freq:MHz,freq:Hz,swr", "twice"),
    ("r,x", "no frequency column"),
    ("freq:MHz,ohms,x", "is not a column name"),
    ("freq:MHz,r:ohm,x", "only the frequency column takes a unit"),
    ("freq:MHz,-", "name what the other columns hold"),
])
def test_bad_column_specs(spec, words):
    with pytest.raises(OptionError) as e:
        parse_columns(spec)
    assert e.value.option == "columns"  # library errors name the field; the CLI maps it to --columns
    assert words in str(e.value)


# --------------------------------------------------------------------------------------- conversions

def test_r_x_against_scikit_rf_and_e12(tmp_path):
    # check-values E12 [D]: 73.13 + j42.54 ohm on 50 ohm -> |Gamma| 0.3717, SWR 2.183
    p = write(tmp_path, "dipole.csv", "Freq (MHz),R (ohm),X (ohm)\n7.05,73.13,42.54\n7.10,60.0,-15.0\n")
    s = read_table_sweep(p, "freq:MHz,r,x")
    assert np.array_equal(s.freq_hz, [7.05e6, 7.10e6])
    assert abs(s.gamma[0]) == pytest.approx(0.3717, abs=1e-4)
    assert (1 + abs(s.gamma[0])) / (1 - abs(s.gamma[0])) == pytest.approx(2.183, abs=1e-3)
    # scikit-rf as an independent path for Gamma = (Z - Z0)/(Z + Z0)
    ref = skrf.tlineFunctions.zl_2_Gamma0(50.0, np.array([73.13 + 42.54j, 60.0 - 15.0j]))
    assert np.allclose(s.gamma, ref, rtol=0, atol=1e-14)
    assert any("header" in n and "Freq (MHz)" in n for n in s.notes)


def test_re_im_tabs_hz(tmp_path):
    p = write(tmp_path, "ri.txt", "1000000\t0.12\t-0.34\n2000000\t0.10\t-0.30\n")
    s = read_table_sweep(p, "freq:Hz,re,im")
    assert np.array_equal(s.freq_hz, [1e6, 2e6])
    assert np.array_equal(s.gamma, [0.12 - 0.34j, 0.10 - 0.30j])
    assert any("tabs" in n for n in s.notes)


def test_rl_phase_semicolons_decimal_comma(tmp_path):
    # SWR table [D] (check-values, F2-F3): RL 9.542 dB is SWR 2.0, |Gamma| 1/3
    p = write(tmp_path, "rl.csv", "Frequenz;RL;Phase\n14,000;9,542;90\n14,100;13,979;-45,5\n")
    s = read_table_sweep(p, "freq:MHz,rl,phase")
    assert np.allclose(s.freq_hz, [14.0e6, 14.1e6], rtol=1e-15)
    assert abs(s.gamma[0]) == pytest.approx(1 / 3, abs=2e-5)
    assert np.degrees(np.angle(s.gamma[0])) == pytest.approx(90.0, abs=1e-9)
    assert abs(s.gamma[1]) == pytest.approx(0.2, abs=2e-5)  # SWR table: 1.5:1 is RL 13.979 dB, |Gamma| 0.2
    assert np.degrees(np.angle(s.gamma[1])) == pytest.approx(-45.5, abs=1e-9)


def test_swr_only_spaces_khz_and_skip(tmp_path):
    # F2 (Pozar 4th ed. eq. 2.41, from memory): |Gamma| = (s - 1)/(s + 1); SWR table: 3:1 -> 0.5
    p = write(tmp_path, "swr.txt", "# kHz  ignore  SWR\n  7000   99   3.0\n  7050   99   2.0\n  7100   99   1.0\n")
    s = read_table_sweep(p, "freq:kHz,-,swr")
    assert isinstance(s, MagnitudeSweep)
    assert not s.has_phase
    assert not hasattr(s, "gamma")  # nothing downstream can take it for a complex reflection
    assert np.array_equal(s.freq_hz, [7.0e6, 7.05e6, 7.1e6])
    assert np.allclose(s.gamma_mag, [0.5, 1 / 3, 0.0], atol=1e-15)


def test_rl_alone_negative_is_s11_db(tmp_path):
    # F3 and Bird 2009 (from memory): return loss is positive; a column of negative values is |S11| in dB
    p = write(tmp_path, "rl.csv", "3.5,-9.542\n3.6,-6.021\n")
    s = read_table_sweep(p, "freq:MHz,rl")
    assert np.allclose(s.gamma_mag, [1 / 3, 0.5], atol=3e-5)  # SWR table: 9.542 dB -> 2:1, 6.021 dB -> 3:1
    assert any("|S11| in dB" in n for n in s.notes)
    p2 = write(tmp_path, "rl2.csv", "3.5,9.542\n3.6,6.021\n")
    assert np.allclose(read_table_sweep(p2, "freq:MHz,rl").gamma_mag, s.gamma_mag, rtol=0, atol=0)


def test_trailing_delimiter_crlf_bom_latin1(tmp_path):
    text = "Fréquence,R,X,\r\n7.0,50,0,\r\n7.1,45,5\r\n"  # a trailing comma on some lines
    a = read_table_sweep(write(tmp_path, "a.csv", text, "latin-1"), "freq:MHz,r,x")
    b = read_table_sweep(write(tmp_path, "b.csv", "\ufeff" + text), "freq:MHz,r,x")
    c = read_table_sweep(write(tmp_path, "c.csv", "7.0,50,0\n7.1,45,5\n"), "freq:MHz,r,x")
    assert np.array_equal(a.gamma, c.gamma) and np.array_equal(b.gamma, c.gamma)
    assert a.gamma[0] == 0


def test_same_sweep_as_touchstone(tmp_path):
    # the same numbers written as Touchstone RI and as a table give the same reflection
    from deembed.io.touchstone import read_sweep

    rng = np.random.default_rng(12)
    f = np.linspace(1, 30, 59)
    g = (rng.uniform(-0.6, 0.6, 59) + 1j * rng.uniform(-0.6, 0.6, 59))
    rows = "\n".join(f"{fi:.4f} {gi.real:.9f} {gi.imag:.9f}" for fi, gi in zip(f, g))
    ts = read_sweep(write(tmp_path, "x.s1p", "# MHz S RI R 50\n" + rows + "\n"))
    tab = read_table_sweep(write(tmp_path, "x.txt", rows + "\n"), "freq:MHz,re,im")
    assert np.allclose(tab.freq_hz, ts.freq_hz, rtol=1e-15, atol=0)
    assert np.array_equal(tab.gamma, ts.gamma)


# ------------------------------------------------------------------------------------------ bad input

@pytest.mark.parametrize("text, spec, words, line", [
    ("7.0,50,0\n7.1,45\n", "freq:MHz,r,x", "this line has 2 columns", 2),
    ("7.0,50,0\n7.1,45,5,6\n", "freq:MHz,r,x", "this line has 4 columns", 2),
    ("7.0,50,0\n7.1,4x5,5\n", "freq:MHz,r,x", "column 2 (resistance): cannot read '4x5'", 2),
    ("7.0,50,0\n\n7.1,45,nan\n", "freq:MHz,r,x", "column 3 (reactance): cannot read 'nan'", 3),
    ("7.0,50,0\n7.1,45,1e999\n", "freq:MHz,r,x", "too large", 2),
    ("hdr\n7.0,50\n7.1,45\n", "freq:MHz,r,x", "the table has 2 columns (separated by commas)", 2),
    ("7.0,1.5\n7.1,0.8\n", "freq:MHz,swr", "column 2 (SWR): 0.8 is below 1", 2),
    ("7.0,1.5\n7.0,1.4\n", "freq:MHz,swr", "is repeated", 2),
    ("7.1,1.5\n\n7.0,1.4\n", "freq:MHz,swr", "goes down", 3),
    ("-7.1,1.5\n7.0,1.4\n", "freq:MHz,swr", "negative", 1),
    ("7.0,-50,0\n", "freq:MHz,r,x", "no reflection coefficient", 1),
    ("7.0,50,0,\n7.1,45,5,6\n", "freq:MHz,r,x", "this line has 4 columns", 2),
    ("7.0,50,0\n7.1,45,5,,\n", "freq:MHz,r,x", "this line has 5 columns", 2),
    ("7.0,50,0\nEND\n", "freq:MHz,r,x", "this line has 1 column", 2),
])
def test_bad_rows(tmp_path, text, spec, words, line):
    p = write(tmp_path, "bad.csv", text)
    before = p.read_bytes()
    with pytest.raises(InputFileError) as e:
        read_table_sweep(p, spec)
    msg = str(e.value)
    assert e.value.line == line, msg
    assert msg.startswith(f"{p}, line {line}: ")
    assert words in msg, msg
    assert "\n" not in msg
    assert p.read_bytes() == before


@pytest.mark.parametrize("data, words", [
    (b"", "empty"),
    (b"Freq,R,X\nno numbers here\n", "no line of numbers"),
    (b"\x00\x01\x02binary", "binary"),
])
def test_bad_files(tmp_path, data, words):
    p = tmp_path / "f.csv"
    p.write_bytes(data)
    with pytest.raises(InputFileError) as e:
        read_table_sweep(p, "freq:MHz,r,x")
    assert words in str(e.value)


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(InputFileError, match="no such file"):
        read_table_sweep(tmp_path / "nope.csv", "freq:MHz,r,x")
    with pytest.raises(InputFileError, match="folder"):
        read_table_sweep(tmp_path, "freq:MHz,r,x")


def test_header_control_characters_escaped(tmp_path):
    p = write(tmp_path, "h.csv", "name\x1b[31m red\n7.0,2.0\n")
    s = read_table_sweep(p, "freq:MHz,swr")
    assert "\x1b" not in " ".join(s.notes)
    assert "\\x1b" in " ".join(s.notes)
