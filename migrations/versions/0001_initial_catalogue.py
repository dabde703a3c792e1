"""Initial catalogue schema: parts, catalogue_meta, suppliers, price_breaks.

Revision ID: 0001
Revises:
Create Date: 2026-12-01
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0001"
down_revision: str | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_FLOAT_COLUMNS = (
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "derate_start_c",
    "derate_end_c",
    "pulse_energy_j",
)
_FLOAT_COLUMNS_2 = (
    "vrrm_v",
    "if_av_a",
    "ifsm_a",
    "vf_v",
    "rs_ohm",
    "zz_ohm",
    "tj_max_c",
    "ripple_a",
    "temp_max_c",
    "i2t_a2s",
)


def upgrade() -> None:
    op.create_table(
        "parts",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("code", sa.String(80), nullable=False),
        sa.Column("kind", sa.String(20), nullable=False),
        sa.Column("family", sa.String(60), nullable=False),
        sa.Column("description", sa.Text(), nullable=False),
        sa.Column("value", sa.Float(), nullable=True),
        sa.Column("tolerance", sa.Float(), nullable=True),
        sa.Column("mount", sa.String(3), nullable=True),
        sa.Column("package", sa.String(40), nullable=True),
        sa.Column("area_mm2", sa.Float(), nullable=True),
        sa.Column("unit_price", sa.Float(), nullable=True),
        sa.Column("price_note", sa.String(120), nullable=True),
        sa.Column("supplier", sa.String(80), nullable=True),
        sa.Column("supplier_code", sa.String(80), nullable=True),
        sa.Column("stock", sa.Integer(), nullable=True),
        *(sa.Column(name, sa.Float(), nullable=True) for name in _FLOAT_COLUMNS),
        sa.Column("safety_class", sa.String(4), nullable=True),
        sa.Column("impulse_v", sa.Float(), nullable=True),
        sa.Column("dvdt_v_per_s", sa.Float(), nullable=True),
        sa.Column("humidity_grade", sa.String(4), nullable=True),
        *(sa.Column(name, sa.Float(), nullable=True) for name in _FLOAT_COLUMNS_2),
        sa.Column("fusible", sa.Boolean(), nullable=False),
        sa.Column("source", sa.String(80), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name="pk_parts"),
        sa.UniqueConstraint("code", name="uq_parts_code"),
    )
    op.create_index("ix_parts_kind", "parts", ["kind"])
    op.create_index("ix_parts_family", "parts", ["family"])
    op.create_index("ix_parts_value", "parts", ["value"])
    op.create_index("ix_parts_source", "parts", ["source"])
    op.create_index("ix_parts_kind_value", "parts", ["kind", "value"])

    op.create_table(
        "catalogue_meta",
        sa.Column("key", sa.String(60), nullable=False),
        sa.Column("value", sa.Text(), nullable=False),
        sa.PrimaryKeyConstraint("key", name="pk_catalogue_meta"),
    )
    op.create_table(
        "suppliers",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(80), nullable=False),
        sa.Column("currency", sa.String(8), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.PrimaryKeyConstraint("id", name="pk_suppliers"),
        sa.UniqueConstraint("name", name="uq_suppliers_name"),
    )
    op.create_table(
        "price_breaks",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("part_id", sa.Integer(), nullable=False),
        sa.Column("min_qty", sa.Integer(), nullable=False),
        sa.Column("unit_price", sa.Float(), nullable=False),
        sa.ForeignKeyConstraint(
            ["part_id"], ["parts.id"], name="fk_price_breaks_part_id_parts", ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name="pk_price_breaks"),
        sa.UniqueConstraint("part_id", "min_qty", name="uq_price_breaks_part_qty"),
    )
    op.create_index("ix_price_breaks_part_id", "price_breaks", ["part_id"])


def downgrade() -> None:
    op.drop_index("ix_price_breaks_part_id", table_name="price_breaks")
    op.drop_table("price_breaks")
    op.drop_table("suppliers")
    op.drop_table("catalogue_meta")
    for name in (
        "ix_parts_kind_value",
        "ix_parts_source",
        "ix_parts_value",
        "ix_parts_family",
        "ix_parts_kind",
    ):
        op.drop_index(name, table_name="parts")
    op.drop_table("parts")
