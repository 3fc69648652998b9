"""observations unique per kind: a CF file may give a spectrum and a water level / wind row at one time

Revision ID: c4d8e1f2a7b9
Revises: c7e2d41f9a3b
Create Date: 2026-12-03 13:00:00
"""

from __future__ import annotations

from alembic import op

revision = "c4d8e1f2a7b9"
down_revision = "c7e2d41f9a3b"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("observations") as batch:
        batch.drop_constraint("uq_observations_source_id_time_issue_key", type_="unique")
        batch.create_unique_constraint(
            "uq_observations_source_id_kind_time_issue_key", ["source_id", "kind", "time", "issue_key"]
        )


def downgrade() -> None:
    # rows that differ only in kind cannot both stay under the old key: the met rows give way
    op.execute(
        "DELETE FROM observations WHERE kind = 'met' AND EXISTS (SELECT 1 FROM observations o "
        "WHERE o.source_id = observations.source_id AND o.time = observations.time "
        "AND o.issue_key = observations.issue_key AND o.kind = 'spectrum')"
    )
    with op.batch_alter_table("observations") as batch:
        batch.drop_constraint("uq_observations_source_id_kind_time_issue_key", type_="unique")
        batch.create_unique_constraint("uq_observations_source_id_time_issue_key", ["source_id", "time", "issue_key"])
