"""Numbers for people: digits the resolution supports, spans never "a to a", absurd SWR as "> 99", the results
folder named once. (Our formatting rules; common practice, no source.)"""
import math
import os
import re

from deembed.base.units import fmt_freq, fmt_span, fmt_swr
from deembed.cli.app import main
from deembed.render.text import results_line


def test_frequency_digits_follow_the_resolution():
    assert fmt_freq(6.8481e6, resolution_hz=2e3) == "6.848 MHz"      # a 2 kHz grid: kHz digits
    assert fmt_freq(145.6001e6, resolution_hz=20e3) == "145.60 MHz"  # a 20 kHz grid: 10 kHz digits


def test_a_narrow_span_is_never_written_as_a_to_a():
    text = fmt_span(150.1002e6, 150.1004e6, resolution_hz=100e3)
    lo, hi = text.replace(" MHz", "").split(" to ")
    assert lo != hi and text == "150.1002 to 150.1004 MHz"
    assert fmt_span(7.0e6, 7.0e6) == "7 MHz (one point)"


def test_absurd_swr_is_shown_as_above_99():
    assert fmt_swr(3002399751580329.5) == "> 99"
    assert fmt_swr(float("inf")) == "> 99"
    assert fmt_swr(1.456) == "1.46" and fmt_swr(None) == "n/a"


def test_results_line_names_the_folder_once_and_only_files_written():
    line = results_line("results/", {"table_csv": "a.table.csv", "summary_json": "a.summary.json"})
    assert "results//" not in line and line.startswith("results in results/ ")
    assert ".report.html" not in line  # --no-plots: no report was written, so none is named
    assert ".report.html" in results_line("results", {"report_html": "a.report.html"})


def test_values_without_an_interval_get_the_digits_of_their_interval_or_of_the_sweep_step():
    from deembed.render.text import freq_text

    # an interval of +/-16 kHz supports kHz digits (JCGM 100:2008 7.2.6: two digits of a half-width 1.6e4)
    assert freq_text(6.96078e6, [6.945e6, 6.977e6]) == "6.961 MHz (6.945 to 6.977)"
    assert freq_text(6.96078e6, [6.945e6, 6.977e6], with_interval=False) == "6.961 MHz"
    # no interval: the sweep's step (20 kHz steps: 10 kHz digits; 2 kHz steps: kHz digits)
    assert freq_text(14.00259e6, None, 20e3) == "14.00 MHz"
    assert freq_text(7.03838e6, None, 2e3) == "7.038 MHz"
    assert freq_text(7.03838e6) == "7.038 MHz"   # neither: 4 figures


def _decimals(text):
    return [len(m) for m in re.findall(r"\d+\.(\d+) MHz", text)]


def test_correct_and_compare_print_no_more_digits_than_the_step_or_interval_supports(capsys, tmp_path):
    samples = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "sample_sweeps")
    base, after = os.path.join(samples, "dipole-40m.s1p"), os.path.join(samples, "dipole-40m-after.s1p")
    step_hz = 1e6 / 500                              # 501 points from 6.6 to 7.6 MHz: 2 kHz, kHz digits in MHz
    # the trimming line under a resonance without an interval (lost in too many draws)
    main(["correct", base, "--cable", "rg213", "--length", "30m", "--target", "7.1MHz", "--out", str(tmp_path / "c"),
          "--no-plots", "--draws", "200"])
    out = capsys.readouterr().out
    (trim,) = [x for x in out.splitlines() if x.startswith("trim")]
    (res,) = [x for x in out.splitlines() if x.startswith("resonance (X = 0)")]
    assert max(_decimals(trim) + _decimals(res)) <= 3 == -math.floor(math.log10(step_hz / 1e6))
    # compare: the resonances before and after (no interval placed here) and an unplaced resonance
    main(["compare", base, after, "--length", "30m", "--vf", "0.66", "--loss", "1.5dB@7MHz", "--draws", "200"])
    out = capsys.readouterr().out
    (row,) = [x for x in out.splitlines() if x.startswith("resonance  ")]
    assert _decimals(row) and max(_decimals(row)) <= 3
