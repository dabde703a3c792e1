"""Rated life of electrolytic capacitors (hours at their rated temperature).

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-03

The life rule ``reservoir.life`` extrapolates a reservoir's rated life (at its rated
temperature ``temp_max_c``) to its core temperature by the 10-degree rule. Existing rows keep
their data; the new column starts empty (NULL) until the next catalogue build fills it for the
built-in electrolytics (an imported part without it gets a 'rating unknown' warning).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0004"
down_revision: str | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("rated_life_h", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("rated_life_h")
