"""Every JSON output against the JSON Schema shipped for it in the package (deembed/render/schemas/).

The schemas are JSON Schema draft 2020-12 (json-schema.org, "JSON Schema: A Media Type for Describing JSON
Documents", draft 2020-12); jsonschema's Draft202012Validator is the independent checker. Each output is made by
the command line on the invented sample sweeps (demo data), written to a file and printed with --json; both are
checked. A schema that accepted anything would pass these, so the last tests show each schema refusing an output
with a documented key removed or a verdict word that is not one of ours.
"""
from __future__ import annotations

import copy
import json
import shutil
from pathlib import Path

import pytest

jsonschema = pytest.importorskip("jsonschema")

from deembed.cli.app import main  # noqa: E402
from deembed.render.jsonschemas import SCHEMAS, load_schema  # noqa: E402

SAMPLES = Path(__file__).resolve().parents[1] / "sample_sweeps"


def run_json(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    assert code in (0, 1), err
    return json.loads(out)


def check(name, data):
    validator = jsonschema.Draft202012Validator(load_schema(name))
    errors = sorted(validator.iter_errors(data), key=lambda e: list(e.path))
    assert not errors, "; ".join(f"{'/'.join(map(str, e.path))}: {e.message}" for e in errors[:5])


@pytest.fixture(scope="module")
def station(tmp_path_factory):
    """A copy of the sample station (the site run records its history beside the site file)."""
    folder = tmp_path_factory.mktemp("station")
    for p in SAMPLES.iterdir():
        if p.is_file():
            shutil.copy(p, folder / p.name)
    return folder


@pytest.mark.parametrize("name", SCHEMAS)
def test_every_schema_is_a_valid_draft_2020_12_schema(name):
    jsonschema.Draft202012Validator.check_schema(load_schema(name))


def test_correct_summary_file_and_json_match_the_schema(capsys, tmp_path, station):
    data = run_json(capsys, "correct", station / "dipole-40m.s1p", "--line", station / "dipole-40m.line.toml",
                    "--power", "100W", "--bands", "--target", "7.1MHz", "--out", tmp_path, "--json")
    check("summary", data)
    check("summary", json.loads((tmp_path / "dipole-40m.summary.json").read_text()))
    # a lossless single-section line with no extras: optional blocks absent, still valid
    data = run_json(capsys, "correct", station / "vertical-2m.s1p", "--length", "45m", "--vf", "0.66",
                    "--out", tmp_path / "b", "--json", "--draws", "0")
    check("summary", data)


def test_compare_json_matches_the_schema(capsys, tmp_path, station):
    data = run_json(capsys, "compare", station / "vertical-2m.s1p", station / "vertical-2m-after.s1p",
                    "--line", station / "vertical-2m.line.toml", "--out", tmp_path, "--json", "--draws", "0")
    check("compare", data)
    check("compare", json.loads((tmp_path / "vertical-2m-after.compare.json").read_text()))


def test_site_json_matches_the_schema(capsys, tmp_path, station):
    data = run_json(capsys, "site", station / "ridgeback-hill.site.toml", "--out", tmp_path / "site",
                    "--workers", "1", "--no-record", "--json")
    check("site", data)
    check("site", json.loads((tmp_path / "site" / "site.json").read_text()))
    for cmp in (tmp_path / "site").glob("*/*.compare.json"):
        check("compare", json.loads(cmp.read_text()))
    for summary in (tmp_path / "site").glob("*/*.summary.json"):
        check("summary", json.loads(summary.read_text()))


@pytest.mark.parametrize("reading", [("--antenna-swr", "2"), ("--measured-swr", "1.6")])
def test_budget_json_matches_the_schema(capsys, reading):
    check("budget", run_json(capsys, "budget", "--power", "100W", "--loss", "1.5dB", *reading, "--json"))


def test_characterization_json_matches_the_schema(capsys, tmp_path, station):
    data = run_json(capsys, "characterize", "--open", station / "dipole-40m-far-open.s1p",
                    "--short", station / "dipole-40m-far-short.s1p", "--load", station / "dipole-40m-far-load.s1p",
                    "--length", "38m", "--out", tmp_path / "run", "--json")
    check("characterization", data)


def test_the_schemas_refuse_outputs_that_break_them(capsys, tmp_path, station):
    data = run_json(capsys, "compare", station / "vertical-2m.s1p", station / "vertical-2m-wet.s1p",
                    "--line", station / "vertical-2m.line.toml", "--json", "--draws", "0")
    validator = jsonschema.Draft202012Validator(load_schema("compare"))
    assert validator.is_valid(data)
    broken = copy.deepcopy(data)
    del broken["verdict"]
    assert not validator.is_valid(broken)
    broken = copy.deepcopy(data)
    broken["verdict"]["status"] = "fine"
    assert not validator.is_valid(broken)
    broken = copy.deepcopy(data)
    broken["cause"]["code"] = "gremlins"
    assert not validator.is_valid(broken)
    summary = run_json(capsys, "correct", station / "vertical-2m.s1p", "--length", "45m", "--vf", "0.66",
                       "--out", tmp_path / "c", "--json", "--draws", "0")
    validator = jsonschema.Draft202012Validator(load_schema("summary"))
    broken = copy.deepcopy(summary)
    broken["feedpoint"]["min_swr"]["swr"] = "1.5"
    assert not validator.is_valid(broken)


def test_every_json_output_has_its_schema_and_the_along_block_is_the_same_in_both():
    assert set(SCHEMAS) == {"summary", "compare", "site", "budget", "characterization", "locate", "trend"}
    summary, locate = load_schema("summary"), load_schema("locate")
    assert summary["properties"]["along_the_line"] == {"$ref": "#/$defs/along_the_line"}
    for name in ("along_the_line", "length", "reflection"):  # the copy is locate's own, which owns it
        assert summary["$defs"][name] == locate["$defs"][name]
    compare = load_schema("compare")
    assert compare["properties"]["along_the_line"] == {"$ref": "#/$defs/compare_along"}
