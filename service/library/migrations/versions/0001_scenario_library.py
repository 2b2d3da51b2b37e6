"""The scenario library: owners, records, revisions, tags.

Revision ID: 0001
Revises:
Create Date: 2026-12-03
"""

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "library_owners",
        sa.Column("owner", sa.String(64), primary_key=True),
        sa.Column("records", sa.Integer(), nullable=False),
    )
    op.create_table(
        "scenario_records",
        sa.Column("seq", sa.Integer(), primary_key=True, autoincrement=True),
        sa.Column("id", sa.String(43), nullable=False, unique=True),
        sa.Column("owner", sa.String(64), nullable=False),
        sa.Column("shared", sa.Boolean(), nullable=False),
        sa.Column("revision", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
    )
    op.create_index("ix_scenario_records_owner", "scenario_records", ["owner"])
    op.create_table(
        "scenario_revisions",
        sa.Column(
            "record_seq",
            sa.Integer(),
            sa.ForeignKey("scenario_records.seq", ondelete="CASCADE"),
            primary_key=True,
        ),
        sa.Column("revision", sa.Integer(), primary_key=True),
        sa.Column("name", sa.String(200), nullable=False),
        sa.Column("notes", sa.Text(), nullable=False),
        sa.Column("tags", sa.Text(), nullable=False),
        sa.Column("shared", sa.Boolean(), nullable=False),
        sa.Column("kind", sa.String(8), nullable=False),
        sa.Column("request", sa.Text(), nullable=False),
        sa.Column("scenario_id", sa.String(64), nullable=False),
        sa.Column("model_version", sa.String(32), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
    )
    op.create_table(
        "scenario_tags",
        sa.Column(
            "record_seq",
            sa.Integer(),
            sa.ForeignKey("scenario_records.seq", ondelete="CASCADE"),
            primary_key=True,
        ),
        sa.Column("tag", sa.String(40), primary_key=True),
    )
    op.create_index("ix_scenario_tags_tag", "scenario_tags", ["tag"])


def downgrade() -> None:
    op.drop_index("ix_scenario_tags_tag", "scenario_tags")
    op.drop_table("scenario_tags")
    op.drop_table("scenario_revisions")
    op.drop_index("ix_scenario_records_owner", "scenario_records")
    op.drop_table("scenario_records")
    op.drop_table("library_owners")
