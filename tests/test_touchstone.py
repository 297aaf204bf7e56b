"""The Touchstone reader and writer against the Touchstone specification and scikit-rf (independent path).

Sources named beside the checks:
  [TS1.1] IBIS Touchstone Rev 1.1 specification, rules as summarised in check-values §4 ([R]).
  [TS2.0] IBIS Touchstone Version 2.0 specification, via check-values §4 ([R] unless marked [M]).
  [skrf]  scikit-rf 2.2 used as an independent path: Networks built from arrays, or its pickle-free
          ``Network().read_touchstone(path)`` (scikit-rf-notes "Reading Touchstone").
  [Pozar] Pozar, Microwave Engineering 4th ed., Gamma = (Z - Z0)/(Z + Z0), eq. 2.35.
"""
from __future__ import annotations

import os

import numpy as np
import pytest

from deembed.base.errors import InputFileError, OptionError
from deembed.io.atomic import atomic_path, check_not_input, write_bytes_atomic, write_text_atomic
from deembed.io.touchstone import read_sweep, write_touchstone

TOL = 1e-12  # absolute tolerance on complex S where arithmetic (not text) is involved


def _file(tmp_path, name, text, encoding="ascii"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding) if isinstance(text, str) else text)  # latin-1 for \xb5 etc.
    return p


def _gamma(z, z0=50.0):
    return (z - z0) / (z + z0)  # [Pozar] eq. 2.35


# ------------------------------------------------------------------------------------------------
# option line and formats


def test_check_values_v1_example(tmp_path):
    # [TS1.1] minimal one-port example of check-values §4 ([D], constructed): MHz, RI, R 50.
    p = _file(tmp_path, "a.s1p", "! v1 one-port\n# MHz S RI R 50\n1.000  0.12 -0.34\n2.000  0.10 -0.30\n")
    sw = read_sweep(p)
    assert np.array_equal(sw.freq_hz, [1e6, 2e6])  # exact: the decimal 1.000 MHz is 1e6 Hz
    assert np.array_equal(sw.gamma, [0.12 - 0.34j, 0.10 - 0.30j])  # RI at 50 ohm: no arithmetic
    assert sw.comments == ("v1 one-port",)
    assert sw.notes == ()
    assert sw.s.shape == (2, 1, 1)


def test_hz_db_r75(tmp_path):
    # [TS1.1] check-values §4 parser check: '# Hz S DB R 75' -> |S11| = 10^(dB/20), Z_ref 75 ohm.
    p = _file(tmp_path, "a.s1p", "# Hz S DB R 75\n1000 -6 30\n2000 -20 -45\n")
    sw = read_sweep(p)
    assert np.array_equal(sw.freq_hz, [1000.0, 2000.0])
    g75 = 10 ** (np.array([-6.0, -20.0]) / 20) * np.exp(1j * np.deg2rad([30.0, -45.0]))
    z = 75 * (1 + g75) / (1 - g75)  # [Pozar] Z from Gamma at 75 ohm
    np.testing.assert_allclose(sw.gamma, _gamma(z, 50), rtol=0, atol=TOL)
    assert sw.file_z_ref_ohm == 75.0


def test_missing_option_line_uses_spec_defaults(tmp_path):
    # [TS1.1] defaults GHz, S, MA, R 50 (check-values §4 option-line table).
    p = _file(tmp_path, "a.s1p", "! no option line\n1.5 0.5 90\n2.5 0.25 -180\n")
    sw = read_sweep(p)
    assert np.array_equal(sw.freq_hz, [1.5e9, 2.5e9])
    np.testing.assert_allclose(sw.gamma, [0.5j, -0.25], rtol=0, atol=1e-15)
    assert any("no option line" in n for n in sw.notes)
    # a partial option line: the missing fields take the same defaults [TS1.1]
    q = _file(tmp_path, "b.s1p", "# MHz\n1.5 0.5 90\n")
    assert np.array_equal(read_sweep(q).freq_hz, [1.5e6])
    np.testing.assert_allclose(read_sweep(q).gamma, [0.5j], rtol=0, atol=1e-15)


def test_case_insensitive_and_any_field_order(tmp_path):
    # [TS1.1] case-insensitive; fields after '#' in any order (check-values §4).
    body = "10 0.3 40\n20 0.2 -10\n"
    a = read_sweep(_file(tmp_path, "a.s1p", "# MHz S MA R 50\n" + body))
    b = read_sweep(_file(tmp_path, "b.s1p", "# mhz s ma r 50\n" + body))
    c = read_sweep(_file(tmp_path, "c.s1p", "#r 50 ma S mHz\n" + body))
    for other in (b, c):
        assert np.array_equal(a.freq_hz, other.freq_hz)
        assert np.array_equal(a.s, other.s)


@pytest.mark.parametrize("unit,scale", [("Hz", 1.0), ("kHz", 1e3), ("MHz", 1e6), ("GHz", 1e9)])
def test_frequency_units(tmp_path, unit, scale):
    # [TS1.1] units Hz, kHz, MHz, GHz; 7.1 in the unit is the decimal 7.1 x scale, read exactly.
    sw = read_sweep(_file(tmp_path, "a.s1p", f"# {unit} S RI R 50\n7.1 0 0\n14.2 0 0\n"))
    assert np.array_equal(sw.freq_hz, [float(f"7.1e{int(np.log10(scale))}"), float(f"14.2e{int(np.log10(scale))}")])


def test_ma_db_ri_describe_the_same_values(tmp_path):
    # [TS1.1] DB is 20 log10|S| with angle in degrees; MA magnitude/angle; RI real/imaginary.
    rng = np.random.default_rng(7)
    g = (rng.uniform(0.05, 0.95, 6) * np.exp(1j * rng.uniform(-np.pi, np.pi, 6)))
    f = np.arange(1, 7) * 1.0
    ri = "".join(f"{x!r} {v.real!r} {v.imag!r}\n" for x, v in zip(f.tolist(), g.tolist()))
    ma = "".join(f"{x!r} {abs(v)!r} {float(np.degrees(np.angle(v)))!r}\n" for x, v in zip(f.tolist(), g.tolist()))
    db = "".join(f"{x!r} {float(20 * np.log10(abs(v)))!r} {float(np.degrees(np.angle(v)))!r}\n"
                 for x, v in zip(f.tolist(), g.tolist()))
    r = read_sweep(_file(tmp_path, "ri.s1p", "# GHz S RI R 50\n" + ri)).gamma
    m = read_sweep(_file(tmp_path, "ma.s1p", "# GHz S MA R 50\n" + ma)).gamma
    d = read_sweep(_file(tmp_path, "db.s1p", "# GHz S DB R 50\n" + db)).gamma
    assert np.array_equal(r, g)
    np.testing.assert_allclose(m, g, rtol=0, atol=1e-15)
    np.testing.assert_allclose(d, g, rtol=0, atol=1e-15)


def test_z_and_y_one_port_v1_are_normalised_to_r(tmp_path):
    # [TS1.1] v1 Z and Y data are normalised to R (check-values §4 "Data lines").
    zs = read_sweep(_file(tmp_path, "z.s1p", "# MHz Z RI R 75\n1 1.0 0.5\n")).gamma
    np.testing.assert_allclose(zs, _gamma(75 * (1 + 0.5j)), rtol=0, atol=TOL)  # Z = 75 (1 + 0.5j) ohm
    ys = read_sweep(_file(tmp_path, "y.s1p", "# MHz Y RI R 75\n1 2.0 -1.0\n")).gamma
    np.testing.assert_allclose(ys, _gamma(1 / ((2 - 1j) / 75)), rtol=0, atol=TOL)  # Y = (2 - j)/75 S


def test_z_and_y_one_port_v2_are_not_normalised(tmp_path):
    # [TS2.0] v2 removes normalisation of Y and Z (check-values §4, IBIS draft summary [R]).
    head = "[Version] 2.0\n# MHz {} RI R 75\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n"
    zs = read_sweep(_file(tmp_path, "z.ts", head.format("Z") + "1 75 37.5\n[End]\n")).gamma
    np.testing.assert_allclose(zs, _gamma(75 + 37.5j), rtol=0, atol=TOL)
    ys = read_sweep(_file(tmp_path, "y.ts", head.format("Y") + "1 0.02 -0.01\n[End]\n")).gamma
    np.testing.assert_allclose(ys, _gamma(1 / (0.02 - 0.01j)), rtol=0, atol=TOL)


def _s2p_text(f, s, head="# MHz S RI R 75"):
    rows = []
    for x, m in zip(f.tolist(), s.tolist()):
        vals = [m[0][0], m[1][0], m[0][1], m[1][1]]  # [TS1.1] 2-port order N11 N21 N12 N22
        rows.append(f"{x!r} " + " ".join(f"{v.real!r} {v.imag!r}" for v in vals))
    return head + "\n" + "\n".join(rows) + "\n"


def test_two_port_r75_renormalisation_matches_skrf(tmp_path):
    import skrf

    rng = np.random.default_rng(11)
    n = 9
    f = np.arange(1, n + 1) * 3.5
    s75 = (rng.normal(size=(n, 2, 2)) + 1j * rng.normal(size=(n, 2, 2))) * 0.3
    sw = read_sweep(_file(tmp_path, "line.s2p", _s2p_text(f, s75)), expect_ports=2)
    # [skrf] independent path: a Network built from the arrays at 75 ohm, renormalised to 50.
    ref = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="MHz"), s=s75, z0=75)
    ref.renormalize(50)
    np.testing.assert_allclose(sw.s, ref.s, rtol=0, atol=TOL)
    # the same through Z = 75 (I - S)^-1 (I + S), S' = (Z - 50 I)(Z + 50 I)^-1 ([Pozar] §4.3, from memory)
    eye = np.eye(2)
    z = 75 * np.linalg.solve(eye - s75, eye + s75)
    s50 = np.linalg.solve((z + 50 * eye).swapaxes(1, 2), (z - 50 * eye).swapaxes(1, 2)).swapaxes(1, 2)
    np.testing.assert_allclose(sw.s, s50, rtol=0, atol=TOL)
    assert sw.file_z_ref_ohm == 75.0


def test_two_port_order_and_port_selection(tmp_path):
    # [TS1.1] v1 2-port line is f N11 N21 N12 N22 (the 21-before-12 order).
    p = _file(tmp_path, "a.s2p", "# MHz S RI R 50\n1 0.11 0 0.21 0 0.12 0 0.22 0\n")
    sw = read_sweep(p, expect_ports=2)
    assert np.array_equal(sw.s[0], [[0.11, 0.12], [0.21, 0.22]])
    assert read_sweep(p, port=2).gamma[0] == 0.22
    assert read_sweep(p, port=1).gamma[0] == 0.11
    with pytest.raises(InputFileError, match=r"port 1 or port 2.*S11 or S22") as e:
        read_sweep(p)
    assert str(p) in str(e.value)
    with pytest.raises(OptionError, match="^port:"):
        read_sweep(p, port=3)
    one = _file(tmp_path, "b.s1p", "# MHz S RI R 50\n1 0.1 0\n")
    with pytest.raises(InputFileError, match="2-port"):
        read_sweep(one, expect_ports=2)
    assert read_sweep(p, expect_ports=None).nports == 2


@pytest.mark.parametrize("order,expected", [("12_21", [[0.11, 0.12], [0.21, 0.22]]),
                                            ("21_12", [[0.11, 0.21], [0.12, 0.22]])])
def test_v2_two_port_data_order(tmp_path, order, expected):
    # [TS2.0] [Two-Port Data Order] 12_21 | 21_12; 21_12 = N11 N21 N12 N22 ([M] per check-values §4).
    text = ("[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] " + order +
            "\n[Number of Frequencies] 1\n[Network Data]\n1 0.11 0 0.12 0 0.21 0 0.22 0\n[End]\n")
    sw = read_sweep(_file(tmp_path, "x.ts", text), expect_ports=2)
    assert np.array_equal(sw.s[0].real, expected)


def test_check_values_v2_example(tmp_path):
    # [TS2.0] minimal v2 example of check-values §4 ([D], constructed).
    text = ("[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 2\n"
            "[Network Data]\n1.0 0.12 -0.34\n2.0 0.10 -0.30\n[End]\n")
    sw = read_sweep(_file(tmp_path, "a.ts", text))
    assert np.array_equal(sw.freq_hz, [1e6, 2e6])
    assert np.array_equal(sw.gamma, [0.12 - 0.34j, 0.10 - 0.30j])
    assert sw.notes == ()


def test_v2_reference_wrap_lower_matrix_noise_and_information(tmp_path):
    import skrf

    # [TS2.0] [Reference] per port (may continue on the next line), [Matrix Format] Lower, data wrapping
    # over lines, [Noise Data] after the network data, [Begin Information] block, [End].
    text = ("[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] 12_21\n"
            "[Number of Frequencies] 2\n[Number of Noise Frequencies] 1\n[Reference] 75\n 60\n"
            "[Matrix Format] Lower\n[Begin Information]\nfree text [ here\n[End Information]\n[Network Data]\n"
            "1 0.1 0.01\n  0.5 0.02 0.2 -0.1\n2 0.2 0.02 0.6 0 0.3 0.1\n"
            "[Noise Data]\n1 1.2 0.3 40 0.5\n[End]\n")
    sw = read_sweep(_file(tmp_path, "a.ts", text), expect_ports=2)
    s_file = np.array([[[0.1 + 0.01j, 0.5 + 0.02j], [0.5 + 0.02j, 0.2 - 0.1j]],
                       [[0.2 + 0.02j, 0.6 + 0j], [0.6 + 0j, 0.3 + 0.1j]]])  # Lower: N11 / N21 N22
    ref = skrf.Network(frequency=skrf.Frequency.from_f([1, 2], unit="MHz"), s=s_file, z0=[[75, 60], [75, 60]])
    ref.renormalize(50)  # [skrf] independent path
    np.testing.assert_allclose(sw.s, ref.s, rtol=0, atol=TOL)
    assert any("Noise" in n for n in sw.notes)


def test_v1_three_port_wraps_rows(tmp_path):
    # [TS1.1] 3- and 4-port data: one matrix row per line.
    vals = np.arange(1, 10) / 10
    rows = [" ".join(f"{v!r} 0" for v in vals[3 * i:3 * i + 3].tolist()) for i in range(3)]
    text = "# MHz S RI R 50\n5 " + rows[0] + "\n  " + rows[1] + "\n  " + rows[2] + "\n"
    sw = read_sweep(_file(tmp_path, "a.s3p", text), expect_ports=3)
    assert np.array_equal(sw.s[0].real, vals.reshape(3, 3))


def test_v1_two_port_noise_block_is_skipped(tmp_path):
    # [TS1.1] a 2-port noise block starts where the frequency is <= the last network frequency.
    text = ("# GHz S RI R 50\n1 0.1 0 0.9 0 0.9 0 0.1 0\n2 0.2 0 0.8 0 0.8 0 0.2 0\n"
            "1 1.5 0.3 40 0.4\n2 1.7 0.35 45 0.45\n")
    sw = read_sweep(_file(tmp_path, "a.s2p", text), expect_ports=2)
    assert np.array_equal(sw.freq_hz, [1e9, 2e9])
    assert any("noise" in n for n in sw.notes)


def test_real_world_files(tmp_path):
    # Common practice, no source: analyzer exports with BOM, CRLF, tabs, Latin-1 comments, blank lines,
    # trailing comments, a second option line (ignored per [TS1.1]).
    body = "! Messung \xb0C \xe9t\xe9\r\n\r\n#\tmhz\ts\tri\tr\t50\r\n1\t0.1\t0.2 ! first\r\n\r\n2\t0.3\t0.4\r\n"
    expected = [0.1 + 0.2j, 0.3 + 0.4j]
    latin = read_sweep(_file(tmp_path, "l.s1p", body, encoding="latin-1"))
    assert np.array_equal(latin.gamma, expected)
    assert latin.comments[0] == "Messung \xb0C \xe9t\xe9"
    bom = read_sweep(_file(tmp_path, "b.s1p", b"\xef\xbb\xbf" + body.encode("utf-8")))
    assert np.array_equal(bom.gamma, expected) and bom.comments[0] == latin.comments[0]
    u16 = read_sweep(_file(tmp_path, "u.s1p", body, encoding="utf-16"))
    assert np.array_equal(u16.gamma, expected)
    twice = read_sweep(_file(tmp_path, "t.s1p", "# MHz S RI R 50\n1 0.1 0.2\n# GHz S MA R 75\n2 0.3 0.4\n"))
    assert np.array_equal(twice.freq_hz, [1e6, 2e6]) and np.array_equal(twice.gamma, expected)
    assert any("line 3" in n and "ignored" in n for n in twice.notes)


def test_gamma_above_one_and_dc_point_are_accepted(tmp_path):
    # |Gamma| > 1 is the caller's to warn about; 0 Hz is legal as the first point (decision, docstring).
    sw = read_sweep(_file(tmp_path, "a.s1p", "# MHz S MA R 50\n0 1.2 0\n1 1.02 10\n"))
    assert sw.freq_hz[0] == 0.0 and abs(sw.gamma[0]) == 1.2


@pytest.mark.parametrize("name,text", [
    ("ri.s1p", "! v1\n# MHz S RI R 50\n1 0.12 -0.34\n2 0.10 -0.30\n3 0.5 0.5\n"),
    ("db75.s1p", "# Hz S DB R 75\n1000 -6 30\n2000 -20 -45\n"),
    ("ma.s1p", "# kHz S MA R 50\n100 0.5 45\n200 0.25 -135\n"),
    ("z.s1p", "# GHz Z RI R 50\n1 1.0 0.5\n2 0.5 -0.25\n"),
    ("two.s2p", "# MHz S RI R 50\n1 0.1 0.2 0.8 -0.1 0.8 -0.1 0.3 0.1\n2 0.2 0.1 0.7 -0.2 0.7 -0.2 0.1 0.3\n"),
    ("v2.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 2\n"
              "[Network Data]\n1.0 0.12 -0.34\n2.0 0.10 -0.30\n[End]\n"),
])
def test_same_numbers_as_skrf_reader(tmp_path, name, text):
    import skrf

    p = _file(tmp_path, name, text)
    ours = read_sweep(p, expect_ports=None)
    theirs = skrf.Network()
    theirs.read_touchstone(str(p))  # [skrf] pickle-free reader (scikit-rf-notes)
    theirs.renormalize(50)
    np.testing.assert_allclose(ours.freq_hz, theirs.f, rtol=1e-15, atol=0)
    np.testing.assert_allclose(ours.s, theirs.s, rtol=0, atol=TOL)


# ------------------------------------------------------------------------------------------------
# errors: each an InputFileError naming the file and, where there is one, the line


ERRORS = [
    # (file name, content, expected line, words in the message)
    ("empty.s1p", "", None, "empty"),
    ("blank.s1p", "  \n\n", None, "empty"),
    ("nul.s1p", b"# MHz S RI R 50\n1 0 0\x00\x00\n", None, "binary"),
    ("junk.s1p", bytes(range(1, 32)) * 40, None, "binary"),
    ("comments.s1p", "! only a comment\n# MHz S RI R 50\n", None, "no data"),
    ("short.s1p", "# MHz S RI R 50\n1 0.1 0.2\n2 0.3\n", 3, "needs 3 values"),
    ("long.s1p", "# MHz S RI R 50\n1 0.1 0.2 0.4\n", 2, "needs 3 values"),
    ("one_in_two.s2p", "# MHz S RI R 50\n1 0.1 0.2\n", 2, "needs 9 values"),
    ("word.s1p", "# MHz S RI R 50\n1 0.1 0.2\n2 0.1 abc\n", 3, "'abc' is not a number"),
    ("header.s1p", "# MHz S RI R 50\nFreq Re Im\n1 0.1 0.2\n", 2, "'Freq' is not a number"),
    ("under.s1p", "# MHz S RI R 50\n1 0.1 1_0\n", 2, "not a number"),
    ("nan.s1p", "# MHz S RI R 50\n1 0.1 0.2\n2 NaN 0.2\n", 3, "NaN or infinite"),
    ("inf.s1p", "# MHz S RI R 50\n1 inf 0.2\n", 2, "NaN or infinite"),
    ("huge.s1p", "# MHz S RI R 50\n1 1e999 0.2\n", 2, "infinity"),
    ("down.s1p", "# MHz S RI R 50\n1 0 0\n3 0 0\n2 0 0\n", 4, "goes down"),
    ("dup.s1p", "# MHz S RI R 50\n1 0 0\n2 0 0\n2 0 0\n", 4, "repeated"),
    ("neg.s1p", "# MHz S RI R 50\n-1 0 0\n2 0 0\n", 2, "negative"),
    ("zero_later.s1p", "# MHz S RI R 50\n1 0 0\n0 0 0\n", 3, "goes down"),
    ("unit.s1p", "# THz S RI R 50\n1 0 0\n", 1, "'THz' is not an option-line field"),
    ("param.s1p", "# MHz Q RI R 50\n1 0 0\n", 1, "not an option-line field"),
    ("hparam.s2p", "# MHz H RI R 50\n1 0 0 0 0 0 0 0 0\n", 1, "H-parameters"),
    ("r_missing.s1p", "# MHz S RI R\n1 0 0\n", 1, "no value"),
    ("r_zero.s1p", "# MHz S RI R 0\n1 0 0\n", 1, "positive"),
    ("r_neg.s1p", "# MHz S RI R -50\n1 0 0\n", 1, "positive"),
    ("twice.s1p", "# MHz GHz S RI R 50\n1 0 0\n", 1, "twice"),
    ("late_option.s1p", "1 0 0\n# MHz S RI R 50\n2 0 0\n", 2, "option line comes after data"),
    ("nonascii.s1p", "# MHz S RI R 50\n1 0.1 0.2\xb5\n".encode("latin-1"), 2, "U+00B5"),
    ("keyword_v1.s1p", "# MHz S RI R 50\n1 0 0\n[End]\n", 3, "version 1"),
    ("noext.txt", "# MHz S RI R 50\n1 0 0\n", None, "rename"),
    ("v2_no_ports.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Frequencies] 1\n[Network Data]\n1 0 0\n",
     4, "[Number of Ports]"),
    ("v2_no_data_kw.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 1\n",
     None, "[Network Data]"),
    ("v2_data_first.ts", "[Version] 2.0\n[Network Data]\n# MHz S RI R 50\n1 0 0\n", 2, "before the option line"),
    ("v2_no_option.ts", "[Version] 2.0\n[Number of Ports] 1\n", 2, "before the option line"),
    ("v2_count.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n"
                    "[Network Data]\n1 0 0\n2 0 0\n[End]\n", 4, "says 3 but"),
    ("v2_no_points.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 1\n"
                        "[Network Data]\n[End]\n", None, "no data"),
    ("v2_trunc.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] 12_21\n"
                    "[Number of Frequencies] 1\n[Network Data]\n1 0 0 0 0\n 0 0\n[End]\n", 7, "stop after 7"),
    ("v2_no_order.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 2\n[Number of Frequencies] 1\n"
                       "[Network Data]\n1 0 0 0 0 0 0 0 0\n[End]\n", 5, "[Two-Port Data Order]"),
    ("v2_version_late.ts", "# MHz S RI R 50\n[Version] 2.0\n", 2, "[Version] must be the first"),
    ("v2_bad_version.ts", "[Version] 3.0\n", 1, "not supported"),
    ("v2_unknown.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Portz] 1\n", 3, "unknown keyword"),
    ("v2_ref_count.ts", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Reference] 50 75\n", 4,
     "[Reference] needs 1"),
    ("v3port_misaligned.s3p", "# MHz S RI R 50\n1 " + "0 0 " * 9 + "\n2 " + "0 0 " * 8 + "\n3 " + "0 0 " * 9 + "\n",
     4, "part-way"),
]


@pytest.mark.parametrize("name,text,line,words", ERRORS, ids=[e[0] for e in ERRORS])
def test_bad_files_give_input_file_error(tmp_path, name, text, line, words):
    p = _file(tmp_path, name, text)
    with pytest.raises(InputFileError) as e:
        read_sweep(p, expect_ports=None)
    assert e.value.path == str(p)
    assert str(p) in str(e.value)
    assert e.value.line == line
    assert words in e.value.reason


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(InputFileError, match="no such file"):
        read_sweep(tmp_path / "nothing.s1p")
    with pytest.raises(InputFileError, match="folder"):
        read_sweep(tmp_path)


def test_bad_port_argument(tmp_path):
    p = _file(tmp_path, "a.s1p", "# MHz S RI R 50\n1 0 0\n")
    with pytest.raises(OptionError, match="^port:"):
        read_sweep(p, port=0)
    with pytest.raises(OptionError, match="use port 1") as e:
        read_sweep(p, port=2)
    assert "use --port 1" in e.value.render({"port": "--port"})


# ------------------------------------------------------------------------------------------------
# writing


@pytest.mark.parametrize("unit", ["Hz", "kHz", "MHz", "GHz"])
def test_write_then_read_is_exact_one_port(tmp_path, unit):
    rng = np.random.default_rng(3)
    f = np.sort(rng.uniform(1e5, 3e9, 500))
    f = np.unique(np.concatenate(([0.0, 14.2e6, 1.1e6], f)))
    g = rng.normal(size=f.size) + 1j * rng.normal(size=f.size)
    p = tmp_path / "out.s1p"
    write_touchstone(p, f, g, comments=["made by a test", "second line"], unit=unit)
    sw = read_sweep(p)
    assert np.array_equal(sw.freq_hz, f)  # exact, bit for bit (design requirement)
    assert np.array_equal(sw.gamma, g)
    assert sw.comments == ("made by a test", "second line")
    assert p.read_text().splitlines()[2] == f"# {unit} S RI R 50"


def test_write_then_read_two_port_order_and_exactness(tmp_path):
    rng = np.random.default_rng(4)
    f = np.linspace(1e6, 30e6, 57)
    s = rng.normal(size=(57, 2, 2)) + 1j * rng.normal(size=(57, 2, 2))
    p = tmp_path / "line.s2p"
    write_touchstone(p, f, s)
    sw = read_sweep(p, expect_ports=2)
    assert np.array_equal(sw.freq_hz, f) and np.array_equal(sw.s, s)
    first = p.read_text().splitlines()[1].split()
    assert float(first[3]) == s[0, 1, 0].real  # [TS1.1] the second pair is S21


@pytest.mark.parametrize("fmt", ["MA", "DB"])
def test_write_ma_db_round_trip_close(tmp_path, fmt):
    rng = np.random.default_rng(5)
    f = np.arange(1, 101) * 1e6
    g = 0.9 * rng.uniform(0.01, 1, 100) * np.exp(1j * rng.uniform(-np.pi, np.pi, 100))
    p = tmp_path / "a.s1p"
    write_touchstone(p, f, g.reshape(-1, 1, 1), fmt=fmt)
    np.testing.assert_allclose(read_sweep(p).gamma, g, rtol=0, atol=1e-14)


def test_write_rejects_bad_input(tmp_path):
    f = np.array([1.0, 2.0])
    with pytest.raises(ValueError, match=r"\.s1p"):
        write_touchstone(tmp_path / "a.s2p", f, np.zeros(2))
    with pytest.raises(ValueError, match="increasing"):
        write_touchstone(tmp_path / "a.s1p", f[::-1], np.zeros(2))
    with pytest.raises(ValueError, match="DB"):
        write_touchstone(tmp_path / "a.s1p", f, np.zeros(2), fmt="DB")
    assert not list(tmp_path.iterdir())


# ------------------------------------------------------------------------------------------------
# outputs


def test_atomic_path_keeps_extension_and_cleans_up(tmp_path):
    target = tmp_path / "plot.png"
    with atomic_path(target) as tmp:
        assert tmp.parent == tmp_path and tmp.suffix == ".png" and tmp != target
        tmp.write_bytes(b"x")
        assert not target.exists()
    assert target.read_bytes() == b"x"
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            tmp.write_bytes(b"half")
            raise RuntimeError("boom")
    assert target.read_bytes() == b"x"  # old content kept
    assert sorted(os.listdir(tmp_path)) == ["plot.png"]  # no temporary left


def test_write_text_and_bytes_atomic(tmp_path):
    write_text_atomic(tmp_path / "a.txt", "a\r\nb\u00b5")
    assert (tmp_path / "a.txt").read_bytes() == "a\r\nb\u00b5".encode("utf-8")
    write_bytes_atomic(tmp_path / "b.bin", b"\x00\x01")
    assert (tmp_path / "b.bin").read_bytes() == b"\x00\x01"
    assert sorted(os.listdir(tmp_path)) == ["a.txt", "b.bin"]


def test_check_not_input(tmp_path):
    inp = _file(tmp_path, "in.s1p", "# MHz S RI R 50\n1 0 0\n")
    check_not_input(tmp_path / "out.s1p", [inp, None], "--out")
    with pytest.raises(OptionError, match="--out"):
        check_not_input(tmp_path / "sub" / ".." / "in.s1p", [inp], "--out")
    link = tmp_path / "link.s1p"
    os.symlink(inp, link)
    with pytest.raises(OptionError):
        check_not_input(link, [inp], "--out")
