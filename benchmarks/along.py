"""Speed target of the look along the line (issue 11), as a ratio against a reference in the same run.

    .venv/bin/python benchmarks/along.py [--quick]

Target: the transform and peak search of a 10001-point sweep with 8x zero padding (what `deembed locate`
computes: window, padded inverse FFT, magnitude, the trace width for the window, peaks, far end and
loss compensation) within 5x the time of numpy's FFT of the padded array (10001 x 8 points) alone.
Prints PASS/MISS and exits 1 on a miss. Times are medians of repeats.
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from deembed.analysis import reflections as refl  # noqa: E402
from deembed.io.cables import catalog  # noqa: E402
from deembed.physics import runmap as rm  # noqa: E402
from deembed.physics import timedomain as td  # noqa: E402
from deembed.physics.deembedding import embed_gamma  # noqa: E402
from deembed.physics.line import Line  # noqa: E402

TARGET = 5.0


def median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def sweep(n: int):
    """A 10001-point sweep of a 42 m run with an open end, 0.1 to 1000 MHz (harmonic grid), plus noise."""
    cat = catalog()
    line = Line((cat["rg213"].section(30.0), cat["rg58"].section(12.0)))
    f = np.arange(1, n + 1) * 100e3
    g = embed_gamma(np.ones(n), line.s_params(f))
    rng = np.random.default_rng(5)
    return f, g + 0.002 * (rng.standard_normal(n) + 1j * rng.standard_normal(n)), line


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args(argv)
    repeats = 5 if args.quick else 21
    n, pad = 10001, 8
    f, g, line = sweep(n)
    grid, _ = td.grid_of(f)
    m, _ = rm.from_line(line)

    def ours():
        resp = td.bandpass(g, grid, td.DEFAULT_KAISER_BETA, pad)
        return refl.reflections(resp, grid, m, pad=pad)

    padded = np.zeros(n * pad, dtype=complex)
    padded[:n] = g

    def reference():
        return np.fft.fft(padded)

    ours(), reference()  # warm up (imports, plans)
    t_ref = median_time(reference, repeats)
    t_ours = median_time(ours, repeats)
    ratio = t_ours / t_ref
    found = ours()
    fe = found.length.far_end_m
    print(f"{'PASS' if ratio <= TARGET else 'MISS'}  locate: transform + peaks, {n} points x{pad} padding "
          f"{ratio:>6.2f}x numpy FFT of the padded array  target <= {TARGET:g}x   "
          f"({t_ours * 1e3:.2f} ms vs {t_ref * 1e3:.2f} ms; far end found at {fe:.2f} m of 42 m)")
    return 0 if ratio <= TARGET else 1


if __name__ == "__main__":
    sys.exit(main())
