"""verifications and calibrations: verification runs of a spot's outlook and its height calibration factors

Revision ID: 6ada0f9a01c0
Revises: a1f3c9e2b7d4
Create Date: 2026-12-03 12:24:36.074149
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op
from sqlalchemy.dialects import postgresql

import app.db.base

revision = "6ada0f9a01c0"
down_revision = "a1f3c9e2b7d4"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "calibrations",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("spot_id", sa.String(length=64), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("factor", sa.Double(), nullable=False),
        sa.Column("factor_stderr", sa.Double(), nullable=True),
        sa.Column("created_by", sa.String(length=100), nullable=False),
        sa.Column("created_at", app.db.base.UTCDateTime(timezone=True), nullable=False),
        sa.Column("removed_by", sa.String(length=100), nullable=True),
        sa.Column("removed_at", app.db.base.UTCDateTime(timezone=True), nullable=True),
        sa.Column("verification_id", sa.Integer(), nullable=True),
        sa.Column(
            "metrics",
            sa.JSON().with_variant(postgresql.JSONB(astext_type=sa.Text()), "postgresql"),
            nullable=False,
        ),
        sa.ForeignKeyConstraint(
            ["spot_id"], ["spots.id"], name=op.f("fk_calibrations_spot_id_spots"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_calibrations")),
        sa.UniqueConstraint("spot_id", "version", name=op.f("uq_calibrations_spot_id_version")),
    )
    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_calibrations_spot_id"), ["spot_id"], unique=False)

    op.create_table(
        "verifications",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("spot_id", sa.String(length=64), nullable=False),
        sa.Column("observations", sa.String(length=500), nullable=False),
        sa.Column("created_by", sa.String(length=100), nullable=False),
        sa.Column("created_at", app.db.base.UTCDateTime(timezone=True), nullable=False),
        sa.Column(
            "body",
            sa.JSON().with_variant(postgresql.JSONB(astext_type=sa.Text()), "postgresql"),
            nullable=False,
        ),
        sa.ForeignKeyConstraint(
            ["spot_id"], ["spots.id"], name=op.f("fk_verifications_spot_id_spots"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_verifications")),
    )
    with op.batch_alter_table("verifications", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_verifications_spot_id"), ["spot_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("verifications", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_verifications_spot_id"))

    op.drop_table("verifications")
    with op.batch_alter_table("calibrations", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_calibrations_spot_id"))

    op.drop_table("calibrations")
