"""The open parts catalogue: SQLAlchemy models, build from ``catalogue/`` data files, queries.

Public API (SI units throughout)::

    resolve_url(db) -> str                       --db value, $DROPPER_DB, or the user's file
    open_catalogue(url, progress=None) -> Engine migrate to head; build built-in rows if needed
    build_catalogue(url, progress=None) -> dict  rebuild built-in rows now; summary
    find_parts(engine, text=None, kind=None, value=None, min_voltage=None, min_power=None,
               limit=20) -> list[dict]
    catalogue_stats(engine) -> dict
    parts_frame(engine, kinds=None, stock_only=False) -> pandas.DataFrame

The schema is made only by the alembic migrations in ``migrations/``.
"""

from __future__ import annotations

from .build import (
    BUILDER_VERSION,
    builtin_rows,
    data_checksum,
    diode_i2t,
    resistor_working_voltage,
    x_impulse_test_voltage,
    zener_impedance,
)
from .db import (
    ENV_VAR,
    build_catalogue,
    current_revision,
    downgrade,
    head_revision,
    make_engine,
    migrate,
    open_catalogue,
    read_meta,
    resolve_url,
)
from .models import KINDS, VALUE_UNITS, Base, CatalogueMeta, Part, PriceBreak, Supplier
from .query import PART_COLUMNS, catalogue_stats, check_kind, find_parts, parts_frame

__all__ = [
    "BUILDER_VERSION",
    "ENV_VAR",
    "KINDS",
    "PART_COLUMNS",
    "VALUE_UNITS",
    "Base",
    "CatalogueMeta",
    "Part",
    "PriceBreak",
    "Supplier",
    "build_catalogue",
    "builtin_rows",
    "catalogue_stats",
    "check_kind",
    "current_revision",
    "data_checksum",
    "diode_i2t",
    "downgrade",
    "find_parts",
    "head_revision",
    "make_engine",
    "migrate",
    "open_catalogue",
    "parts_frame",
    "read_meta",
    "resistor_working_voltage",
    "resolve_url",
    "x_impulse_test_voltage",
    "zener_impedance",
]
