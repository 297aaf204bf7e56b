"""Recording corrected sweeps into a history store (``--record``, and every ``deembed site`` run).

A sweep's date comes from, in this order: the site file (``{ file = "...", date = "YYYY-MM-DD" }``),
``--date``, or the file's modification time as a last resort, which the store marks
(``date_source = "file_mtime"``) and the trend page flags.
"""
from __future__ import annotations

import datetime as _dt
import os

from ..analysis.recording import settings_of, sweep_values, verdict_of
from ..analysis.summary import summarise
from ..io.history import SweepRecord, check_target, file_sha256, open_store, parse_date
from .correct import stem_of


def sweep_date(path: str, given: str | None, source: str = "option") -> tuple[str, str]:
    """(date, date source): the given date, else the file's modification day (local time)."""
    if given:
        return given, source
    return _dt.date.fromtimestamp(os.path.getmtime(path)).isoformat(), "file_mtime"


def build_record(*, site: str, antenna: str, sweep_path: str, date: str, date_source: str, role: str, corr,
                 summary: dict, comparison: dict | None = None, baseline_sha256: str | None = None,
                 sha256: str | None = None, settings: dict | None = None) -> SweepRecord:
    """One sweep's record: its key (site, antenna, content hash), date, line and values (``settings``: the
    Monte Carlo settings for its intervals, by default those behind ``summary`` or ``comparison``)."""
    verdict, code, text = verdict_of(comparison)
    return SweepRecord(
        site=site, antenna=antenna, sweep_sha256=sha256 or file_sha256(sweep_path), sweep_file=str(sweep_path),
        sweep_date=date, date_source=date_source, role=role, line=corr.line.describe(),
        values=sweep_values(corr, summary, comparison, settings), verdict=verdict, cause_code=code,
        cause_text=text, baseline_sha256=baseline_sha256)


def record(target: str, records) -> dict:
    """Write records into the store at ``target`` (file or URL) in one transaction.

    Returns ``{"store": name, "added": n, "already": m, "stored_dates": {(site, antenna, sha256): date}}``
    (``stored_dates``: the sweeps that were already there, with the date they keep).
    """
    records = list(records)
    with open_store(target) as store:
        res = store.record(records)
        return {"store": store.name, "added": res.added, "already": res.already, "stored_dates": res.stored_dates}

def check_store(target: str) -> None:
    """Refuse a store that cannot be recorded into (a newer or foreign one, a place that cannot be written)
    before any output is written, without creating or changing it (:func:`deembed.io.history.check_target`)."""
    check_target(target)


def record_correction(target: str, corr, summary: dict, sweep_path: str, *, name: str | None = None,
                      date: str | None = None) -> dict:
    """``correct --record``: one sweep, named ``name`` or the file's stem, on its own (role "single")."""
    d, src = sweep_date(sweep_path, date)
    rec = build_record(site="", antenna=name or stem_of(sweep_path), sweep_path=sweep_path, date=d, date_source=src,
                       role="single", corr=corr, summary=summary)
    return _with_dates(record(target, [rec]), rec, d, src)


def _with_dates(info: dict, rec: SweepRecord, date: str, source: str) -> dict:
    """The record call's result with the date the sweep now has in the store (the earlier one when it was
    already there: that date stands)."""
    stored = info.get("stored_dates", {}).get((rec.site, rec.antenna, rec.sweep_sha256))
    out = {**info, "date": stored or date, "date_source": source, "antenna": rec.antenna}
    if stored is not None:
        out.update(already_recorded=True, date_given=date)
    return out


def record_comparison(target: str, before, after, result: dict, baseline_path: str, after_path: str, *,
                      name: str | None = None, date: str | None = None, baseline_date: str | None = None) -> dict:
    """``compare --record``: the baseline (if not there yet) and the after sweep with its comparison,
    named ``name`` or the after sweep's stem."""
    antenna = name or stem_of(after_path)
    bd, bsrc = sweep_date(baseline_path, baseline_date)
    settings = settings_of(None, result)   # the comparison's Monte Carlo settings, for both sweeps' intervals
    base = build_record(site="", antenna=antenna, sweep_path=baseline_path, date=bd, date_source=bsrc,
                        role="baseline", corr=before, summary=summarise(before), settings=settings)
    d, src = sweep_date(after_path, date)
    rec = build_record(site="", antenna=antenna, sweep_path=after_path, date=d, date_source=src, role="latest",
                       corr=after, summary=summarise(after), comparison=result, baseline_sha256=base.sweep_sha256)
    return _with_dates(record(target, [base, rec]), rec, d, src)


def recorded_text(info: dict) -> str:
    """One line saying what was recorded where; a sweep that was already there keeps its first date, and the
    line says so (and which date it has)."""
    if info.get("already_recorded"):
        given = info.get("date_given")
        note = (f" (the date given now, {given}, is not used: a recorded sweep keeps its first date)"
                if given and given != info["date"] else "")
        return (f"{info['antenna']}: this sweep was already recorded in {info['store']}, dated {info['date']}{note}; "
                f"{info['added']} new sweep(s), {info['already']} already there")
    flag = " (date from the file's modification time: give --date)" if info.get("date_source") == "file_mtime" else ""
    return (f"recorded {info['antenna']} {info['date']}{flag} into {info['store']}: {info['added']} new sweep(s), "
            f"{info['already']} already there")


__all__ = ["build_record", "check_store", "parse_date", "record", "record_comparison", "record_correction",
           "recorded_text", "sweep_date"]
