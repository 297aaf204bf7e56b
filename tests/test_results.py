"""Typed results: frozen dataclasses whose to_dict() is the documented JSON form.

The JSON form is checked against the package's JSON Schemas (draft 2020-12, with jsonschema as the independent
checker); the numbers themselves are checked elsewhere (test_budget.py: check-values E5, E6, F8, F10).
"""
from __future__ import annotations

import dataclasses
import json
import pickle
from pathlib import Path

import pytest

from deembed.analysis.compare import Cause, Comparison, Verdict, compare_corrections
from deembed.analysis.findings import EndFindings, end_findings
from deembed.analysis.summary import CorrectionSummary
from deembed.analysis.trust import UncertaintySettings
from deembed.base.results import Result
from deembed.io.anysweep import read_phase_sweep
from deembed.io.jsonfile import to_jsonable
from deembed.io.linefile import read_line_file
from deembed.io.tablesweep import parse_columns
from deembed.jobs.correct import Options, correct_file
from deembed.jobs.site import AntennaResult, SiteComparison, SiteResult, run_site
from deembed.physics.deembedding import correct
from deembed.physics.budget import PowerBudget, power_budget
from deembed.physics.rf import gamma_mag_from_swr
from deembed.render.jsonschemas import load_schema

jsonschema = pytest.importorskip("jsonschema")


def test_power_budget_is_a_frozen_typed_result_with_its_json_form():
    b = power_budget(100.0, 1.0, gamma_mag_from_swr(3.0))
    assert isinstance(b, PowerBudget) and isinstance(b, Result)
    d = b.to_dict()
    assert list(d) == ["at_antenna", "at_transmitter", "line", "matched_at_transmitter"]  # no inferred reading
    assert d["at_antenna"]["delivered_w"] == b.at_antenna.delivered_w == b["at_antenna"]["delivered_w"]
    jsonschema.Draft202012Validator(load_schema("budget")).validate(d)
    with pytest.raises(dataclasses.FrozenInstanceError):
        b.at_antenna = None
    with_reading = dataclasses.replace(b, inferred_from_measured_swr=2.0)
    assert with_reading.to_dict()["inferred_from_measured_swr"] == 2.0
    with pytest.raises(KeyError):
        b["inferred_from_measured_swr"]


def test_verdict_and_cause_are_typed_and_read_like_their_json():
    v = Verdict("outside_limits", ["max_shift_hz"], ["the feedpoint resonance moved"])
    assert not v.ok and v["limits_exceeded"] == ["max_shift_hz"]
    assert list(v.to_dict()) == ["status", "limits_exceeded", "reasons"]  # optional certainty left out when absent
    c = Cause("line", "looks like the line")
    assert dict(c) == {"code": "line", "text": "looks like the line"}
    schema = load_schema("compare")
    jsonschema.Draft202012Validator(schema["properties"]["verdict"]).validate(v.to_dict())
    jsonschema.Draft202012Validator(schema["properties"]["cause"]).validate(c.to_dict())


# ------------------------------------------------------------------------------------------------------
# the results the jobs hand on, made from the sample sweeps (invented demo data), against their schemas

SAMPLES = Path(__file__).resolve().parents[1] / "sample_sweeps"


def _errors(name, data) -> list:
    return [f"{'/'.join(map(str, e.path))}: {e.message}"
            for e in jsonschema.Draft202012Validator(load_schema(name)).iter_errors(data)]


def _frozen(result, field):
    with pytest.raises(dataclasses.FrozenInstanceError):
        setattr(result, field, None)
    with pytest.raises(TypeError):  # read-only as a mapping too
        result[field] = None


@pytest.fixture(scope="module")
def dipole_line():
    line, _ = read_line_file(str(SAMPLES / "dipole-40m.line.toml"))
    return line


def test_end_findings_and_correction_summary_are_typed_and_match_the_summary_schema(dipole_line, tmp_path):
    opts = Options(target_hz=7.1e6, power_w=100.0, bands=True, plots=False, html=False,
                   uncertainty=UncertaintySettings(draws=50))
    corr, summary, written = correct_file(str(SAMPLES / "dipole-40m.s1p"), dipole_line, str(tmp_path), opts)
    assert isinstance(summary, CorrectionSummary) and isinstance(summary.feedpoint, EndFindings)
    d = summary.to_dict()
    assert _errors("summary", d) == []
    # the file written is the result's JSON form, key for key and in the same order
    on_disk = json.loads((tmp_path / "dipole-40m.summary.json").read_text())
    assert json.loads(json.dumps(to_jsonable(summary))) == on_disk and list(on_disk) == list(d)
    assert list(d) == ["sweep", "line", "feedpoint", "analyzer", "warnings", "along_the_line", "power", "bands",
                       "outputs"]
    fp = d["feedpoint"]
    assert "trim" in fp and "uncertainty" in fp and fp["uncertainty"]["draws"] == 50
    assert "trim" not in d["analyzer"]  # only --target sets it, and only at the feedpoint
    _frozen(summary, "warnings")
    _frozen(summary.feedpoint, "min_swr")
    # the plain findings, without what the summary adds: no uncertainty nor trim keys at all
    ef = end_findings(corr.freq_hz, corr.gamma_feedpoint)
    assert "uncertainty" not in ef and "trim" not in ef.to_dict()
    assert _errors("summary", {**d, "feedpoint": ef.to_dict()}) == []


def test_magnitude_summary_is_typed_and_matches_the_schema(tmp_path):
    line, _ = read_line_file(str(SAMPLES / "dipole-40m.line.toml"))
    opts = Options(plots=False, html=False, columns=parse_columns("freq:kHz,swr"), uncertainty=None)
    _, summary, _ = correct_file(str(SAMPLES / "vertical-10m.swr.csv"), line, str(tmp_path), opts)
    assert isinstance(summary, CorrectionSummary) and "along_the_line" not in summary  # OPTIONAL, left out
    assert _errors("summary", summary.to_dict()) == []


def test_comparison_is_typed_and_matches_the_compare_schema(dipole_line):
    before = correct(read_phase_sweep(str(SAMPLES / "dipole-40m.s1p")), dipole_line)
    after = correct(read_phase_sweep(str(SAMPLES / "dipole-40m-after.s1p")), dipole_line)
    res = compare_corrections(before, after, settings=UncertaintySettings(draws=50))
    assert isinstance(res, Comparison) and isinstance(res.verdict, Verdict) and isinstance(res.cause, Cause)
    d = res.to_dict()
    assert "outputs" not in d and _errors("compare", d) == []
    assert d["along_the_line"]["shown"] is False and _errors("compare", {**d, "along_the_line": {"shown": True,
                                                                                                "text": "x"}})
    _frozen(res, "verdict")
    assert "outputs" in dataclasses.replace(res, outputs={"compare_json": "a.compare.json"}).to_dict()


def test_site_result_is_typed_and_matches_the_site_schema(tmp_path):
    site = run_site(str(SAMPLES / "ridgeback-hill.site.toml"), str(tmp_path / "site"), workers=1, record=False)
    assert isinstance(site, SiteResult) and all(isinstance(a, AntennaResult) for a in site.antennas)
    d = site.to_dict()
    assert _errors("site", d) == [] and "history" not in d
    assert json.loads((tmp_path / "site" / "site.json").read_text()) == json.loads(json.dumps(to_jsonable(site)))
    ant = d["antennas"][0]
    # what travels between the processes is no part of the JSON
    assert not {"inputs_read", "write_failed", "records"} & set(ant) and "trend" not in ant
    assert isinstance(site.antennas[0].comparisons[0], SiteComparison)
    _frozen(site, "antennas")
    _frozen(site.antennas[0], "verdict")


def test_a_failed_antenna_has_no_after_line_nor_limits_keys():
    failed = AntennaResult(name="a", slug="a", verdict="error", error="no such file", line=None)
    assert list(failed.to_dict()) == ["name", "slug", "verdict", "error", "line", "baseline", "comparisons"]
    assert _errors("site", {"site": "s", "file": "s.toml", "verdict": "error",
                            "counts": {"within_limits": 0, "outside_limits": 0, "error": 1},
                            "antennas": [failed.to_dict()], "outputs": {}}) == []
    checked = dataclasses.replace(failed, verdict="within_limits", error=None, limits={})
    assert checked.to_dict()["after_line"] is None  # said, null: the antenna has no line of its own after work


def test_unset_and_internal_fields_are_no_keys_and_survive_pickling():
    ef = EndFindings(min_swr={"freq_hz": None, "swr": None}, resonances_hz=[], resonances=[], swr_spans_hz={},
                     swr_spans_cut_by_sweep_edge={}, q=None, q_freq_hz=None, q_from_span=None)
    assert "trim" not in ef and dataclasses.replace(ef, trim=None).to_dict()["trim"] is None  # null when set
    again = pickle.loads(pickle.dumps(ef))   # antenna results cross the worker processes
    assert again == ef and "uncertainty" not in again
    ant = AntennaResult(name="a", slug="a", verdict="error", error="x", line=None, inputs_read=("f.s1p",))
    assert pickle.loads(pickle.dumps(ant)).inputs_read == ("f.s1p",) and "inputs_read" not in ant
