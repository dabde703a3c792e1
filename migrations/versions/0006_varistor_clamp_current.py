"""Varistors: the current at which a varistor's clamping voltage is stated.

Revision ID: 0006
Revises: 0004
Create Date: 2026-12-03

A varistor row keeps its varistor voltage at 1 mA in ``value``, its clamping voltage in
``limiting_voltage_v``, its continuous AC rating in ``rated_voltage_ac_v``, its energy in
``pulse_energy_j`` and its 8/20 us peak current in ``ifsm_a``; only the clamping voltage's test
current is new. Existing rows get NULL (no other kind uses it).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0006"
down_revision: str | None = "0005"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("clamp_current_a", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("clamp_current_a")
