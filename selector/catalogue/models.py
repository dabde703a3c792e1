"""SQLAlchemy 2 models of the parts catalogue (SI units in every numeric column).

The schema is created and changed ONLY through the alembic migrations in ``migrations/``; these
models describe it for queries and for alembic's autogenerate (``Base.metadata``). A test checks
that the migrated schema and these models agree.

Column meanings (units in the name where the value has one; plain names are SI):

* ``value``: farads for capacitors, ohms for resistors, volts (Vz) for Zeners, amps for fuses
  (rated current) and for diodes/bridges (IF(AV)); see :data:`VALUE_UNITS`.
* ``tolerance``: fraction (0.05 = 5 %).
* ``rated_voltage_v``: DC voltage rating; for resistors the working voltage
  min(sqrt(P*R), LEV). ``rated_voltage_ac_v``: AC rms rating (X and film capacitors, fuses).
  ``limiting_voltage_v``: resistor limiting element voltage (LEV).
* ``power_w`` with ``derate_start_c`` / ``derate_end_c``: full power up to the first temperature,
  linear to zero at the second.
* ``impulse_v``: peak impulse voltage in service the X subclass is meant for (IEC 60384-14);
  ``impulse_test_v``: its impulse test voltage (reduced as Up/sqrt(C/1 uF) above 1 uF).
* ``vf_v`` + ``rs_ohm``: piecewise-linear forward model (knee + slope) of diodes, bridges
  (per diode) and Zeners (forward direction); ``zz_ohm`` Zener dynamic impedance.
* varistors: ``value`` the varistor voltage at 1 mA dc, ``limiting_voltage_v`` the clamping
  voltage at ``clamp_current_a`` (8/20 us), ``rated_voltage_ac_v`` the maximum continuous rms,
  ``pulse_energy_j`` the energy rating, ``ifsm_a`` the 8/20 us single-pulse peak current.
* ``unit_price`` / ``area_mm2``: for built-in rows a demo model, invented (``price_note`` says so).
* ``source``: ``'builtin'`` for the open catalogue, ``'import:<supplier>'`` for imported rows.
* ``withdrawn``: an imported row the supplier's latest list no longer holds (its stock is set to
  0; design never uses it; importing it again brings it back).
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Final

from sqlalchemy import (
    Boolean,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column
from sqlalchemy.sql.expression import false as sa_false

from .row_ranges import VALUE_UNITS as VALUE_UNITS  # re-exported: parts.value unit per kind

__all__ = [
    "KINDS",
    "VALUE_UNITS",
    "Base",
    "CatalogueMeta",
    "Part",
    "PriceBreak",
    "Supplier",
]

#: every part kind, in the order listings show them
KINDS: Final[tuple[str, ...]] = (
    "x_capacitor",
    "film_capacitor",
    "resistor",
    "diode",
    "bridge",
    "zener",
    "electrolytic",
    "fuse",
    "varistor",
)


def _utcnow() -> datetime:
    return datetime.now(UTC).replace(tzinfo=None)


#: constraint names are fixed so that batch migrations on SQLite can find them again
NAMING_CONVENTION: Final[dict[str, str]] = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class Base(DeclarativeBase):
    """Declarative base; ``Base.metadata`` is alembic's target metadata."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class Part(Base):
    """One orderable part (built-in generic part or an imported stock row)."""

    __tablename__ = "parts"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    code: Mapped[str] = mapped_column(String(80), unique=True)
    kind: Mapped[str] = mapped_column(String(20), index=True)
    family: Mapped[str] = mapped_column(String(60), index=True)
    description: Mapped[str] = mapped_column(Text, default="")
    value: Mapped[float | None] = mapped_column(Float, index=True)
    tolerance: Mapped[float | None] = mapped_column(Float)
    mount: Mapped[str | None] = mapped_column(String(3))
    package: Mapped[str | None] = mapped_column(String(40))
    area_mm2: Mapped[float | None] = mapped_column(Float)
    unit_price: Mapped[float | None] = mapped_column(Float)
    price_note: Mapped[str | None] = mapped_column(String(120))
    supplier: Mapped[str | None] = mapped_column(String(80))
    supplier_code: Mapped[str | None] = mapped_column(String(80))
    stock: Mapped[int | None] = mapped_column(Integer)
    rated_voltage_v: Mapped[float | None] = mapped_column(Float)
    rated_voltage_ac_v: Mapped[float | None] = mapped_column(Float)
    limiting_voltage_v: Mapped[float | None] = mapped_column(Float)
    power_w: Mapped[float | None] = mapped_column(Float)
    derate_start_c: Mapped[float | None] = mapped_column(Float)
    derate_end_c: Mapped[float | None] = mapped_column(Float)
    pulse_energy_j: Mapped[float | None] = mapped_column(Float)
    safety_class: Mapped[str | None] = mapped_column(String(4))
    impulse_v: Mapped[float | None] = mapped_column(Float)
    dvdt_v_per_s: Mapped[float | None] = mapped_column(Float)
    humidity_grade: Mapped[str | None] = mapped_column(String(4))
    vrrm_v: Mapped[float | None] = mapped_column(Float)
    if_av_a: Mapped[float | None] = mapped_column(Float)
    ifsm_a: Mapped[float | None] = mapped_column(Float)
    vf_v: Mapped[float | None] = mapped_column(Float)
    rs_ohm: Mapped[float | None] = mapped_column(Float)
    zz_ohm: Mapped[float | None] = mapped_column(Float)
    tj_max_c: Mapped[float | None] = mapped_column(Float)
    ripple_a: Mapped[float | None] = mapped_column(Float)
    temp_max_c: Mapped[float | None] = mapped_column(Float)
    i2t_a2s: Mapped[float | None] = mapped_column(Float)
    fusible: Mapped[bool] = mapped_column(Boolean, default=False)
    source: Mapped[str] = mapped_column(String(80), default="builtin", index=True)
    created_at: Mapped[datetime] = mapped_column(DateTime, default=_utcnow)
    # added by migration 0002
    impulse_test_v: Mapped[float | None] = mapped_column(Float)
    dielectric: Mapped[str | None] = mapped_column(String(20))
    pitch_mm: Mapped[float | None] = mapped_column(Float)
    body_mm: Mapped[str | None] = mapped_column(String(40))
    # added by migration 0004: electrolytic rated life [h] at temp_max_c
    rated_life_h: Mapped[float | None] = mapped_column(Float)
    # added by migration 0005
    withdrawn: Mapped[bool] = mapped_column(Boolean, server_default=sa_false())
    # added by migration 0006
    clamp_current_a: Mapped[float | None] = mapped_column(Float)
    # added by migration 0007: the supplier's minimum order quantity [pieces] (None: no minimum)
    min_order_qty: Mapped[int | None] = mapped_column(Integer)
    # added by migration 0008: the supplier's order multiple, a reel or pack [pieces] (None: any)
    order_multiple: Mapped[int | None] = mapped_column(Integer)

    __table_args__ = (Index("ix_parts_kind_value", "kind", "value"),)

    def __repr__(self) -> str:
        return f"Part(code={self.code!r}, kind={self.kind!r}, value={self.value!r})"


class CatalogueMeta(Base):
    """Key/value facts about the catalogue: data checksum, build time, builder version."""

    __tablename__ = "catalogue_meta"

    key: Mapped[str] = mapped_column(String(60), primary_key=True)
    value: Mapped[str] = mapped_column(Text)


class Supplier(Base):
    """A supplier whose stock list was imported (filled by `dropper parts import`)."""

    __tablename__ = "suppliers"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(80), unique=True)
    currency: Mapped[str | None] = mapped_column(String(8))
    note: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(DateTime, default=_utcnow)


class PriceBreak(Base):
    """Quantity price break of a part: ``unit_price`` applies from ``min_qty`` pieces up."""

    __tablename__ = "price_breaks"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    part_id: Mapped[int] = mapped_column(ForeignKey("parts.id", ondelete="CASCADE"), index=True)
    min_qty: Mapped[int] = mapped_column(Integer)
    unit_price: Mapped[float] = mapped_column(Float)

    __table_args__ = (UniqueConstraint("part_id", "min_qty", name="uq_price_breaks_part_qty"),)
