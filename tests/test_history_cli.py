"""Recording and trending end to end through the command line, on copies of the invented samples.

What is checked here is behaviour (facts of the job, common practice, no source): every `deembed site`
run records each sweep once, keyed by its content; `correct`/`compare --record` record with --date and
--name; a missing date falls back to the file's time and is flagged; `trend --json` has exactly the keys
the job defines and exit status 0/1/2; the site index links each feed's trend page; bad input is one
`error:` line with status 2 and nothing written. The physics behind the numbers is checked in
test_trend.py (the sample history) and the tests of compare and findings.
"""
from __future__ import annotations

import json
import shutil
import sqlite3
from pathlib import Path

import pytest

from deembed.cli.app import main
from deembed.io.history import SCHEMA_VERSION, open_store
from deembed.jobs import sample_history as sh
from history_backends import store_target  # noqa: F401  (fixture)

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_sweeps"


def run(capsys, *args):
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.fixture
def station(tmp_path):
    d = tmp_path / "station"
    d.mkdir()
    for name in ("dipole-40m.s1p", "dipole-40m-after.s1p", "dipole-40m.line.toml", "vertical-2m.s1p",
                 "vertical-2m-wet.s1p", "vertical-2m-after.s1p", "vertical-2m.line.toml"):
        shutil.copy(SAMPLES / name, d / name)
    return d


@pytest.fixture(scope="module")
def history_copy(tmp_path_factory):
    """A small slice of the sample history: the wet 2 m vertical and the dry 40 m dipole, three visits."""
    d = tmp_path_factory.mktemp("years")
    src = SAMPLES / "history"
    dates = sh.SWEEP_DATES[::3]
    text = ['name = "Ridgeback Hill"\n']
    for name, prefix, line in (("2 m vertical", "vertical-2m", "vertical-2m.line.toml"),
                               ("40 m dipole", "dipole-40m", "dipole-40m.line.toml")):
        shutil.copy(src / line, d / line)
        for date in dates:
            shutil.copy(src / f"{prefix}-{date}.s1p", d / f"{prefix}-{date}.s1p")
        latest = ", ".join(f'{{ file = "{prefix}-{x}.s1p", date = "{x}" }}' for x in dates[1:])
        text.append(f'[[{sh.ENTRY_TABLE}]]\nname = "{name}"\nline = "{line}"\n'
                    f'baseline = {{ file = "{prefix}-{dates[0]}.s1p", date = "{dates[0]}" }}\nlatest = [{latest}]\n'
                    'limits = { max_shift = "150kHz" }\n')
    (d / "years.site.toml").write_text("\n".join(text))
    return d


def _rows(store):
    with open_store(str(store), create=False) as st:
        return st.sweeps()


def test_site_records_beside_the_site_file_once_and_links_trends(history_copy, tmp_path, capsys):
    site = history_copy / "years.site.toml"
    code, out, err = run(capsys, "site", site, "--out", tmp_path / "o1", "--workers", "2")
    assert code in (0, 1), err
    store = history_copy / "years.history.sqlite"
    rows = _rows(store)
    assert len(rows) == 6 and {r.date_source for r in rows} == {"site_file"}
    assert sorted({r.sweep_date for r in rows}) == sorted(sh.SWEEP_DATES[::3])
    assert "6 new sweep(s), 0 already there" in out
    index = (tmp_path / "o1" / "index.html").read_text()
    for slug in ("2-m-vertical", "40-m-dipole"):
        assert f'href="trend/{slug}.trend.html"' in index
        assert (tmp_path / "o1" / "trend" / f"{slug}.trend.html").is_file()
    # the second run records nothing new and the store's rows are unchanged
    before = [r.to_dict() for r in rows]
    code2, out2, _ = run(capsys, "site", site, "--out", tmp_path / "o2", "--workers", "1")
    assert code2 == code
    assert "0 new sweep(s), 6 already there" in out2
    assert [r.to_dict() for r in _rows(store)] == before


def test_trend_json_keys_and_exit_status(history_copy, tmp_path, capsys):
    site = history_copy / "years.site.toml"
    if not (history_copy / "years.history.sqlite").exists():
        run(capsys, "site", site, "--out", tmp_path / "o", "--workers", "1")
    code, out, err = run(capsys, "trend", site, "--out", tmp_path / "t", "--json")
    assert code == 1, err  # the wet run is flagged
    data = json.loads(out)
    assert set(data) == {"entries"}
    by = {e["name"]: e for e in data["entries"]}
    assert set(by) == {"2 m vertical", "40 m dipole"}
    for e in data["entries"]:
        assert set(e) == {"name", "runs", "slopes", "flags"}
        assert e["runs"] == 3
        assert set(e["slopes"]) == {"line_loss_db", "resonance_hz", "min_swr"}
        for s in e["slopes"].values():
            assert set(s) == {"per_year", "interval"} and len(s["interval"]) == 2
        assert all(set(f) == {"quantity", "reason"} for f in e["flags"])
    assert [f["quantity"] for f in by["2 m vertical"]["flags"]] == ["line_loss_db"]
    assert by["40 m dipole"]["flags"] == []
    # one antenna alone: nothing flagged -> 0; the limit raised above the wet rise -> 0
    assert run(capsys, "trend", site, "--antenna", "40 m dipole", "--out", tmp_path / "t2")[0] == 0
    code, out, _ = run(capsys, "trend", history_copy / "years.history.sqlite", "--out", tmp_path / "t3",
                       "--max-loss-rise", "1dB")
    assert code == 0 and "nothing flagged" in out
    assert (tmp_path / "t3" / "trend.json").is_file() and (tmp_path / "t3" / "2-m-vertical.trend.png").is_file()


def test_correct_and_compare_record_with_dates_and_names(station, tmp_path, capsys):
    store = tmp_path / "h.sqlite"
    code, out, err = run(capsys, "correct", station / "vertical-2m.s1p", "--line", station / "vertical-2m.line.toml",
                         "--out", tmp_path / "c", "--no-plots", "--record", store, "--date", "2026-01-10",
                         "--name", "2 m vertical")
    assert code == 0, err
    assert "recorded 2 m vertical 2026-01-10" in out
    code, out, err = run(capsys, "compare", station / "vertical-2m.s1p", station / "vertical-2m-wet.s1p",
                         "--line", station / "vertical-2m.line.toml", "--record", store, "--date", "2026-06-01",
                         "--baseline-date", "2026-01-10", "--name", "2 m vertical", "--json")
    assert code in (0, 1), err
    assert "1 new sweep(s), 1 already there" in err  # the baseline was recorded by correct already
    result = json.loads(out)  # standard output stays pure JSON
    rows = _rows(store)
    assert [(r.antenna, r.sweep_date, r.role) for r in rows] == [("2 m vertical", "2026-01-10", "single"),
                                                                  ("2 m vertical", "2026-06-01", "latest")]
    wet = rows[1]
    assert (wet.verdict, wet.cause_code, wet.cause_text) == (result["verdict"]["status"], result["cause"]["code"],
                                                             result["cause"]["text"])
    assert wet.cause_code == "line" and (code == 1) == (wet.verdict == "outside_limits")
    # the wet run's loss: the description plus the fitted change, about half as much again (+50 %)
    assert wet.value("line_loss_db").value == pytest.approx(1.5 * rows[0].value("line_loss_db").value, rel=0.05)


def test_missing_date_uses_file_time_and_is_flagged(station, tmp_path, capsys):
    store = tmp_path / "h.sqlite"
    code, out, err = run(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml",
                         "--out", tmp_path / "c", "--no-plots", "--record", store)
    assert code == 0, err
    assert "modification time" in out
    (r,) = _rows(store)
    assert r.date_source == "file_mtime" and r.antenna == "dipole-40m"
    code, out, _ = run(capsys, "trend", store, "--out", tmp_path / "t")
    assert code == 0 and "dated by the file's modification time" in out
    assert "file time" in (tmp_path / "t" / "dipole-40m.trend.html").read_text()


@pytest.mark.parametrize("args, option", [
    (("--record", "STORE", "--date", "14/03/2026"), "--date"),
    (("--record", "STORE", "--date", "2999-01-01"), "--date"),
    (("--name", "x"), "--name"),            # without --record
    (("--record", ""), "--record"),
    (("--record", "STORE", "--name", " "), "--name"),
])
def test_bad_record_options(station, tmp_path, capsys, args, option):
    extra = [tmp_path / "h.sqlite" if a == "STORE" else a for a in args]
    code, out, err = run(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml",
                         "--out", tmp_path / "c", "--no-plots", *extra)
    assert code == 2
    assert err.startswith("error: ") and err.count("\n") == 1 and option in err
    assert not (tmp_path / "c").exists() and not (tmp_path / "h.sqlite").exists()


def test_newer_store_refused_before_anything_is_written(station, tmp_path, capsys):
    store = tmp_path / "h.sqlite"
    run(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml", "--out",
        tmp_path / "c0", "--no-plots", "--record", store, "--date", "2026-01-01")
    conn = sqlite3.connect(store)
    conn.execute("UPDATE deembed_meta SET value = ? WHERE key = 'schema_version'", (str(SCHEMA_VERSION + 5),))
    conn.commit()
    conn.close()
    data = store.read_bytes()
    code, _, err = run(capsys, "correct", station / "dipole-40m-after.s1p", "--line", station / "dipole-40m.line.toml",
                       "--out", tmp_path / "c1", "--no-plots", "--record", store, "--date", "2026-02-01")
    assert code == 2 and "newer than this deembed" in err and err.count("\n") == 1
    assert not (tmp_path / "c1").exists()
    assert store.read_bytes() == data
    code, _, err = run(capsys, "trend", store, "--out", tmp_path / "t")
    assert code == 2 and "upgrade deembed" in err


def test_trend_bad_input(tmp_path, station, capsys):
    code, _, err = run(capsys, "trend", tmp_path / "none.sqlite", "--out", tmp_path / "t")
    assert code == 2 and "none.sqlite" in err and not (tmp_path / "none.sqlite").exists()
    store = tmp_path / "h.sqlite"
    run(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml", "--out",
        tmp_path / "c", "--no-plots", "--record", store, "--date", "2026-01-01")
    code, _, err = run(capsys, "trend", store, "--antenna", "nope", "--out", tmp_path / "t")
    assert code == 2 and "--antenna" in err and "dipole-40m" in err
    code, _, err = run(capsys, "trend", store, "--max-drift", "fast", "--out", tmp_path / "t")
    assert code == 2 and "--max-drift" in err


def test_site_sweep_tables_are_checked(tmp_path, station, capsys):
    (station / "s.site.toml").write_text(
        f'name = "x"\n[[{sh.ENTRY_TABLE}]]\nname = "d"\nline = "dipole-40m.line.toml"\n'
        'baseline = { file = "dipole-40m.s1p", date = "2026-13-01" }\nlatest = ["dipole-40m-after.s1p"]\n')
    code, out, err = run(capsys, "site", station / "s.site.toml", "--out", tmp_path / "o", "--workers", "1")
    assert code == 1  # the feed fails alone, with the reason
    assert "2026-13-01" in out and "YYYY-MM-DD" in out
    # a TOML date literal works as well as a string
    (station / "s.site.toml").write_text(
        f'name = "x"\n[[{sh.ENTRY_TABLE}]]\nname = "d"\nline = "dipole-40m.line.toml"\n'
        'baseline = { file = "dipole-40m.s1p", date = 2026-01-05 }\nlatest = [{ file = "dipole-40m-after.s1p" }]\n')
    code, out, err = run(capsys, "site", station / "s.site.toml", "--out", tmp_path / "o2", "--workers", "1")
    assert code == 0, out + err
    rows = _rows(station / "s.history.sqlite")
    assert {(r.role, r.date_source) for r in rows} == {("baseline", "site_file"), ("latest", "file_mtime")}
    assert "dipole-40m-after.s1p (dated by its file's time)" in out
    summary = json.loads((tmp_path / "o2" / "site.json").read_text())
    (ant,) = summary["antennas"]
    assert (ant["baseline"]["date"], ant["baseline"]["date_source"]) == ("2026-01-05", "site_file")
    assert ant["comparisons"][0]["date_source"] == "file_mtime"
    code, _, _ = run(capsys, "site", station / "s.site.toml", "--out", tmp_path / "o3", "--workers", "1",
                     "--no-record")
    assert code == 0 and not (tmp_path / "o3" / "trend").exists()


def test_record_and_trend_through_either_store(store_target, station, tmp_path, capsys):
    """The same commands against SQLite and a real PostgreSQL server (a URL): three dated runs of one
    feed, the JSON read back; hostile text in --name reaches the store intact."""
    name = "2 m vertical'); DROP TABLE deembed_sweeps; --"
    line = station / "vertical-2m.line.toml"
    for sweep, date in (("vertical-2m.s1p", "2025-01-10"), ("vertical-2m-after.s1p", "2025-07-10"),
                        ("vertical-2m-wet.s1p", "2026-01-10")):
        code, out, err = run(capsys, "correct", station / sweep, "--line", line, "--out", tmp_path / "c", "--no-plots",
                             "--record", store_target.target, "--date", date, "--name", name)
        assert code == 0, err
    code, out, err = run(capsys, "trend", store_target.target, "--out", tmp_path / "t", "--json")
    assert code in (0, 1), err
    (entry,) = json.loads(out)["entries"]
    assert entry["name"] == name and entry["runs"] == 3
    with open_store(store_target.target, create=False) as st:
        assert [r.sweep_date for r in st.sweeps(antenna=name)] == ["2025-01-10", "2025-07-10", "2026-01-10"]
