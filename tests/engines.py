"""The register suite runs on every engine: ``engine_reg`` is an opened, empty register of
each kind (SQLite always; PostgreSQL when its server binaries are here, and always in CI)."""

from __future__ import annotations

import pytest

from commission.register import Register

ENGINES = ["sqlite"]


@pytest.fixture(params=ENGINES)
def engine_reg(request, tmp_path):
    if request.param == "sqlite":
        with Register(tmp_path / "engine.sqlite3") as reg:
            yield reg
