"""Imported parts: the supplier's order multiple (reel or pack size).

Revision ID: 0008
Revises: 0007
Create Date: 2026-12-03

Some parts are sold only in whole reels or packs: an order is a multiple of the reel or pack
quantity. The import stores it in ``parts.order_multiple`` (pieces); design rounds the pieces
bought up to a multiple of it. Built-in rows and lists without the column keep NULL (any
number of pieces).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0008"
down_revision: str | None = "0007"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("order_multiple", sa.Integer(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("order_multiple")
