"""regional_bathymetry: coarser grids around a spot's local grid (profile `[[regional_bathymetry]]`)

Revision ID: c7e2d41f9a3b
Revises: c7d2e8f4a915
Create Date: 2026-12-03 13:30:00
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

import app.db.base

revision = "c7e2d41f9a3b"
down_revision = "c7d2e8f4a915"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "regional_bathymetry",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("spot_id", sa.String(length=64), nullable=False),
        sa.Column("position", sa.Integer(), nullable=False),
        sa.Column("depth", app.db.base.NpyArray(), nullable=False),
        sa.Column("nx", sa.Integer(), nullable=False),
        sa.Column("ny", sa.Integer(), nullable=False),
        sa.Column("x0", sa.Double(), nullable=False),
        sa.Column("y0", sa.Double(), nullable=False),
        sa.Column("dx", sa.Double(), nullable=False),
        sa.Column("dy", sa.Double(), nullable=False),
        sa.Column("datum", sa.String(length=32), nullable=False),
        sa.Column("source_file", sa.String(length=500), nullable=False),
        sa.Column("source_format", sa.String(length=32), nullable=False),
        sa.Column("sha256", sa.String(length=64), nullable=False),
        sa.ForeignKeyConstraint(
            ["spot_id"], ["spots.id"], name=op.f("fk_regional_bathymetry_spot_id_spots"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_regional_bathymetry")),
        sa.UniqueConstraint("spot_id", "position", name=op.f("uq_regional_bathymetry_spot_id_position")),
    )
    with op.batch_alter_table("regional_bathymetry", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_regional_bathymetry_spot_id"), ["spot_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("regional_bathymetry", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_regional_bathymetry_spot_id"))
    op.drop_table("regional_bathymetry")
