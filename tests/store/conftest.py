"""Fixtures of the storage tests."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from formdb.resources import migrations_dir
from formdb.store.db import head_revision

PROBE_REVISION = '''"""Probe: rebuild ingredients (batch recreate on SQLite) with an extra column.

Revision ID: 9999_probe
Revises: {down}
"""
import sqlalchemy as sa
from alembic import op

revision = "9999_probe"
down_revision = "{down}"
branch_labels = None
depends_on = None


def _how():
    # SQLite rebuilds the table (copy, drop, rename); PostgreSQL alters it in place
    return "always" if op.get_bind().dialect.name == "sqlite" else "auto"


def upgrade():
    with op.batch_alter_table("ingredients", recreate=_how()) as batch:
        batch.add_column(sa.Column("probe_note", sa.Text(), nullable=True))


def downgrade():
    with op.batch_alter_table("ingredients", recreate=_how()) as batch:
        batch.drop_column("probe_note")
'''


@pytest.fixture
def migrations_with_probe(tmp_path: Path) -> Path:
    """The real migrations plus one more revision that rebuilds the parent table of most rows."""
    where = tmp_path / "migrations"
    shutil.copytree(migrations_dir(), where, ignore=shutil.ignore_patterns("__pycache__"))
    (where / "versions" / "9999_probe.py").write_text(
        PROBE_REVISION.format(down=head_revision()))
    return where


FIXTURE_SEED = Path(__file__).parent / "fixtures" / "seed"


@pytest.fixture
def fixture_library_url(library_url: str) -> str:
    """A library on each backend holding the small fixture seed (8 ingredients, 2 limits...)."""
    from formdb.services.seed.setup import init_library

    init_library(library_url, seed=True, user="larkspur-test", seed_dir=FIXTURE_SEED)
    return library_url
