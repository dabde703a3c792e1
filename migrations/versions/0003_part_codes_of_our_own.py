"""Built-in part codes in dropper's own pattern: kind.family.variant.value[.tolerance].

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02

Until builder version 1 the built-in codes were letter prefixes glued to a size and a tolerance
letter (``RC0603-4k7-J``); from builder version 2 they are lower-case words joined by dots
(``res.thick.0603.4k7.5pct``; catalogue/README.md lists every family). This revision renames
the built-in rows of an existing database so that it matches the builder before the next build;
the mapping is fixed here, independent of the builder, and :func:`new_code` / :func:`old_code`
invert each other. Imported rows (``source != 'builtin'``; their codes start with ``S:``) and
codes the mapping does not know are left alone. No schema change.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0003"
down_revision: str | None = "0002"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# IEC 60062 tolerance letters the old codes carried, and the word the new codes use
_TOL_WORD = {"B": "0p1pct", "C": "0p25pct", "D": "0p5pct", "F": "1pct", "G": "2pct"}
_TOL_WORD |= {"J": "5pct", "K": "10pct", "M": "20pct"}
_TOL_LETTER = {w: letter for letter, w in _TOL_WORD.items()}

# old family prefix -> new prefix (film and X capacitors: prefix, then voltage kind)
_FILM = {
    "XF2H": ("xcap.x2humid", "ac"),
    "XF2": ("xcap.x2", "ac"),
    "XF1": ("xcap.x1", "ac"),
    "XF3": ("xcap.x3", "ac"),
    "FPET": ("film.pet", "dc"),
    "FPP": ("film.pp", "dc"),
}
# resistors: old family prefix -> (new prefix, {old size tag: new size tag}); None = size as is
_RESISTOR: dict[str, tuple[str, dict[str, str] | None]] = {
    "RC": ("res.thick", None),
    "RM": ("res.melf", None),
    "RMF": ("res.mfilm", {"A025": "0w25", "A050": "0w5", "A100": "1w", "A200": "2w"}),
    "RMO": ("res.oxide", {"1W": "1w", "2W": "2w", "3W": "3w"}),
    "RWW": ("res.wound", {"2W": "2w", "5W": "5w"}),
    "RFU": ("res.fusible", {"05W": "0w5", "1W": "1w"}),
}
# diodes and bridges: old prefix -> new prefix including the current word
_DIODE = {
    "DR1": "diode.axial.1a",
    "DRS1": "diode.smd.1a",
    "BRM": "bridge.smd.0a5",
    "BRD": "bridge.tht.1a",
}
# Zeners (tolerance J, 5 %, in every family): old prefix -> new prefix including the power word
_ZENER = {"ZD05": "zener.smd.0w5", "ZD1": "zener.tht.1w", "ZD3": "zener.smd.3w"}
_ZENER |= {"ZD5": "zener.tht.5w"}
# electrolytics (tolerance M, 20 %)
_ELCAP = {"EA85": "elcap.85c", "EA105": "elcap.105c"}
_FUSE = {"FF": "fuse.glass.fast", "FT": "fuse.glass.slow", "FR": "fuse.radial.slow"}

_VALUE = r"[0-9A-Za-z]+"


def _alt(keys) -> str:
    return "|".join(sorted((re.escape(k) for k in keys), key=len, reverse=True))


def _volt_new(old: str) -> str:
    """'5V1' -> '5v1', '12V' -> '12v' (old voltage tag to new)."""
    return old.lower()


def _volt_old(new: str) -> str:
    return new.upper()


def _inverse(table: dict[str, str]) -> dict[str, str]:
    return {v: k for k, v in table.items()}


def _res_heads() -> dict[str, str]:
    """Every old resistor head with a fixed size tag -> new prefix.size."""
    heads = {}
    for old, (new, tags) in _RESISTOR.items():
        for old_tag, new_tag in (tags or {}).items():
            heads[old + old_tag] = f"{new}.{new_tag}"
    return heads


_RES_HEADS = _res_heads()
_RES_HEADS_BACK = _inverse(_RES_HEADS)

_OLD_FILM = re.compile(rf"({_alt(_FILM)})-(\d+)-({_VALUE})-([A-Z])")
_OLD_RES_TAGGED = re.compile(rf"({_alt(_RES_HEADS)})-({_VALUE})-([A-Z])")
_OLD_RES_SIZED = re.compile(rf"(RC|RM)(\d{{4}})-({_VALUE})-([A-Z])")
_OLD_DIODE = re.compile(rf"({_alt(_DIODE)})-(\d+)")
_OLD_ZENER = re.compile(rf"({_alt(_ZENER)})-(\d+V\d*)")
_OLD_ELCAP = re.compile(rf"({_alt(_ELCAP)})-({_VALUE})-(\d+V\d*)")
_OLD_FUSE = re.compile(rf"({_alt(_FUSE)})-(\d+)mA")

_FILM_BACK = {new: (old, ac) for old, (new, ac) in _FILM.items()}
_NEW_FILM = re.compile(rf"({_alt(_FILM_BACK)})\.(\d+)v(ac|dc)\.({_VALUE})\.(\w+pct)")
_NEW_RES_TAGGED = re.compile(rf"({_alt(_RES_HEADS_BACK)})\.({_VALUE})\.(\w+pct)")
_NEW_RES_SIZED = re.compile(r"(res\.thick|res\.melf)\.(\d{4})\." + rf"({_VALUE})\.(\w+pct)")
_NEW_DIODE = re.compile(rf"({_alt(_inverse(_DIODE))})\.(\d+)v")
_NEW_ZENER = re.compile(rf"({_alt(_inverse(_ZENER))})\.(\d+v\d*)\.5pct")
_NEW_ELCAP = re.compile(rf"({_alt(_inverse(_ELCAP))})\.(\d+v\d*)\.({_VALUE})\.20pct")
_NEW_FUSE = re.compile(rf"({_alt(_inverse(_FUSE))})\.(\d+)ma")


def new_code(old: str) -> str | None:
    """The builder-2 code of a builder-1 built-in code, or None when it is not one.

    >>> new_code("RC0603-4k7-J"), new_code("XF2-305-330n-K"), new_code("ZD05-5V1")
    ('res.thick.0603.4k7.5pct', 'xcap.x2.305vac.330n.10pct', 'zener.smd.0w5.5v1.5pct')
    """
    if m := _OLD_FILM.fullmatch(old):
        prefix, ac = _FILM[m[1]]
        if m[4] not in _TOL_WORD:
            return None
        return f"{prefix}.{m[2]}v{ac}.{m[3]}.{_TOL_WORD[m[4]]}"
    if m := _OLD_RES_TAGGED.fullmatch(old):
        return f"{_RES_HEADS[m[1]]}.{m[2]}.{_TOL_WORD[m[3]]}" if m[3] in _TOL_WORD else None
    if m := _OLD_RES_SIZED.fullmatch(old):
        prefix = _RESISTOR[m[1]][0]
        return f"{prefix}.{m[2]}.{m[3]}.{_TOL_WORD[m[4]]}" if m[4] in _TOL_WORD else None
    if m := _OLD_DIODE.fullmatch(old):
        return f"{_DIODE[m[1]]}.{m[2]}v"
    if m := _OLD_ZENER.fullmatch(old):
        return f"{_ZENER[m[1]]}.{_volt_new(m[2])}.5pct"
    if m := _OLD_ELCAP.fullmatch(old):
        return f"{_ELCAP[m[1]]}.{_volt_new(m[3])}.{m[2]}.20pct"
    if m := _OLD_FUSE.fullmatch(old):
        return f"{_FUSE[m[1]]}.{m[2]}ma"
    return None


def old_code(new: str) -> str | None:
    """The builder-1 code of a builder-2 built-in code (the inverse of :func:`new_code`).

    >>> old_code("res.thick.0603.4k7.5pct"), old_code("fuse.glass.slow.100ma")
    ('RC0603-4k7-J', 'FT-100mA')
    """
    if m := _NEW_FILM.fullmatch(new):
        old, ac = _FILM_BACK[m[1]]
        if m[3] != ac or m[5] not in _TOL_LETTER:
            return None
        return f"{old}-{m[2]}-{m[4]}-{_TOL_LETTER[m[5]]}"
    if m := _NEW_RES_TAGGED.fullmatch(new):
        if m[3] not in _TOL_LETTER:
            return None
        return f"{_RES_HEADS_BACK[m[1]]}-{m[2]}-{_TOL_LETTER[m[3]]}"
    if m := _NEW_RES_SIZED.fullmatch(new):
        old = "RC" if m[1] == "res.thick" else "RM"
        return f"{old}{m[2]}-{m[3]}-{_TOL_LETTER[m[4]]}" if m[4] in _TOL_LETTER else None
    if m := _NEW_DIODE.fullmatch(new):
        return f"{_inverse(_DIODE)[m[1]]}-{m[2]}"
    if m := _NEW_ZENER.fullmatch(new):
        return f"{_inverse(_ZENER)[m[1]]}-{_volt_old(m[2])}"
    if m := _NEW_ELCAP.fullmatch(new):
        return f"{_inverse(_ELCAP)[m[1]]}-{m[3]}-{_volt_old(m[2])}"
    if m := _NEW_FUSE.fullmatch(new):
        return f"{_inverse(_FUSE)[m[1]]}-{m[2]}mA"
    return None


def _rename(mapping: Callable[[str], str | None]) -> None:
    parts = sa.table(
        "parts", sa.column("id", sa.Integer), sa.column("code", sa.String), sa.column("source")
    )
    conn = op.get_bind()
    rows = conn.execute(
        sa.select(parts.c.id, parts.c.code).where(
            parts.c.source == "builtin", sa.not_(parts.c.code.like("S:%"))
        )
    ).all()
    updates = [
        {"row_id": row_id, "new": renamed}
        for row_id, code in rows
        if (renamed := mapping(code)) is not None and renamed != code
    ]
    if updates:
        conn.execute(
            parts.update().where(parts.c.id == sa.bindparam("row_id")),
            [{"row_id": u["row_id"], "code": u["new"]} for u in updates],
        )


def upgrade() -> None:
    _rename(new_code)


def downgrade() -> None:
    _rename(old_code)
