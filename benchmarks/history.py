"""How many sweeps an hour one machine records and trends, and what each step costs against correcting.

    .venv/bin/python benchmarks/history.py [--runs 200] [--pg postgresql://...] [--quick]

Every figure is measured here, in this run, on the invented sample history (sample_sweeps/history):

  1. analyse: read a sweep, correct it, find everything, compare it with its baseline (no files written)
  2. outputs: the files a site run writes per sweep (Touchstone, CSV, JSON, four plots, the report)
  3. record:  one sweep into a SQLite store, one transaction per sweep (the worst case: runs of one sweep)
              and one transaction per site run of 24 sweeps
  4. the same into PostgreSQL when a URL is given (--pg, or DEEMBED_TEST_PG_URL)
  5. trend:   read an antenna's runs back, fit, flag (no page), and its page and plot (after one warm-up
              call, so the one-off imports of scipy and matplotlib are not counted)

and each is printed as a ratio against step 1, the correction itself, measured in the same run. The
sweeps-per-hour line is 3600 s over the per-sweep sum, for one core.
"""
from __future__ import annotations

import argparse
import dataclasses
import os
import statistics
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from deembed.analysis.compare import compare_corrections  # noqa: E402
from deembed.analysis.summary import summarise  # noqa: E402
from deembed.io.history import open_store  # noqa: E402
from deembed.io.linefile import read_line_file  # noqa: E402
from deembed.io.touchstone import read_sweep  # noqa: E402
from deembed.jobs import correct as workflow  # noqa: E402
from deembed.jobs import sample_history as sh  # noqa: E402
from deembed.jobs.record import build_record  # noqa: E402
from deembed.jobs.trend import compute_trends, write_trend_outputs  # noqa: E402
from deembed.physics.deembedding import correct  # noqa: E402

HERE = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "sample_sweeps", "history")


def median_time(fn, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def analyse_all(n_antennas: int | None = None):
    """Every sample sweep (of the first ``n_antennas``) through the site path without writing: returns
    (records, seconds per sweep)."""
    records = []
    t0 = time.perf_counter()
    n = 0
    for name, (prefix, _, _, _, line_file) in list(sh.antennas().items())[:n_antennas]:
        line, _ = read_line_file(os.path.join(HERE, line_file))
        base = None
        for date in sh.SWEEP_DATES:
            path = os.path.join(HERE, f"{prefix}-{date}.s1p")
            corr = correct(read_sweep(path), line)
            summary = summarise(corr)
            cmp = None if base is None else compare_corrections(base, corr)
            base = base or corr
            records.append(build_record(site="Ridgeback Hill", antenna=name, sweep_path=path, date=date,
                                        date_source="site_file", role="latest" if cmp else "baseline", corr=corr,
                                        summary=summary, comparison=cmp))
            n += 1
    return records, (time.perf_counter() - t0) / n


def outputs_time(k: int = 3) -> float:
    prefix, _, _, _, line_file = sh.antennas()["2 m vertical"]
    line, _ = read_line_file(os.path.join(HERE, line_file))
    times = []
    with tempfile.TemporaryDirectory() as tmp:
        for date in sh.SWEEP_DATES[:k]:
            path = os.path.join(HERE, f"{prefix}-{date}.s1p")
            t0 = time.perf_counter()
            workflow.correct_file(path, line, tmp)
            times.append(time.perf_counter() - t0)
    return statistics.median(times)


def copies(records, runs: int):
    """``runs`` dated copies of each antenna's records (new hashes: new sweeps to the store)."""
    out = []
    for k in range(runs // len(sh.SWEEP_DATES) + 1):
        for r in records:
            out.append(dataclasses.replace(r, sweep_sha256=f"{r.sweep_sha256[:48]}{k:016d}",
                                           sweep_date=f"{2000 + k % 25:04d}-{r.sweep_date[5:]}"))
    return out


def record_time(target: str, recs, batch: int) -> float:
    with open_store(target) as st:
        st.ensure_schema()
        t0 = time.perf_counter()
        for i in range(0, len(recs), batch):
            st.record(recs[i:i + batch])
        return (time.perf_counter() - t0) / len(recs)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=200, help="dated runs per antenna in the store (default 200)")
    ap.add_argument("--pg", default=os.environ.get("DEEMBED_TEST_PG_URL"), help="a PostgreSQL URL to measure too")
    ap.add_argument("--quick", action="store_true", help="one antenna and one sweep's outputs (a smoke run)")
    a = ap.parse_args(argv)

    records, t_analyse = analyse_all(1 if a.quick else None)
    t_out = outputs_time(1 if a.quick else 3)
    rows = [("analyse (correct, find, compare)", t_analyse), ("outputs (files, plots, report)", t_out)]
    recs = copies(records, a.runs)
    with tempfile.TemporaryDirectory() as tmp:
        rows.append(("record, SQLite, 1 sweep per transaction", record_time(os.path.join(tmp, "a.sqlite"), recs, 1)))
        rows.append(("record, SQLite, 24 per transaction", record_time(os.path.join(tmp, "b.sqlite"), recs, 24)))
        if a.pg:
            import psycopg

            with psycopg.connect(a.pg, autocommit=True) as conn:
                for t in ("deembed_values", "deembed_sweeps", "deembed_meta"):
                    conn.execute(f"DROP TABLE IF EXISTS {t}")
            rows.append(("record, PostgreSQL, 1 sweep per transaction", record_time(a.pg, recs, 1)))
            with psycopg.connect(a.pg, autocommit=True) as conn:
                for t in ("deembed_values", "deembed_sweeps", "deembed_meta"):
                    conn.execute(f"DROP TABLE IF EXISTS {t}")
        store = os.path.join(tmp, "b.sqlite")
        n_ant = len({r.antenna for r in records})
        res = compute_trends(store)                        # once first: scipy and matplotlib imported
        write_trend_outputs(res, os.path.join(tmp, "pages"))  # outside the timing, as in a long-lived run
        reps = 1 if a.quick else 3
        t_fit = median_time(lambda: compute_trends(store), reps) / n_ant
        t_page = median_time(lambda: write_trend_outputs(res, os.path.join(tmp, "pages")), reps) / n_ant
        runs = res["entries"][0]["trend"].runs
    rows.append((f"trend per antenna ({runs} runs), fit and flags", t_fit))
    rows.append((f"trend per antenna ({runs} runs), page and plot", t_page))

    print(f"{'step':52}{'per item':>12}{'vs analyse':>12}")
    for label, t in rows:
        print(f"{label:52}{t * 1e3:>10.2f}ms{t / t_analyse:>11.3f}x")
    per_sweep = t_analyse + t_out + rows[2][1]
    print(f"\none core, site path with outputs: {3600 / per_sweep:,.0f} sweeps/hour "
          f"({per_sweep * 1e3:.0f} ms per sweep); without the files and plots: "
          f"{3600 / (t_analyse + rows[2][1]):,.0f} sweeps/hour")
    print(f"recording alone (SQLite, 1 per transaction): {3600 / rows[2][1]:,.0f} sweeps/hour")
    return 0


if __name__ == "__main__":
    sys.exit(main())
