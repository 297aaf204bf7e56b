"""Numbers for people: digits the resolution supports, spans never "a to a", absurd SWR as "> 99", the results
folder named once. (Our formatting rules; common practice, no source.)"""
from deembed.base.units import fmt_freq, fmt_span, fmt_swr
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
