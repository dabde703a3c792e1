"""Withdrawn stock rows: a supplier's list is a snapshot.

Revision ID: 0005
Revises: 0003
Create Date: 2026-12-03

Re-importing a supplier's list marks the rows it no longer holds as withdrawn (stock 0,
``withdrawn`` true) instead of leaving them with stale stock; design never uses a withdrawn row.
Existing rows start as not withdrawn.
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0005"
down_revision: str | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(
            sa.Column("withdrawn", sa.Boolean(), nullable=False, server_default=sa.false())
        )


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("withdrawn")
