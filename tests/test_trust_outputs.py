"""Outputs of the uncertainty work: trimming advice, loss points, tolerances, intervals in every output.

Sources beside each check; the sample sweeps are invented (deembed/jobs/samples.py).
"""
import csv
import json
import math
import os

import numpy as np
import pytest

from deembed.analysis.findings import TRIM_RULE_LIMIT, trim_advice, trim_resonance
from deembed.base.errors import InputFileError, OptionError
from deembed.cli.app import main
from deembed.io.cables import catalog
from deembed.io.linefile import SectionSpec, build_section, line_from_options, read_line_file
from deembed.physics.line import LossModel
from deembed.render.intervals import fmt_freq_interval, fmt_number, fmt_shift_interval, step_for

HERE = os.path.dirname(os.path.abspath(__file__))
SAMPLES = os.path.join(os.path.dirname(HERE), "sample_sweeps")


def run(capsys, *args):
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


# ----------------------------------------------------------------------------------------------- trim

def test_trim_uses_the_series_resonance_not_the_nearest_parallel_one():
    res = [{"freq_hz": 7.04e6, "kind": "series"}, {"freq_hz": 7.355e6, "kind": "parallel"}]
    # a target nearer the parallel resonance still trims the series one (f ~ 1/L, check-values F23 [C])
    assert trim_resonance(res, 7.2e6, primary_hz=7.04e6)["freq_hz"] == 7.04e6
    assert trim_resonance([{"freq_hz": 7.355e6, "kind": "parallel"}], 7.2e6) is None


def test_trim_prefers_the_resonance_at_the_swr_minimum():
    res = [{"freq_hz": 7.0e6, "kind": "series"}, {"freq_hz": 7.6e6, "kind": "series"}]
    assert trim_resonance(res, 7.35e6, primary_hz=7.0e6)["freq_hz"] == 7.0e6
    assert trim_resonance(res, 7.35e6, primary_hz=None)["freq_hz"] == 7.6e6


def test_trim_refuses_targets_beyond_the_rule_and_gives_an_interval_inside():
    # E12 [D]: 20.2 m resonant at 7.000 MHz -> 19.776 m for 7.150 MHz, a change of 7.000/7.150 - 1 = -2.098 %
    t = trim_advice(7.0e6, 7.15e6, resonance_draws_hz=np.linspace(6.99e6, 7.01e6, 1001))
    assert t["length_change_percent"] == pytest.approx((7.0 / 7.15 - 1) * 100, rel=1e-12)
    lo, hi = t["length_change_percent_interval"]
    assert lo < t["length_change_percent"] < hi
    assert t["refused"] is None
    far = trim_advice(7.0e6, 70e6)
    assert far["length_change_percent"] is None and "1/length" in far["refused"]
    assert trim_advice(7.0e6, 7.0e6 * (1 + TRIM_RULE_LIMIT * 0.99))["refused"] is None


def test_trim_cli_on_the_sample_dipole(capsys, tmp_path):
    line = os.path.join(SAMPLES, "dipole-40m.line.toml")
    sweep = os.path.join(SAMPLES, "dipole-40m.s1p")
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--target", "7.2MHz", "--out", tmp_path, "--no-plots",
                         "--json", "--draws", "200")
    assert code == 0, err
    trim = json.loads(out)["feedpoint"]["trim"]
    assert trim["resonance_hz"] == pytest.approx(6.96e6, abs=30e3)   # the demo dipole's series resonance
    assert trim["length_change_percent_interval"] is not None
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--target", "70MHz", "--out", tmp_path,
                         "--no-plots", "--draws", "0")
    assert code == 0, err
    assert "no advice" in out and "1/length" in out


# ---------------------------------------------------------------------------------------- loss points

def test_two_physical_loss_points_are_met_exactly():
    # 1 dB at 10 MHz and 4 dB at 100 MHz rise between sqrt(f) (x3.16) and f (x10): k1, k2 >= 0 exist
    pts = [(1.0, 10e6), (4.0, 100e6)]
    m = LossModel.fit(pts)
    assert float(m.db_at(10e6)) == pytest.approx(1.0, rel=1e-9)
    assert float(m.db_at(100e6)) == pytest.approx(4.0, rel=1e-9)
    assert LossModel.fit_misfit(m, pts) is None


def test_unphysical_loss_points_give_a_warning_with_both_sides():
    # 1.25 dB at 14 MHz and 2.1 dB at 50 MHz rise slower than sqrt(f) (x1.68 < x1.89): no c, d >= 0 meet both
    spec = SectionSpec(length="30m", vf=0.66, loss=["1.25dB@14MHz", "2.1dB@50MHz"])
    _, notes = build_section(spec, catalog())
    (msg,) = [n for n in notes if "cannot all be met" in n]
    assert "1.25 dB at 14 MHz ->" in msg and "2.1 dB at 50 MHz ->" in msg


# ----------------------------------------------------------------------------------------- tolerances

def test_catalog_defaults_and_command_line_tolerances():
    line, _ = line_from_options(cable="rg213", length="30m")
    t = line.parts[0].tolerance
    assert t.vf == 0.01 and t.loss_fraction == 0.25 and t.z0_ohm == 2.0   # the catalog's figures
    assert t.length_m == pytest.approx(0.3)                                # 1 % of the length by default
    line, _ = line_from_options(cable="rg213", length="30m", tolerances=["length=0.1m", "loss=10%", "z0=1ohm",
                                                                          "vf=0.005"])
    t = line.parts[0].tolerance
    assert (t.length_m, t.loss_fraction, t.z0_ohm, t.vf) == pytest.approx((0.1, 0.10, 1.0, 0.005))
    assert t.source("loss") == "set by the user"
    with pytest.raises(OptionError):
        line_from_options(cable="rg213", length="30m", tolerances=["colour=red"])
    with pytest.raises(OptionError):
        line_from_options(cable="rg213", length="30m", tolerances=["delay=1ns"])   # no delay in this section


def test_line_file_tolerance_table(tmp_path):
    p = tmp_path / "run.toml"
    p.write_text('[[section]]\ncable = "rg8x"\nlength = "36m"\ntolerance = { length = "0.5m", loss = "15%" }\n')
    line, _ = read_line_file(str(p))
    t = line.parts[0].tolerance
    assert t.length_m == pytest.approx(0.5) and t.loss_fraction == pytest.approx(0.15) and t.vf == 0.02
    p.write_text('[[section]]\ncable = "rg8x"\nlength = "36m"\ntolerance = { size = "1" }\n')
    with pytest.raises(InputFileError):
        read_line_file(str(p))


# ------------------------------------------------------------------------------------------ intervals

def test_digits_follow_the_interval():
    # JCGM 100:2008 7.2.6: at most two significant digits of uncertainty, the value rounded to match
    assert fmt_freq_interval(7.0409e6, (7.0321e6, 7.0502e6)) == "7.041 MHz (7.032 to 7.050)"
    assert fmt_number(1.2034, (1.1912, 1.2151)) == "1.203 (1.191 to 1.215)"
    assert step_for(0.0, 0.8) == 0.1 and step_for(0.0, 0.5) == 0.01 and step_for(0.0, 0.04) == 0.001
    assert fmt_freq_interval(7.0409e6) == "7.0409 MHz"


# ------------------------------------------------------------------------------------------ end to end

def test_a_shift_that_rounds_to_zero_has_no_sign():
    # common practice, no source: a change that rounds to nothing is printed as 0, not as -0.0
    assert fmt_shift_interval(-20.0, (-900.0, 800.0)) == "0.0 kHz (-0.9 to +0.8)"
    assert fmt_shift_interval(-20.0) == "0.0 kHz"
    assert fmt_shift_interval(-890.2e3) == "-890.2 kHz"
    assert fmt_shift_interval(1234.0, (1000.0, 1500.0)) == "+1.23 kHz (+1.00 to +1.50)"


def test_correct_outputs_carry_intervals_everywhere(capsys, tmp_path):
    line = os.path.join(SAMPLES, "dipole-40m.line.toml")
    sweep = os.path.join(SAMPLES, "dipole-40m.s1p")
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--out", tmp_path, "--no-plots", "--draws", "300")
    assert code == 0, err
    summary = json.load(open(tmp_path / "dipole-40m.summary.json"))
    u = summary["feedpoint"]["uncertainty"]
    assert u["coverage"] == 0.95 and u["draws"] == 300
    lo, hi = u["resonance_hz"]
    assert lo < summary["feedpoint"]["resonances_hz"][0] < hi
    assert lo < 6.96e6 < hi                                   # the demo dipole's resonance (jobs/samples.py)
    for key in ("min_swr", "min_swr_freq_hz", "q"):
        assert len(u[key]) == 2
    assert u["swr_spans_hz"]["2"][0][0][0] < summary["feedpoint"]["swr_spans_hz"]["2"][0][0] < u["swr_spans_hz"]["2"][0][0][1]
    assert summary["analyzer"]["uncertainty"]["min_swr"] is not None
    # samples.py adds 0.003 rms to each of the real and imaginary parts: 0.0042 complex rms
    assert summary["sweep"]["noise_gamma_rms"] == pytest.approx(0.003 * math.sqrt(2), rel=0.15)
    assert "limits  what limits this result:" in out
    with open(tmp_path / "dipole-40m.table.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert all(float(r["feedpoint_swr_low"]) <= float(r["feedpoint_swr_high"]) for r in rows)
    # the same sweep again: the same intervals (seeded)
    run(capsys, "correct", sweep, "--line", line, "--out", tmp_path / "again", "--no-plots", "--draws", "300")
    again = json.load(open(tmp_path / "again" / "dipole-40m.summary.json"))
    assert again["feedpoint"]["uncertainty"]["resonance_hz"] == u["resonance_hz"]


def test_a_resonance_the_tolerances_cannot_place_is_said_so(capsys, tmp_path):
    # 45 m of RG-213 at 146 MHz: +/-1 % of length is +/-2.3 ns, a round-trip phase of +/-4 rad
    # (4 pi f dtau; Gamma(z) = Gamma_L exp(-2 gamma z), Pozar 4th ed. sec. 2.7): the feedpoint resonance of
    # the demo vertical cannot be placed without a better-known line
    line = os.path.join(SAMPLES, "vertical-2m.line.toml")
    sweep = os.path.join(SAMPLES, "vertical-2m.s1p")
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--out", tmp_path, "--no-plots", "--draws", "300",
                         "--json")
    u = json.loads(out)["feedpoint"]["uncertainty"]
    assert u["resonance_hz"] is None and u["not_resolved"]["resonance_hz"] > 0.3
    assert "line length" in u["limited_by"]
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--out", tmp_path, "--no-plots", "--draws", "300",
                         "--tol", "length=1cm", "--tol", "vf=0.0005", "--json")
    u = json.loads(out)["feedpoint"]["uncertainty"]
    assert u["resonance_hz"][0] < 145.6e6 < u["resonance_hz"][1]


def test_draws_zero_and_bad_uncertainty_options(capsys, tmp_path):
    line = os.path.join(SAMPLES, "vertical-2m.line.toml")
    sweep = os.path.join(SAMPLES, "vertical-2m.s1p")
    code, out, err = run(capsys, "correct", sweep, "--line", line, "--out", tmp_path, "--no-plots", "--draws", "0",
                         "--json")
    assert code == 0 and json.loads(out)["feedpoint"]["uncertainty"] is None
    for args in (("--draws", "5"), ("--cal-uncertainty", "shiny"), ("--tol", "length")):
        code, _, err = run(capsys, "correct", sweep, "--line", line, "--out", tmp_path / "x", "--no-plots", *args)
        assert code == 2 and err.startswith("error: ") and err.count("\n") == 1
        assert not (tmp_path / "x").exists()


def test_same_sweep_same_findings_in_correct_and_compare(capsys, tmp_path):
    # the requirement: one sweep through one line gives the same findings in every command, also
    # when the other sweep of a comparison is coarser (each sweep's findings come from its own grid)
    import numpy as np

    from deembed.io.touchstone import read_sweep, write_touchstone

    line = os.path.join(SAMPLES, "vertical-2m.line.toml")
    base = os.path.join(SAMPLES, "vertical-2m.s1p")
    sw = read_sweep(base)
    coarse = tmp_path / "coarse.s1p"
    write_touchstone(str(coarse), sw.freq_hz[::3], sw.gamma[::3])
    code, out, err = run(capsys, "correct", base, "--line", line, "--out", tmp_path / "c", "--no-plots", "--json",
                         "--draws", "0")
    assert code == 0, err
    res_correct = json.loads(out)["feedpoint"]["resonances_hz"][0]
    for after in (base, coarse):
        code, out, err = run(capsys, "compare", base, after, "--line", line, "--json", "--draws", "0")
        assert code in (0, 1), err
        assert json.loads(out)["resonance_before_hz"] == pytest.approx(res_correct, abs=1.0)
    assert np.isfinite(res_correct)


def test_characterized_line_uncertainty_comes_from_its_fit(capsys, tmp_path):
    s = SAMPLES
    run2 = tmp_path / "run" / "dipole-40m-far.line.s2p"  # characterize --out is a folder; this is the stated name
    code, _, err = run(capsys, "characterize", "--open", os.path.join(s, "dipole-40m-far-open.s1p"),
                       "--short", os.path.join(s, "dipole-40m-far-short.s1p"),
                       "--load", os.path.join(s, "dipole-40m-far-load.s1p"), "--out", tmp_path / "run")
    assert code == 0, err
    code, out, err = run(capsys, "correct", os.path.join(s, "dipole-40m.s1p"), "--line", run2, "--out",
                         tmp_path / "o", "--no-plots", "--json", "--draws", "300")
    assert code == 0, err
    u = json.loads(out)["feedpoint"]["uncertainty"]
    assert "characterized" in u["sources"]["line"][0]
    assert "line between characterized points" in u["contributions"]["resonance_hz"]
    lo, hi = u["resonance_hz"]
    assert lo < 6.96e6 < hi                                   # the demo dipole's resonance (jobs/samples.py)


# ------------------------------------------------------------------------------- trim: interval and draws lost

def test_trim_interval_follows_the_resonance_interval_and_its_lost_draws_rule():
    # f ~ 1/L (check-values F23 [C]): the change is (f_res/f_target - 1) x 100 %, an affine map of the resonance,
    # so its coverage interval is the resonance's interval mapped through it (a quantile of an increasing affine
    # function of the draws is that function of the quantile; JCGM 101:2008 7.7). Both follow one rule: with more
    # than MAX_LOST_FRACTION of the draws lost, neither has an interval.
    from deembed.analysis.uncertainty import MAX_LOST_FRACTION, interval

    rng = np.random.default_rng(3)
    draws = rng.normal(7.0e6, 8e3, 1000)
    for lost in (0.01, 0.24):
        d = draws.copy()
        d[: int(lost * d.size)] = np.nan
        t = trim_advice(7.0e6, 7.15e6, resonance_draws_hz=d)
        res_iv = interval(d)
        assert t["resonance_lost_fraction"] == pytest.approx(lost)
        if lost <= MAX_LOST_FRACTION:
            assert t["length_change_percent_interval"] == pytest.approx([(x / 7.15e6 - 1) * 100 for x in res_iv],
                                                                        rel=1e-12)
        else:
            assert res_iv is None and t["length_change_percent_interval"] is None


NO_FINDINGS = {"min_swr": {"freq_hz": None, "swr": None}, "resonances_hz": [], "resonances": [], "swr_spans_hz": {},
               "swr_spans_cut_by_sweep_edge": {}, "q": None, "q_freq_hz": None, "q_from_span": None}
"""An end of a summary with nothing found (the keys every end has: analysis.findings.EndFindings)."""


def test_trim_interval_is_read_in_the_verbs_direction():
    # a negative change means shorten (trim_advice); -0.9 % with [-1.72, +0.066] is "shorten by 0.9 %, from -0.1
    # to 1.7" (JCGM 100:2008 7.2.6 for the digits: two of the half-width 0.89, then one decimal)
    from deembed.render import report
    from deembed.render.text import correction_text

    def summary(pct, iv, lost=None):
        trim = {"resonance_hz": 7.03838e6, "target_hz": 7.1e6, "length_change_percent": pct,
                "length_change_percent_interval": iv, "resonance_lost_fraction": lost, "refused": None}
        return {"sweep": {"file": "x.s1p", "points": 501, "low_hz": 6.6e6, "high_hz": 7.6e6},
                "line": {"description": "run", "matched_loss_db": {"at_low": 0.4, "at_high": 0.5}, "low_hz": 6.6e6,
                         "high_hz": 7.6e6},
                "feedpoint": {**NO_FINDINGS, "trim": trim, "resonances": [{"freq_hz": 7.03838e6, "kind": "series"}]},
                "analyzer": NO_FINDINGS, "warnings": []}

    def trim_line(s):
        (line,) = [x for x in correction_text(s).splitlines() if x.startswith("trim")]
        return line

    cases = ((-0.87, [-1.72, 0.066], "shorten the element by about 0.9 % (-0.1 to 1.7)"),
             (-1.9, [-2.4, -1.5], "shorten the element by about 1.9 % (1.5 to 2.4)"),
             (1.2, [0.8, 1.6], "lengthen the element by about 1.2 % (0.8 to 1.6)"),
             (1.2, [-0.3, 2.6], "lengthen the element by about 1.2 % (-0.3 to 2.6)"))
    for pct, iv, said in cases:
        s = summary(pct, iv)
        assert said in trim_line(s)
        page = report._trim(s["feedpoint"], None, 2e3)
        assert f"{page['verb'].lower()} the element by about {page['amount'].replace(chr(160), ' ')}" == said
    # 501 points over 1 MHz: a 2 kHz step, so the resonance without an interval gets kHz digits (not 7.03838)
    assert "resonance 7.038 MHz, target 7.1 MHz" in trim_line(summary(-0.87, None, 0.24))
    assert "no interval: the resonance is not placed in 24% of the draws" in trim_line(summary(-0.87, None, 0.24))
    assert report._trim(summary(-0.87, None, 0.24)["feedpoint"], None, 2e3)["note"].startswith("No interval")
