"""Speed and memory targets, each a ratio against a reference measured in the same run.

    make bench            (or: .venv/bin/python benchmarks/run.py [--quick])

Targets (from the project's issues):
  1. de-embedding 10^5 points: >= 200x faster than scikit-rf's cascade path (line.inv ** sweep)
  2. building the line's 2-port at 10^5 points: >= 20x faster than scikit-rf's DistributedCircuit line
  3. de-embedding 10^6 points: within 5x of a plain numpy copy of the same complex array
  4. peak memory of reading + correcting a sweep grows linearly with the points (10^6 vs 10^5: <= 12x)
Prints one row per target and exits 1 if any target is missed. Times are medians of repeats.

On a machine whose last-level cache holds the 16 MB sweep (a 32 MB L3, say), target 3 compares a step that
must stream 80 MB (four 16 MB inputs, one output) from memory with a copy that stays in cache; the row also
shows the step against copying its four inputs, which is the memory-traffic floor.
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
import tracemalloc

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from deembed.io.cables import catalog  # noqa: E402
from deembed.physics.deembedding import correct, embed_gamma, feedpoint_gamma  # noqa: E402
from deembed.physics.line import Line  # noqa: E402


def median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def sweep_arrays(n: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    f = np.linspace(1e6, 100e6, n)
    g = 0.3 * np.exp(1j * rng.uniform(0, 2 * np.pi, n))
    return f, g


def skrf_line(sec, f):
    import skrf

    r, l, g, c = sec.rlgc_total(f)
    med = skrf.media.DistributedCircuit(skrf.Frequency.from_f(f, unit="Hz"), C=c, L=l, R=r, G=g, z0_port=50)
    return med.line(1.0, "m")


def bench_deembed_vs_skrf(n: int, repeats: int):
    import skrf

    f, g_load = sweep_arrays(n)
    sec = catalog()["rg213"].section(30.0)
    ref_line = skrf_line(sec, f)
    s = Line((sec,)).s_params(f)
    meas = embed_gamma(g_load, s)
    s11, s21s12, s22 = s[:, 0, 0].copy(), (s[:, 0, 1] * s[:, 1, 0]), s[:, 1, 1].copy()
    meas_ntwk = skrf.Network(frequency=ref_line.frequency, s=meas.reshape(-1, 1, 1), z0=50)
    ours = median_time(lambda: feedpoint_gamma(meas, s11, s21s12, s22), max(repeats, 5))
    theirs = median_time(lambda: ref_line.inv ** meas_ntwk, 1)
    err = np.max(np.abs(feedpoint_gamma(meas, s11, s21s12, s22) - (ref_line.inv ** meas_ntwk).s[:, 0, 0]))
    return ours, theirs, err


def bench_build_vs_skrf(n: int, repeats: int):
    f, _ = sweep_arrays(n)
    sec = catalog()["rg213"].section(30.0)
    line = Line((sec,))
    ours = median_time(lambda: line.s_params(f), repeats)
    theirs = median_time(lambda: skrf_line(sec, f), 1)
    err = np.max(np.abs(line.s_params(f) - skrf_line(sec, f).s))
    return ours, theirs, err


def bench_deembed_vs_copy(n: int, repeats: int):
    f, g_load = sweep_arrays(n)
    s = Line((catalog()["rg213"].section(30.0),)).s_params(f)
    meas = embed_gamma(g_load, s)
    s11, s21s12, s22 = s[:, 0, 0].copy(), (s[:, 0, 1] * s[:, 1, 0]), s[:, 1, 1].copy()
    ours = median_time(lambda: feedpoint_gamma(meas, s11, s21s12, s22), repeats)
    copy = median_time(lambda: meas.copy(), repeats)
    # what the step must at least read and write: its four inputs copied once
    copy_all = median_time(lambda: [a.copy() for a in (meas, s11, s21s12, s22)], repeats)
    return ours, copy, copy_all


def peak_read_correct(n: int) -> int:
    """Peak traced memory (bytes) of reading an n-point .s1p and correcting it."""
    from deembed.io.touchstone import read_sweep, write_touchstone

    f, g = sweep_arrays(n)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "big.s1p")
        write_touchstone(path, f, g)
        del f, g
        line = Line((catalog()["rg213"].section(30.0),))
        tracemalloc.start()
        corr = correct(read_sweep(path), line)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        del corr
    return peak


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repeats")
    args = ap.parse_args(argv)
    reps = 3 if args.quick else 7
    rows, ok = [], True

    def row(name, value, target, passed, detail):
        nonlocal ok
        ok &= passed
        rows.append(f"{'PASS' if passed else 'MISS'}  {name:55} {value:>10}  target {target:>8}   {detail}")

    ours, theirs, err = bench_deembed_vs_skrf(100_000, reps)
    ratio = theirs / ours
    row("de-embed 1e5 points vs scikit-rf line.inv ** sweep", f"{ratio:.0f}x", ">= 200x", ratio >= 200,
        f"ours {ours * 1e3:.2f} ms, scikit-rf {theirs:.2f} s, max |diff| {err:.1e}")
    ours, theirs, err = bench_build_vs_skrf(100_000, reps)
    ratio = theirs / ours
    row("build line 2-port 1e5 points vs scikit-rf DistributedCircuit", f"{ratio:.0f}x", ">= 20x", ratio >= 20,
        f"ours {ours * 1e3:.1f} ms, scikit-rf {theirs:.2f} s, max |diff| {err:.1e}")
    ours, copy, copy_all = bench_deembed_vs_copy(1_000_000, reps)
    ratio = ours / copy
    row("de-embed 1e6 points vs numpy copy of the sweep", f"{ratio:.1f}x", "<= 5x", ratio <= 5,
        f"ours {ours * 1e3:.1f} ms, copy {copy * 1e3:.1f} ms; copying its 4 inputs {copy_all * 1e3:.1f} ms "
        f"({ours / copy_all:.1f}x)")
    p5, p6 = peak_read_correct(100_000), peak_read_correct(1_000_000)
    ratio = p6 / p5
    row("peak memory read+correct, 1e6 vs 1e5 points", f"{ratio:.1f}x", "<= 12x", ratio <= 12,
        f"1e5: {p5 / 2**20:.0f} MiB, 1e6: {p6 / 2**20:.0f} MiB ({p6 / 1e6:.0f} bytes/point)")
    print("\n".join(rows))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
