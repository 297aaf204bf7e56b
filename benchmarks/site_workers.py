"""Site runs on worker processes against the same run on one worker, measured here and now.

    .venv/bin/python benchmarks/site_workers.py [--antennas 6] [--points 2001] [--repeats 3]

What each row compares (whole commands, ``deembed site --no-record`` in a fresh process, medians of
interleaved runs after a warm-up):

  many       a site of N antennas (default 6): ``--workers 2`` against ``--workers 1``.
             Target: ratio <= 1.05 ("never slower than --workers 1"; 5 % allows for timing noise). On a
             machine with two free cores the ratio is well below 1; with one usable core the pool runs
             one worker and the ratio is 1.
  one        a site of one antenna: ``--workers 2`` against ``--workers 1`` (the pool runs one worker for
             one antenna, so this must not cost anything). Target: ratio <= 1.05.

The sweeps are invented (an antenna behind 30 m of RG-213, benchmarks/run.py). Prints PASS or MISS per
row with the measured ratio and the usable cores; exits 1 if a target is missed.
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)

from run import DEEMBED, median_cmds, sweep_at_analyzer, write_s1p  # noqa: E402

TARGET = 1.05


def make_site(folder: str, antennas: int, points: int) -> str:
    f, g = sweep_at_analyzer(points)
    lines = ['name = "benchmark site (invented)"\n']
    for i in range(antennas):
        write_s1p(os.path.join(folder, f"a{i}.s1p"), f, g)
        write_s1p(os.path.join(folder, f"a{i}-after.s1p"), f, g * 0.98)
        lines.append(f'[[antenna]]\nname = "antenna {i}"\ncable = "rg213"\nlength = "30m"\n'
                     f'baseline = "a{i}.s1p"\nlatest = "a{i}-after.s1p"\n')
    path = os.path.join(folder, "site.toml")
    with open(path, "w") as fh:
        fh.write("".join(lines))
    return path


def row(name: str, folder: str, antennas: int, points: int, repeats: int) -> bool:
    sub = os.path.join(folder, name)
    os.makedirs(sub)
    site = make_site(sub, antennas, points)
    cmds = {w: [*DEEMBED, "site", "--no-record", site, "--out", os.path.join(sub, f"out{w}"), "--workers", str(w)]
            for w in (1, 2)}
    t = median_cmds(cmds, repeats)
    ratio = t[2] / t[1]
    ok = ratio <= TARGET
    print(f"{name:6} {antennas} antenna(s), {points} points: --workers 2 {t[2]:.2f} s, --workers 1 {t[1]:.2f} s, "
          f"ratio {ratio:.2f} (target <= {TARGET}) {'PASS' if ok else 'MISS'}")
    return ok


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--antennas", type=int, default=6)
    ap.add_argument("--points", type=int, default=2001)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover
        cores = os.cpu_count()
    print(f"usable cores: {cores}")
    with tempfile.TemporaryDirectory() as tmp:
        ok = [row("many", tmp, args.antennas, args.points, args.repeats),
              row("one", tmp, 1, args.points, args.repeats)]
    return 0 if all(ok) else 1


if __name__ == "__main__":
    sys.exit(main())
