"""``deembed trend``: read a history store, fit each feed's trend, write the plots, pages and JSON.

The source is a history store (a SQLite file or a ``postgresql://`` URL) or a site file, whose store
is the one it names (``history = "..."``) or else the file beside it
(:func:`deembed.io.history.default_store_path`), restricted to that site's name.
"""
from __future__ import annotations

import io
import json
import os
import re

from ..analysis.trend import QUANTITIES, TrendLimits, change_text, entry_trend
from ..base.errors import InputFileError, OptionError
from ..io.atomic import write_bytes_atomic, write_text_atomic
from ..io.history import is_url, open_store
from ..io.jsonfile import to_jsonable
from ..io.outfolder import OutputFolder
from ..io.sitefile import read_site
from ..render.trend_page import QUANTITY_TEXT, trend_html
from ..render.trend_plots import trend_figure

SQLITE_MAGIC = b"SQLite format 3\x00"
STORE_SUFFIXES = (".sqlite", ".sqlite3", ".db")
"""File names taken as history stores: one that is not an SQLite file is refused as such, not read as TOML."""


def slugify(name: str) -> str:
    s = re.sub(r"[^a-z0-9]+", "-", str(name).lower()).strip("-")
    return s[:60] or "entry"


def resolve_source(source: str) -> tuple[str, str | None]:
    """(store target, site name or None) for a store, a URL or a site file."""
    s = str(source)
    if is_url(s):
        return s, None
    if not os.path.exists(s):
        raise InputFileError(s, "no such file; give a site file (.toml) or a history store (.sqlite)")
    if os.path.isdir(s):
        raise InputFileError(s, "is a folder; give a site file (.toml) or a history store (.sqlite)")
    with open(s, "rb") as fh:
        head = fh.read(len(SQLITE_MAGIC))
    if head == SQLITE_MAGIC:
        return s, None
    if s.lower().endswith(STORE_SUFFIXES):
        if not head:  # an empty file is an empty SQLite database: no recorded sweeps, said as such later
            return s, None
        raise InputFileError(s, "is not a deembed history store: it is not an SQLite file; give the .sqlite file "
                                "deembed site (or --record) wrote, or a site file (.toml)")
    site = read_site(s, "")
    return site.history, site.name


def _runs(records) -> list:
    out = []
    for r in records:
        vals = {}
        for q in QUANTITIES:
            v = r.value(q)
            vals[q] = None if v is None else (v.value, v.low, v.high, v.run_low, v.run_high)
        out.append({"date": r.sweep_date, "date_source": r.date_source, "file": r.sweep_file, "role": r.role,
                    "line": r.line, "verdict": r.verdict, "cause_code": r.cause_code,
                    "sha256": r.sweep_sha256, "values_full": vals,
                    "values": {q: (None if vals[q] is None else vals[q][0]) for q in QUANTITIES}})
    return out


def compute_trends(store_target: str, *, site: str | None = None, antenna: str | None = None,
                   limits: TrendLimits | None = None) -> dict:
    """Every feed's trend from the store: ``{"store", "entries": [{"site", "name", "trend", "runs"}]}``."""
    limits = limits or TrendLimits()
    with open_store(store_target, create=False) as store:
        records = store.sweeps(site=site)
        name = store.name
    groups: dict = {}
    for r in records:
        groups.setdefault((r.site, r.antenna), []).append(r)
    if antenna is not None:
        groups = {k: v for k, v in groups.items() if k[1] == antenna}
        if not groups:
            known = sorted({r.antenna for r in records})
            raise OptionError("--antenna", f"no antenna named {antenna!r} in {name}"
                                           + (f"; it has {', '.join(repr(k) for k in known)}" if known else
                                              "; it has no recorded sweeps yet"))
    if not groups:
        raise InputFileError(name, "has no recorded sweeps" + (f" for the site {site!r}" if site else "")
                             + "; record some first (deembed site, or correct/compare with --record)")
    sites = {k[0] for k in groups}
    entries = []
    for (site_name, ant), recs in sorted(groups.items()):
        runs = sorted(_runs(recs), key=lambda r: (r["date"], r["sha256"]))
        label = ant if len(sites) == 1 else f"{site_name}: {ant}" if site_name else ant
        tr = entry_trend(label, [{"date": r["date"], "file": r["file"], "line": r["line"], "values": r["values_full"]}
                                 for r in runs], limits)
        entries.append({"site": site_name, "antenna": ant, "trend": tr, "runs": runs})
    return {"store": name, "entries": entries, "limits": limits}


def trend_json(result: dict) -> dict:
    """The ``--json`` form: ``{"entries": [{"name", "runs", "slopes", "flags"}]}`` exactly."""
    return {"entries": [e["trend"].to_dict() for e in result["entries"]]}


def write_trend_outputs(result: dict, out_dir: str, *, prefix: str = "") -> dict:
    """Per entry ``<slug>.trend.png`` and ``<slug>.trend.html``, and ``trend.json``; returns
    ``{"entries": {entry name: {"trend_html": path, "trend_png": path}}, "trend_json": path}``."""

    os.makedirs(out_dir, exist_ok=True)
    written, used = {"entries": {}}, set()
    detail = {"store": result["store"], "limits": result["limits"].as_dict(), "entries": []}
    for e in result["entries"]:
        tr = e["trend"]
        slug = slugify(tr.name)
        k = 2
        while slug in used:
            slug, k = f"{slugify(tr.name)}-{k}", k + 1
        used.add(slug)
        png_path = os.path.join(out_dir, f"{prefix}{slug}.trend.png")
        html_path = os.path.join(out_dir, f"{prefix}{slug}.trend.html")
        fig = trend_figure(tr, {r["date"]: r["date_source"] for r in e["runs"]})
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=110)
        png = buf.getvalue()
        write_bytes_atomic(png_path, png)
        write_text_atomic(html_path, trend_html(tr, e["runs"], site=e["site"], store=result["store"],
                                                limits=result["limits"], png=png))
        written["entries"][tr.name] = {"trend_html": html_path, "trend_png": png_path}
        d = tr.to_dict()
        d.update({"site": e["site"], "antenna": e["antenna"],
                  "slopes_detail": {q: (None if f is None else {"per_year": f.per_year, "stderr_per_year":
                                                                f.stderr_per_year, "weighted": f.weighted,
                                                                "n": f.n, "chi2_reduced": f.chi2_reduced})
                                    for q, f in tr.fits.items()},
                  "flags_detail": tr.flags,
                  "notes": tr.notes,
                  "runs_detail": [{**{k2: v for k2, v in r.items() if k2 != "values_full"},
                                   "intervals": {q: dict(zip(("low", "high", "run_low", "run_high"), x[1:]))
                                                 for q, x in r["values_full"].items() if x is not None}}
                                  for r in e["runs"]],
                  "outputs": {"trend_html": os.path.basename(html_path), "trend_png": os.path.basename(png_path)}})
        detail["entries"].append(d)
    jpath = os.path.join(out_dir, f"{prefix}trend.json")
    write_text_atomic(jpath, json.dumps(to_jsonable(detail), indent=2, allow_nan=False) + "\n")
    written["trend_json"] = jpath
    return written


def trend_text(result: dict, out_dir: str | None) -> str:
    """One block per feed: runs, slopes with intervals, flags."""

    def rate(q, v):
        return change_text(q, v, decimals=3, per_year=True)

    lines = [f"history {result['store']}"]
    for e in result["entries"]:
        tr = e["trend"]
        lines.append(f"\n{tr.name}: {tr.runs} dated sweep(s)")
        for q in ("resonance_hz", "min_swr", "line_loss_db"):
            sl = tr.slopes[q]
            iv = sl["interval"]
            ivt = f" (95 % interval {rate(q, iv[0])} to {rate(q, iv[1])})" if iv else ""
            lines.append(f"  {QUANTITY_TEXT[q]:22}{rate(q, sl['per_year'])}{ivt}")
        if tr.flags:
            lines += [f"  FLAG {f['reason']}" for f in tr.flags]
        else:
            lines.append("  nothing flagged")
        lines += [f"  note: {n}" for n in tr.notes]
        mt = sum(r["date_source"] == "file_mtime" for r in e["runs"])
        if mt:
            lines.append(f"  note: {mt} run(s) dated by the file's modification time (give dates in the site "
                         "file or with --date)")
    if out_dir:
        lines.append(f"\ntrend pages in {out_dir}/")
    return "\n".join(lines)


def run_trend(source: str, out_dir: str, *, antenna: str | None = None, limits: TrendLimits | None = None) -> dict:
    """Resolve the source, compute every trend and write the outputs. Returns the result with
    ``"written"`` and ``"flagged"`` (any flag raised)."""
    target, site = resolve_source(source)
    result = compute_trends(target, site=site, antenna=antenna, limits=limits)
    with OutputFolder(out_dir, inputs=[source, target if isinstance(target, str) else None]) as out:
        staged = write_trend_outputs(result, out.stage)  # all pages appear together, or none does
    result["written"] = {"entries": {name: {k: out.final(v) for k, v in paths.items()}
                                     for name, paths in staged["entries"].items()},
                         "trend_json": out.final(staged["trend_json"])}
    result["flagged"] = any(e["trend"].flags for e in result["entries"])
    return result


__all__ = ["compute_trends", "resolve_source", "run_trend", "trend_json", "trend_text",
           "write_trend_outputs"]
