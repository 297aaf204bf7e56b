"""The JSON Schema files of the JSON outputs, shipped in the package (``render/schemas/*.json``).

One file per output: ``summary`` (``deembed correct``: ``<stem>.summary.json`` and ``--json``), ``compare``
(``<after>.compare.json``, ``compare --json``), ``site`` (``site.json``, ``site --json``), ``budget``
(``budget --json``), ``characterization`` (``characterize --json``), ``locate`` (``<stem>.along.json``,
``locate --json``) and ``trend`` (``trend.json``, ``trend --json``). They describe the documented keys;
outputs may carry more. ``summary``'s ``$defs/along_the_line`` (with ``length`` and ``reflection``) is a copy of
``locate``'s, which owns it (tests/test_json_schemas.py checks that the copy is the same). The test suite validates every JSON output against its schema (jsonschema, a test
dependency); nothing validates at run time.
"""
from __future__ import annotations

import json
import os

SCHEMA_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "schemas")
SCHEMAS = ("summary", "compare", "site", "budget", "characterization", "locate", "trend")


def schema_path(name: str) -> str:
    """The file of the schema ``name`` (one of :data:`SCHEMAS`)."""
    if name not in SCHEMAS:
        raise KeyError(f"no schema {name!r}; there are {', '.join(SCHEMAS)}")
    return os.path.join(SCHEMA_DIR, f"{name}.schema.json")


def load_schema(name: str) -> dict:
    """The schema ``name`` as a dict."""
    with open(schema_path(name), encoding="utf-8") as fh:
        return json.load(fh)


__all__ = ["SCHEMAS", "SCHEMA_DIR", "load_schema", "schema_path"]
