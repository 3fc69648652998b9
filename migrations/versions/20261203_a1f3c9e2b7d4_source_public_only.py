"""sources.public_only: API-added sources may only fetch from public addresses

Revision ID: a1f3c9e2b7d4
Revises: 5db9bdadac10
Create Date: 2026-12-03 08:40:00
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "a1f3c9e2b7d4"
down_revision = "5db9bdadac10"
branch_labels = None
depends_on = None


def upgrade() -> None:
    # Sources stored before this revision were all checked by name when added; they keep fetching
    # as before (false). Re-adding one through the API marks it.
    with op.batch_alter_table("sources") as batch:
        batch.add_column(sa.Column("public_only", sa.Boolean(), server_default=sa.false(), nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("sources") as batch:
        batch.drop_column("public_only")
