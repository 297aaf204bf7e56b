"""Recording and trending end to end through the command line, on copies of the invented samples.

What is checked here is behaviour (facts of the job, common practice, no source): every `deembed site`
run records each sweep once, keyed by its content; `correct`/`compare --record` record with --date and
--name; a missing date falls back to the file's time and is flagged; `trend --json` has exactly the keys
the job defines and exit status 0/1/2, and every trend JSON output (trend.json, --json) is valid against the
shipped schema (render/schemas/trend.schema.json, checked with jsonschema's Draft 2020-12 validator, which
also refuses a broken one); the site index links each feed's trend page; bad input is one `error:` line with
status 2 and nothing written (no empty store either). The physics behind the numbers is checked in
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
from deembed.render.jsonschemas import SCHEMA_DIR
from history_backends import store_target  # noqa: F401  (fixture)

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_sweeps"
TREND_SCHEMA = Path(SCHEMA_DIR) / "trend.schema.json"


def trend_schema_errors(data) -> list:
    """Errors of ``data`` against the shipped trend schema (jsonschema's Draft 2020-12 validator)."""
    jsonschema = pytest.importorskip("jsonschema")
    schema = json.loads(TREND_SCHEMA.read_text())
    jsonschema.Draft202012Validator.check_schema(schema)
    return list(jsonschema.Draft202012Validator(schema).iter_errors(data))


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
    assert trend_schema_errors(data) == []
    assert trend_schema_errors(json.loads((tmp_path / "t" / "trend.json").read_text())) == []
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
    assert "-0.000" not in out and "+0.000" not in out  # a rate that rounds to zero prints unsigned
    page = (tmp_path / "t3" / "40-m-dipole.trend.html").read_text()
    assert "\u22120.000" not in page and "+0.000" not in page


def test_trend_schema_refuses_a_broken_output(history_copy, tmp_path, capsys):
    site = history_copy / "years.site.toml"
    if not (history_copy / "years.history.sqlite").exists():
        run(capsys, "site", site, "--out", tmp_path / "o", "--workers", "1")
    code, out, _ = run(capsys, "trend", site, "--out", tmp_path / "t", "--json")
    data = json.loads(out)
    assert trend_schema_errors(data) == []
    broken = json.loads(out)
    del broken["entries"][0]["slopes"]["min_swr"]
    broken["entries"][1]["slopes"]["resonance_hz"]["interval"] = [1.0]
    broken["entries"][1]["flags"].append({"quantity": "weather", "reason": ""})
    paths = {tuple(e.absolute_path) for e in trend_schema_errors(broken)}
    assert ("entries", 0, "slopes") in paths
    assert ("entries", 1, "slopes", "resonance_hz", "interval") in paths
    assert any(p[:3] == ("entries", 1, "flags") for p in paths)
    assert trend_schema_errors({"entries": "none"}) and trend_schema_errors({})


def test_flagged_card_stands_out_in_the_bad_colour(history_copy, tmp_path, capsys):
    """On the trend page the flagged quantity's card is drawn in the style's "bad" colour (class bad inside
    the coloured-cards row), the others keep the accent colours of their kind."""
    site = history_copy / "years.site.toml"
    if not (history_copy / "years.history.sqlite").exists():
        run(capsys, "site", site, "--out", tmp_path / "o", "--workers", "1")
    run(capsys, "trend", site, "--out", tmp_path / "t")
    page = (tmp_path / "t" / "2-m-vertical.trend.html").read_text()
    assert '<div class="glance counts">' in page
    assert page.count('<div class="stat bad">') == 1 and page.count('<div class="stat feed">') == 2
    assert '.glance.counts .stat.bad .value { color: var(--bad); }' in page
    dry = (tmp_path / "t" / "40-m-dipole.trend.html").read_text()
    assert '<div class="stat bad">' not in dry


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
    junk = tmp_path / "junk.sqlite"
    junk.write_text("these are my notes\n")
    code, _, err = run(capsys, "trend", junk, "--out", tmp_path / "t")
    assert code == 2 and err.count("\n") == 1
    assert "not a deembed history store" in err and "not an SQLite file" in err and "TOML" not in err
    assert junk.read_text() == "these are my notes\n"
    store = tmp_path / "h.sqlite"
    run(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml", "--out",
        tmp_path / "c", "--no-plots", "--record", store, "--date", "2026-01-01")
    code, _, err = run(capsys, "trend", store, "--antenna", "nope", "--out", tmp_path / "t")
    assert code == 2 and "--antenna" in err and "dipole-40m" in err
    code, _, err = run(capsys, "trend", store, "--max-drift", "fast", "--out", tmp_path / "t")
    assert code == 2 and "--max-drift" in err
    # bare numbers: the one hint every quantity gives, naming the option, with an example that fits
    for opt, val, example in (("--max-loss-rise", "0.2", "0.2dB"), ("--max-drift", "20", "0.2% or 20kHz")):
        code, _, err = run(capsys, "trend", store, opt, val, "--out", tmp_path / "t")
        assert code == 2
        assert err == f"error: {opt}: '{val}' has no unit; write it with its unit, e.g. {example}\n"
    assert not (tmp_path / "t").exists()


@pytest.mark.parametrize("value", ["90", "0", "0s", "soon"])
def test_site_time_limit_needs_a_unit(station, tmp_path, capsys, value):
    """--time-limit 90 is refused with the no-unit hint; 0 and 0s do not silently mean no limit (that is
    written none)."""
    (station / "s.site.toml").write_text(
        f'name = "x"\n[[{sh.ENTRY_TABLE}]]\nname = "d"\nline = "dipole-40m.line.toml"\n'
        'baseline = "dipole-40m.s1p"\nlatest = ["dipole-40m-after.s1p"]\n')
    code, out, err = run(capsys, "site", station / "s.site.toml", "--out", tmp_path / "o", "--time-limit", value)
    assert code == 2 and err.startswith("error: --time-limit: ") and err.count("\n") == 1
    if value in ("90", "0"):
        assert err == f"error: --time-limit: '{value}' has no unit; write it with its unit, e.g. 90s or 10min " \
                      "(none for no limit)\n"
    else:
        assert "none" in err
    assert not (tmp_path / "o").exists() and not (station / "s.history.sqlite").exists()


def test_rerecording_prints_the_stored_date(station, tmp_path, capsys):
    store = tmp_path / "h.sqlite"
    args = ["correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml", "--out",
            tmp_path / "c", "--no-plots", "--record", store]
    code, out, _ = run(capsys, *args, "--date", "2026-01-01")
    assert code == 0 and "recorded dipole-40m 2026-01-01" in out
    code, out, _ = run(capsys, *args, "--date", "2026-02-01")
    assert code == 0
    assert "already recorded" in out and "dated 2026-01-01" in out
    assert "the date given now, 2026-02-01, is not used" in out and "recorded dipole-40m 2026-02-01" not in out
    assert [r.sweep_date for r in _rows(store)] == ["2026-01-01"]


@pytest.mark.parametrize("baseline, latest, key", [
    ('{ file = "dipole-40m.s1p", date = "2026-13-01" }', '["dipole-40m-after.s1p"]', "'baseline' date"),
    ('"dipole-40m.s1p"', '[{ file = "dipole-40m-after.s1p", date = "2026-02-30" }]', "'latest' date"),
    ('"dipole-40m.s1p"', '{ file = "dipole-40m-after.s1p", date = "2999-01-01" }', "'latest' date"),
])
def test_a_bad_date_in_the_site_file_is_bad_input(tmp_path, station, capsys, baseline, latest, key):
    """A bad date in a sweep table is the site file's fault: one line naming the site file, the antenna and
    the key, exit status 2, before anything runs: no results folder and no history store."""
    site = station / "s.site.toml"
    site.write_text(f'name = "x"\n[[{sh.ENTRY_TABLE}]]\nname = "d"\nline = "dipole-40m.line.toml"\n'
                    f'baseline = {baseline}\nlatest = {latest}\n')
    code, out, err = run(capsys, "site", site, "--out", tmp_path / "o", "--workers", "1")
    assert code == 2 and out == ""
    assert err.startswith(f"error: {site}: antenna 1 (d): {key}: ") and err.count("\n") == 1
    assert not (tmp_path / "o").exists() and not (station / "s.history.sqlite").exists()
    code, _, err = run(capsys, "trend", site, "--out", tmp_path / "t")
    assert code == 2 and key in err and not (tmp_path / "t").exists()


def test_no_empty_store_when_nothing_is_recorded(tmp_path, station, capsys):
    """Every antenna fails (a missing sweep): the run says nothing was recorded and makes no store."""
    site = station / "s.site.toml"
    site.write_text(f'name = "x"\n[[{sh.ENTRY_TABLE}]]\nname = "d"\nline = "dipole-40m.line.toml"\n'
                    'baseline = "no-such.s1p"\nlatest = ["dipole-40m-after.s1p"]\n')
    code, out, err = run(capsys, "site", site, "--out", tmp_path / "o", "--workers", "1")
    assert code == 1
    assert "history: NOT RECORDED: no antenna could be checked, so there was nothing to record (no store was made)" \
        in out
    assert "has no recorded sweeps" not in out
    assert not (station / "s.history.sqlite").exists()


def test_site_sweep_tables_are_checked(tmp_path, station, capsys):
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
    assert trend_schema_errors(json.loads(out)) == []
    assert trend_schema_errors(json.loads((tmp_path / "t" / "trend.json").read_text())) == []
    (entry,) = json.loads(out)["entries"]
    assert entry["name"] == name and entry["runs"] == 3
    with open_store(store_target.target, create=False) as st:
        assert [r.sweep_date for r in st.sweeps(antenna=name)] == ["2025-01-10", "2025-07-10", "2026-01-10"]
