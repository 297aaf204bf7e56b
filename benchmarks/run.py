"""Speed and memory targets, each a ratio against a reference measured in the same run.

    make bench            (or: .venv/bin/python benchmarks/run.py [--quick] [--only NAME ...])

Every target is a ratio of two things measured here, now, on this machine, so a busy or slow machine moves
both sides together. Whole commands are run the way users run them: the installed ``deembed`` script in a
fresh process. Times are medians of repeated runs after a warm-up run (the first run of a command pays for
cold file caches). What each row compares:

  kernel     ``deembed.correct(sweep, line)`` at 10^5 points, which builds the line's 2-port from its RLGC
             model, works out its matched loss and removes it, against scikit-rf doing the same whole job:
             ``DistributedCircuit(frequency, C, L, R, G, z0_port=50).line(1, "m")`` from the same R, L, G, C,
             then ``line.inv ** sweep``. Target: ours >= 200x faster. The row also prints the largest
             difference between the two answers.
  help       ``deembed --help`` against ``python -c "import typer"``. Target: <= 1.3x.
  startup    ``deembed correct`` of a 501-point sweep through a catalog cable with ``--no-plots``, against
             ``python -c "import numpy, typer"``. Target: <= 1.5x.
  slope      the cost per point of ``deembed correct --no-plots``: (t(2x10^5) - t(10^4)) / 190 000, against
             the same slope of a reference script (benchmarks/reference_io.py) that reads the same .s1p with
             pandas' C parser and writes ten values per point as CSV, one %-format per 50 000-row chunk.
             Target: <= 3x.
  memory     peak resident memory of ``deembed correct --no-plots`` per point: (maxRSS(10^6) - maxRSS(10^4))
             / 990 000 bytes; the fixed cost of the interpreter and libraries is taken off by the difference.
             Target: <= 120 bytes per point.
  plots      the time the plots and the HTML report add to ``deembed correct``: t(with plots) -
             t(--no-plots), at 10^5 points against at 1001 points. Target: <= 1.3x (plots are thinned to
             what the image can show, so their cost must not grow with the sweep).
  charact.   (information, no target) ``deembed characterize`` with open, short and load of 10^5 points,
             and of 1001 points.

Prints PASS or MISS per target with the measured ratio; exits 1 if any target is missed.
"""
from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, ROOT)

PY = sys.executable
_script = os.path.join(os.path.dirname(PY), "deembed")
DEEMBED = [_script] if os.path.exists(_script) else [PY, "-m", "deembed"]
CABLE = ["--cable", "rg213", "--length", "30m"]


# ------------------------------------------------------------------------------------------------
# timing helpers


def median_time(fn, repeats: int, warmup: int = 1) -> float:
    """Median wall time of ``fn()`` over ``repeats`` calls, after ``warmup`` untimed calls."""
    for _ in range(warmup):
        fn()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
"""Commands run with Python's default bytecode cache, as on a user's machine (the warm-up run writes it)."""


def run_cmd(argv) -> tuple[float, int]:
    """Run a command to completion; (wall seconds, peak resident memory in bytes, which includes this process's
    image: see :func:`peak_rss`). Fails loudly."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=ENV)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    err = proc.stderr.read().decode(errors="replace")
    proc.stderr.close()
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode not in (0, 1):  # 1: correct's findings may say "over the limit"; still a full run
        raise RuntimeError(f"{' '.join(map(str, argv))} failed ({proc.returncode}): {err.strip()[-500:]}")
    return wall, usage.ru_maxrss * 1024  # Linux reports kilobytes


_WRAP = ("import os, sys\n"
         "pid = os.fork()\n"
         "if pid == 0:\n"
         "    os.execv(sys.argv[1], sys.argv[1:])\n"
         "_, status, usage = os.wait4(pid, 0)\n"
         "sys.stderr.write('\\nMAXRSS %d\\n' % usage.ru_maxrss)\n"
         "sys.exit(os.waitstatus_to_exitcode(status))\n")


def peak_rss(argv) -> int:
    """Peak resident memory (bytes) of a command, measured by a small launcher that forks and runs it.

    Linux counts in a process's peak the memory of the image it was forked from, so a command started
    straight from this (large) benchmark process would be charged for it; the launcher is small and the
    same for every run, and the per-point figure is a difference of two runs, so its share cancels."""
    exe = argv[0] if os.path.isabs(argv[0]) else shutil.which(argv[0])
    proc = subprocess.run([PY, "-c", _WRAP, exe, *argv[1:]], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                          env=ENV, text=True)
    if proc.returncode not in (0, 1) or "MAXRSS" not in proc.stderr:
        raise RuntimeError(f"{' '.join(map(str, argv))} failed ({proc.returncode}): {proc.stderr.strip()[-500:]}")
    return int(proc.stderr.rsplit("MAXRSS", 1)[1].split()[0]) * 1024  # Linux reports kilobytes


def median_cmds(cmds: dict, repeats: int) -> dict:
    """Median wall time of each command, the commands interleaved so drifts in load hit all of them alike."""
    for argv in cmds.values():  # warm-up
        run_cmd(argv)
    times = {k: [] for k in cmds}
    for _ in range(repeats):
        for k, argv in cmds.items():
            times[k].append(run_cmd(argv)[0])
    return {k: statistics.median(v) for k, v in times.items()}


# ------------------------------------------------------------------------------------------------
# test data: an invented antenna (series RLC near 14.2 MHz) behind 30 m of RG-213, small noise


def antenna_gamma(f_hz, seed=1):
    rng = np.random.default_rng(seed)
    w = 2 * np.pi * f_hz
    w0 = 2 * np.pi * 14.2e6
    r, q = 45.0, 12.0
    ell = q * r / w0
    cap = 1 / (w0 ** 2 * ell)
    z = r + 1j * (w * ell - 1 / (w * cap))
    g = (z - 50) / (z + 50)
    return g + 1e-3 * (rng.standard_normal(f_hz.size) + 1j * rng.standard_normal(f_hz.size))


def sweep_at_analyzer(n: int):
    """(f_hz, gamma at the analyzer end) for an n-point sweep 1-60 MHz through 30 m of RG-213."""
    import deembed

    f = np.linspace(1e6, 60e6, n)
    line = deembed.Line((deembed.catalog()["rg213"].section(30.0),))
    s = line.s_params(f)
    g_l = antenna_gamma(f)
    g_in = s[:, 0, 0] + s[:, 0, 1] * s[:, 1, 0] * g_l / (1 - s[:, 1, 1] * g_l)
    return f, g_in


def write_s1p(path: str, f_hz, gamma, head="! benchmark sweep (invented antenna behind 30 m of RG-213)") -> None:
    """An analyzer-style export: MHz, RI, 12 significant digits."""
    with open(path, "w") as fh:
        fh.write(head + "\n# MHz S RI R 50\n")
        block = np.column_stack([f_hz / 1e6, gamma.real, gamma.imag])
        for i in range(0, block.shape[0], 50_000):
            part = block[i:i + 50_000]
            fh.write(("%.10g %.12g %.12g\n" * part.shape[0]) % tuple(part.ravel().tolist()))


def standards(path_dir: str, n: int) -> dict:
    """Open, short, load measured at the analyzer end of 30 m of RG-213 (n points, 1-60 MHz)."""
    import deembed

    f = np.linspace(1e6, 60e6, n)
    s = deembed.Line((deembed.catalog()["rg213"].section(30.0),)).s_params(f)
    out = {}
    for name, g_l in (("open", 1.0), ("short", -1.0), ("load", 0.0)):
        g = s[:, 0, 0] + s[:, 0, 1] * s[:, 1, 0] * g_l / (1 - s[:, 1, 1] * g_l)
        out[name] = os.path.join(path_dir, f"{name}-{n}.s1p")
        write_s1p(out[name], f, g, head=f"! benchmark far-end {name}")
    return out


# ------------------------------------------------------------------------------------------------
# the rows


def bench_kernel(n: int, repeats: int):
    """deembed.correct (line build included) vs scikit-rf building the same line and cascading its inverse."""
    import skrf

    import deembed

    f, g_in = sweep_at_analyzer(n)
    sec = deembed.catalog()["rg213"].section(30.0)
    line = deembed.Line((sec,))
    sweep = deembed.one_port(f, g_in)
    r, l, g, c = sec.rlgc_total(f)
    freq = skrf.Frequency.from_f(f, unit="Hz")
    meas = skrf.Network(frequency=freq, s=g_in.reshape(-1, 1, 1), z0=50)

    def skrf_job():
        med = skrf.media.DistributedCircuit(freq, C=c, L=l, R=r, G=g, z0_port=50)
        return med.line(1.0, "m").inv ** meas

    ours = median_time(lambda: deembed.correct(sweep, line), max(repeats, 7), warmup=2)
    small = skrf.Frequency.from_f(f[:1000], unit="Hz")  # warm scikit-rf's own first-call costs on a small job
    skrf.media.DistributedCircuit(small, C=c, L=l, R=r[:1000], G=g[:1000], z0_port=50).line(1.0, "m")
    theirs = median_time(skrf_job, 3 if repeats > 3 else 1, warmup=0)
    err = float(np.max(np.abs(deembed.correct(sweep, line).gamma_feedpoint - skrf_job().s[:, 0, 0])))
    return ours, theirs, err


def bench_startup(tmp: str, repeats: int):
    f, g = sweep_at_analyzer(501)
    path = os.path.join(tmp, "small.s1p")
    write_s1p(path, f, g)
    out = os.path.join(tmp, "out-small")
    t = median_cmds({
        "typer": [PY, "-c", "import typer"],
        "numpy_typer": [PY, "-c", "import numpy, typer"],
        "help": DEEMBED + ["--help"],
        "correct": DEEMBED + ["correct", path, *CABLE, "--no-plots", "--out", out],
    }, repeats)
    return t


def reference_cmd(path: str, out: str):
    return [PY, os.path.join(HERE, "reference_io.py"), path, out]


def bench_slope(tmp: str, repeats: int, sizes=(10_000, 200_000)):
    paths = {}
    for n in sizes:
        f, g = sweep_at_analyzer(n)
        paths[n] = os.path.join(tmp, f"sweep-{n}.s1p")
        write_s1p(paths[n], f, g)
    cmds = {}
    for n in sizes:
        cmds[("ours", n)] = DEEMBED + ["correct", paths[n], *CABLE, "--no-plots", "--out", os.path.join(tmp, f"o{n}")]
        cmds[("ref", n)] = reference_cmd(paths[n], os.path.join(tmp, f"ref-{n}.csv"))
    t = median_cmds(cmds, repeats)
    lo, hi = sizes
    slope = {k: (t[(k, hi)] - t[(k, lo)]) / (hi - lo) for k in ("ours", "ref")}
    return slope, t


def bench_memory(tmp: str, sizes=(10_000, 1_000_000)):
    rss = {}
    for n in sizes:
        f, g = sweep_at_analyzer(n)
        path = os.path.join(tmp, f"mem-{n}.s1p")
        write_s1p(path, f, g)
        del f, g
        argv = DEEMBED + ["correct", path, *CABLE, "--no-plots", "--out", os.path.join(tmp, f"m{n}")]
        run_cmd(argv)  # warm-up (file cache)
        rss[n] = min(peak_rss(argv) for _ in range(2))
        os.remove(path)
        shutil.rmtree(os.path.join(tmp, f"m{n}"), ignore_errors=True)
    lo, hi = sizes
    return (rss[hi] - rss[lo]) / (hi - lo), rss


def bench_plots(tmp: str, repeats: int, sizes=(1001, 100_000)):
    cmds = {}
    for n in sizes:
        f, g = sweep_at_analyzer(n)
        path = os.path.join(tmp, f"plot-{n}.s1p")
        write_s1p(path, f, g)
        cmds[("plots", n)] = DEEMBED + ["correct", path, *CABLE, "--out", os.path.join(tmp, f"p{n}")]
        cmds[("bare", n)] = DEEMBED + ["correct", path, *CABLE, "--no-plots", "--out", os.path.join(tmp, f"b{n}")]
    t = median_cmds(cmds, repeats)
    extra = {n: t[("plots", n)] - t[("bare", n)] for n in sizes}
    return extra, t


def bench_characterize(tmp: str, repeats: int, sizes=(1001, 100_000)):
    cmds = {}
    for n in sizes:
        st = standards(tmp, n)
        cmds[n] = DEEMBED + ["characterize", "--open", st["open"], "--short", st["short"], "--load", st["load"],
                             "--out", os.path.join(tmp, f"char-{n}")]  # --out is a folder (NAME.line.s2p)
    return median_cmds(cmds, repeats)


# ------------------------------------------------------------------------------------------------


ROWS = ("kernel", "help", "startup", "slope", "memory", "plots", "characterize")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repeats (numbers are noisier)")
    ap.add_argument("--only", nargs="+", choices=ROWS, help="run only these rows")
    args = ap.parse_args(argv)
    reps = 3 if args.quick else 7
    todo = set(args.only or ROWS)
    ok = True

    def row(passed, name, value, target, detail):
        nonlocal ok
        if passed is not None:
            ok &= passed
        mark = "INFO" if passed is None else ("PASS" if passed else "MISS")
        print(f"{mark}  {name:52} {value:>10}  target {target:>9}   {detail}", flush=True)

    print(f"python {sys.version.split()[0]}, numpy {np.__version__}, {os.cpu_count()} CPUs; medians of {reps}")
    tmp = tempfile.mkdtemp(prefix="deembed-bench-")
    try:
        if "kernel" in todo:
            ours, theirs, err = bench_kernel(100_000, reps)
            ratio = theirs / ours
            row(ratio >= 200, "correct() 1e5 pts vs scikit-rf line + inv cascade", f"{ratio:.0f}x", ">= 200x",
                f"ours {ours * 1e3:.1f} ms, scikit-rf {theirs:.2f} s, max |diff| {err:.1e}")
        if todo & {"help", "startup"}:
            t = bench_startup(tmp, reps)
            if "help" in todo:
                ratio = t["help"] / t["typer"]
                row(ratio <= 1.3, "deembed --help vs python -c 'import typer'", f"{ratio:.2f}x", "<= 1.3x",
                    f"{t['help'] * 1e3:.0f} ms vs {t['typer'] * 1e3:.0f} ms")
            if "startup" in todo:
                ratio = t["correct"] / t["numpy_typer"]
                row(ratio <= 1.5, "correct --no-plots 501 pts vs import numpy, typer", f"{ratio:.2f}x", "<= 1.5x",
                    f"{t['correct'] * 1e3:.0f} ms vs {t['numpy_typer'] * 1e3:.0f} ms")
        if "slope" in todo:
            slope, t = bench_slope(tmp, max(3, reps - 2))
            ratio = slope["ours"] / slope["ref"]
            row(ratio <= 3, "correct --no-plots per point (1e4..2e5) vs pandas ref", f"{ratio:.2f}x", "<= 3x",
                f"ours {slope['ours'] * 1e6:.2f} us/pt ({t[('ours', 10_000)]:.2f} s, {t[('ours', 200_000)]:.2f} s), "
                f"reference {slope['ref'] * 1e6:.2f} us/pt")
        if "memory" in todo:
            per_point, rss = bench_memory(tmp)
            row(per_point <= 120, "correct --no-plots peak memory per point at 1e6", f"{per_point:.0f} B",
                "<= 120 B", f"max RSS {rss[10_000] / 2**20:.0f} MiB at 1e4, {rss[1_000_000] / 2**20:.0f} MiB at 1e6")
        if "plots" in todo:
            extra, t = bench_plots(tmp, max(3, reps - 2))
            ratio = extra[100_000] / extra[1001]
            row(ratio <= 1.3, "plots + report time, 1e5 pts vs 1001 pts", f"{ratio:.2f}x", "<= 1.3x",
                f"{extra[100_000]:.2f} s vs {extra[1001]:.2f} s (with plots minus --no-plots)")
        if "characterize" in todo:
            t = bench_characterize(tmp, 3)
            row(None, "characterize open+short+load, 1e5 pts (1001 pts)", f"{t[100_000]:.2f} s", "-",
                f"1001 points: {t[1001]:.2f} s")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
