"""Text-table sweeps (--columns) through the commands, and sweeps without phase through `correct`.

Checks: the same sweep as Touchstone and as an R/X table gives the same results; an SWR-only table of the
same sweep gives a feedpoint SWR whose stated interval holds the full complex correction's (the bound
must hold) and whose 2:1 span brackets it; the handbook relation of SWR behind a lossy line (check-values
E5, [D] from F8/F9: 1 dB matched loss, SWR 3 at the load reads 2.3177 at the input); commands that need
phase refuse an SWR-only sweep with the reason; the site file's ``columns`` key.
"""
import json
import os
import shutil
from pathlib import Path

import numpy as np
import pytest

from deembed.cli.app import main
from deembed.io.touchstone import read_sweep
from deembed.physics import rf

SAMPLES = Path(__file__).resolve().parents[1] / "sample_sweeps"
RX = SAMPLES / "inverted-l-80m.rx.csv"
LINE = ["--cable", "rg213", "--length", "30m"]


def run(capsys, *args):
    rc = main([str(a) for a in args])
    out = capsys.readouterr()
    return rc, out.out, out.err


def rx_rows():
    """(freq_mhz, r, x) of the bundled R/X sample, read independently of deembed (numpy only)."""
    return np.loadtxt(RX, delimiter=",", skiprows=3)


def test_rx_table_equals_the_same_sweep_as_touchstone(tmp_path, capsys):
    rows = rx_rows()
    g = rf.gamma_from_z(rows[:, 1] + 1j * rows[:, 2])
    ts = tmp_path / "same.s1p"
    ts.write_text("# MHz S RI R 50\n" + "".join(f"{float(f)!r} {float(a.real)!r} {float(a.imag)!r}\n" for f, a in zip(rows[:, 0], g)))
    rc, out_a, err = run(capsys, "correct", RX, "--columns", "freq:MHz,r,x", *LINE, "--json", "--no-plots",
                         "--out", tmp_path / "a")
    assert rc == 0, err
    rc, out_b, err = run(capsys, "correct", ts, *LINE, "--json", "--no-plots", "--out", tmp_path / "b")
    assert rc == 0, err
    a, b = json.loads(out_a), json.loads(out_b)
    assert a["feedpoint"]["min_swr"]["swr"] == pytest.approx(b["feedpoint"]["min_swr"]["swr"], rel=1e-12)
    assert a["feedpoint"]["resonances_hz"] == pytest.approx(b["feedpoint"]["resonances_hz"], rel=1e-12)
    assert a["feedpoint"]["swr_spans_hz"]["2"][0] == pytest.approx(b["feedpoint"]["swr_spans_hz"]["2"][0], rel=1e-12)


def test_swr_only_against_the_full_complex_correction(tmp_path, capsys):
    rows = rx_rows()
    g = rf.gamma_from_z(rows[:, 1] + 1j * rows[:, 2])
    swr_csv = tmp_path / "same.swr.csv"
    swr_csv.write_text("MHz;SWR\n" + "".join(f"{float(f)!r};{float(s)!r}\n" for f, s in zip(rows[:, 0], rf.swr(g))))
    rc, out, err = run(capsys, "correct", RX, "--columns", "freq:MHz,r,x", *LINE, "--json", "--no-plots",
                       "--out", tmp_path / "full")
    assert rc == 0, err
    full = json.loads(out)
    rc, out, err = run(capsys, "correct", swr_csv, "--columns", "freq:MHz,swr", *LINE, "--json",
                       "--out", tmp_path / "mag")
    assert rc == 0, err
    mag = json.loads(out)
    fp = mag["feedpoint"]
    assert mag["sweep"]["phase"] is False and fp["phase"] is False
    # the interval holds the full correction's feedpoint SWR at every point, whatever the phase (the bound must
    # hold), and so its lowest value too
    def table(path):
        lines = path.read_text().splitlines()
        head = lines[0].split(",")
        data = np.array([[float(v) for v in ln.split(",")] for ln in lines[1:]])
        return {h: data[:, k] for k, h in enumerate(head)}

    t_full = table(tmp_path / "full" / "inverted-l-80m.rx.table.csv")
    t_mag = table(tmp_path / "mag" / "same.swr.table.csv")
    assert np.array_equal(t_full["freq_hz"], t_mag["freq_hz"])
    exact = t_full["feedpoint_swr"]
    assert np.all(t_mag["feedpoint_swr_low"] <= exact * (1 + 1e-12))
    assert np.all(exact <= t_mag["feedpoint_swr_high"] * (1 + 1e-12))
    assert np.min(t_mag["feedpoint_swr_low"]) <= np.min(exact) <= np.min(t_mag["feedpoint_swr_high"])
    m = fp["min_swr"]
    assert m["swr_low"] <= m["swr"] <= m["swr_high"]
    # the 2:1 span of the exact per-point SWR lies between the inner and the outer bound (within a sweep step)
    step = (rows[1, 0] - rows[0, 0]) * 1e6
    f_in = t_full["freq_hz"][exact <= 2.0]
    (inner,) = fp["swr_spans_hz_bound"]["2"]["inner"]
    (outer,) = fp["swr_spans_hz_bound"]["2"]["outer"]
    assert outer[0] - step <= f_in[0] <= inner[0] + step
    assert inner[1] - step <= f_in[-1] <= outer[1] + step
    # resonance and Q from the impedance are not available, with the reason
    assert fp["resonances_hz"] is None and fp["q"] is None
    assert "phase" in fp["not_available"]["resonances"]
    # the table has the bound, and no Touchstone or report was written (there is no reflection to write)
    table = (tmp_path / "mag" / "same.swr.table.csv").read_text().splitlines()[0].split(",")
    for col in ("feedpoint_swr", "feedpoint_swr_low", "feedpoint_swr_high", "analyzer_swr"):
        assert col in table
    assert not (tmp_path / "mag" / "same.swr.feedpoint.s1p").exists()
    assert (tmp_path / "mag" / "same.swr.swr.png").stat().st_size > 1000


def test_handbook_relation_through_the_command(tmp_path, capsys):
    # check-values E5 [D]: ML 1.0 dB, SWR 3 at the load -> 2.3177 at the input. A line of 1 dB matched loss at
    # 14 MHz; the interval from its complex Z0 must hold 3.0 (E5 is given to 5 figures: 2e-3 relative).
    csv = tmp_path / "e5.csv"
    csv.write_text("14.0,2.3177\n")
    rc, out, err = run(capsys, "correct", csv, "--columns", "freq:MHz,swr", "--length", "30m", "--vf", "0.66",
                       "--loss", "1dB@14MHz", "--json", "--no-plots", "--out", tmp_path / "o")
    assert rc == 0, err
    m = json.loads(out)["feedpoint"]["min_swr"]
    assert m["swr"] == pytest.approx(3.0, rel=2e-3)
    assert m["swr_low"] * (1 - 2e-3) <= 3.0 <= m["swr_high"] * (1 + 2e-3)


def test_compare_and_locate_refuse_a_sweep_without_phase(tmp_path, capsys):
    src = SAMPLES / "vertical-10m.swr.csv"
    for args in (("compare", src, src, "--columns", "freq:kHz,swr", "--cable", "rg8x", "--length", "25m"),
                 ("locate", src, "--columns", "freq:kHz,swr", "--cable", "rg8x", "--out", tmp_path / "l")):
        rc, out, err = run(capsys, *args)
        assert rc == 2
        assert err.startswith(f"error: {src}: this sweep holds SWR only, without phase") and err.count("\n") == 1


def test_table_without_columns_gets_the_hint(capsys, tmp_path):
    rc, _, err = run(capsys, "correct", RX, *LINE, "--out", tmp_path / "o")
    assert rc == 2
    assert "--columns" in err and "freq:MHz,r,x" in err and "rename" not in err
    rc, _, err = run(capsys, "correct", RX, "--columns", "freq,r,x", *LINE, "--out", tmp_path / "o")
    assert rc == 2 and err.startswith("error: --columns: 'freq': the frequency column needs its unit")
    assert not (tmp_path / "o").exists()


def test_site_columns_key(tmp_path, capsys):
    rows = rx_rows()
    for name in ("base.csv", "later.csv"):
        (tmp_path / name).write_text("".join(f"{float(f)!r},{float(r)!r},{float(x)!r}\n" for f, r, x in rows))
    shutil.copy(SAMPLES / "vertical-10m.swr.csv", tmp_path / "ten.csv")
    shutil.copy(SAMPLES / "vertical-10m.swr.csv", tmp_path / "ten-later.csv")
    (tmp_path / "s.site.toml").write_text(
        'name = "table site"\n'
        '[[antenna]]\nname = "80 m"\ncable = "rg213"\nlength = "30m"\nbaseline = "base.csv"\nlatest = "later.csv"\n'
        'columns = "freq:MHz,r,x"\n'
        '[[antenna]]\nname = "10 m"\ncable = "rg8x"\nlength = "25m"\nbaseline = "ten.csv"\nlatest = "ten-later.csv"\n'
        'columns = "freq:kHz,swr"\n')
    rc, out, err = run(capsys, "site", tmp_path / "s.site.toml", "--out", tmp_path / "o", "--json", "--workers", "1")
    assert rc == 1, err
    s = json.loads(out)
    assert [a["verdict"] for a in s["antennas"]] == ["within_limits", "error"]
    assert "without phase" in s["antennas"][1]["error"]
    (tmp_path / "bad.site.toml").write_text(
        'name = "x"\n[[antenna]]\nname = "a"\ncable = "rg213"\nlength = "30m"\nbaseline = "base.csv"\n'
        'latest = "later.csv"\ncolumns = "freq:MHz,q,x"\n')
    rc, out, err = run(capsys, "site", tmp_path / "bad.site.toml", "--out", tmp_path / "o2", "--json", "--workers", "1")
    s = json.loads(out)
    assert s["antennas"][0]["verdict"] == "error"
    assert "antenna 1 (a): 'columns'" in s["antennas"][0]["error"] and "'q' is not a column name" in s["antennas"][0]["error"]


def test_a_skipped_column_may_hold_text(tmp_path, capsys):
    """Only the columns in use are read: a skipped column (-) of notes, units or nothing at all is fine; a bad
    value in a used column is named by file, line and column."""
    rows = "".join(f"{28.0 + 0.1 * k:.1f},{note},{1.5 - 0.05 * k:.2f}\n" for k, note in
                   enumerate(["ok", "bad ant", "", "n/a", "3 dB pad"]))
    table = tmp_path / "skiptext.csv"
    table.write_text("freq,note,swr\n" + rows)
    rc, out, err = run(capsys, "correct", table, "--columns", "freq:MHz,-,swr", "--cable", "rg8x", "--length", "25m",
                       "--out", tmp_path / "o", "--json")
    assert rc == 0, err
    summary = json.loads(out)
    assert summary["sweep"]["points"] == 5
    # the lowest SWR at the analyzer is the last row's 1.30 (the table's own figure; no interpolation past it)
    assert summary["analyzer"]["min_swr"]["swr"] == pytest.approx(1.30, abs=1e-9)
    bad = tmp_path / "bad.csv"
    bad.write_text("freq,note,swr\n28.0,ok,1.5\n28.1,bad ant,x1.4\n")
    rc, _, err = run(capsys, "correct", bad, "--columns", "freq:MHz,-,swr", "--cable", "rg8x", "--length", "25m",
                     "--out", tmp_path / "o2")
    assert rc == 2
    assert err.strip() == f"error: {bad}, line 3: column 3 (SWR): cannot read 'x1.4' as a number; fix or remove the line"
    assert not (tmp_path / "o2").exists()


def test_library_messages_name_the_field_and_the_command_line_its_option(tmp_path, capsys):
    """io/ names the quantity or file field (``columns``, ``port``, ``max_input_size``); the command line shows
    its option for it."""
    from deembed.base.errors import OptionError
    from deembed.io.anysweep import read_any_sweep
    from deembed.io.inputfile import parse_size
    from deembed.io.tablesweep import parse_columns

    table = tmp_path / "t.csv"
    table.write_text("7.0,0.1\n7.1,0.2\n")
    for call in (lambda: parse_columns("freq,swr"), lambda: read_any_sweep(table, "freq:MHz,swr", port=1),
                 lambda: parse_size("lots")):
        with pytest.raises(OptionError) as exc:
            call()
        assert "--" not in str(exc.value), str(exc.value)
    with pytest.raises(Exception) as exc:
        read_any_sweep(table, "freq:MHz,r,x")
    assert "--columns" not in str(exc.value) and "columns freq:MHz,r,x names 3" in str(exc.value)
    rc, _, err = run(capsys, "correct", table, "--columns", "freq:MHz,r,x", *LINE, "--out", tmp_path / "o")
    assert rc == 2 and "but --columns freq:MHz,r,x names 3" in err
    rc, _, err = run(capsys, "correct", table, "--columns", "freq:MHz,swr", "--port", "1", *LINE,
                     "--out", tmp_path / "o")
    assert rc == 2 and err.startswith("error: --port:") and "--port is for multi-port" in err
