"""data_version: one counter row bumped by every change of spots, tables, sources, observations, agencies

Revision ID: c7d2e8f4a915
Revises: 6ada0f9a01c0
Create Date: 2026-12-03 12:40:00
"""

from __future__ import annotations

import time
from datetime import UTC, datetime

import sqlalchemy as sa
from alembic import op

import app.db.base

revision = "c7d2e8f4a915"
down_revision = "6ada0f9a01c0"
branch_labels = None
depends_on = None


def upgrade() -> None:
    table = op.create_table(
        "data_version",
        sa.Column("id", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("version", sa.BigInteger(), nullable=False),
        sa.Column("changed_at", app.db.base.UTCDateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_data_version")),
    )
    # starts at the clock in ms so a recreated database does not reuse an old one's versions (ETags)
    op.bulk_insert(table, [{"id": 1, "version": int(time.time() * 1000), "changed_at": datetime.now(UTC)}])


def downgrade() -> None:
    op.drop_table("data_version")
