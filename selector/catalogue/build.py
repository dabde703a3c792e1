"""Build the open catalogue: read the data files in ``catalogue/`` and expand them into part rows.

Nothing here touches a database: :func:`builtin_rows` returns plain dicts (one per part, keys =
``parts`` columns, SI units) that :mod:`selector.catalogue.db` bulk-inserts. The work is split:

* :mod:`selector.catalogue.datafiles` reads and validates the data files; a bad field raises
  :class:`~selector.errors.BadRowError` naming the file, the entry (CSV line or the n-th
  ``[[family]]``), the field and the problem;
* :mod:`selector.catalogue.formulas` holds the rating formulas, each with its formula and source:
  :func:`resistor_working_voltage`, :func:`x_impulse_test_voltage`, :func:`diode_i2t`,
  :func:`zener_impedance`;
* :mod:`selector.catalogue.expand` turns each family into rows (one expander per kind).

This module orchestrates them, checks that codes are unique, computes the data checksum, and
re-exports the public names. Prices and board areas are a demo model, invented (``price_note``).
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Final

from ..errors import BadRowError
from .datafiles import (
    FAMILY_DIR,
    PRICE_MODEL_FILE,
    RESISTOR_SIZE_FILE,
    SUBCLASS_FILE,
    Family,
    PriceModel,
    ResistorSize,
    Subclass,
    load_families,
    load_price_model,
    load_resistor_sizes,
    load_subclasses,
    rel_name,
    root_dir,
)
from .expand import EXPANDERS, Context
from .formulas import diode_i2t, resistor_working_voltage, x_impulse_test_voltage, zener_impedance

__all__ = [
    "BUILDER_VERSION",
    "FAMILY_DIR",
    "PRICE_MODEL_FILE",
    "RESISTOR_SIZE_FILE",
    "SUBCLASS_FILE",
    "Family",
    "PriceModel",
    "ResistorSize",
    "Subclass",
    "builtin_rows",
    "data_checksum",
    "data_files",
    "diode_i2t",
    "load_families",
    "load_price_model",
    "load_resistor_sizes",
    "load_subclasses",
    "resistor_working_voltage",
    "x_impulse_test_voltage",
    "zener_impedance",
]

#: bump when the expansion code changes the rows it makes (forces a rebuild like a data change)
BUILDER_VERSION: Final[str] = "2"


def data_files(root: Path | str | None = None) -> list[Path]:
    """The data files the built-in catalogue is made from (``*.toml`` and ``*.csv``), sorted."""
    base = root_dir(root)
    return sorted(p for p in base.rglob("*") if p.suffix in (".toml", ".csv") and p.is_file())


def data_checksum(root: Path | str | None = None) -> str:
    """SHA-256 over the data files (relative path + bytes) and :data:`BUILDER_VERSION`."""
    base = root_dir(root)
    digest = hashlib.sha256(f"builder {BUILDER_VERSION}\n".encode())
    for path in data_files(base):
        digest.update(rel_name(path, base).encode() + b"\0")
        digest.update(path.read_bytes() + b"\0")
    return digest.hexdigest()


def builtin_rows(
    root: Path | str | None = None, families: Iterable[Family] | None = None
) -> list[dict[str, Any]]:
    """Every built-in part as a dict of ``parts`` columns (no ``id``), validated, codes unique.

    ``root`` is the catalogue folder (default: the installed one). Raises BadRowError for a bad
    data file; the message names the file, the entry and the field.
    """
    base = root_dir(root)
    ctx = Context(
        subclasses=load_subclasses(base),
        sizes=load_resistor_sizes(base),
        price=load_price_model(base),
        created_at=datetime.now(UTC).replace(tzinfo=None, microsecond=0),
    )
    rows: list[dict[str, Any]] = []
    seen: dict[str, str] = {}
    for fam in families if families is not None else load_families(base):
        made = EXPANDERS[fam.kind](ctx, fam)
        for row in made:
            code = row["code"]
            if code in seen:
                raise BadRowError(
                    fam.file,
                    fam.row,
                    "code",
                    f"family {fam.name!r}: code {code} repeats "
                    f"(also made by family {seen[code]!r})",
                )
            seen[code] = fam.name
            row["withdrawn"] = False  # only imported rows are ever withdrawn
            if not row.get("description"):
                raise BadRowError(fam.file, fam.row, "title", "empty description")
        rows.extend(made)
    return rows
