"""Store targets for the history tests: a SQLite file always, and a real PostgreSQL server when one is
given in DEEMBED_TEST_PG_URL (.ci/run starts one and sets it; on CI a missing server is a failure, not
a skip)."""
from __future__ import annotations

import os
import uuid

import pytest

PG_ENV = "DEEMBED_TEST_PG_URL"
BACKENDS = ("sqlite", "postgresql")


def pg_url() -> str | None:
    url = os.environ.get(PG_ENV, "").strip()
    if not url:
        if os.environ.get("CI"):
            pytest.fail(f"{PG_ENV} is not set on CI: .ci/run should start a PostgreSQL server and set it")
        pytest.skip(f"no PostgreSQL server given ({PG_ENV}); .ci/run starts one")
    return url


def _with_schema(url: str, schema: str) -> str:
    sep = "&" if "?" in url else "?"
    return f"{url}{sep}options=-csearch_path%3D{schema}"


class Target:
    """A fresh, empty store location for one test; ``target`` is what open_store takes."""

    def __init__(self, kind: str, tmp_path):
        self.kind = kind
        self._schema = None
        if kind == "sqlite":
            self.target = str(tmp_path / "site.history.sqlite")
        else:
            base = pg_url()
            import psycopg

            self._base = base
            self._schema = "t_" + uuid.uuid4().hex[:16]
            with psycopg.connect(base, autocommit=True) as conn:
                conn.execute(f"CREATE SCHEMA {self._schema}")
            self.target = _with_schema(base, self._schema)

    def raw_execute(self, sql: str, params=()):
        """Run SQL directly (outside deembed) against the store, for setting up odd states."""
        if self.kind == "sqlite":
            import sqlite3

            conn = sqlite3.connect(self.target)
            try:
                rows = conn.execute(sql, params).fetchall()
                conn.commit()
                return rows
            finally:
                conn.close()
        import psycopg

        with psycopg.connect(self.target, autocommit=True) as conn:
            cur = conn.execute(sql.replace("?", "%s"), params)
            return cur.fetchall() if cur.description else []

    def cleanup(self):
        if self._schema:
            import psycopg

            with psycopg.connect(self._base, autocommit=True) as conn:
                conn.execute(f"DROP SCHEMA {self._schema} CASCADE")


@pytest.fixture(params=BACKENDS)
def store_target(request, tmp_path):
    t = Target(request.param, tmp_path)
    yield t
    t.cleanup()
