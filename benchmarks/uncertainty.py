"""Speed target of the uncertainty step, as a ratio against a reference measured in the same run.

    .venv/bin/python benchmarks/uncertainty.py [--repeats N] [--scaling]

Target (issue 10): the whole uncertainty step for a 1001-point sweep with 1000 draws (noise estimate, the
local models, every draw de-embedded and its findings worked out, the per-frequency SWR band) within 10x
the time of the plain de-embedding of 10^6 points. Times are medians of repeats; prints PASS or MISS and
exits 1 on a miss. ``--scaling`` also prints (information only, no target) the step's cost on longer sweeps
of the same antenna: it is bounded, because the draws are made only on the findings' windows (at most 401
samples each) and at most 2001 band frequencies.
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from deembed.analysis.trust import UncertaintySettings, assess  # noqa: E402
from deembed.io.cables import catalog  # noqa: E402
from deembed.physics.deembedding import embed_gamma, feedpoint_gamma  # noqa: E402
from deembed.physics.line import Line  # noqa: E402

TARGET_RATIO = 10.0


def median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def test_sweep(n: int = 1001, seed: int = 3, span=(13e6, 15e6)):
    """A resonant antenna (series RLC, 60 ohm, Q 12 at 14.1 MHz) behind 30 m of catalog RG-213, with noise."""
    f = np.linspace(span[0], span[1], n)
    w = 2 * np.pi * f
    r, f0, q = 60.0, 14.1e6, 12.0
    ind = q * r / (2 * np.pi * f0)
    cap = 1 / ((2 * np.pi * f0) ** 2 * ind)
    z = r + 1j * (w * ind - 1 / (w * cap))
    line = Line((catalog()["rg213"].section(30.0),))
    g_an = embed_gamma((z - 50) / (z + 50), line.s_params(f))
    rng = np.random.default_rng(seed)
    g_an = g_an + 0.003 * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
    return f, g_an, line


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--scaling", action="store_true", help="also time the step on longer sweeps (no target)")
    args = ap.parse_args(argv)

    f, g_an, line = test_sweep()
    s = line.s_params(f)
    terms = (s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1], s[:, 1, 1])
    g_fp = feedpoint_gamma(g_an, *terms)
    settings = UncertaintySettings(draws=1000, seed=1)

    def step():
        a = assess(f, g_an, g_fp, line, settings=settings, terms=terms)
        assert a.mc is not None and a.swr_band is not None

    n = 1_000_000
    rng = np.random.default_rng(1)
    big = [0.3 * np.exp(1j * rng.uniform(0, 2 * np.pi, n)) for _ in range(4)]
    big[2] = big[2] * 0.5 + 0.5
    out = np.empty(n, dtype=complex)

    def plain():
        feedpoint_gamma(big[0], big[1], big[2], big[3], out=out)

    step()  # warm up (imports, caches)
    plain()
    t_step = median_time(step, args.repeats)
    t_plain = median_time(plain, args.repeats)
    ratio = t_step / t_plain
    ok = ratio <= TARGET_RATIO
    print(f"{'PASS' if ok else 'MISS'}  uncertainty step (1001 points x 1000 draws) {t_step * 1e3:8.1f} ms  "
          f"vs plain de-embedding of 10^6 points {t_plain * 1e3:7.1f} ms: {ratio:5.1f}x (target <= {TARGET_RATIO:g}x)")
    if args.scaling:
        for n_pts in (10_000, 100_000, 200_000):
            fs, gs, ls = test_sweep(n_pts, span=(7e6, 21e6))
            ss = ls.s_params(fs)
            ts = (ss[:, 0, 0], ss[:, 1, 0] * ss[:, 0, 1], ss[:, 1, 1])
            gfs = feedpoint_gamma(gs, *ts)
            t0 = median_time(lambda: assess(fs, gs, gfs, ls, settings=None, terms=ts), 3)
            t1 = median_time(lambda: assess(fs, gs, gfs, ls, settings=settings, terms=ts), 3)
            print(f"info  {n_pts:7d} points, 7-21 MHz: findings {t0 * 1e3:7.1f} ms, with 1000 draws {t1 * 1e3:7.1f} ms "
                  f"(the draws {1e3 * (t1 - t0):7.1f} ms)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
