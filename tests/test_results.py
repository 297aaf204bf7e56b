"""Typed results: frozen dataclasses whose to_dict() is the documented JSON form.

The JSON form is checked against the package's JSON Schemas (draft 2020-12, with jsonschema as the independent
checker); the numbers themselves are checked elsewhere (test_budget.py: check-values E5, E6, F8, F10).
"""
from __future__ import annotations

import dataclasses

import pytest

from deembed.analysis.compare import Cause, Verdict
from deembed.base.results import Result
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
