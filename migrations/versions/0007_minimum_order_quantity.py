"""Imported parts: the supplier's minimum order quantity.

Revision ID: 0007
Revises: 0006
Create Date: 2026-12-03

A distributor sells some parts only from a minimum order quantity (a reel, a bag). The import
stores it in ``parts.min_order_qty`` (pieces); design prices a build below it as the cost of the
minimum order. Built-in rows and lists without the column keep NULL (no minimum).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0007"
down_revision: str | None = "0006"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("min_order_qty", sa.Integer(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("min_order_qty")
