"""Recording corrected sweeps into a history store (``--record``, and every ``deembed site`` run).

A sweep's date comes from, in this order: the site file (``{ file = "...", date = "YYYY-MM-DD" }``),
``--date``, or the file's modification time as a last resort, which the store marks
(``date_source = "file-mtime"``) and the trend page flags.
"""
from __future__ import annotations

import datetime as _dt
import os

from ..analysis.recording import sweep_values, verdict_of
from ..base.errors import OptionError
from ..io.history import SweepRecord, file_sha256, open_store


def parse_date(text: str, option: str = "--date") -> str:
    """A calendar date ``YYYY-MM-DD`` (returned as the same text); refuses anything else."""
    t = str(text).strip()
    try:
        d = _dt.date.fromisoformat(t)
    except ValueError:
        raise OptionError(option, f"{text!r} is not a date; write it as YYYY-MM-DD, e.g. 2026-03-14") from None
    if len(t) != 10:
        raise OptionError(option, f"{text!r}: write the date as YYYY-MM-DD, e.g. 2026-03-14")
    if d > _dt.date.today() + _dt.timedelta(days=1):
        raise OptionError(option, f"{t} is in the future; give the day the sweep was taken")
    return d.isoformat()


def sweep_date(path: str, given: str | None, source: str = "option") -> tuple[str, str]:
    """(date, date source): the given date, else the file's modification day (local time)."""
    if given:
        return given, source
    return _dt.date.fromtimestamp(os.path.getmtime(path)).isoformat(), "file-mtime"


def build_record(*, site: str, antenna: str, sweep_path: str, date: str, date_source: str, role: str, corr,
                 summary: dict, comparison: dict | None = None, baseline_sha256: str | None = None,
                 sha256: str | None = None) -> SweepRecord:
    """One sweep's record: its key (site, antenna, content hash), date, line and values."""
    verdict, code, text = verdict_of(comparison)
    return SweepRecord(
        site=site, antenna=antenna, sweep_sha256=sha256 or file_sha256(sweep_path), sweep_file=str(sweep_path),
        sweep_date=date, date_source=date_source, role=role, line=corr.line.describe(),
        values=sweep_values(corr, summary, comparison), verdict=verdict, diagnosis_code=code,
        diagnosis_text=text, baseline_sha256=baseline_sha256)


def record(target: str, records) -> dict:
    """Write records into the store at ``target`` (file or URL) in one transaction.

    Returns ``{"store": name, "added": n, "already": m}``.
    """
    with open_store(target) as store:
        res = store.record(records)
        return {"store": store.name, "added": res.added, "already": res.already}


__all__ = ["build_record", "parse_date", "record", "sweep_date"]
