"""Small helpers shared by the catalogue tests (SQLite and PostgreSQL alike)."""

from __future__ import annotations

from sqlalchemy import func, select

from selector.catalogue.models import Part


def count_parts(engine, source: str | None = None) -> int:
    """Rows in ``parts``, or only those of one ``source`` ('builtin', 'import:<supplier>')."""
    with engine.connect() as conn:
        stmt = select(func.count()).select_from(Part)
        if source is not None:
            stmt = stmt.where(Part.source == source)
        return conn.execute(stmt).scalar_one()
