"""The open parts catalogue: SQLAlchemy models, build from ``catalogue/`` data files, queries.

Public API (SI units throughout)::

    resolve_url(db) -> str                       --db value, $DROPPER_DB, or the user's file
    open_catalogue(url, progress=None) -> Engine migrate to head; build built-in rows if needed
    build_catalogue(url, progress=None) -> dict  rebuild built-in rows now; summary
    find_parts(engine, text=None, kind=None, value=None, min_voltage=None, min_power=None,
               limit=20) -> list[dict]
    catalogue_stats(engine) -> dict
    parts_frame(engine, kinds=None, stock_only=False) -> pandas.DataFrame
    catalogue_frame(url, stock_only=False, progress=None) -> pandas.DataFrame
                                                 parts_frame through the on-disk cache

The schema is made only by the alembic migrations in ``migrations/``.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

# Names are loaded on first use (PEP 562, as in selector.engine), so that a command served from
# the parts-frame cache (selector.catalogue.frame_cache) never imports SQLAlchemy or numpy.
_WHERE = {
    "BUILDER_VERSION": "build",
    "builtin_rows": "build",
    "data_checksum": "build",
    "diode_i2t": "build",
    "resistor_working_voltage": "build",
    "x_impulse_test_voltage": "build",
    "zener_impedance": "build",
    "build_catalogue": "db",
    "current_revision": "db",
    "downgrade": "db",
    "head_revision": "db",
    "make_engine": "db",
    "migrate": "db",
    "open_catalogue": "db",
    "read_meta": "db",
    "catalogue_frame": "frame_cache",
    "KINDS": "models",
    "VALUE_UNITS": "models",
    "Base": "models",
    "CatalogueMeta": "models",
    "Part": "models",
    "PriceBreak": "models",
    "Supplier": "models",
    "ENV_VAR": "paths",
    "resolve_url": "paths",
    "PART_COLUMNS": "query",
    "catalogue_stats": "query",
    "check_kind": "query",
    "find_parts": "query",
    "parts_frame": "query",
}


def __getattr__(name: str):
    if name not in _WHERE:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    module = import_module(f".{_WHERE[name]}", __name__)
    value = getattr(module, name)
    globals()[name] = value
    return value


if TYPE_CHECKING:  # pragma: no cover
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
        build_catalogue,
        current_revision,
        downgrade,
        head_revision,
        make_engine,
        migrate,
        open_catalogue,
        read_meta,
    )
    from .frame_cache import catalogue_frame
    from .models import KINDS, VALUE_UNITS, Base, CatalogueMeta, Part, PriceBreak, Supplier
    from .paths import ENV_VAR, resolve_url
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
    "catalogue_frame",
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
