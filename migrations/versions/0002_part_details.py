"""Part details: impulse test voltage, dielectric, pitch and body size.

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-01

Existing rows keep their data; the new columns start empty (NULL) until the next catalogue
build fills them for built-in parts.
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0002"
down_revision: str | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("impulse_test_v", sa.Float(), nullable=True))
        batch.add_column(sa.Column("dielectric", sa.String(20), nullable=True))
        batch.add_column(sa.Column("pitch_mm", sa.Float(), nullable=True))
        batch.add_column(sa.Column("body_mm", sa.String(40), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("body_mm")
        batch.drop_column("pitch_mm")
        batch.drop_column("dielectric")
        batch.drop_column("impulse_test_v")
