"""The command line end to end: outputs, JSON, exit status, one-line errors, light imports."""
import json
import os
import re
import subprocess
import sys

import numpy as np
import pytest

from deembed.physics import rf
from deembed.cli.app import main
from deembed.physics.deembedding import embed_gamma
from deembed.physics.line import Line, LossModel, Section
from deembed.io.touchstone import read_sweep, write_touchstone

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def series_rlc_z(f, r=50.0, f0=14e6, q=20.0):
    """Series RLC (check-values E10 model): Z = R + j Q R (f/f0 - f0/f)."""
    x = f / f0
    return r + 1j * q * r * (x - 1 / x)


@pytest.fixture
def analyzer_sweep(tmp_path):
    """A series-RLC antenna (E10) behind 30 m of 50 ohm line with 1.25 dB at 14 MHz, written as .s1p."""
    f = np.linspace(13e6, 15e6, 401)
    line = Line((Section.from_length(50.0, 0.66, 30.0, LossModel.fit([(1.25, 14e6)])),))
    g_ant = rf.gamma_from_z(series_rlc_z(f))
    path = tmp_path / "mast.s1p"
    write_touchstone(str(path), f, embed_gamma(g_ant, line.s_params(f)))
    return path, f, g_ant


def test_correct_writes_every_output_and_recovers_the_antenna(capsys, tmp_path, analyzer_sweep):
    path, f, g_ant = analyzer_sweep
    out = tmp_path / "res"
    code, text, err = run(capsys, "correct", path, "--length", "30m", "--vf", "0.66", "--loss", "1.25dB@14MHz",
                          "--out", out, "--target", "14.2MHz", "--power", "100W")
    assert code == 0, err
    names = sorted(os.listdir(out))
    for suffix in (".feedpoint.s1p", ".table.csv", ".summary.json", ".swr.png", ".smith.png", ".impedance.png"):
        assert "mast" + suffix in names
    fp = read_sweep(str(out / "mast.feedpoint.s1p"))
    assert np.array_equal(fp.freq_hz, f)
    assert np.max(np.abs(fp.gamma - g_ant)) < 1e-9  # embed then de-embed returns the load
    summary = json.loads((out / "mast.summary.json").read_text())
    # E10 (check-values [D]): series RLC R = 50, f0 = 14 MHz, Q = 20: SWR minimum 1.0 at 14 MHz,
    # resonance at 14 MHz, SWR-2 span 13.754700 to 14.249675 MHz
    assert summary["feedpoint"]["min_swr"]["freq_hz"] == pytest.approx(14e6, abs=2e3)
    assert summary["feedpoint"]["min_swr"]["swr"] == pytest.approx(1.0, abs=1e-3)
    assert summary["feedpoint"]["resonances_hz"] == [pytest.approx(14e6, abs=100)]
    (lo, hi), = summary["feedpoint"]["swr_spans_hz"]["2"]
    assert lo == pytest.approx(13.7547e6, abs=2e3) and hi == pytest.approx(14.249675e6, abs=2e3)
    assert summary["feedpoint"]["q"] == pytest.approx(20.0, rel=0.01)  # Yaghjian-Best Q of the E10 model
    # The line hides the match: behind 1.25 dB the analyzer's 2:1 span is wider (F8)
    (slo, shi), = summary["analyzer"]["swr_spans_hz"]["2"]
    assert shi - slo > hi - lo
    assert summary["line"]["matched_loss_db"]["at_low"] == pytest.approx(1.25 * np.sqrt(13 / 14), rel=1e-3)
    # trim: resonance 14.0, target 14.2 -> shorten by (14.0/14.2 - 1) = -1.408 % (f ~ 1/L, common practice)
    assert summary["feedpoint"]["trim"]["length_change_percent"] == pytest.approx(-1.408, abs=0.01)
    assert "feedpoint" in text and "lowest SWR" in text
    table = (out / "mast.table.csv").read_text().splitlines()
    head = table[0].split(",")
    for col in ("freq_hz", "analyzer_swr", "feedpoint_swr", "feedpoint_return_loss_db", "feedpoint_r_ohm",
                "feedpoint_x_ohm", "line_matched_loss_db", "budget_delivered_w"):
        assert col in head
    assert len(table) == 402


def test_correct_json_on_stdout(capsys, tmp_path, analyzer_sweep):
    path, _, _ = analyzer_sweep
    code, text, _ = run(capsys, "correct", path, "--length", "30m", "--vf", "0.66", "--loss", "1.25dB@14MHz",
                        "--out", tmp_path / "o", "--json", "--no-plots")
    assert code == 0
    data = json.loads(text)
    assert set(data) >= {"sweep", "line", "feedpoint", "analyzer", "warnings"}


def test_budget_json_matches_handbook_example(capsys):
    # check-values E6 [D] from F8-F10: 100 W, 1 dB matched loss, SWR 3 at the antenna
    code, text, _ = run(capsys, "budget", "--power", "100W", "--loss", "1dB", "--antenna-swr", "3", "--json")
    assert code == 0
    b = json.loads(text)
    assert b["at_antenna"]["delivered_w"] == pytest.approx(59.575, abs=1e-3)
    assert b["at_transmitter"]["reflected_w"] == pytest.approx(15.774, abs=1e-3)
    assert b["at_transmitter"]["swr"] == pytest.approx(2.3177, abs=1e-4)  # E5 row 1
    assert b["at_transmitter"]["return_loss_db"] == pytest.approx(8.0206, abs=1e-4)
    assert b["matched_at_transmitter"]["total_loss_db"] == pytest.approx(1.5039, abs=1e-4)


def test_budget_trade_figure_from_measured_swr(capsys):
    # common practice, no source: 1.67:1 read behind 1.25 dB is an antenna near 2:1
    code, text, _ = run(capsys, "budget", "--power", "100W", "--loss", "1.25dB", "--measured-swr", "1.6667", "--json")
    assert code == 0
    assert json.loads(text)["at_antenna"]["swr"] == pytest.approx(2.0, abs=0.01)


@pytest.mark.parametrize("args, needle", [
    (["correct", "{missing}", "--length", "30m", "--vf", "0.66"], "no such file"),
    (["correct", "{sweep}", "--length", "30m", "--vf", "1.5"], "--vf"),
    (["correct", "{sweep}", "--length", "-3m", "--vf", "0.66"], "--length"),
    (["correct", "{sweep}", "--length", "30", "--vf", "0.66"], "no unit"),
    (["correct", "{sweep}", "--length", "30m", "--vf", "0.66", "--z0", "0ohm"], "--z0"),
    (["correct", "{sweep}", "--length", "30m", "--vf", "0.66", "--loss", "lots"], "--loss"),
    (["correct", "{sweep}", "--cable", "rg999", "--length", "30m"], "unknown cable"),
    (["correct", "{sweep}"], "--line"),
    (["budget", "--power", "100W", "--loss", "3dB", "--measured-swr", "6"], "--measured-swr"),
])
def test_bad_input_is_one_line_and_exit_2(capsys, tmp_path, analyzer_sweep, args, needle):
    path, _, _ = analyzer_sweep
    args = [a.format(sweep=path, missing=tmp_path / "nope.s1p") for a in args] + ["--out", tmp_path / "o"] \
        if args[0] == "correct" else args
    code, out, err = run(capsys, *args)
    assert code == 2
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and needle in lines[0] and "Traceback" not in err
    assert not (tmp_path / "o").exists() or not os.listdir(tmp_path / "o")  # nothing half-written


def test_inputs_are_never_modified(capsys, tmp_path):
    f = np.linspace(13e6, 15e6, 11)
    src = tmp_path / "x.s1p"
    write_touchstone(str(src), f, np.full(f.size, 0.2 + 0j))
    before, mtime = src.read_bytes(), src.stat().st_mtime_ns
    code, _, err = run(capsys, "correct", src, "--length", "1m", "--vf", "0.66", "--out", tmp_path, "--no-plots")
    assert code == 0, err
    assert src.read_bytes() == before and src.stat().st_mtime_ns == mtime
    assert (tmp_path / "x.feedpoint.s1p").exists()


def test_out_naming_an_input_is_refused(tmp_path):
    from deembed.base.errors import OptionError
    from deembed.io.atomic import check_not_input

    src = tmp_path / "a.s1p"
    src.write_text("# MHz S RI R 50\n1 0 0\n")
    with pytest.raises(OptionError, match="--out"):
        check_not_input(str(src), [str(src)], "--out")


def test_every_command_is_documented_in_the_readme():
    from deembed.cli.app import app

    readme = open(os.path.join(ROOT, "README.md"), encoding="utf-8").read()
    names = [c.name or c.callback.__name__ for c in app.registered_commands]
    assert names
    for name in names:
        assert re.search(rf"deembed {name}\b", readme), f"README lacks an example of `deembed {name}`"


def test_import_and_help_stay_light():
    code = ("import sys, deembed, deembed.cli.app\n"
            "heavy = [m for m in ('skrf', 'matplotlib', 'pandas') if m in sys.modules]\n"
            "print(heavy)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
    code = ("import sys\nfrom deembed.cli.app import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print([m for m in ('skrf', 'matplotlib', 'pandas') if m in sys.modules], file=sys.stderr)")
    err = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True).stderr
    assert err.strip().splitlines()[-1] == "[]"


def test_demo_runs(tmp_path, capsys):
    code, text, err = run(capsys, "demo", "--out", tmp_path / "demo")
    assert code == 0, err
    assert "Demo results are in" in text
    assert (tmp_path / "demo" / "dipole-40m" / "dipole-40m.summary.json").exists()
