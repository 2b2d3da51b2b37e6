"""Each revision keeps the display units it was saved with (a JSON object as text).

Revisions saved before this read as '{}' (no units): the column's server default fills them
as it is added, on SQLite and on PostgreSQL alike, and nothing else is touched.

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-04
"""

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.add_column(
        "scenario_revisions",
        sa.Column("units", sa.Text(), nullable=False, server_default="{}"),
    )


def downgrade() -> None:
    # Batch mode: SQLite before 3.35 cannot drop a column in place (the table is copied).
    with op.batch_alter_table("scenario_revisions") as batch:
        batch.drop_column("units")
