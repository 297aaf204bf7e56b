"""Bad input at the command level: one clear line, exit status 2, nothing written, inputs untouched.

Every case goes end to end through ``deembed.cli.app.main(argv)``. For each refusal the test checks the exit
status, that standard error holds exactly one non-empty line naming the file (and its line number where
there is one) or the option, that no traceback is shown, that the output folder holds no file afterwards,
and that the input files' bytes are unchanged. The variants real files contain (Latin-1 comments, CRLF,
tabs, lower case, trailing comments, no option line) must give exactly the same correction as a plain
file. Python warnings are turned into errors here, so a stray warning on standard error (a second line)
fails the test as an internal error.
"""
import ast
import json
import os
from pathlib import Path

import numpy as np
import pytest

from deembed.physics import rf
from deembed.cli.app import main
from deembed.physics.deembedding import embed_gamma
from deembed.base.errors import DeembedError
from deembed.physics.line import Line, LossModel, Section
from deembed.io.touchstone import read_sweep, write_touchstone

pytestmark = pytest.mark.filterwarnings("error")

PKG = Path(__file__).resolve().parents[1] / "deembed"
LINE_OPTS = ["--length", "30m", "--vf", "0.66", "--loss", "1.25dB@14MHz"]
F_HZ = np.linspace(13e6, 15e6, 41)


def series_rlc_gamma(f, r=50.0, f0=14e6, q=20.0):
    """Series RLC antenna, check-values E10 model: Z = R + j Q R (f/f0 - f0/f), as Gamma at 50 ohm."""
    x = f / f0
    return rf.gamma_from_z(r + 1j * q * r * (x - 1 / x))


def the_line():
    """The line LINE_OPTS describes: 30 m, VF 0.66, 1.25 dB at 14 MHz (conductor loss, sqrt(f))."""
    return Line((Section.from_length(50.0, 0.66, 30.0, LossModel.fit([(1.25, 14e6)])),))


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def snapshot(*paths):
    return {str(p): Path(p).read_bytes() for p in paths if p is not None and Path(p).is_file()}


def assert_refused(code, err, needles, out_dir=None, before=None, line=None):
    """Exit 2, one line on stderr holding every needle (and 'line N'), nothing written, inputs intact."""
    assert code == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    msg = lines[0]
    assert msg.startswith("error: ") and "Traceback" not in err
    for needle in needles:
        assert str(needle) in msg, msg
    if line is not None:
        assert f", line {line}:" in msg, msg
    if out_dir is not None:
        out_dir = Path(out_dir)
        assert not out_dir.exists() or not any(out_dir.iterdir()), sorted(os.listdir(out_dir))
    for path, data in (before or {}).items():
        assert Path(path).read_bytes() == data, f"{path} was modified"
    return msg


def assert_unwritable(code, err, needles, before):
    """Exit 3 (results that cannot be written), one line on stderr holding every needle, files as they were."""
    assert code == 3, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: ") and "Traceback" not in err, err
    for needle in needles:
        assert str(needle) in lines[0], lines[0]
    for path, data in before.items():
        assert Path(path).read_bytes() == data, f"{path} was modified"


@pytest.fixture
def good_text():
    """The shack sweep as Touchstone text: the E10 antenna behind the line, RI, MHz, with a comment."""
    g = embed_gamma(series_rlc_gamma(F_HZ), the_line().s_params(F_HZ))
    rows = "".join(f"{f!r} {re!r} {im!r}\n" for f, re, im in zip((F_HZ / 1e6).tolist(), g.real.tolist(),
                                                                 g.imag.tolist()))
    return "! invented mast sweep\n# MHz S RI R 50\n" + rows


@pytest.fixture
def good_sweep(tmp_path, good_text):
    p = tmp_path / "mast.s1p"
    p.write_text(good_text, newline="\n")
    return p


# ----------------------------------------------------------------------------------------------
# malformed sweeps given to `correct`

OPT = "# MHz S RI R 50\n"
BAD_SWEEPS = [
    # id, file name, content, words the message must hold, line number (None: the file as a whole)
    ("empty", "a.s1p", b"", ["empty"], None),
    ("blank lines only", "a.s1p", b"\n  \n\t\n", ["empty"], None),
    ("binary junk", "a.s1p", np.random.default_rng(7).integers(0, 256, 4096, dtype=np.uint8).tobytes(),
     ["binary"], None),
    ("truncated row", "a.s1p", (OPT + "14 0.1 0.2\n14.1 0.1\n").encode(), ["found 2 values", "3 values"], 3),
    ("file cut mid-row", "a.s1p", (OPT + "14 0.1 0.2\n14.1 0.1 0.2\n14.2 0.").encode(), ["values"], 4),
    ("2-port row in a .s1p", "a.s1p", (OPT + "14 0.1 0.2 0.9 0 0.9 0 0.1 0\n").encode(),
     ["found 9 values", ".s1p"], 2),
    ("1-port rows in a .s2p", "a.s2p", (OPT + "14 0.1 0.2\n14.1 0.1 0.2\n").encode(), ["9 values"], 2),
    ("non-numeric value", "a.s1p", (OPT + "14 0.1 0.2\n14.1 0.1 abc\n").encode(), ["'abc'", "not a number"], 3),
    ("decimal comma", "a.s1p", (OPT + "14 0,1 0,2\n").encode(), ["0,1"], 2),
    ("NaN", "a.s1p", (OPT + "14 nan 0.2\n14.1 0.1 0.2\n").encode(), ["NaN or infinite"], 2),
    ("infinity", "a.s1p", (OPT + "14 0.1 0.2\n14.1 0.1 -Infinity\n").encode(), ["NaN or infinite"], 3),
    ("overflow", "a.s1p", (OPT + "14 0.1 0.2\n14.1 1e999 0.2\n").encode(), ["infinity"], 3),
    ("frequency going down", "a.s1p", (OPT + "14 0.1 0.2\n13.9 0.1 0.2\n").encode(), ["goes down", "sort"], 3),
    ("duplicated frequency", "a.s1p", (OPT + "14 0.1 0.2\n14 0.1 0.2\n").encode(), ["repeated", "line 2"], 3),
    ("zero frequency after others", "a.s1p", (OPT + "14 0.1 0.2\n0 0.1 0.2\n").encode(), ["goes down"], 3),
    ("negative frequency", "a.s1p", (OPT + "-14 0.1 0.2\n14 0.1 0.2\n").encode(),
     ["negative frequency -14", "remove"], 2),
    ("unknown unit", "a.s1p", b"# THz S RI R 50\n14 0.1 0.2\n", ["'THz'", "MHz"], 1),
    ("unknown parameter", "a.s1p", b"# MHz Q RI R 50\n14 0.1 0.2\n", ["'Q'", "(S, Y, Z)"], 1),
    ("unknown format", "a.s1p", b"# MHz S XY R 50\n14 0.1 0.2\n", ["'XY'", "(RI, MA, DB)"], 1),
    ("hybrid parameters", "a.s1p", b"# MHz H RI R 50\n14 0.1 0.2\n", ["hybrid", "export S-parameters"], 1),
    ("reference without value", "a.s1p", b"# MHz S RI R\n14 0.1 0.2\n", ["'R 50'"], 1),
    ("negative reference", "a.s1p", b"# MHz S RI R -50\n14 0.1 0.2\n", ["positive number of ohms"], 1),
    ("unit given twice", "a.s1p", b"# MHz GHz S RI R 50\n14 0.1 0.2\n", ["twice"], 1),
    ("no data", "a.s1p", b"! only a comment\n# MHz S RI R 50\n", ["no data"], None),
    ("v1 file without .sNp name", "a.txt", (OPT + "14 0.1 0.2\n").encode(), ["rename", ".s1p"], None),
    ("v2 without [Number of Ports]", "a.ts",
     b"[Version] 2.0\n# MHz S RI R 50\n[Network Data]\n14 0.1 0.2\n[End]\n", ["[Number of Ports]"], 3),
    ("v2 keyword before [Version]", "a.ts",
     b"[Number of Ports] 1\n[Version] 2.0\n# MHz S RI R 50\n[Network Data]\n14 0.1 0.2\n[End]\n",
     ["before [Version]"], 1),
    ("v2 [Version] after the option line", "a.ts",
     b"# MHz S RI R 50\n[Version] 2.0\n[Number of Ports] 1\n[Network Data]\n14 0.1 0.2\n[End]\n",
     ["[Version]", "first line"], 2),
    ("v2 frequency count disagrees", "a.ts",
     b"[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n[Network Data]\n"
     b"14 0.1 0.2\n14.1 0.1 0.2\n[End]\n", ["says 3", "holds 2"], 4),
    ("2-port where a 1-port is needed", "a.s2p", (OPT + "14 0.1 0 0.9 0 0.9 0 0.1 0\n").encode(),
     ["2-port file", "--port 1 or --port 2"], None),
]


@pytest.mark.parametrize("name, fname, content, needles, line", BAD_SWEEPS, ids=[c[0] for c in BAD_SWEEPS])
def test_malformed_sweep_is_refused_in_one_line(capsys, tmp_path, name, fname, content, needles, line):
    src = tmp_path / "in" / fname
    src.parent.mkdir()
    src.write_bytes(content)
    out = tmp_path / "out"
    before = snapshot(src)
    code, _, err = run(capsys, "correct", src, *LINE_OPTS, "--out", out)
    assert_refused(code, err, [str(src), *needles], out, before, line)


def test_missing_file_and_folder_are_named(capsys, tmp_path):
    out = tmp_path / "out"
    missing = tmp_path / "nowhere.s1p"
    code, _, err = run(capsys, "correct", missing, *LINE_OPTS, "--out", out)
    assert_refused(code, err, [str(missing), "no such file"], out)
    folder = tmp_path / "looks-like.s1p"
    folder.mkdir()
    code, _, err = run(capsys, "correct", folder, *LINE_OPTS, "--out", out)
    assert_refused(code, err, [str(folder), "folder"], out)


@pytest.mark.parametrize("port, needles", [("3", ["--port", "use 1 or 2"]), ("0", ["--port"])])
def test_port_out_of_range(capsys, tmp_path, port, needles):
    src = tmp_path / "run.s2p"
    src.write_text(OPT + "14 0.1 0 0.9 0 0.9 0 0.1 0\n")
    code, _, err = run(capsys, "correct", src, *LINE_OPTS, "--port", port, "--out", tmp_path / "out")
    assert_refused(code, err, needles, tmp_path / "out", snapshot(src))


def test_port_picks_a_reflection_from_a_two_port_file(capsys, tmp_path):
    # S22 of the file is the sweep; S11 is something else. The result must be the same as the 1-port file.
    g = embed_gamma(series_rlc_gamma(F_HZ), the_line().s_params(F_HZ))
    s = np.zeros((F_HZ.size, 2, 2), dtype=complex)
    s[:, 0, 0], s[:, 1, 1] = 0.3, g
    write_touchstone(str(tmp_path / "both.s2p"), F_HZ, s)
    write_touchstone(str(tmp_path / "one.s1p"), F_HZ, g)
    for src in ("both.s2p", "one.s1p"):
        extra = ["--port", "2"] if src.endswith("s2p") else []
        code, _, err = run(capsys, "correct", tmp_path / src, *LINE_OPTS, *extra, "--out", tmp_path / "o",
                           "--no-plots")
        assert code == 0, err
    a = read_sweep(str(tmp_path / "o" / "both.feedpoint.s1p")).gamma
    b = read_sweep(str(tmp_path / "o" / "one.feedpoint.s1p")).gamma
    assert np.array_equal(a, b)  # same arithmetic on the same numbers: bit for bit


# ----------------------------------------------------------------------------------------------
# options out of physical range


BAD_OPTIONS = [
    (["--length", "30m", "--vf", "1.5"], ["--vf", "at most 1"]),
    (["--length", "30m", "--vf", "0"], ["--vf", "positive"]),
    (["--length", "30m", "--vf", "-0.66"], ["--vf", "positive"]),
    (["--length", "30m", "--vf", "fast"], ["--vf", "'fast'"]),
    (["--length", "-30m", "--vf", "0.66"], ["--length", "positive"]),
    (["--length", "30", "--vf", "0.66"], ["--length", "no unit"]),
    (["--length", "30parsec", "--vf", "0.66"], ["--length", "unknown unit"]),
    (["--length", "30m"], ["--vf", "velocity factor is needed"]),
    (["--delay", "-5ns"], ["--delay", "zero or positive"]),
    (["--length", "30m", "--delay", "10ns"], ["--delay", "velocity factor"]),
    (["--length", "30m", "--vf", "0.66", "--z0", "0ohm"], ["--z0", "positive"]),
    (["--length", "30m", "--vf", "0.66", "--z0", "-50ohm"], ["--z0", "positive"]),
    (["--length", "30m", "--vf", "0.66", "--loss", "lots"], ["--loss", "0.8dB@21MHz"]),
    (["--length", "30m", "--vf", "0.66", "--loss", "1.2dB@14"], ["--loss", "no unit"]),
    (["--length", "30m", "--vf", "0.66", "--loss", "-1dB@14MHz"], ["--loss", "0 dB or more"]),
    (["--length", "30m", "--vf", "0.66", "--loss", "xdB@14MHz"], ["--loss", "cannot read"]),
    (["--length", "30m", "--vf", "0.66", "--loss", "1dB@0MHz"], ["--loss", "positive"]),
    (["--cable", "rg999", "--length", "30m"], ["--cable", "unknown cable"]),
    (["--cable", "rg213"], ["--length"]),
    ([], ["--line", "say which line"]),
    (LINE_OPTS + ["--target", "14.2"], ["--target", "no unit"]),
    (LINE_OPTS + ["--target", "-14MHz"], ["--target", "positive"]),
    (LINE_OPTS + ["--power", "-5W"], ["--power", "positive"]),
    (LINE_OPTS + ["--power", "lots"], ["--power", "100W"]),
    (LINE_OPTS + ["--swr-limits", "0.5"], ["--swr-limits", "above 1"]),
    (LINE_OPTS + ["--swr-limits", "2,x"], ["--swr-limits", "'x'"]),
    (LINE_OPTS + ["--line", "x.toml"], ["--line", "not both"]),
]


@pytest.mark.parametrize("opts, needles", BAD_OPTIONS, ids=[" ".join(o[-2:]) or "none" for o, _ in BAD_OPTIONS])
def test_option_out_of_range_is_refused(capsys, tmp_path, good_sweep, opts, needles):
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", good_sweep, *opts, "--out", out)
    assert_refused(code, err, needles, out, snapshot(good_sweep))


@pytest.mark.parametrize("args, needles", [
    (["--loss", "-1dB", "--antenna-swr", "2"], ["--loss", "0 dB or more"]),
    (["--loss", "nan", "--antenna-swr", "2"], ["--loss"]),
    (["--loss", "inf", "--antenna-swr", "2"], ["--loss"]),
    (["--loss", "lots", "--antenna-swr", "2"], ["--loss", "cannot read 'lots'"]),
    (["--loss", "1", "--antenna-swr", "2"], ["--loss", "has no unit; write it with its unit, e.g. 1.8dB"]),
    (["--loss", "1dB", "--antenna-swr", "0.5"], ["--antenna-swr", "1 or more"]),
    (["--loss", "1dB", "--antenna-swr", "nan"], ["--antenna-swr"]),
    (["--loss", "1dB"], ["--antenna-swr", "exactly one"]),
    (["--loss", "1dB", "--antenna-swr", "2", "--measured-swr", "1.5"], ["exactly one"]),
    (["--loss", "3dB", "--measured-swr", "6"], ["--measured-swr"]),
    (["--loss", "1dB", "--measured-swr", "inf"], ["--measured-swr"]),
])
def test_budget_out_of_range(capsys, args, needles):
    code, _, err = run(capsys, "budget", "--power", "100W", *args)
    assert_refused(code, err, needles)


@pytest.mark.parametrize("power", ["0W", "-100W", "lots", "100 parsec", "100"])
def test_budget_bad_power(capsys, power):
    code, _, err = run(capsys, "budget", "--power", power, "--loss", "1dB", "--antenna-swr", "2")
    assert_refused(code, err, ["--power"])


@pytest.mark.parametrize("args, needles", [
    (["correct"], ["Missing argument", "correct -h"]),
    (["correct", "x.s1p", "--bogus"], ["--bogus", "correct -h"]),
    (["correct", "x.s1p", "--port", "two"], ["'--port'"]),
    (["correct", "x.s1p", "--length"], ["'--length'", "requires an argument"]),
    (["nosuchcommand"], ["nosuchcommand"]),
    (["budget", "--power", "100W", "--loss", "1dB", "--antenna-swr", "two"], ["--antenna-swr", "2.5:1"]),
])
def test_usage_errors_are_one_line(capsys, tmp_path, args, needles):
    # our decision: the option parser's usage block is shortened to one line pointing at -h
    code, _, err = run(capsys, *args)
    assert_refused(code, err, needles)


# ----------------------------------------------------------------------------------------------
# line descriptions, catalogs, band lists

BAD_LINE_FILES = [
    ("toml syntax", '[[section]]\nlength = "30m\nvf = 0.66\n', ["not valid TOML"], 2),
    ("unknown key", '[[section]]\nlength = "30m"\nvf = 0.66\ncolour = "red"\n', ["unknown key(s) colour"], None),
    ("missing length", '[[section]]\nvf = 0.66\n', ["section 1 'length'", "length is needed"], None),
    ("bad loss", '[[section]]\nlength = "30m"\nvf = 0.66\nloss = "lots"\n', ["section 1 'loss'", "0.8dB@21MHz"],
     None),
    ("loss as a bare number", '[[section]]\nlength = "30m"\nvf = 0.66\nloss = 5\n', ["'loss'", "quoted string"],
     None),
    ("loss list of numbers", '[[section]]\nlength = "30m"\nvf = 0.66\nloss = [1.2]\n', ["'loss[1]'"], None),
    ("length without unit", '[[section]]\nlength = 30\nvf = 0.66\n', ["'length'", "no unit"], None),
    ("vf above 1", '[[section]]\nlength = "30m"\nvf = 1.2\n', ["'vf'", "at most 1"], None),
    ("vf true", '[[section]]\nlength = "30m"\nvf = true\n', ["'vf'", "not a number"], None),
    ("negative z0", '[[section]]\nlength = "30m"\nvf = 0.66\nz0 = "-50ohm"\n', ["'z0'", "positive"], None),
    ("bare z0", '[[section]]\nlength = "30m"\nvf = 0.66\nz0 = 50\n', ["'z0'", "has no unit; write it with its unit"],
     None),
    ("negative length", '[[section]]\nlength = "-3m"\nvf = 0.66\n', ["'length'", "positive"], None),
    ("cable as a number", '[[section]]\ncable = 213\nlength = "30m"\n', ["'cable'", "quoted string"], None),
    ("unknown cable", '[[section]]\ncable = "rg999"\nlength = "30m"\n', ["unknown cable"], None),
    ("sections not tables", "section = [1, 2]\n", ["no [[section]]"], None),
    ("no sections", 'name = "x"\n', ["no [[section]]"], None),
    ("cables not tables", 'cables = 5\n[[section]]\nlength = "30m"\nvf = 0.66\n', ["'cables'"], None),
    ("own cable infinite loss",
     '[[section]]\ncable = "mine"\nlength = "3m"\n[cables.mine]\nz0 = 50\nvf = 0.66\nk1 = inf\nk2 = 0\n',
     ["cable [mine]", "finite"], None),
    ("measured file missing", '[[section]]\nmeasured = "arrestor.s2p"\n', ["arrestor.s2p", "no such file"], None),
    ("not UTF-8", b'name = "Andr\xe9"\n[[section]]\nlength = "3m"\nvf = 0.6\n', ["UTF-8"], None),
]


@pytest.mark.parametrize("name, text, needles, line", BAD_LINE_FILES, ids=[c[0] for c in BAD_LINE_FILES])
def test_bad_line_file(capsys, tmp_path, good_sweep, name, text, needles, line):
    lf = tmp_path / "feed.line.toml"
    lf.write_bytes(text if isinstance(text, bytes) else text.encode())
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", good_sweep, "--line", lf, "--out", out)
    named = [] if name == "measured file missing" else [str(lf)]
    assert_refused(code, err, named + needles, out, snapshot(good_sweep, lf), line)


def test_measured_section_resolves_relative_to_the_line_file(capsys, tmp_path, good_sweep, monkeypatch):
    # the same file name sits in the working folder as a decoy; the one beside the line file must be used
    sub = tmp_path / "lines"
    sub.mkdir()
    thru = np.zeros((F_HZ.size, 2, 2), dtype=complex)
    thru[:, 0, 1] = thru[:, 1, 0] = 1.0  # ideal thru: the feedpoint equals the sweep
    write_touchstone(str(sub / "jumper.s2p"), F_HZ, thru)
    (sub / "feed.line.toml").write_text('[[section]]\nmeasured = "jumper.s2p"\n')
    cwd = tmp_path / "elsewhere"
    cwd.mkdir()
    (cwd / "jumper.s2p").write_text("# MHz S RI R 50\n1 0 0 0 0 0 0 0 0\n")  # wrong grid: would be refused
    monkeypatch.chdir(cwd)
    code, _, err = run(capsys, "correct", good_sweep, "--line", sub / "feed.line.toml", "--out", tmp_path / "o",
                       "--no-plots")
    assert code == 0, err
    fp = read_sweep(str(tmp_path / "o" / "mast.feedpoint.s1p")).gamma
    assert np.array_equal(fp, read_sweep(str(good_sweep)).gamma)  # thru removed: Gamma_L = Gamma_in exactly


BAD_CATALOGS = [
    ("toml syntax", "[mine\nz0 = 50\n", ["not valid TOML"], 1),
    ("missing fields", "[mine]\nz0 = 50\n", ["cable [mine] lacks vf, k1, k2"], None),
    ("text for a number", "[mine]\nz0 = 'fifty'\nvf = 0.66\nk1 = 0.1\nk2 = 0.01\n", ["must be numbers"], None),
    ("vf above 1", "[mine]\nz0 = 50\nvf = 1.6\nk1 = 0.1\nk2 = 0.01\n", ["0 < vf <= 1"], None),
    ("zero z0", "[mine]\nz0 = 0\nvf = 0.66\nk1 = 0.1\nk2 = 0.01\n", ["z0 > 0"], None),
    ("negative loss", "[mine]\nz0 = 50\nvf = 0.66\nk1 = -0.1\nk2 = 0.01\n", ["k1 >= 0"], None),
    ("nan", "[mine]\nz0 = nan\nvf = 0.66\nk1 = 0.1\nk2 = 0.01\n", ["finite"], None),
    ("boolean", "[mine]\nz0 = true\nvf = 0.66\nk1 = 0.1\nk2 = 0.01\n", ["true/false"], None),
    ("not a table", "mine = 5\n", ["[mine] should be a table"], None),
]


@pytest.mark.parametrize("name, text, needles, line", BAD_CATALOGS, ids=[c[0] for c in BAD_CATALOGS])
def test_bad_cable_catalog(capsys, tmp_path, good_sweep, name, text, needles, line):
    cat = tmp_path / "my-cables.toml"
    cat.write_text(text)
    code, out, err = run(capsys, "cables", "--catalog", cat)
    assert_refused(code, err, [str(cat), *needles], before=snapshot(cat), line=line)
    assert out == ""  # no half table printed before the error
    code, _, err = run(capsys, "correct", good_sweep, *LINE_OPTS, "--catalog", cat, "--out", tmp_path / "o")
    assert_refused(code, err, [str(cat), *needles], tmp_path / "o", snapshot(cat, good_sweep), line)


def test_catalog_missing_or_folder(capsys, tmp_path):
    for path, needle in ((tmp_path / "none.toml", "no such file"), (tmp_path, "folder")):
        code, _, err = run(capsys, "cables", "--catalog", path)
        assert_refused(code, err, [str(path), needle])


BAD_BANDS = [
    ("toml syntax", "[[band]\n", ["not valid TOML"], 1),
    ("unknown key", '[[band]]\nname = "40 m"\nlow = "7MHz"\nhigh = "7.3MHz"\nmode = "cw"\n', ["unknown key 'mode'"],
     None),
    ("frequency without unit", '[[band]]\nname = "40 m"\nlow = "7"\nhigh = "7.3MHz"\n', ["low", "no unit"], None),
    ("frequency as a number", '[[band]]\nname = "40 m"\nlow = 7.0\nhigh = "7.3MHz"\n', ["no unit"], None),
    ("edges reversed", '[[band]]\nname = "40 m"\nlow = "7.3MHz"\nhigh = "7MHz"\n', ["must be below high"], None),
    ("missing edge", '[[band]]\nname = "40 m"\nlow = "7MHz"\n', ["missing 'high'"], None),
    ("no bands", 'title = "x"\n', ["unknown top-level key"], None),
]


@pytest.mark.parametrize("name, text, needles, line", BAD_BANDS, ids=[c[0] for c in BAD_BANDS])
def test_bad_bands_file(capsys, tmp_path, good_sweep, name, text, needles, line):
    bf = tmp_path / "my-bands.toml"
    bf.write_text(text)
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", good_sweep, *LINE_OPTS, "--bands-file", bf, "--out", out)
    assert_refused(code, err, [str(bf), *needles], out, snapshot(bf, good_sweep), line)


# ----------------------------------------------------------------------------------------------
# outputs: never over an input, never half-written


@pytest.mark.parametrize("below", [False, True], ids=["out is a file", "out below a file"])
def test_out_that_is_a_file_is_refused_as_results_that_cannot_be_written(capsys, tmp_path, good_sweep, below):
    """One rule for a file in the way of the results folder, itself or a folder above it (README, exit
    statuses): the results cannot be written, exit status 3, the file named and kept."""
    target = tmp_path / "results"
    target.write_text("keep me")
    before = snapshot(target, good_sweep)
    code, _, err = run(capsys, "correct", good_sweep, *LINE_OPTS, "--out", target / "sub" if below else target)
    assert_unwritable(code, err, ["is a file", "--out", target], before)


def test_out_that_would_overwrite_an_input_through_a_link_is_refused(capsys, tmp_path, good_sweep):
    out = tmp_path / "out"
    out.mkdir()
    (out / "mast.feedpoint.s1p").symlink_to(good_sweep)  # an output name that is the input itself
    before = snapshot(good_sweep)
    code, _, err = run(capsys, "correct", good_sweep, *LINE_OPTS, "--out", out)
    assert_refused(code, err, ["--out", "input"], before=before)
    assert sorted(os.listdir(out)) == ["mast.feedpoint.s1p"]  # nothing else written


def test_bands_file_under_an_output_name_is_refused(capsys, tmp_path, good_sweep):
    out = tmp_path / "out"
    out.mkdir()
    bf = out / "mast.table.csv"  # a band list saved under the name the table would take
    bf.write_text('[[band]]\nname = "20 m"\nlow = "14MHz"\nhigh = "14.35MHz"\n')
    before = snapshot(bf, good_sweep)
    code, _, err = run(capsys, "correct", good_sweep, *LINE_OPTS, "--bands-file", bf, "--out", out)
    assert_refused(code, err, ["--out", str(bf)], before=before)
    assert sorted(os.listdir(out)) == ["mast.table.csv"]


def test_a_line_that_passes_nothing_is_refused_before_writing(capsys, tmp_path, good_sweep):
    # a measured 2-port with S21 = S12 = 0 at one point (an open run): Gamma_L = (G - S11)/(S22 (G - S11) + 0)
    # has no finite value there when S22 = 0, and a Touchstone file cannot hold it
    s = np.zeros((F_HZ.size, 2, 2), dtype=complex)
    s[:, 0, 1] = s[:, 1, 0] = 1.0
    k = int(np.argmin(np.abs(F_HZ - 14e6)))
    s[k, 0, 1] = s[k, 1, 0] = 0.0
    run_file = tmp_path / "broken.s2p"
    write_touchstone(str(run_file), F_HZ, s)
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", good_sweep, "--line", run_file, "--out", out)
    assert_refused(code, err, [str(good_sweep), "no finite", "1 of 41", "14.00 MHz", "S21"], out,  # to the 50 kHz step
                   snapshot(good_sweep, run_file))


def test_debug_shows_the_exception(capsys, tmp_path):
    src = tmp_path / "a.s1p"
    src.write_text(OPT + "14 0.1 abc\n")
    with pytest.raises(DeembedError, match="line 2"):
        main(["correct", str(src), *LINE_OPTS, "--out", str(tmp_path / "o"), "--debug"])
    with pytest.raises(Exception, match="bogus"):
        main(["correct", str(src), "--bogus", "--debug"])


# ----------------------------------------------------------------------------------------------
# what real files contain is accepted, with the same result as a plain file


def _latin1_comment(t):
    return b"! Gemessen am Mast, 12\xb0C, Andr\xe9\n" + t.encode()


VARIANTS = [
    ("CRLF line ends", lambda t: t.replace("\n", "\r\n").encode()),
    ("CR line ends", lambda t: t.replace("\n", "\r").encode()),
    ("tabs", lambda t: t.replace(" ", "\t").encode()),
    ("lower-case option line", lambda t: t.replace("# MHz S RI R 50", "# mhz s ri r 50").encode()),
    ("option fields in another order", lambda t: t.replace("# MHz S RI R 50", "#R 50 RI MHz S").encode()),
    ("trailing comments", lambda t: t.replace("\n", "  ! noted\n").replace("# MHz S RI R 50  ! noted",
                                                                           "# MHz S RI R 50 ! opt").encode()),
    ("Latin-1 comment", _latin1_comment),
    ("UTF-8 byte-order mark", lambda t: b"\xef\xbb\xbf" + t.encode()),
    ("blank lines and indentation", lambda t: t.replace("\n", "\n\n  ").encode()),
]


@pytest.mark.parametrize("name, transform", VARIANTS, ids=[v[0] for v in VARIANTS])
def test_real_world_variants_give_the_same_correction(capsys, tmp_path, good_text, good_sweep, name, transform):
    src = tmp_path / "variant.s1p"
    src.write_bytes(transform(good_text))
    before = snapshot(src)
    for path in (good_sweep, src):
        code, _, err = run(capsys, "correct", path, *LINE_OPTS, "--out", tmp_path / "o", "--no-plots")
        assert code == 0, err
        assert err == ""
    plain = read_sweep(str(tmp_path / "o" / "mast.feedpoint.s1p"))
    got = read_sweep(str(tmp_path / "o" / "variant.feedpoint.s1p"))
    assert np.array_equal(got.freq_hz, plain.freq_hz) and np.array_equal(got.gamma, plain.gamma)
    assert snapshot(src) == before


def test_missing_option_line_uses_the_defaults_and_says_so(capsys, tmp_path):
    # Touchstone 1.1 defaults without an option line: GHz, S, MA, R 50 (IBIS Touchstone spec)
    g = embed_gamma(series_rlc_gamma(F_HZ), the_line().s_params(F_HZ))
    write_touchstone(str(tmp_path / "explicit.s1p"), F_HZ, g, fmt="MA", unit="GHz")
    text = (tmp_path / "explicit.s1p").read_text()
    assert "# GHz S MA R 50" in text
    (tmp_path / "bare.s1p").write_text(text.replace("# GHz S MA R 50\n", ""))
    for name in ("explicit", "bare"):
        code, out, err = run(capsys, "correct", tmp_path / f"{name}.s1p", *LINE_OPTS, "--out", tmp_path / "o",
                             "--no-plots", "--json")
        assert code == 0, err
    warnings = json.loads(out)["warnings"]
    assert any("no option line" in w and "GHz S MA R 50" in w for w in warnings), warnings
    a = read_sweep(str(tmp_path / "o" / "bare.feedpoint.s1p")).gamma
    b = read_sweep(str(tmp_path / "o" / "explicit.feedpoint.s1p")).gamma
    assert np.array_equal(a, b)


def test_repeated_option_line_is_ignored_and_noted(capsys, tmp_path, good_text):
    # IBIS Touchstone 1.1: only the first option line counts; we say so rather than refuse
    src = tmp_path / "twice.s1p"
    src.write_text(good_text.replace("# MHz S RI R 50\n", "# MHz S RI R 50\n# GHz S MA R 75\n"))
    code, out, err = run(capsys, "correct", src, *LINE_OPTS, "--out", tmp_path / "o", "--no-plots", "--json")
    assert code == 0, err
    assert any("second option line was ignored" in w for w in json.loads(out)["warnings"])


# ----------------------------------------------------------------------------------------------
# odd but legal sweeps: corrected, with a warning, every output written


ALL_OUTPUTS = {".feedpoint.s1p", ".table.csv", ".summary.json", ".swr.png", ".smith.png", ".impedance.png",
               ".return-loss.png", ".budget.png"}


@pytest.mark.parametrize("freqs_mhz", [[14.0], [14.0, 14.1]], ids=["1 point", "2 points"])
def test_too_few_points_are_corrected_with_a_warning(capsys, tmp_path, freqs_mhz):
    f = np.array(freqs_mhz) * 1e6
    g_ant = series_rlc_gamma(f)
    src = tmp_path / "spot.s1p"
    write_touchstone(str(src), f, embed_gamma(g_ant, the_line().s_params(f)))
    out = tmp_path / "out"
    code, text, err = run(capsys, "correct", src, *LINE_OPTS, "--out", out, "--target", "14.2MHz",
                          "--power", "100W", "--bands")
    assert code == 0, err
    assert "need a sweep" in text
    names = set(os.listdir(out))
    assert {"spot" + s for s in ALL_OUTPUTS} <= names
    assert not any(n.startswith(".") for n in names)  # no temporary file left behind
    summary = json.loads((out / "spot.summary.json").read_text())
    assert any("need a sweep" in w for w in summary["warnings"])
    assert np.max(np.abs(read_sweep(str(out / "spot.feedpoint.s1p")).gamma - g_ant)) < 1e-9  # embed, de-embed
    if (out / "spot.report.html").exists():  # the report is another module's; when present it must be whole
        assert "</html>" in (out / "spot.report.html").read_text(encoding="utf-8").lower()


def test_sweep_starting_at_dc_is_corrected(capsys, tmp_path):
    # at 0 Hz the RLGC line (R ~ sqrt f, G ~ f) is a thru of zero length: Gamma_L = Gamma_in there
    # (Pozar 4th ed. sec. 2.1 with R = G = 0 and wl = 0; from memory)
    f = np.concatenate(([0.0], F_HZ))
    g_in = np.full(f.size, 0.2 + 0.1j)
    src = tmp_path / "dc.s1p"
    write_touchstone(str(src), f, g_in)
    code, _, err = run(capsys, "correct", src, *LINE_OPTS, "--out", tmp_path / "o", "--no-plots")
    assert code == 0, err
    fp = read_sweep(str(tmp_path / "o" / "dc.feedpoint.s1p")).gamma
    assert abs(fp[0] - g_in[0]) < 1e-12


def test_gamma_above_one_warns_and_carries_on(capsys, tmp_path):
    g = np.full(F_HZ.size, 1.05 * np.exp(0.3j))  # |Gamma| > 1: an analyzer out of calibration
    src = tmp_path / "hot.s1p"
    write_touchstone(str(src), F_HZ, g)
    out = tmp_path / "out"
    code, text, err = run(capsys, "correct", src, *LINE_OPTS, "--out", out)
    assert code == 0, err
    assert "|Gamma| above 1 at 41 of 41 points" in text and "calibration" in text
    summary = json.loads((out / "hot.summary.json").read_text())
    assert any("sweep itself shows |Gamma| above 1" in w for w in summary["warnings"])
    assert {"hot" + s for s in ALL_OUTPUTS - {".budget.png"}} <= set(os.listdir(out))


# ----------------------------------------------------------------------------------------------
# characterization: bad standards, and a sweep beyond what was characterized


def _standards(tmp_path, f, sub="std"):
    """Open and short at the far end of the LINE_OPTS line, as the analyzer would see them (.s1p)."""
    folder = tmp_path / sub
    folder.mkdir(exist_ok=True)
    s = the_line().s_params(f)
    paths = {}
    for name, g in (("open", 1.0), ("short", -1.0)):
        paths[name] = folder / f"far-{name}.s1p"
        write_touchstone(str(paths[name]), f, embed_gamma(np.full(f.size, g), s))
    return paths


@pytest.fixture
def characterized(tmp_path, capsys):
    std = _standards(tmp_path, F_HZ)
    code, _, err = run(capsys, "characterize", "--open", std["open"], "--short", std["short"], "--out", tmp_path / "run")
    assert code == 0, err
    return tmp_path / "run" / "far.line.s2p"  # the stated name: the first sweep's name without "-open"


def test_characterization_not_covering_the_sweep(capsys, tmp_path, characterized):
    f40 = np.linspace(7.0e6, 7.3e6, 31)
    src = tmp_path / "forty.s1p"
    write_touchstone(str(src), f40, np.full(f40.size, 0.3 + 0.1j))
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", src, "--line", characterized, "--out", out)
    assert_refused(code, err, ["--line", "--extrapolate", str(characterized), "7 MHz"], out,
                   snapshot(src, characterized))
    code, _, err = run(capsys, "correct", src, "--line", characterized, "--extrapolate", "--out", out, "--no-plots")
    assert code == 0, err


@pytest.mark.parametrize("case", ["empty open", "two-port short", "grids differ", "starts at dc", "nan in short",
                                  "out not s2p", "out is an input", "bad length", "bad z0", "open-c without open"])
def test_characterize_bad_standards(capsys, tmp_path, case):
    std = _standards(tmp_path, F_HZ)
    out = tmp_path / "res" / "run"
    out.parent.mkdir()
    args = ["--open", std["open"], "--short", std["short"], "--out", out]
    needles, line = [], None
    if case == "empty open":
        std["open"].write_bytes(b"")
        needles = [std["open"], "empty"]
    elif case == "two-port short":
        two = tmp_path / "std" / "far-short.s2p"
        two.write_text(OPT + "14 -1 0 0 0 0 0 0 0\n")
        args[3] = two
        needles = [two, "--port"]
    elif case == "grids differ":
        other = _standards(tmp_path, F_HZ[:-1], sub="std2")
        args[3] = other["short"]
        needles = [other["short"], "frequencies differ"]
    elif case == "starts at dc":
        dc = _standards(tmp_path, np.concatenate(([0.0], F_HZ)), sub="std3")
        args[1], args[3] = dc["open"], dc["short"]
        needles = ["0 Hz"]
    elif case == "nan in short":
        text = std["short"].read_text().splitlines()
        text[5] = text[5].split()[0] + " nan 0"
        std["short"].write_text("\n".join(text) + "\n")
        needles, line = [std["short"], "NaN"], 6
    elif case == "out not s2p":  # --out is a folder: a file name ending .s2p is refused with the hint
        args[-1] = tmp_path / "res" / "run.s2p"
        needles = ["--out", "is a folder"]
    elif case == "out is an input":  # the stated output name inside --out is a link to an input
        (tmp_path / "res" / "run").mkdir()
        link = tmp_path / "res" / "run" / "far.line.s2p"
        link.symlink_to(std["open"])
        needles = ["--out", "input"]
    elif case == "bad length":
        args += ["--length", "-30m"]
        needles = ["--length"]
    elif case == "bad z0":
        args += ["--z0", "0ohm"]
        needles = ["--z0"]
    elif case == "open-c without open":
        args = ["--short", std["short"], "--open-c", "12fF", "--out", out]
        needles = ["--open-c"]
    inputs = [a for a in args if isinstance(a, Path) and a.is_file() and not a.is_symlink()]
    before = snapshot(*inputs)
    code, _, err = run(capsys, "characterize", *args)
    msg = assert_refused(code, err, needles, before=before, line=line)
    written = [p for p in out.parent.rglob("*") if p.is_file() and not p.is_symlink()]
    assert written == [], msg


# ----------------------------------------------------------------------------------------------
# security: nothing evaluates or unpickles what it reads


def test_package_never_unpickles_or_evaluates():
    banned_modules = {"pickle", "cPickle", "dill", "shelve", "marshal", "jsonpickle"}
    hits = []
    for path in sorted(PKG.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                hits += [f"{path.name}: import {a.name}" for a in node.names if a.name.split(".")[0] in banned_modules]
            elif isinstance(node, ast.ImportFrom) and (node.module or "").split(".")[0] in banned_modules:
                hits.append(f"{path.name}: from {node.module} import")
            elif isinstance(node, ast.Call):
                fn = node.func
                name = fn.id if isinstance(fn, ast.Name) else fn.attr if isinstance(fn, ast.Attribute) else ""
                if name in ("eval", "exec", "__import__"):
                    hits.append(f"{path.name}:{node.lineno}: {name}()")
                if name == "load" and any(kw.arg == "allow_pickle" for kw in node.keywords):
                    hits.append(f"{path.name}:{node.lineno}: load(allow_pickle=...)")
    assert hits == []


def test_the_scan_would_catch_a_pickle_or_an_eval():
    # the same walk on a planted snippet: the check above can fail
    tree = ast.parse("import pickle\nx = eval('1')\n")
    kinds = {type(n).__name__ for n in ast.walk(tree)}
    assert {"Import", "Call"} <= kinds
    assert any(isinstance(n, ast.Call) and getattr(n.func, "id", "") == "eval" for n in ast.walk(tree))


def test_a_pickle_named_s1p_is_refused_not_loaded(capsys, tmp_path):
    import pickle

    src = tmp_path / "trap.s1p"
    src.write_bytes(pickle.dumps({"freq": [14e6], "s": [0.1]}))
    code, _, err = run(capsys, "correct", src, *LINE_OPTS, "--out", tmp_path / "o")
    assert_refused(code, err, [str(src)], tmp_path / "o")


def test_markup_from_files_is_escaped_in_the_report(capsys, tmp_path, good_text):
    pytest.importorskip("deembed.render.report")
    src = tmp_path / "x<b>y.s1p"
    src.write_text("! <script>alert('sweep')</script>\n" + good_text)
    lf = tmp_path / "feed.line.toml"
    lf.write_text('name = "<img src=x onerror=alert(1)>"\n[[section]]\nlabel = "<script>alert(2)</script>"\n'
                  'length = "30m"\nvf = 0.66\nloss = "1.25dB@14MHz"\n')
    out = tmp_path / "out"
    code, _, err = run(capsys, "correct", src, "--line", lf, "--out", out)
    assert code == 0, err
    html = (out / "x<b>y.report.html").read_text(encoding="utf-8")
    for raw in ("<script>alert", "<img src=x", "x<b>y"):
        assert raw not in html
    assert "&lt;script&gt;alert(2)" in html or "&lt;script&gt;alert('sweep')" in html  # shown, escaped


# ----------------------------------------------------------------------------------------------
# compare and site

SAMPLES = PKG.parent / "sample_sweeps"


@pytest.fixture
def station(tmp_path):
    """The invented station's 40 m files, copied so that nothing in the repository can be touched."""
    import shutil

    d = tmp_path / "station"
    d.mkdir()
    for name in ("dipole-40m.s1p", "dipole-40m-after.s1p", "dipole-40m.line.toml", "vertical-2m.s1p"):
        shutil.copy(SAMPLES / name, d / name)
    return d


@pytest.mark.parametrize("case", ["empty baseline", "missing after", "2-port after", "no overlap", "limit no unit",
                                  "negative limit", "bad vf", "bad after-line", "out is a file"])
def test_compare_bad_input(capsys, tmp_path, station, case):
    base, after, line = station / "dipole-40m.s1p", station / "dipole-40m-after.s1p", station / "dipole-40m.line.toml"
    out = tmp_path / "out"
    extra, needles = ["--line", line], []
    if case == "empty baseline":
        base = station / "empty.s1p"
        base.write_bytes(b"")
        needles = [base, "empty"]
    elif case == "missing after":
        after = station / "nowhere.s1p"
        needles = [after, "no such file"]
    elif case == "2-port after":
        after = station / "run.s2p"
        after.write_text(OPT + "7.1 0.1 0 0.9 0 0.9 0 0.1 0\n")
        needles = [after, "--port 1"]
    elif case == "no overlap":
        after = station / "vertical-2m.s1p"
        needles = [after, "overlaps the baseline", base]
    elif case == "limit no unit":
        extra += ["--max-shift", "50"]
        needles = ["--max-shift", "no unit"]
    elif case == "negative limit":
        extra += ["--max-swr-rise", "-1"]
        needles = ["--max-swr-rise"]
    elif case == "bad vf":
        extra = ["--length", "38m", "--vf", "2"]
        needles = ["--vf", "at most 1"]
    elif case == "bad after-line":
        bad = station / "new.line.toml"
        bad.write_text("[[section]\n")
        extra += ["--after-line", bad]
        needles = [bad, "not valid TOML"]
    elif case == "out is a file":
        out.write_text("keep")
        needles = ["--out", "is a file"]
    before = snapshot(*[p for p in station.iterdir()])
    code, _, err = run(capsys, "compare", base, after, *extra, "--out", out)
    if case == "out is a file":  # results that cannot be written: exit status 3 (README), the file kept
        assert_unwritable(code, err, needles, {**before, out: b"keep"})
        return
    assert_refused(code, err, needles, out, before)


@pytest.mark.parametrize("text, needles, line", [
    ("[[feed]\n", ["not valid TOML"], 1),
    ('colour = "red"\n[[antenna]]\nname = "a"\n', ["unknown key(s) colour"], None),
    ('name = "x"\n', ["no [[antenna]]"], None),
    ("antenna = 5\n", ["no [[antenna]]"], None),
    ('[limits]\nmax_shift = "50"\n[[antenna]]\nname = "a"\nline = "l.toml"\nbaseline = "a.s1p"\nlatest = "b.s1p"\n',
     ["max_shift", "no unit"], None),
], ids=["syntax", "unknown key", "no feeds", "feed not a table", "limit without unit"])
def test_bad_site_file(capsys, tmp_path, text, needles, line):
    site_file = tmp_path / "my.site.toml"
    site_file.write_text(text)
    out = tmp_path / "out"
    code, _, err = run(capsys, "site", site_file, "--out", out, "--workers", "1")
    assert_refused(code, err, [site_file, *needles], out, snapshot(site_file), line)


def test_site_paths_resolve_relative_to_the_site_file(capsys, tmp_path, station, monkeypatch):
    (station / "s.site.toml").write_text('name = "x"\n[[antenna]]\nname = "<b>40 m</b>"\nline = "dipole-40m.line.toml"\n'
                                         'baseline = "dipole-40m.s1p"\nlatest = "dipole-40m-after.s1p"\n')
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    before = snapshot(*station.iterdir())
    code, _, err = run(capsys, "site", station / "s.site.toml", "--out", tmp_path / "out", "--workers", "1",
                       "--json")
    assert code in (0, 1), err  # 1 would be a verdict, not an error
    summary = json.loads((tmp_path / "out" / "site.json").read_text())
    assert [f["verdict"] for f in summary["antennas"]] != ["error"], summary["antennas"]
    # the inputs are unchanged; the only new file is the site's history store, which belongs beside it
    assert snapshot(*[p for p in station.iterdir() if p.name != "s.history.sqlite"]) == before
    assert sorted(p.name for p in station.iterdir()) == sorted([*(Path(p).name for p in before), "s.history.sqlite"])
    index = (tmp_path / "out" / "index.html").read_text(encoding="utf-8")
    assert "<b>40 m</b>" not in index and "&lt;b&gt;40 m&lt;/b&gt;" in index  # a name from a file is escaped
